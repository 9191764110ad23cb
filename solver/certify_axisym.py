"""Certificates of the circular footing's bounds (axisymmetric), recomputed from the
fields after the solve, as :mod:`solver.certify` does for the strip, with its
tolerances.

Lower bound: the weighted stresses S = r sigma and r sigma_theta of every
triangle are rebuilt from the solution's Bernstein coefficients; the stresses
sigma = S/r, their derivatives and both equilibrium equations (with the hoop
term) are evaluated at interior points of every triangle; tractions are compared
across every interior edge and against the boundary conditions at five points
along each edge; Mohr-Coulomb over the three principal pairs is checked at those
interior points, at every control point and at every point of the far field; then
every equality and cone row of the program. The load is integrated again from
sigma_z on the footing.

Upper bound: the velocities are first restored as the strip's are
(:func:`solver.certify.restore_velocities` with :func:`velocity_rows_axisym`): the
point divided by its load's work rate, then the free velocities projected onto the
Tresca incompressibility rows, div(W, U) = 0 at every corner of every Tresca triangle
(linear: r tr(e) = div(W, U), so tr(e) = 0 at every point), holding every frictional
control point's cone quantities. Then they are rebuilt, their prescribed values and
Tresca incompressibility checked to round-off, the frictional flow rule checked at
every Bernstein coefficient of r^2 times the strain rate (where it holds everywhere)
within the solver's tolerance, and the load recomputed from the restored velocities
alone: the bound is that of an exactly admissible field (or above it).
"""
from __future__ import annotations

import numpy as np

import scipy.sparse as sp

from .certify import (LOAD_TOLERANCE, RESTORED_TOLERANCE, STRESS_TOLERANCE, USABLE, VelocityRows, _reason,
                      program_residuals, restore_velocities, solver_slack, stress_scale)
from .conic import ConicProgram, Solution
from .ground import material_arrays, node_cohesion, surcharge_on_edges
from .lower import traction_coefficients
from .lower_axisym import EDGE_PAIRS, SR, ST, SZ, TRZ
from .mesh import AXIS, FAR_BASE, FAR_SIDE, FOOTING, GROUND, Mesh
from .model import Case
from .upper_axisym import EG, ER, ET, EZ, axis_points, bernstein_basis, dissipation_weights, rate_coefficients
from .upper import corner_shape_gradients, footing_motion, velocities

# interior points of a triangle (barycentric), where the certificate evaluates the stress field
INTERIOR = np.array([[1 / 3, 1 / 3, 1 / 3], [0.6, 0.2, 0.2], [0.2, 0.6, 0.2], [0.2, 0.2, 0.6],
                     [0.9, 0.05, 0.05], [0.05, 0.9, 0.05], [0.05, 0.05, 0.9], [0.45, 0.45, 0.1],
                     [0.1, 0.45, 0.45], [0.45, 0.1, 0.45], [0.98, 0.01, 0.01], [0.01, 0.98, 0.01],
                     [0.01, 0.01, 0.98]])
ALONG = np.array([0.0, 0.25, 0.5, 0.75, 1.0])  # points along an edge where tractions are compared


def mohr_coulomb_excess(stress: np.ndarray, c, phi) -> np.ndarray:
    """kPa: sigma_max (1 + s) - sigma_min (1 - s) - 2 c cos(phi) over the three principal
    stresses of (..., 4) (sigma_r, sigma_z, tau, sigma_theta); <= 0 inside the yield surface."""
    centre = (stress[..., SR] + stress[..., SZ]) / 2
    radius = np.hypot((stress[..., SR] - stress[..., SZ]) / 2, stress[..., TRZ])
    principal = np.stack([centre + radius, centre - radius, stress[..., ST]], axis=-1)
    s = np.sin(phi)
    return principal.max(axis=-1) * (1 + s) - principal.min(axis=-1) * (1 - s) - 2 * c * np.cos(phi)


def _weighted(mesh: Mesh, program: ConicProgram, x: np.ndarray) -> np.ndarray:
    """(n_el, 6, 4) Bernstein coefficients of (S_r, S_z, T, r sigma_theta), kPa m."""
    states = (program.layout["S"] @ x + program.layout["s0"])[program.layout["slot"]]
    return states * mesh.corner_coordinates()[..., 0].mean(axis=1)[:, None, None]


def _evaluate(mesh: Mesh, coefficients: np.ndarray, lam: np.ndarray
              ) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """At barycentric points lam (n_el, n, 3): sigma (n_el, n, 4) = S/r, its gradient
    (n_el, n, 4, 2) in 1/m (both NaN on the axis), r (n_el, n) and S itself (n_el, n, 4)."""
    grad_l = mesh.shape_gradients()  # (n_el, 3, 2)
    basis = bernstein_basis(lam)  # (n_el, n, 6)
    grad_b = np.zeros(lam.shape[:2] + (6, 2))
    for i in range(3):
        grad_b[:, :, i] = 2 * lam[..., i, None] * grad_l[:, None, i]
    for k, (i, j) in enumerate(EDGE_PAIRS):
        grad_b[:, :, 3 + k] = 2 * (lam[..., j, None] * grad_l[:, None, i] + lam[..., i, None] * grad_l[:, None, j])
    weighted = np.einsum("ena,eac->enc", basis, coefficients)
    weighted_grad = np.einsum("enad,eac->encd", grad_b, coefficients)
    r = np.einsum("eni,ei->en", lam, mesh.corner_coordinates()[..., 0])
    inverse = np.where(r > 0.0, 1.0 / np.where(r > 0.0, r, 1.0), np.nan)
    sigma = weighted * inverse[..., None]
    gradient = weighted_grad * inverse[..., None, None]
    gradient[..., 0] -= weighted * inverse[..., None] ** 2  # d(S/r)/dr = S_r'/r - S/r^2
    return sigma, gradient, r, weighted


def equilibrium_residual(mesh: Mesh, weighted: np.ndarray, gamma: np.ndarray, lam: np.ndarray) -> np.ndarray:
    """(n_el, n) kPa: the larger residual of the two equilibrium equations,
    d sigma_r/dr + d tau/dz + (sigma_r - sigma_theta)/r and d tau/dr + d sigma_z/dz + tau/r - gamma,
    times the triangle's size sqrt(2 area), at barycentric points lam (n_el, n, 3) off the axis,
    for weighted stresses given by their Bernstein coefficients (n_el, 6, 4)."""
    sigma, grad, r, _ = _evaluate(mesh, weighted, lam)
    radial = grad[..., SR, 0] + grad[..., TRZ, 1] + (sigma[..., SR] - sigma[..., ST]) / r
    vertical = grad[..., TRZ, 0] + grad[..., SZ, 1] + sigma[..., TRZ] / r - gamma[:, None]
    return np.maximum(np.abs(radial), np.abs(vertical)) * np.sqrt(2.0 * mesh.areas())[:, None]


def lower_stress_field_axisym(case: Case, mesh: Mesh, program: ConicProgram, x: np.ndarray) -> dict:
    """The lower bound's stresses at the corners of every triangle (tension positive, kPa):
    ``stress`` (n_el, 3, 3) as (sigma_r, sigma_z, tau_rz) (on the axis: just inside the
    triangle, where sigma = S/r is defined), ``hoop_kPa`` (n_el, 3), and ``utilisation``
    (the largest principal stress difference over its value on the yield surface at the same
    mean of the two)."""
    corners = np.where(mesh.corner_coordinates()[..., 0][..., None] > 0.0, np.eye(3)[None],
                       0.97 * np.eye(3)[None] + 0.01)
    sigma = _evaluate(mesh, _weighted(mesh, program, x), corners)[0]
    mat = material_arrays(case)
    c = node_cohesion(mat, mesh.layer[:, None], -mesh.corner_coordinates()[..., 1])
    phi = mat["phi"][mesh.layer][:, None]
    centre = (sigma[..., SR] + sigma[..., SZ]) / 2
    radius = np.hypot((sigma[..., SR] - sigma[..., SZ]) / 2, sigma[..., TRZ])
    principal = np.stack([centre + radius, centre - radius, sigma[..., ST]], axis=-1)
    top, bottom = principal.max(axis=-1), principal.min(axis=-1)
    room = 2 * c * np.cos(phi) - (top + bottom) * np.sin(phi)
    utilisation = np.where(room > 0, (top - bottom) / np.where(room > 0, room, 1.0), 1.0)
    return {"stress": sigma[..., :3], "hoop_kPa": sigma[..., ST], "utilisation": utilisation}


def certify_lower_axisym(case: Case, mesh: Mesh, program: ConicProgram, solution: Solution) -> dict:
    """Residuals of the axisymmetric lower-bound stress field (kPa) and whether they pass."""
    if solution.x is None:
        return {"passed": False, "reason": f"no solution ({solution.status})"}
    x = solution.x
    mat = material_arrays(case)
    weighted = _weighted(mesh, program, x)
    n_el = mesh.n_elements

    # equilibrium and yield at interior points of every triangle
    lam = np.broadcast_to(INTERIOR, (n_el,) + INTERIOR.shape)
    sigma, _, _, _ = _evaluate(mesh, weighted, lam)
    equilibrium = float(np.max(equilibrium_residual(mesh, weighted, mat["gamma"][mesh.layer], lam)))
    depth = -np.einsum("eni,ei->en", lam, mesh.corner_coordinates()[..., 1])
    c = node_cohesion(mat, mesh.layer[:, None], depth)
    phi = mat["phi"][mesh.layer][:, None]
    yield_inside = float(np.max(mohr_coulomb_excess(sigma, c, phi)))
    layout = program.layout
    states = (layout["S"] @ x + layout["s0"])[layout["yield_slots"]]
    yield_points = float(np.max(mohr_coulomb_excess(states, layout["yield_c"], layout["yield_phi"])))

    # tractions at five points along every interior and boundary edge
    e1, k1, e2, k2 = mesh.interior_edges()
    normal, _ = mesh.edge_normals(e1, k1)
    sn, tn = traction_coefficients(normal)
    jump = 0.0
    for t in ALONG:
        side1 = _edge_points(e1, k1, t)
        side2 = _edge_points(e2, k2, 1.0 - t)
        s1, _, r1, _ = _evaluate(_sub(mesh, e1), weighted[e1], side1)
        s2 = _evaluate(_sub(mesh, e2), weighted[e2], side2)[0]
        live = r1[:, 0] > 0.0
        diff = (s1 - s2)[live, 0, :3]
        jump = max(jump, float(np.max(np.abs(np.sum(diff * sn[live], 1)), initial=0.0)),
                   float(np.max(np.abs(np.sum(diff * tn[live], 1)), initial=0.0)))
    be, bk, kind = mesh.boundary_element, mesh.boundary_local, mesh.boundary_kind
    bn, _ = mesh.edge_normals(be, bk)
    bsn, btn = traction_coefficients(bn)
    ground = kind == GROUND
    q_edge = surcharge_on_edges(case, mesh, ground)
    shear_free = ground | ((kind == FOOTING) & (case.footing.base == "smooth")) | np.isin(kind, (FAR_SIDE, FAR_BASE))
    boundary, tension = 0.0, 0.0
    for t in ALONG:
        s, _, rb, _ = _evaluate(_sub(mesh, be), weighted[be], _edge_points(be, bk, t))
        live = (rb[:, 0] > 0.0) & (kind != AXIS)
        s = s[:, 0, :3]
        normal_t, shear_t = np.sum(s * bsn, 1), np.sum(s * btn, 1)
        boundary = max(boundary, float(np.max(np.abs(normal_t[ground & live] + q_edge[live[ground]]), initial=0.0)),
                       float(np.max(np.abs(shear_t[shear_free & live]), initial=0.0)))
        tension = max(tension, float(np.max(s[(kind == FOOTING) & live, SZ], initial=0.0)))

    # the load, integrated again from sigma_z r on the footing (Simpson: exact for S_z quadratic)
    foot = np.flatnonzero(kind == FOOTING)
    values = [_evaluate(_sub(mesh, be[foot]), weighted[be[foot]], _edge_points(be[foot], bk[foot], t))
              for t in (0.0, 0.5, 1.0)]
    weighted_sz = [v[3][:, 0, SZ] for v in values]
    span = np.abs(values[2][2][:, 0] - values[0][2][:, 0])
    load = float(-2 * np.pi * np.sum(span / 6 * (weighted_sz[0] + 4 * weighted_sz[1] + weighted_sz[2])))
    objective_load = -float(solution.objective)
    scale = stress_scale(case, load / case.footing.bearing_area)
    equality, cone = program_residuals(program, x)
    residuals = {
        "equilibrium_kPa": equilibrium,
        "traction_jump_kPa": jump,
        "boundary_traction_kPa": max(boundary, tension),
        "yield_violation_kPa": max(yield_inside, yield_points, 0.0),
        "program_equality_kPa": equality,
        "program_cone_violation_kPa": cone,
        "load_mismatch_kPa": abs(load - objective_load) / case.footing.bearing_area,
    }
    limit = STRESS_TOLERANCE * scale
    limits = dict.fromkeys(residuals, limit)
    passed = solution.status in USABLE and all(v <= limit for v in residuals.values())
    return {"passed": bool(passed), "tolerance_kPa": limit, "stress_scale_kPa": scale,
            "load_kN": min(load, objective_load), **residuals, "limits": limits,
            **({} if passed else {"reason": _reason(solution.status, residuals, limits)})}


def _edge_points(element: np.ndarray, local: np.ndarray, t: float) -> np.ndarray:
    """(n, 1, 3) barycentric coordinates of the point a fraction t along local edge k (from
    corner k to corner k + 1) of each element."""
    lam = np.zeros((len(element), 1, 3))
    lam[np.arange(len(element)), 0, local] = 1.0 - t
    lam[np.arange(len(element)), 0, (local + 1) % 3] = t
    return lam


def _sub(mesh: Mesh, element: np.ndarray) -> Mesh:
    """The mesh restricted to some elements (possibly repeated), for evaluating fields."""
    from dataclasses import replace
    return replace(mesh, triangles=mesh.triangles[element], layer=mesh.layer[element])


# -- upper bound -------------------------------------------------------------------

def upper_velocity_field_axisym(case: Case, mesh: Mesh, program: ConicProgram, x: np.ndarray) -> dict:
    """The upper bound's fields per unit footing velocity: ``velocity`` (n_nodes, 2) as
    (u_r, u_z) = (W, U)/r (on the axis u_r = 0, u_z = dU/dr); ``strain_rate`` (n_el, 3, 3)
    as (e_r, e_z, g_rz) at the corners (on the axis, at the centroid) in 1/m; ``hoop_rate``
    (n_el, 3); ``rates`` (n_el, 6, 4) the Bernstein coefficients of r^2 (e_r, e_z, g_rz,
    e_theta); ``dissipation`` (n_el,) kN per unit footing velocity (whole ring) and
    ``dissipation_density`` (n_el,) kN/m^3 per unit footing velocity."""
    w = velocities(program, x)  # (n_nodes, 2): W, U
    tri = mesh.triangles
    nodal = np.concatenate([w[tri, 0], w[tri, 1]], axis=1)  # (n_el, 12)
    rates = np.einsum("eacn,en->eac", rate_coefficients(mesh), nodal)
    r_nodes = mesh.points[:, 0]
    velocity = np.where(r_nodes[:, None] > 0.0, w / np.where(r_nodes > 0.0, r_nodes, 1.0)[:, None], 0.0)
    # on the axis: u_r = 0 and u_z = dU/dr, averaged over the triangles around the node
    grad = corner_shape_gradients(mesh)  # (n_el, 3, 6, 2)
    dU_dr = np.einsum("emi,ei->em", grad[..., 0], w[tri, 1])
    at_nodes = np.concatenate([dU_dr, np.stack([(dU_dr[:, i] + dU_dr[:, j]) / 2 for i, j in EDGE_PAIRS], 1)], 1)
    total, count = np.zeros(len(r_nodes)), np.zeros(len(r_nodes))
    np.add.at(total, tri.ravel(), at_nodes.ravel()), np.add.at(count, tri.ravel(), 1.0)
    axis = r_nodes == 0.0
    velocity[axis, 1] = total[axis] / np.maximum(count[axis], 1.0)
    r = mesh.corner_coordinates()[..., 0]
    rc = r.mean(axis=1)
    centre = np.einsum("a,eac->ec", bernstein_basis(np.full(3, 1 / 3)), rates) / rc[:, None] ** 2
    corner = np.where(r[..., None] > 0.0, rates[:, :3] / np.where(r > 0.0, r, 1.0)[..., None] ** 2,
                      centre[:, None, :])
    meridian = _dissipation(case, mesh, nodal, rates)
    return {"velocity": velocity, "strain_rate": corner[..., :3], "hoop_rate": corner[..., ET], "rates": rates,
            "dissipation": 2 * np.pi * meridian, "dissipation_density": meridian / (mesh.areas() * rc)}


def _dissipation(case: Case, mesh: Mesh, nodal: np.ndarray, rates: np.ndarray) -> np.ndarray:
    """(n_el,) kN/m per unit footing velocity: integral of r D dA over each triangle; for
    phi > 0 exactly c cot(phi) integral(div(W, U) dA), for Tresca the upper estimate
    sum_a g(E_a) w_a (see solver.upper_axisym)."""
    mat = material_arrays(case)
    phi = mat["phi"][mesh.layer]
    frictional = phi > 0.0
    c = node_cohesion(mat, mesh.layer[:, None], -mesh.corner_coordinates()[..., 1])
    moment = mesh.areas()[:, None] * (c + c.sum(axis=1, keepdims=True)) / 12.0
    grad = corner_shape_gradients(mesh)
    divergence = np.einsum("emi,ei->em", grad[..., 0], nodal[:, :6]) + np.einsum("emi,ei->em", grad[..., 1], nodal[:, 6:])
    cot = np.where(frictional, 1.0 / np.tan(np.where(frictional, phi, 1.0)), 0.0)
    exact = cot * np.sum(moment * divergence, axis=1)
    bound = np.sum(dissipation_weights(case, mesh) * _absolute_sum(rates), axis=1)
    return np.where(frictional, exact, bound)


def _absolute_sum(rates: np.ndarray) -> np.ndarray:
    """|e_1| + |e_2| + |e_3| of r^2 times the rates (..., 4): max(|E_r + E_z|, ||(E_r - E_z, E_g)||) + |E_theta|."""
    return (np.maximum(np.abs(rates[..., ER] + rates[..., EZ]), np.hypot(rates[..., ER] - rates[..., EZ], rates[..., EG]))
            + np.abs(rates[..., ET]))


def velocity_rows_axisym(case: Case, mesh: Mesh, program: ConicProgram) -> VelocityRows:
    """Rows over the circle's upper-bound free velocities z (solver.certify.VelocityRows):
    ``exact``, L div(W, U) at the three corners of every Tresca triangle (the program's own
    rows); ``held``, the scaled E_r + E_z, E_r - E_z, E_g, E_theta (component-major) at every
    frictional control point off the axis; ``work``, the load's work rate -v_f; ``breach``,
    sin(phi) (max(|E_r + E_z|, ||(E_r - E_z, E_g)||) + |E_theta|) - tr E at those points,
    scaled as in the program (L / r_c^2: velocity units)."""
    T = program.layout["T"]
    n_w = 2 * len(mesh.points)
    dof = np.concatenate([2 * mesh.triangles, 2 * mesh.triangles + 1], axis=1)  # (n_el, 12)
    phi = material_arrays(case)["phi"][mesh.layer]
    L = np.sqrt(2.0 * mesh.areas())
    grad = corner_shape_gradients(mesh) * L[:, None, None, None]  # (n_el, 3, 6, 2)
    tresca = np.flatnonzero(phi == 0.0)
    divergence = np.concatenate([grad[tresca, ..., 0], grad[tresca, ..., 1]], axis=2).reshape(-1, 12)
    el, pt = np.nonzero(~axis_points(mesh) & (phi > 0.0)[:, None])
    E = rate_coefficients(mesh)[el, pt] * (L / mesh.corner_coordinates()[..., 0].mean(axis=1) ** 2)[el, None, None]
    cone = [E[:, ER] + E[:, EZ], E[:, ER] - E[:, EZ], E[:, EG], E[:, ET]]  # each (n_points, 12)

    def assemble_rows(element: np.ndarray, coefficients: np.ndarray) -> sp.csr_matrix:
        rows = np.repeat(np.arange(len(coefficients)), 12)
        w = sp.coo_matrix((coefficients.ravel(), (rows, dof[element].ravel())), shape=(len(coefficients), n_w))
        return (w.tocsr() @ T).tocsr()

    held = assemble_rows(np.tile(el, 4), np.concatenate(cone))
    sin_phi = np.sin(phi[el])

    def breach(z: np.ndarray) -> np.ndarray:
        volumetric, difference, shear, hoop = (held @ z).reshape(4, -1)
        return sin_phi * (np.maximum(np.abs(volumetric), np.hypot(difference, shear)) + np.abs(hoop)) \
            - (volumetric + hoop)

    work_row = np.zeros(T.shape[1])
    work_row[program.layout["motion"]["v"]] = -1.0
    return VelocityRows(assemble_rows(np.repeat(tresca, 3), divergence), held, work_row, len(el), 4, breach)


def restore_velocities_axisym(case: Case, mesh: Mesh, program: ConicProgram, solution: Solution) -> Solution:
    """The solution with its velocities restored as the strip's (solver.certify.restore_velocities)."""
    return restore_velocities(case, mesh, program, solution, rows=velocity_rows_axisym(case, mesh, program))


def certify_upper_axisym(case: Case, mesh: Mesh, program: ConicProgram, solution: Solution) -> dict:
    """Residuals of the axisymmetric upper-bound velocity field and the load recomputed from it,
    after the velocities are restored (:func:`restore_velocities_axisym`; pass a restored
    solution to have the fields of exactly the field certified)."""
    if solution.x is None:
        return {"passed": False, "reason": f"no solution ({solution.status})"}
    solution = restore_velocities_axisym(case, mesh, program, solution)
    x = solution.x
    field = upper_velocity_field_axisym(case, mesh, program, x)
    w = velocities(program, x)
    motion = footing_motion(program, x)
    edges, kind = mesh.boundary_edges, mesh.boundary_kind
    fixed = np.unique(edges[np.isin(kind, (FAR_SIDE, FAR_BASE, AXIS))])
    foot = np.unique(edges[kind == FOOTING])
    parts = [np.abs(w[fixed]).ravel(), np.abs(w[foot, 1] - mesh.points[foot, 0] * motion["v"]),
             [abs(motion["v"] + 1.0)]]
    if case.footing.base == "rough":
        parts.append(np.abs(w[foot, 0]))
    largest = max(1.0, float(np.max(np.abs(x[:program.layout["T"].shape[1]]))))  # the largest velocity
    kinematic = float(max(np.max(p, initial=0.0) for p in parts)) / largest

    mat = material_arrays(case)
    phi = mat["phi"][mesh.layer]
    r = mesh.corner_coordinates()[..., 0]
    L = np.sqrt(2.0 * mesh.areas())
    scale = (L / r.mean(axis=1) ** 2)[:, None]  # r^2 rates -> velocity units, as in the program
    rates = field["rates"]
    trace = (rates[..., ER] + rates[..., EZ] + rates[..., ET]) * scale
    live = ~axis_points(mesh)
    frictional = (phi > 0.0)[:, None] & live
    # Tresca: tr E = r div(W, U) = 0 (restored to round-off); phi > 0: the cone, within solver slack
    incompressible = float(np.max(np.abs(trace)[(phi == 0.0)[:, None] & live], initial=0.0))
    breach = np.sin(phi)[:, None] * _absolute_sum(rates) * scale - trace
    flow = float(max(np.max(breach[frictional], initial=0.0), 0.0))

    tri = mesh.triangles
    gamma = mat["gamma"][mesh.layer]
    gravity = float(np.sum(gamma * mesh.areas() / 3.0 * w[tri[:, 3:], 1].sum(axis=1)))  # integral of gamma U
    ground = kind == GROUND
    _, length = mesh.edge_normals(mesh.boundary_element[ground], mesh.boundary_local[ground])
    surcharge = float(np.sum((surcharge_on_edges(case, mesh, ground) * length)[:, None]
                             * np.array([1 / 6, 1 / 6, 2 / 3]) * w[edges[ground], 1]))
    dissipation = float(np.sum(field["dissipation"])) / (2 * np.pi)
    recomputed = 2 * np.pi * (dissipation + gravity + surcharge)
    objective = solution.objective
    load = max(recomputed, objective)
    mismatch = abs(recomputed - objective) / max(abs(objective), 1e-12)
    residuals = {"velocity_boundary": kinematic, "incompressibility": incompressible / largest,
                 "flow_rule": flow, "load_mismatch": mismatch}
    # As for the strip: the prescribed velocities and Tresca incompressibility to round-off
    # (restored), the frictional cones within what the solver's own stopping test lets
    # through (its feasibility tolerance on this program, certify.solver_slack).
    slack = solver_slack(program, x)
    limits = {"velocity_boundary": RESTORED_TOLERANCE, "incompressibility": RESTORED_TOLERANCE,
              "flow_rule": slack, "load_mismatch": LOAD_TOLERANCE}
    passed = solution.status in USABLE and all(residuals[k] <= limits[k] for k in residuals)
    out = {"passed": bool(passed), "restored_tolerance": RESTORED_TOLERANCE, "flow_tolerance": slack,
           "load_tolerance": LOAD_TOLERANCE, "load_kN": load, "objective_kN": objective, "recomputed_kN": recomputed,
           "dissipation_kN": 2 * np.pi * dissipation, "gravity_work_kN": 2 * np.pi * gravity,
           "surcharge_work_kN": 2 * np.pi * surcharge, **residuals, "limits": limits, **solution.notes}
    if not passed:
        out["reason"] = _reason(solution.status, residuals, limits)
    return out
