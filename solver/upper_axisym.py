"""Upper bound of a circular footing (axisymmetric): a Mesh of 6-node triangles in the
meridian half-plane -> one sparse conic program.

Coordinates r = x >= 0 (the axis at r = 0), z = y upward; velocities (u_r, u_z) per
unit footing velocity. The parts follow the published formulations (6-node
triangles and the flow rule as cones, Makrodimopoulos & Martin 2006, 2007); the
velocity field and the bounds on the flow rule and the dissipation are worked out
here, because the hoop rate u_r/r is not a polynomial:

* Velocity. The nodal unknowns are the weighted velocities W = r u_r and U = r u_z,
  quadratic and continuous over the triangles (so u = (W, U)/r is continuous),
  with W = U = 0 on the axis and on the fixed far boundary, U = r v_f on the
  footing (v_f its velocity; rough: W = 0 there). Then r^2 times the strain rate,
      E = r^2 (e_r, e_z, g_rz, e_theta) = (r W_r - W, r U_z, r (W_z + U_r) - U, W),
  is a quadratic polynomial in each triangle, and its trace is r (W_r + U_z): the
  incompressibility of Tresca soil is the plane divergence of (W, U) = 0, linear,
  three rows per triangle as in plane strain (with u itself quadratic it would be a
  quadratic, six rows per triangle, and the field would lock).
* Flow rule (associated Mohr-Coulomb, 3D, the hoop rate a principal rate):
  e_1 + e_2 + e_3 >= sin(phi) (|e_1| + |e_2| + |e_3|), and with the in-plane
  principal rates |e_a| + |e_b| = max(|e_r + e_z|, ||(e_r - e_z, g_rz)||). It is a
  convex cone, and r^2 > 0, so it holds at every point when it holds for the six
  Bernstein coefficients E_a of E (E(x) is their convex combination). At each:
      m_a >= ||(E_r - E_z, E_g)||, m_a >= |E_r + E_z|, h_a >= |E_theta|  (one cone, 4 rows),
      E_r + E_z + E_theta = sin(phi) (m_a + h_a)                         (phi > 0).
* Dissipation per unit volume c cot(phi) tr(e) for phi > 0: integrated exactly,
  2 pi cot(phi) integral(c (W_r + U_z) dA), since r tr(e) = (W_r + U_z). For
  Tresca, c (|e_1| + |e_2| + |e_3|) <= c (m + h) with r D = c g(E)/r and
  g convex: 2 pi integral(r D dA) <= 2 pi sum_a (m_a + h_a) w_a with w_a an upper
  estimate of integral(c B_a / r dA) (:func:`dissipation_weights`), so the bound
  stays rigorous (exact but for 1/r <= its linear interpolant).
* The work of self-weight and surcharge is 2 pi (integral(gamma U dA) +
  integral(q U ds)), exact for quadratic U; the truncated domain only restricts
  the mechanism, so the bound stays rigorous.

The objective is the footing load Q in kN per unit footing velocity.
"""
from __future__ import annotations

import numpy as np
import scipy.sparse as sp

from .conic import ConicProgram, assemble, drop_empty_equalities
from .ground import material_arrays, node_cohesion
from .lower_axisym import EDGE_PAIRS, product_coefficients
from .mesh import AXIS, FAR_BASE, FAR_SIDE, FOOTING, Mesh
from .model import Case
from .upper import BERNSTEIN_FROM_NODES, corner_shape_gradients, load_work_weights

ER, EZ, EG, ET = 0, 1, 2, 3  # components of r^2 times (e_r, e_z, g_rz, e_theta)
# Bernstein coefficients of a quadratic from its values at the 6 nodes (corners, midsides)
QUADRATIC_BERNSTEIN = np.zeros((6, 6))
QUADRATIC_BERNSTEIN[:3, :3] = np.eye(3)
for _k, (_i, _j) in enumerate(EDGE_PAIRS):
    QUADRATIC_BERNSTEIN[3 + _k, [_i, _j, 3 + _k]] = BERNSTEIN_FROM_NODES[1]
# ... of the quadratic Bernstein basis at barycentric points: B_a = l_i^2, 2 l_i l_j


def bernstein_basis(lam: np.ndarray) -> np.ndarray:
    """(..., 6) the quadratic Bernstein polynomials at barycentric points (..., 3)."""
    edges = [2.0 * lam[..., i] * lam[..., j] for i, j in EDGE_PAIRS]
    return np.concatenate([lam ** 2, np.stack(edges, axis=-1)], axis=-1)


def rate_coefficients(mesh: Mesh) -> np.ndarray:
    """(n_el, 6, 4, 12): the Bernstein coefficients of E = r^2 (e_r, e_z, g_rz, e_theta)
    over each triangle's nodal (W at its 6 nodes, U at its 6 nodes)."""
    grad = corner_shape_gradients(mesh)  # (n_el, 3 corners, 6 nodes, 2)
    r = mesh.corner_coordinates()[..., 0]
    # r times a derivative (linear: its corner values per nodal unknown), as Bernstein coefficients
    r_times = [np.swapaxes(product_coefficients(r[:, None, :], np.swapaxes(grad[..., d], 1, 2)), 1, 2)
               for d in (0, 1)]  # (n_el, 6 coefficients, 6 nodes)
    Q = np.broadcast_to(QUADRATIC_BERNSTEIN, r_times[0].shape)
    E = np.zeros((mesh.n_elements, 6, 4, 12))
    E[:, :, ER, :6] = r_times[0] - Q
    E[:, :, EZ, 6:] = r_times[1]
    E[:, :, EG, :6] = r_times[1]
    E[:, :, EG, 6:] = r_times[0] - Q
    E[:, :, ET, :6] = Q
    return E


def axis_points(mesh: Mesh) -> np.ndarray:
    """(n_el, 6) True at the control points on the axis, where E = 0 whatever the velocities."""
    r = mesh.corner_coordinates()[..., 0]
    on = r == 0.0
    return np.concatenate([on, np.stack([on[:, i] & on[:, j] for i, j in EDGE_PAIRS], axis=1)], axis=1)


def _integral_table() -> np.ndarray:
    """(6, 3, 3): integral over a triangle of B_a l_i l_j, over its area (exact:
    integral of l^b = 2 A b! / (|b| + 2)!)."""
    from math import factorial
    table = np.zeros((6, 3, 3))
    for a in range(6):
        base = np.zeros(3, int)
        if a < 3:
            base[a], weight = 2, 1.0
        else:
            i, j = EDGE_PAIRS[a - 3]
            base[i] = base[j] = 1
            weight = 2.0
        for i in range(3):
            for j in range(3):
                b = base.copy()
                b[i] += 1
                b[j] += 1
                table[a, i, j] = weight * 2.0 * np.prod([factorial(k) for k in b]) / factorial(int(b.sum()) + 2)
    return table


INTEGRAL_TABLE = _integral_table()


def dissipation_weights(case: Case, mesh: Mesh) -> np.ndarray:
    """(n_el, 6) kN/m: upper estimates of integral(c B_a / r dA) over each triangle.

    Where every corner is off the axis, 1/r <= sum l_i / r_i (1/r is convex) gives
    sum_ij (c_j / r_i) integral(B_a l_i l_j), exact to order (h/r)^2. Where a corner
    lies on the axis (r = sum over the others of r_i l_i) and B_a does not vanish
    there: l_b / r <= 1 / r_b for a corner b off the axis, and
    2 l_a l_b / (r_a l_a + r_b l_b) <= (l_a / r_a + l_b / r_b) / 2 (Jensen, then
    4 l_a l_b <= (l_a + l_b)^2); at control points on the axis E = 0 and the weight is 0.
    """
    mat = material_arrays(case)
    area = mesh.areas()
    r = mesh.corner_coordinates()[..., 0]
    c = node_cohesion(mat, mesh.layer[:, None], -mesh.corner_coordinates()[..., 1])
    off = r > 0.0
    inverse = np.where(off, 1.0 / np.where(off, r, 1.0), 0.0)
    jensen = area[:, None] * np.einsum("aij,ei,ej->ea", INTEGRAL_TABLE, inverse, c)
    moment = area[:, None] * (c + c.sum(axis=1, keepdims=True)) / 12.0  # integral of c l_i
    near = np.zeros_like(jensen)
    for a in range(3):
        near[:, a] = moment[:, a] * inverse[:, a]
    for k, (i, j) in enumerate(EDGE_PAIRS):
        both = off[:, i] & off[:, j]
        near[:, 3 + k] = np.where(both, (moment[:, i] * inverse[:, i] + moment[:, j] * inverse[:, j]) / 2,
                                  2.0 * (moment[:, i] * inverse[:, j] + moment[:, j] * inverse[:, i]))
    return np.where(off.all(axis=1)[:, None], jensen, near)


def velocity_map_axisym(case: Case, mesh: Mesh) -> tuple[sp.csr_matrix, np.ndarray, dict]:
    """Nodal (W, U) (2 n_nodes: W0, U0, W1, U1, ...) as w = T z + f: z holds the free
    nodal velocities (u_r or u_z, W = r u_r, U = r u_z) and the footing's velocity v_f; U = r v_f on the footing (rough: W = 0),
    W = U = 0 on the axis and on the far boundary. ``motion`` gives the index of v_f in z."""
    n = len(mesh.points)
    edges, kind = mesh.boundary_edges, mesh.boundary_kind
    role = np.zeros((n, 2), dtype=int)  # 0 free, 1 fixed at 0, 2 follows the footing
    foot = np.unique(edges[kind == FOOTING])
    role[foot, 1] = 2
    if case.footing.base == "rough":
        role[foot, 0] = 1
    role[edges[np.isin(kind, (FAR_SIDE, FAR_BASE, AXIS))].ravel()] = 1
    free = np.flatnonzero(role.ravel() == 0)
    follows = np.flatnonzero(role[:, 1] == 2)
    n_free = len(free)
    # each free unknown is the node's velocity component itself (W = r u_r, U = r u_z): O(1) unknowns
    T = sp.coo_matrix((np.concatenate([mesh.points[free // 2, 0], mesh.points[follows, 0]]),
                       (np.concatenate([free, 2 * follows + 1]),
                        np.concatenate([np.arange(n_free), np.full(len(follows), n_free)]))),
                      shape=(2 * n, n_free + 1)).tocsr()
    return T, np.zeros(2 * n), {"u": -1, "v": n_free, "omega": -1}


def upper_bound_program_axisym(case: Case, mesh: Mesh) -> ConicProgram:
    """Assemble the axisymmetric upper-bound program (vectorised; one COO assembly, then
    the velocity map applied as one sparse product).

    Variables: z (free nodal W, U and v_f), then (m, h) at the six control points of
    every triangle (scaled by L / r_c^2, L = sqrt(2 area), r_c the centroid's radius).
    Rows: v_f = -1; the flow-rule equalities (phi > 0) or the corner divergences
    (phi = 0); four nonnegative rows and one cone per control point off the axis.
    """
    if mesh.order != 2 or not mesh.domain.axisymmetric:
        raise ValueError("the axisymmetric upper bound needs a second-order mesh of the meridian half-plane")
    n_nodes = len(mesh.points)
    mat = material_arrays(case)
    T, f, motion = velocity_map_axisym(case, mesh)
    n_z = T.shape[1]
    area = mesh.areas()
    L = np.sqrt(2.0 * area)
    rc = mesh.corner_coordinates()[..., 0].mean(axis=1)
    scale = L / rc ** 2
    E = rate_coefficients(mesh) * scale[:, None, None, None]
    dof = np.concatenate([2 * mesh.triangles, 2 * mesh.triangles + 1], axis=1)  # (n_el, 12)
    phi = mat["phi"][mesh.layer]
    s = np.sin(phi)
    frictional = phi > 0.0
    live = ~axis_points(mesh)  # (n_el, 6)
    el, pt = np.nonzero(live)
    n_pt = len(el)
    aux = 2 * np.arange(n_pt)  # m of each live point; h follows

    w_rows, w_cols, w_vals, a_rows, a_cols, a_vals = [], [], [], [], [], []

    def rows_w(row: np.ndarray, element: np.ndarray, combination: np.ndarray) -> None:
        """Rows over the nodal (W, U): a combination (n, 12) of each triangle's unknowns."""
        w_rows.append(np.repeat(row[:, None], 12, 1)), w_cols.append(dof[element]), w_vals.append(combination)

    # equalities, phi > 0: tr E - sin(phi) (m + h) = 0 at each live point
    fr = frictional[el]
    eq_flow = np.arange(int(fr.sum()))
    rows_w(eq_flow, el[fr], E[el[fr], pt[fr], ER] + E[el[fr], pt[fr], EZ] + E[el[fr], pt[fr], ET])
    for part in (0, 1):
        a_rows.append(eq_flow), a_cols.append(aux[fr] + part), a_vals.append(-s[el[fr]])
    # phi = 0: div(W, U) = 0 at the three corners (times L)
    grad = corner_shape_gradients(mesh) * L[:, None, None, None]
    tresca = np.flatnonzero(~frictional)
    for corner in range(3):
        rows_w(len(eq_flow) + corner * len(tresca) + np.arange(len(tresca)), tresca,
               np.concatenate([grad[tresca, corner, :, 0], grad[tresca, corner, :, 1]], axis=1))
    n_eq = len(eq_flow) + 3 * len(tresca)
    # nonnegative rows: m -+ (E_r + E_z), h -+ E_theta (s = b - A x >= 0)
    for k, (part, rates) in enumerate(((0, (ER, EZ)), (0, (ER, EZ)), (1, (ET,)), (1, (ET,)))):
        row = n_eq + 4 * np.arange(n_pt) + k
        sign = 1.0 if k % 2 == 0 else -1.0
        rows_w(row, el, sign * sum(E[el, pt, rate] for rate in rates))
        a_rows.append(row), a_cols.append(aux + part), a_vals.append(-np.ones(n_pt))
    # cones (m, E_r - E_z, E_g)
    first = n_eq + 4 * n_pt
    cone = first + 3 * np.arange(n_pt)
    a_rows.append(cone), a_cols.append(aux), a_vals.append(-np.ones(n_pt))
    rows_w(cone + 1, el, -(E[el, pt, ER] - E[el, pt, EZ]))
    rows_w(cone + 2, el, -E[el, pt, EG])
    n_rows = first + 3 * n_pt
    Bw = assemble(w_rows, w_cols, w_vals, n_rows, 2 * n_nodes)
    R = assemble(a_rows, a_cols, a_vals, n_rows, 2 * n_pt)
    norm_row = sp.csr_matrix((np.array([-1.0]), (np.array([0]), np.array([motion["v"]]))), shape=(1, n_z + 2 * n_pt))
    A = sp.vstack([norm_row, sp.hstack([Bw @ T, R])]).tocsc()
    A.eliminate_zeros()
    b = np.concatenate([[1.0], -(Bw @ f)])
    A, b, n_zero = drop_empty_equalities(A, b, 1 + n_eq, scale=1.0)

    # objective: 2 pi (dissipation + work against self-weight and surcharge), kN
    factor = 2.0 * np.pi
    c_w = load_work_weights(case, mesh, factor)
    c_corner = node_cohesion(mat, mesh.layer[:, None], -mesh.corner_coordinates()[..., 1])
    moment = area[:, None] * (c_corner + c_corner.sum(axis=1, keepdims=True)) / 12.0  # integral of c l_i
    cot = np.where(frictional, 1.0 / np.tan(np.where(frictional, phi, 1.0)), 0.0)
    divergence = np.einsum("ei,eind->end", moment * cot[:, None], corner_shape_gradients(mesh))  # (n_el, 6, 2)
    np.add.at(c_w, dof[:, :6].ravel(), factor * divergence[..., 0].ravel())
    np.add.at(c_w, dof[:, 6:].ravel(), factor * divergence[..., 1].ravel())
    weight = np.where(frictional[el], 0.0, factor * dissipation_weights(case, mesh)[el, pt] / scale[el])
    objective = np.concatenate([T.T @ c_w, np.repeat(weight, 2)])
    return ConicProgram(c=objective, A=A, b=b, n_zero=n_zero, n_nonneg=4 * n_pt, n_soc=n_pt,
                        objective_constant=float(c_w @ f), kind="upper",
                        layout={"T": T, "f": f, "motion": motion, "points": (el, pt), "scale": scale,
                                "aux": n_z + aux, "symmetry_factor": factor, "axisymmetric": True})
