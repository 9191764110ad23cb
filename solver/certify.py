"""Certificates: check each bound's solution after the solve, in SI units.

A bound is reported only when its certificate passes; the solver's status word
does not decide (interior-point solves often end "almost solved" with a
perfectly usable point, and sometimes "solved" with one that is not).

Lower bound: the stress field is recomputed from the solution and checked on
its own terms, independently of the assembled matrix where it can be:
equilibrium in every triangle, traction jumps across every edge, boundary
tractions, yield at every node; then every equality and cone row of the
program (this covers the extension elements). Upper bound: the velocity field
is rebuilt, its prescribed values checked, the flow rule checked at every
corner, and the collapse load recomputed from the velocities alone.

Tolerances (relative, stated in every certificate): residuals of stresses
below ``STRESS_TOLERANCE`` times the stress scale of the case (the largest of
the computed collapse pressure, the strengths, the overburden and gamma*B);
flow-rule residuals below ``FLOW_TOLERANCE`` of the footing velocity; the
upper bound recomputed from the velocities within ``LOAD_TOLERANCE`` of the
solver's objective (the larger of the two is reported).
"""
from __future__ import annotations

import numpy as np

from .conic import ConicProgram, Solution
from .ground import material_arrays, node_cohesion, surcharge_on_edges
from .lower import SX, SY, TXY, traction_coefficients
from .mesh import FAR_BASE, FAR_SIDE, FIXED, FOOTING, GROUND, SYMMETRY, Mesh
from .model import Case
from .upper import (BERNSTEIN_FROM_NODES, corner_shape_gradients, footing_motion, jump_dissipation_weights,
                    jump_geometry, velocities)

STRESS_TOLERANCE = 1e-6
FLOW_TOLERANCE = 1e-6
# The solver's objective exceeds the dissipation recomputed from its velocities by
# the slack left in the cones (t > ||.||), spread evenly over all of them: the
# complementarity the interior-point method stops at (relative duality gap 1e-4,
# conic.default_settings). Measured 1.2e-4 to 4.8e-4 at 2k-8k triangles on
# Tresca soil whose strength rises from zero at the surface. Both values are
# upper bounds of the same field and the larger is reported, so this tolerance
# screens for a solution the solver got wrong; it costs no rigour.
LOAD_TOLERANCE = 1e-3
USABLE = ("optimal", "almost optimal")


def stress_scale(case: Case, pressure_kPa: float) -> float:
    """kPa: the size against which stress residuals are judged."""
    strengths = [max(s.c_top, 1e-9) for s in case.strata()]
    gammas = [s.unit_weight for s in case.strata()]
    return max(abs(pressure_kPa), max(strengths), case.overburden_kPa(), max(gammas) * case.footing.width, 1.0)


def certify_lower(case: Case, mesh: Mesh, program: ConicProgram, solution: Solution) -> dict:
    """Residuals of the lower-bound stress field (kPa) and whether they pass."""
    if solution.x is None:
        return {"passed": False, "reason": f"no solution ({solution.status})"}
    x = solution.x
    field = lower_stress_field(case, mesh, program, x)
    sigma = field["stress"]
    load = -float(program.c @ x)
    scale = stress_scale(case, load / case.footing.width)
    mat = material_arrays(case)

    grad = mesh.shape_gradients()
    L = np.sqrt(2.0 * mesh.areas())
    d_dx = np.einsum("ei,eic->ec", grad[:, :, 0], sigma)
    d_dy = np.einsum("ei,eic->ec", grad[:, :, 1], sigma)
    gamma = mat["gamma"][mesh.layer]
    equilibrium = np.maximum(np.abs(d_dx[:, SX] + d_dy[:, TXY]),
                             np.abs(d_dx[:, TXY] + d_dy[:, SY] - gamma)) * L  # kPa over the element size

    e1, k1, e2, k2 = mesh.interior_edges()
    normal, _ = mesh.edge_normals(e1, k1)
    sn, tn = traction_coefficients(normal)
    jump = 0.0
    for a, b in ((k1, (k2 + 1) % 3), ((k1 + 1) % 3, k2)):
        diff = sigma[e1, a] - sigma[e2, b]
        jump = max(jump, float(np.max(np.abs(np.sum(diff * sn, 1)), initial=0.0)),
                   float(np.max(np.abs(np.sum(diff * tn, 1)), initial=0.0)))

    be, bk, kind = mesh.boundary_element, mesh.boundary_local, mesh.boundary_kind
    bn, _ = mesh.edge_normals(be, bk)
    bsn, btn = traction_coefficients(bn)
    ground = kind == GROUND
    q_edge = surcharge_on_edges(case, mesh, ground)
    boundary = 0.0
    for end in (bk, (bk + 1) % 3):
        s = sigma[be, end]
        normal_t, shear_t = np.sum(s * bsn, 1), np.sum(s * btn, 1)
        shear_free = ground | (kind == SYMMETRY) | ((kind == FOOTING) & (case.footing.base == "smooth"))
        boundary = max(boundary, float(np.max(np.abs(normal_t[ground] + q_edge), initial=0.0)),
                       float(np.max(np.abs(shear_t[shear_free]), initial=0.0)))

    yield_violation = float(np.max(field["deviator_kPa"] - field["radius_kPa"]))

    equality, cone = program_residuals(program, x)
    residuals = {
        "equilibrium_kPa": float(equilibrium.max()),
        "traction_jump_kPa": jump,
        "boundary_traction_kPa": boundary,
        "yield_violation_kPa": max(yield_violation, 0.0),
        "program_equality_kPa": equality,
        "program_cone_violation_kPa": cone,
    }
    limit = STRESS_TOLERANCE * scale
    limits = dict.fromkeys(residuals, limit)
    passed = solution.status in USABLE and all(v <= limit for v in residuals.values())
    return {"passed": bool(passed), "tolerance_kPa": limit, "stress_scale_kPa": scale,
            "load_kN_per_m": load, **residuals,
            **({} if passed else {"reason": _reason(solution.status, residuals, limits)})}


def certify_upper(case: Case, mesh: Mesh, program: ConicProgram, solution: Solution) -> dict:
    """Residuals of the upper-bound velocity field and the load recomputed from it."""
    if solution.x is None:
        return {"passed": False, "reason": f"no solution ({solution.status})"}
    x = solution.x
    field = upper_velocity_field(case, mesh, program, x)
    vel = field["velocity"]
    boundary = kinematic_residual(case, mesh, vel, footing_motion(program, x))

    mat = material_arrays(case)
    tri = mesh.triangles
    v = vel[tri, 1]
    ex, ey, gxy = field["strain_rate"][..., 0], field["strain_rate"][..., 1], field["strain_rate"][..., 2]
    phi = mat["phi"][mesh.layer][:, None]
    shear = np.hypot(ex - ey, gxy)
    area = mesh.areas()
    L = np.sqrt(2.0 * area)[:, None]
    # flow rule: ex + ey = sin(phi) rho with rho >= ||(ex - ey, gxy)||, i.e. ex + ey >= sin(phi) ||...||,
    # and for phi = 0 ex + ey = 0; measured in velocity units (rates times the element size).
    if np.all(phi == 0):
        flow = float(np.max(np.abs(ex + ey) * L))
    else:
        flow = float(np.max(np.maximum(np.sin(phi) * shear - (ex + ey), np.where(phi == 0, np.abs(ex + ey), 0)) * L))
    dissipation = float(np.sum(field["dissipation_density"] * area))
    if "jump_dissipation" in field:  # velocity jumps, recomputed with the field
        flow = max(flow, field["jump_flow_breach"])
        dissipation += float(np.sum(field["jump_dissipation"]))
    gamma = mat["gamma"][mesh.layer]
    gravity = float(np.sum(gamma * area / 3.0 * v[:, 3:].sum(axis=1)))
    ground = mesh.boundary_kind == GROUND
    edges = mesh.boundary_edges[ground]
    _, length = mesh.edge_normals(mesh.boundary_element[ground], mesh.boundary_local[ground])
    surcharge = float(np.sum((surcharge_on_edges(case, mesh, ground) * length)[:, None]
                             * np.array([1 / 6, 1 / 6, 2 / 3]) * vel[edges, 1]))
    factor = program.layout["symmetry_factor"]
    recomputed = factor * (dissipation + gravity + surcharge)
    objective = solution.objective
    # Both are upper bounds of the same field to solver precision; report the larger.
    load = max(recomputed, objective)
    mismatch = abs(recomputed - objective) / max(abs(objective), 1e-12)
    residuals = {"velocity_boundary": boundary, "flow_rule": max(flow, 0.0), "load_mismatch": mismatch}
    limits = {"velocity_boundary": FLOW_TOLERANCE, "flow_rule": FLOW_TOLERANCE, "load_mismatch": LOAD_TOLERANCE}
    passed = solution.status in USABLE and all(residuals[k] <= limits[k] for k in residuals)
    out = {"passed": bool(passed), "flow_tolerance": FLOW_TOLERANCE, "load_tolerance": LOAD_TOLERANCE,
           "load_kN_per_m": load, "objective_kN_per_m": objective, "recomputed_kN_per_m": recomputed,
           "dissipation_kN_per_m": factor * dissipation,
           "gravity_work_kN_per_m": factor * gravity, "surcharge_work_kN_per_m": factor * surcharge,
           **residuals}
    if not passed:
        out["reason"] = _reason(solution.status, residuals, limits)
    return out


def lower_stress_field(case: Case, mesh: Mesh, program: ConicProgram, x: np.ndarray) -> dict:
    """The lower bound's stress field at every element node (tension positive, kPa):
    ``stress`` (n_el, 3, 3) as (sigma_x, sigma_y, tau_xy), the deviator radius
    ||(sigma_x - sigma_y, 2 tau_xy)|| and the yield radius
    2 c cos(phi) - (sigma_x + sigma_y) sin(phi), and ``utilisation`` = their ratio."""
    sigma = x[program.layout["stress"]]
    mat = material_arrays(case)
    depth = -mesh.points[mesh.triangles, 1]
    c = node_cohesion(mat, mesh.layer[:, None], depth)
    phi = mat["phi"][mesh.layer][:, None]
    radius = 2 * c * np.cos(phi) - (sigma[..., SX] + sigma[..., SY]) * np.sin(phi)
    deviator = np.hypot(sigma[..., SX] - sigma[..., SY], 2 * sigma[..., TXY])
    utilisation = np.where(radius > 0, deviator / np.where(radius > 0, radius, 1.0), 1.0)
    return {"stress": sigma, "deviator_kPa": deviator, "radius_kPa": radius, "utilisation": utilisation}


def upper_velocity_field(case: Case, mesh: Mesh, program: ConicProgram, x: np.ndarray) -> dict:
    """The upper bound's velocity field (per unit footing velocity): ``velocity``
    (n_nodes, 2); ``strain_rate`` (n_el, 3 corners, 3) as (ex, ey, gxy) in 1/m;
    ``dissipation_density`` (n_el,) mean plastic dissipation rate per unit volume,
    kN/m^3 per unit footing velocity (kPa/s per m/s), integrated exactly from the corners;
    with velocity jumps, the :func:`jump_field` arrays too."""
    vel = velocities(program, x)
    mat = material_arrays(case)
    tri = mesh.triangles
    grad = corner_shape_gradients(mesh)  # (n_el, 3, 6, 2)
    u, v = vel[tri, 0], vel[tri, 1]
    ex = np.einsum("emi,ei->em", grad[..., 0], u)
    ey = np.einsum("emi,ei->em", grad[..., 1], v)
    gxy = np.einsum("emi,ei->em", grad[..., 1], u) + np.einsum("emi,ei->em", grad[..., 0], v)
    phi = mat["phi"][mesh.layer][:, None]
    # rho = ||(ex - ey, gxy)|| (phi = 0); (ex + ey) / sin(phi) under the flow rule (phi > 0)
    # below sin(phi) = 1e-3 the volumetric rate is too small to divide by; the shear
    # norm is then used (it is at most rho, so the objective, reported if larger, governs)
    frictional = np.sin(phi) > 1e-3
    rho = np.where(frictional, (ex + ey) / np.where(frictional, np.sin(phi), 1.0), np.hypot(ex - ey, gxy))
    depth = -mesh.points[tri[:, :3], 1]
    c = node_cohesion(mat, mesh.layer[:, None], depth)
    weight = (c + c.sum(axis=1, keepdims=True)) / 12.0  # integral of c N_i over the element / area
    density = np.sum(np.cos(phi) * weight * rho, axis=1)
    out = {"velocity": vel, "strain_rate": np.stack([ex, ey, gxy], axis=2), "dissipation_density": density}
    if mesh.jumps is not None and len(mesh.jumps):
        out.update(jump_field(case, mesh, vel))
    return out


def jump_field(case: Case, mesh: Mesh, vel: np.ndarray) -> dict:
    """The velocity jumps, recomputed from the nodal velocities through the Bernstein
    coefficients b_i of each: ``jump_slip`` (n_jump,) the mean |t.b_i|;
    ``jump_flow_breach`` the largest breach of n.b_i >= tan(phi) |t.b_i| (for phi = 0:
    |n.b_i|), in velocity units; ``jump_dissipation`` (n_jump,) kN/m per unit footing
    velocity, sum_i integral(c B_i) * (n.b_i cot(phi), or |t.b_i| below sin(phi) = 1e-3);
    ``jump_ends`` (n_jump, 2, 2) m."""
    geometry = jump_geometry(mesh)
    jump = vel[geometry["side2"]] - vel[geometry["side1"]]  # (n_jump, 3 nodes, 2)
    coeff = np.einsum("in,jnd->jid", BERNSTEIN_FROM_NODES, jump)  # (n_jump, 3, 2)
    normal = np.einsum("jid,jd->ji", coeff, geometry["normal"])
    shear = np.abs(np.einsum("jid,jd->ji", coeff, geometry["tangent"]))
    phi = material_arrays(case)["phi"][mesh.layer[geometry["element"]]][:, None]
    breach = np.where(phi > 0, np.tan(phi) * shear - normal, np.abs(normal))
    frictional = np.sin(phi) > 1e-3
    rate = np.where(frictional, normal / np.where(frictional, np.tan(phi), 1.0), shear)
    return {"jump_slip": shear.mean(axis=1), "jump_flow_breach": float(max(np.max(breach), 0.0)),
            "jump_dissipation": np.sum(jump_dissipation_weights(case, mesh, geometry) * rate, axis=1),
            "jump_ends": mesh.points[geometry["side1"][:, :2]]}


def kinematic_residual(case: Case, mesh: Mesh, vel: np.ndarray, motion: dict) -> float:
    """Largest breach of the velocity boundary conditions: far boundary at rest, no
    normal velocity on the symmetry line, footing nodes moving with the rigid
    footing (rough: no slip), and unit work rate of the load."""
    edges, kind = mesh.boundary_edges, mesh.boundary_kind
    far = np.unique(edges[np.isin(kind, (FAR_SIDE, FAR_BASE, FIXED))])  # at rest, fixed boundaries too
    sym = np.unique(edges[kind == SYMMETRY])
    foot = np.unique(edges[kind == FOOTING])
    rigid_v = motion["v"] + motion["omega"] * (mesh.points[foot, 0] - case.footing.eccentricity)
    delta = np.radians(case.footing.load_inclination)
    parts = [np.abs(vel[far]).ravel(), np.abs(vel[sym, 0]), np.abs(vel[foot, 1] - rigid_v),
             [abs(np.sin(delta) * motion["u"] - np.cos(delta) * motion["v"] - 1.0)]]
    if case.footing.base == "rough":
        parts.append(np.abs(vel[foot, 0] - motion["u"]))
    return float(max(np.max(p, initial=0.0) for p in parts))


def program_residuals(program: ConicProgram, x: np.ndarray) -> tuple[float, float]:
    """Largest equality residual and largest cone violation (nonnegative rows and
    second-order cones) of s = b - A x."""
    s = program.b - program.A @ x
    nz, nn = program.n_zero, program.n_nonneg
    equality = float(np.max(np.abs(s[:nz]), initial=0.0))
    negative = float(np.max(-s[nz:nz + nn], initial=0.0))
    cones = s[nz + nn:].reshape(-1, 3)
    violation = float(np.max(np.hypot(cones[:, 1], cones[:, 2]) - cones[:, 0], initial=0.0))
    return equality, max(violation, negative, 0.0)


def _reason(status: str, residuals: dict, limits: dict) -> str:
    """The solver's status if unusable, else the residual furthest over its own limit."""
    if status not in USABLE:
        return f"solver ended with status '{status}'"
    worst = max(residuals, key=lambda k: residuals[k] / max(limits[k], 1e-300))
    return f"certificate failed: {worst} = {residuals[worst]:.3g} > {limits[worst]:.3g}"
