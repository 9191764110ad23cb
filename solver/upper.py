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

from .conic import ConicProgram, assemble, drop_empty_equalities
from .lower import material_arrays, node_cohesion
from .mesh import FAR_BASE, FAR_SIDE, FOOTING, GROUND, SYMMETRY, Mesh
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


def fixed_velocities(case: Case, mesh: Mesh) -> tuple[np.ndarray, np.ndarray]:
    """(n_nodes, 2) mask of prescribed velocity components and their values."""
    fixed = np.zeros((len(mesh.points), 2), dtype=bool)
    value = np.zeros((len(mesh.points), 2))
    edges, kind = mesh.boundary_edges, mesh.boundary_kind
    far = edges[np.isin(kind, (FAR_SIDE, FAR_BASE))].ravel()
    fixed[far] = True
    fixed[edges[kind == SYMMETRY].ravel(), 0] = True
    foot = edges[kind == FOOTING].ravel()
    fixed[foot, 1], value[foot, 1] = True, -1.0
    if case.footing.base == "rough":
        fixed[foot, 0] = True
    value[~fixed] = 0.0
    value[far] = 0.0
    return fixed, value


def upper_bound_program(case: Case, mesh: Mesh) -> ConicProgram:
    """Assemble the upper-bound program (vectorised; one COO assembly)."""
    if mesh.order != 2:
        raise ValueError("the upper bound needs a second-order (6-node) mesh")
    n_el, n_nodes = mesh.n_elements, len(mesh.points)
    mat = material_arrays(case)
    q = case.overburden_kPa()
    factor = 2.0 if mesh.domain.half else 1.0  # the half domain carries half the load

    fixed, value = fixed_velocities(case, mesh)
    dof = np.full((n_nodes, 2), -1)
    dof[~fixed] = np.arange(int((~fixed).sum()))
    n_vel = int((~fixed).sum())
    rho = n_vel + np.arange(3 * n_el).reshape(n_el, 3)  # scaled rho at each corner
    n_var = n_vel + 3 * n_el

    area = mesh.areas()
    L = np.sqrt(2.0 * area)  # rows are scaled by the element size so entries are O(1)
    grad = corner_shape_gradients(mesh) * L[:, None, None, None]  # (n_el, 3, 6, 2)
    phi = mat["phi"][mesh.layer]
    tri = mesh.triangles
    dof_u, dof_v = dof[tri, 0], dof[tri, 1]  # (n_el, 6)
    val_u, val_v = value[tri, 0], value[tri, 1]

    rows, cols, vals = [], [], []
    n_rows = 3 * n_el + 9 * n_el  # flow-rule equalities, then cones
    b = np.zeros(n_rows)

    def strain_row(r, wu, wv):
        """Add -(wu . u + wv . v) to rows r (s = b - A x form); fixed values go to b."""
        for w, d_, val in ((wu, dof_u, val_u), (wv, dof_v, val_v)):
            free = d_ >= 0
            rr = np.broadcast_to(r[:, None], d_.shape)
            rows.append(rr[free]), cols.append(d_[free]), vals.append(w[free])
            np.add.at(b, rr[~free].ravel(), -(w * val)[~free].ravel())

    for m in range(3):  # the three corners of every element at once
        gx, gy = grad[:, m, :, 0], grad[:, m, :, 1]
        r_eq = 3 * np.arange(n_el) + m  # L (ex + ey) - sin(phi) rho~ = 0
        strain_row(r_eq, gx, gy)
        rows.append(r_eq), cols.append(rho[:, m]), vals.append(-np.sin(phi))
        cone = 3 * n_el + 9 * np.arange(n_el) + 3 * m
        rows.append(cone), cols.append(rho[:, m]), vals.append(-np.ones(n_el))  # s0 = rho~
        strain_row(cone + 1, -gx, gy)  # s1 = L (ex - ey)
        strain_row(cone + 2, -gy, -gx)  # s2 = L gxy
    A = assemble(rows, cols, vals, n_rows, n_var)
    n_zero = 3 * n_el
    A, b, n_zero = drop_empty_equalities(A, b, n_zero, scale=1.0)

    # Objective: dissipation + work against gravity and surcharge, as c.x + constant.
    depth = -mesh.points[tri[:, :3], 1]
    c_corner = node_cohesion(mat, mesh.layer[:, None], depth)
    weight = area[:, None] * (c_corner + c_corner.sum(axis=1, keepdims=True)) / 12.0  # exact for linear c
    objective = np.zeros(n_var)
    objective[rho] = factor * np.cos(phi)[:, None] * weight / L[:, None]
    constant = 0.0
    gamma = mat["gamma"][mesh.layer]
    mid_weight = np.repeat((gamma * area / 3.0)[:, None], 3, axis=1)  # integral of v: A/3 at midside nodes
    constant += _add_linear(objective, dof_v[:, 3:], val_v[:, 3:], factor * mid_weight)
    ground = mesh.boundary_kind == GROUND
    g_edges = mesh.boundary_edges[ground]
    _, g_len = mesh.edge_normals(mesh.boundary_element[ground], mesh.boundary_local[ground])
    surcharge_weight = factor * q * g_len[:, None] * np.array([1 / 6, 1 / 6, 2 / 3])
    constant += _add_linear(objective, dof[g_edges, 1], value[g_edges, 1], surcharge_weight)
    return ConicProgram(c=objective, A=A, b=b, n_zero=n_zero, n_soc=3 * n_el, objective_constant=constant,
                        kind="upper",
                        layout={"dof": dof, "fixed_value": value, "rho": rho, "symmetry_factor": factor})


def _add_linear(objective: np.ndarray, dofs: np.ndarray, values: np.ndarray, weights: np.ndarray) -> float:
    """Add weights to the objective at free dofs; return the constant from fixed ones."""
    free = dofs >= 0
    np.add.at(objective, dofs[free], weights[free])
    return float(np.sum((weights * values)[~free]))


def velocities(program: ConicProgram, x: np.ndarray) -> np.ndarray:
    """(n_nodes, 2) nodal velocities (per unit footing velocity) from a solution."""
    dof, value = program.layout["dof"], program.layout["fixed_value"]
    out = value.copy()
    out[dof >= 0] = x[dof[dof >= 0]]
    return out
