"""Upper bound: a Mesh of 6-node triangles -> one sparse conic program.

Method (Makrodimopoulos & Martin 2006, 2007):

* velocities (u, v) are quadratic and continuous over 6-node triangles, so
  strain rates are linear in each triangle;
* at each corner of each triangle the strain rate (ex, ey, gxy) obeys the
  associated Mohr-Coulomb flow rule written as a cone,
  rho >= ||(ex - ey, gxy)||, ex + ey = rho sin(phi);
  strain rates and the corner values interpolate linearly, so the flow rule
  holds everywhere in the triangle (with phi = 0, incompressibility holds
  everywhere and the interpolated rho bounds ||(ex - ey, gxy)|| from above);
* the plastic dissipation is integrated exactly from the corner values,
  D = integral of c cos(phi) rho, with c linear in the triangle (Tresca strength
  rising with depth); for phi > 0 this equals c cot(phi) times the integral of
  the volumetric rate, the exact dissipation of any admissible strain rate;
* the rigid footing moves down with unit velocity (rough: no slip; smooth:
  free to slide), the far boundary is fixed, the symmetry line has no normal
  velocity; a truncated domain only adds kinematic restrictions, so the bound
  stays rigorous;
* the collapse load is the dissipation plus the work done against self-weight
  and the surcharge: Q = D + integral(gamma v dA) + integral(q v ds) (v upward).

Velocities are dimensionless (per unit footing velocity); the objective is Q in kN/m.
"""
from __future__ import annotations

import numpy as np
import scipy.sparse as sp

from .conic import ConicProgram, assemble, drop_empty_equalities
from .ground import material_arrays, node_cohesion, surcharge_on_edges
from .mesh import FAR_BASE, FAR_SIDE, FIXED, FOOTING, GROUND, SYMMETRY, Mesh
from .model import Case

# Corner gradients of the 6-node shape functions in terms of the linear ones:
# at corner m, grad N_i = CORNER_GRADIENT[m, i, :] @ (grad L_0, grad L_1, grad L_2).
CORNER_GRADIENT = np.zeros((3, 6, 3))
for _m in range(3):
    CORNER_GRADIENT[_m, _m, _m] = 3.0  # corner node m: (4 L_m - 1) grad L_m
    for _i in range(3):
        if _i != _m:
            CORNER_GRADIENT[_m, _i, _i] = -1.0  # other corners
    for _edge, (_i, _j) in enumerate(((0, 1), (1, 2), (2, 0))):  # midside 3 + edge: 4 (L_j grad L_i + L_i grad L_j)
        if _m == _i:
            CORNER_GRADIENT[_m, 3 + _edge, _j] = 4.0
        elif _m == _j:
            CORNER_GRADIENT[_m, 3 + _edge, _i] = 4.0


def corner_shape_gradients(mesh: Mesh) -> np.ndarray:
    """(n_el, 3 corners, 6 nodes, 2) gradients (1/m) of the quadratic shape functions at the corners."""
    return np.einsum("mik,ekd->emid", CORNER_GRADIENT, mesh.shape_gradients())


def velocity_map(case: Case, mesh: Mesh) -> tuple[sp.csr_matrix, np.ndarray, dict]:
    """Nodal velocities w (2 n_nodes: u0, v0, u1, v1, ...) as w = T z + f.

    z holds the free nodal components and the rigid footing's motion: a
    translation (u_f, v_f) and a rotation omega about the load's point of
    application (e, 0), so that a footing node at x moves by
    (u_f, v_f + omega (x - e)) (rough: no slip; smooth: u free). The far boundary
    is fixed and the symmetry line has u = 0. On a half domain the footing only
    translates vertically. Returns T, f and the indices of (u_f, v_f, omega) in z
    (-1 where not a variable).
    """
    n = len(mesh.points)
    edges, kind = mesh.boundary_edges, mesh.boundary_kind
    role = np.zeros((n, 2), dtype=int)  # 0 free, 1 fixed at 0, 2 follows the footing
    role[edges[np.isin(kind, (FAR_SIDE, FAR_BASE, FIXED))].ravel()] = 1  # fixed: a rigid boundary, at rest
    role[edges[kind == SYMMETRY].ravel(), 0] = 1
    foot = np.unique(edges[kind == FOOTING].ravel())
    role[foot, 1] = 2
    if case.footing.base == "rough":
        role[foot, 0] = np.where(role[foot, 0] == 1, 1, 2)
    free = np.flatnonzero(role.ravel() == 0)
    n_free = len(free)
    half = mesh.domain.half
    motion = {"u": -1 if half else n_free, "v": n_free + (0 if half else 1), "omega": -1 if half else n_free + 2}
    n_z = n_free + (1 if half else 3)
    rows, cols, vals = [free], [np.arange(n_free)], [np.ones(n_free)]
    follows_u = np.flatnonzero(role[:, 0] == 2)
    if motion["u"] >= 0:
        rows.append(2 * follows_u), cols.append(np.full(len(follows_u), motion["u"])), vals.append(np.ones(len(follows_u)))
    follows_v = np.flatnonzero(role[:, 1] == 2)
    rows.append(2 * follows_v + 1), cols.append(np.full(len(follows_v), motion["v"])), vals.append(np.ones(len(follows_v)))
    if motion["omega"] >= 0:
        arm = mesh.points[follows_v, 0] - case.footing.eccentricity
        rows.append(2 * follows_v + 1), cols.append(np.full(len(follows_v), motion["omega"])), vals.append(arm)
    T = sp.coo_matrix((np.concatenate(vals), (np.concatenate(rows), np.concatenate(cols))),
                      shape=(2 * n, n_z)).tocsr()
    return T, np.zeros(2 * n), motion


def upper_bound_program(case: Case, mesh: Mesh) -> ConicProgram:
    """Assemble the upper-bound program (vectorised; one COO assembly, then the
    velocity map w = T z + f applied as one sparse product).

    Variables: z (free velocities and the footing's motion), rho~ at the 3
    corners of every element, then t at the 3 Bernstein points of every
    velocity jump (:func:`jump_rows`). Rows: the load's unit work rate, the
    corner flow-rule equalities, the jumps' equalities, the jumps' inequalities
    (nonnegative rows), the corner cones.
    """
    if mesh.order != 2:
        raise ValueError("the upper bound needs a second-order (6-node) mesh")
    n_el, n_nodes = mesh.n_elements, len(mesh.points)
    n_jump = 0 if mesh.jumps is None else len(mesh.jumps)
    mat = material_arrays(case)
    factor = 2.0 if mesh.domain.half else 1.0  # the half domain carries half the load
    T, f, motion = velocity_map(case, mesh)
    n_z = T.shape[1]
    rho = 3 * np.arange(n_el)[:, None] + np.arange(3)  # scaled rho at each corner (own block)
    t_jump = 3 * n_el + 3 * np.arange(n_jump)[:, None] + np.arange(3)  # after the rho block

    area = mesh.areas()
    L = np.sqrt(2.0 * area)  # rows are scaled by the element size so entries are O(1)
    grad = corner_shape_gradients(mesh) * L[:, None, None, None]  # (n_el, 3, 6, 2)
    phi = mat["phi"][mesh.layer]
    tri = mesh.triangles
    col_u, col_v = 2 * tri, 2 * tri + 1  # full velocity components of each element's 6 nodes

    # Rows over the full velocity vector w (Bw) and over rho and t (R), in s = b - A x form.
    n_eq = 3 * n_el + 3 * n_jump
    w_rows, w_cols, w_vals, r_rows, r_cols, r_vals = [], [], [], [], [], []
    for m in range(3):  # the three corners of every element at once
        gx, gy = grad[:, m, :, 0], grad[:, m, :, 1]
        r_eq = (3 * np.arange(n_el) + m)[:, None]  # L (ex + ey) - sin(phi) rho~ = 0
        cone = (n_eq + 6 * n_jump + 9 * np.arange(n_el) + 3 * m)[:, None]
        for r, wu, wv in ((r_eq, gx, gy), (cone + 1, -gx, gy), (cone + 2, -gy, -gx)):
            w_rows += [np.broadcast_to(r, wu.shape), np.broadcast_to(r, wv.shape)]
            w_cols += [col_u, col_v]
            w_vals += [wu, wv]
        r_rows += [r_eq[:, 0], cone[:, 0]]
        r_cols += [rho[:, m], rho[:, m]]
        r_vals += [-np.sin(phi), -np.ones(n_el)]  # s0 = rho~
    jump_weight = np.zeros((0, 3))
    if n_jump:
        rows, jump_weight = jump_rows(case, mesh, t_jump, first_equality=3 * n_el, first_inequality=n_eq)
        for part, more in zip((w_rows, w_cols, w_vals, r_rows, r_cols, r_vals), rows):
            part += more
    n_rows = n_eq + 6 * n_jump + 9 * n_el
    n_aux = 3 * n_el + 3 * n_jump
    Bw = assemble(w_rows, w_cols, w_vals, n_rows, 2 * n_nodes)
    R = assemble(r_rows, r_cols, r_vals, n_rows, n_aux)
    b = -(Bw @ f)

    # The load's work rate on the footing's motion is 1: sin(d) u_f - cos(d) v_f = 1.
    delta = np.radians(case.footing.load_inclination)
    entries = {motion["u"]: np.sin(delta), motion["v"]: -np.cos(delta)}
    idx = [k for k, v in entries.items() if k >= 0 and v != 0.0]
    norm_row = sp.csr_matrix((np.array([entries[k] for k in idx]), (np.zeros(len(idx), int), idx)),
                             shape=(1, n_z + n_aux))
    A = sp.vstack([norm_row, sp.hstack([Bw @ T, R])]).tocsc()
    A.eliminate_zeros()
    b = np.concatenate([[1.0], b])
    n_zero = 1 + n_eq
    A, b, n_zero = drop_empty_equalities(A, b, n_zero, scale=1.0)

    # Objective: dissipation + work against gravity and surcharge, c.x + constant.
    depth = -mesh.points[tri[:, :3], 1]
    c_corner = node_cohesion(mat, mesh.layer[:, None], depth)
    weight = area[:, None] * (c_corner + c_corner.sum(axis=1, keepdims=True)) / 12.0  # exact for linear c
    c_w = load_work_weights(case, mesh, factor)  # objective over the full velocity vector
    objective = np.concatenate([T.T @ c_w, factor * (np.cos(phi)[:, None] * weight / L[:, None]).ravel(),
                                factor * jump_weight.ravel()])
    return ConicProgram(c=objective, A=A, b=b, n_zero=n_zero, n_nonneg=6 * n_jump, n_soc=3 * n_el,
                        objective_constant=float(c_w @ f), kind="upper",
                        layout={"T": T, "f": f, "motion": motion, "rho": n_z + rho, "jump_t": n_z + t_jump,
                                "symmetry_factor": factor})


def load_work_weights(case: Case, mesh: Mesh, factor: float) -> np.ndarray:
    """(2 n_nodes,) kN per unit velocity component: the work rate against self-weight and the
    surcharge, factor * (integral(gamma v dA) + integral(q v ds)) with v the second velocity
    component of each node (upward), exact for quadratic v (A/3 at each midside node; 1/6,
    1/6, 2/3 of q L along a ground edge)."""
    mat = material_arrays(case)
    c_w = np.zeros(2 * len(mesh.points))
    gamma = mat["gamma"][mesh.layer]
    np.add.at(c_w, (2 * mesh.triangles[:, 3:] + 1).ravel(), np.repeat(factor * gamma * mesh.areas() / 3.0, 3))
    ground = mesh.boundary_kind == GROUND
    g_edges = mesh.boundary_edges[ground]
    _, g_len = mesh.edge_normals(mesh.boundary_element[ground], mesh.boundary_local[ground])
    q_edge = surcharge_on_edges(case, mesh, ground)
    np.add.at(c_w, (2 * g_edges + 1).ravel(),
              (factor * (q_edge * g_len)[:, None] * np.array([1 / 6, 1 / 6, 2 / 3])).ravel())
    return c_w


# Bernstein coefficients (b0, b1, b2) of a quadratic along an edge from its values at
# the first corner, the second corner and the midside: b1 = 2 q_mid - (q_a + q_b) / 2.
BERNSTEIN_FROM_NODES = np.array([[1.0, 0.0, 0.0], [-0.5, -0.5, 2.0], [0.0, 1.0, 0.0]])


def jump_geometry(mesh: Mesh) -> dict:
    """Each velocity jump's nodes on both sides, in the order (first corner,
    second corner, midside) along the edge of element 1; its unit tangent
    (along element 1's edge), unit normal (out of element 1) and length (m)."""
    e1, k1, e2, k2 = mesh.jumps.T
    tri = mesh.triangles
    side1 = np.column_stack([tri[e1, k1], tri[e1, (k1 + 1) % 3], tri[e1, 3 + k1]])
    side2 = np.column_stack([tri[e2, (k2 + 1) % 3], tri[e2, k2], tri[e2, 3 + k2]])
    normal, length = mesh.edge_normals(e1, k1)
    tangent = np.column_stack([-normal[:, 1], normal[:, 0]])
    return {"side1": side1, "side2": side2, "normal": normal, "tangent": tangent, "length": length,
            "element": e1}


def jump_dissipation_weights(case: Case, mesh: Mesh, geometry: dict) -> np.ndarray:
    """(n_jump, 3) kN/m per unit t: the integral of c times each Bernstein basis
    polynomial along the edge, c linear between the corners (element 1's layer).

    With c = c_a (1 - s) + c_b s and B0 = (1 - s)^2, B1 = 2 s (1 - s), B2 = s^2:
    the integrals are L (c_a/4 + c_b/12), L (c_a + c_b)/6, L (c_a/12 + c_b/4).
    """
    mat = material_arrays(case)
    depth = -mesh.points[geometry["side1"][:, :2], 1]
    layer = mesh.layer[geometry["element"]]
    c = node_cohesion(mat, layer[:, None], depth)
    ca, cb = c[:, 0], c[:, 1]
    return geometry["length"][:, None] * np.column_stack([ca / 4 + cb / 12, (ca + cb) / 6, ca / 12 + cb / 4])


def jump_rows(case: Case, mesh: Mesh, t_index: np.ndarray, first_equality: int, first_inequality: int):
    """Rows of the velocity jumps (after Sloan & Kleeman 1995 for linear elements;
    here quadratic jumps bounded through their Bernstein coefficients).

    The jump [w] = w(element 2) - w(element 1) is quadratic along the edge; write
    it as b0 B0 + b1 B1 + b2 B2 with the nonnegative Bernstein basis (sum 1). For
    every coefficient: n.b_i = tan(phi) t_i and t_i >= |t.b_i| (two nonnegative
    rows, t_i - t.b_i >= 0 and t_i + t.b_i >= 0). The jump at any point is a convex combination of the
    b_i, so the Mohr-Coulomb condition [w_n] >= tan(phi) |[w_t]| holds along
    the whole edge. Its dissipation, c cot(phi) [w_n] (c |[w_t]| for Tresca),
    is then at most the sum of t_i times the integral of c B_i (exact for
    phi > 0; for phi = 0 an upper estimate of c |[w_t]|): the bound stays rigorous.
    Returns the triplet lists (w rows, w cols, w vals, aux rows, aux cols, aux
    vals) and the dissipation weights.
    """
    geometry = jump_geometry(mesh)
    n_jump = len(geometry["length"])
    phi = material_arrays(case)["phi"][mesh.layer[geometry["element"]]]
    nodes = np.concatenate([geometry["side2"], geometry["side1"]], axis=1)  # (n_jump, 6)
    # b_i over the 6 nodes: +B on side 2, -B on side 1
    coeff = np.concatenate([BERNSTEIN_FROM_NODES, -BERNSTEIN_FROM_NODES], axis=1)  # (3, 6)
    out = [[] for _ in range(6)]
    w_rows, w_cols, w_vals, r_rows, r_cols, r_vals = out
    jump = np.arange(n_jump)
    for i in range(3):
        eq = first_equality + 3 * jump + i
        below = first_inequality + 6 * jump + 2 * i  # s = t_i - t.b_i, then s = t_i + t.b_i
        for row, direction, sign in ((eq, geometry["normal"], 1.0), (below, geometry["tangent"], 1.0),
                                     (below + 1, geometry["tangent"], -1.0)):
            for d in range(2):  # u and v components
                w_rows.append(np.repeat(row, 6))
                w_cols.append((2 * nodes + d).ravel())
                w_vals.append((sign * direction[:, d, None] * coeff[i][None, :]).ravel())
        r_rows += [eq, below, below + 1]
        r_cols += [t_index[:, i]] * 3
        r_vals += [-np.tan(phi), -np.ones(n_jump), -np.ones(n_jump)]  # n.b_i - tan(phi) t_i = 0
    return out, jump_dissipation_weights(case, mesh, geometry)


def velocities(program: ConicProgram, x: np.ndarray) -> np.ndarray:
    """(n_nodes, 2) nodal velocities (per unit work rate of the load) from a solution."""
    T, f = program.layout["T"], program.layout["f"]
    return (T @ x[:T.shape[1]] + f).reshape(-1, 2)


def footing_motion(program: ConicProgram, x: np.ndarray) -> dict:
    """The rigid footing's translation (u, v) and rotation omega (rad per unit time) from a solution."""
    motion = program.layout["motion"]
    return {key: (float(x[i]) if i >= 0 else 0.0) for key, i in motion.items()}
