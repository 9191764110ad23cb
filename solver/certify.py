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
the computed collapse pressure, the strengths within a footing width of each
stratum's top, the overburden and gamma*B: the problem's own scale, no
absolute floor); the upper bound recomputed from the velocities within
``LOAD_TOLERANCE`` of the solver's objective (the larger of the two is reported).

The upper bound's velocities are first restored (:func:`restore_velocities`):
the equalities they must meet exactly (the load's unit work rate and, in
Tresca soil, incompressibility at every corner and on every velocity jump) are
linear, so when their residual is solver slack (below the solver's own
tolerance, :func:`solver_slack`) the velocities are projected onto them by
least squares, which meets them to round-off. The dissipation is recomputed
from the restored velocities (rho = ||(ex - ey, gxy)|| at the corners for
Tresca, c cot(phi) (ex + ey) for phi > 0), which makes it an exact upper
estimate of a kinematically admissible field's. The flow rule with phi > 0 is
a cone, ex + ey >= sin(phi) ||(ex - ey, gxy)||, not a linear equality: its
residual is accepted up to what the solver's feasibility tolerance allows on
this program (:func:`solver_slack`), and a solve that leaves more is solved again
with stronger regularisation (solver.analysis).
"""
from __future__ import annotations

import dataclasses
from typing import Callable

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from .conic import FEASIBILITY, ConicProgram, Solution, default_settings
from .ground import material_arrays, node_cohesion, surcharge_on_edges
from .lower import SX, SY, TXY, traction_coefficients
from .mesh import FAR_BASE, FAR_SIDE, FIXED, FOOTING, GROUND, SYMMETRY, Mesh
from .model import Case
from .upper import (BERNSTEIN_FROM_NODES, corner_shape_gradients, footing_motion, jump_dissipation_weights,
                    jump_geometry, velocities)

STRESS_TOLERANCE = 1e-6
# Velocities restored to round-off (per unit footing velocity, relative to the largest):
# the projection meets its equalities to about 1e-14 (measured); anything above this
# means the restoration did not take place.
RESTORED_TOLERANCE = 1e-10
# A mechanism of the ground alone proves instability when its energy (dissipation plus the
# work against weight and surcharge, from its restored velocities) is negative by more than
# this fraction of the terms it sums: a thousand times the solver's feasibility tolerance,
# far beyond what the frictional cones' accepted residuals could change in it.
RAY_MARGIN = 1e3 * FEASIBILITY
RESTORE_ROUNDS = 8  # rounds of holding the frictional corners a restoration pushed out (then all)
# The flow rule's breach at a corner, from a point whose residual ||A x + s - b|| is r:
# at most |r_equality| + sin(phi) (|r_0| + ||(r_1, r_2)||) <= (2 + sqrt(2)) ||r||_inf.
FLOW_FACTOR = 2.0 + np.sqrt(2.0)
# The solver's objective exceeds the dissipation recomputed from its velocities by
# the slack left in the cones (t > ||.||), spread evenly over all of them: the
# complementarity the interior-point method stops at (relative duality gap 1e-4,
# conic.default_settings). Measured 1.2e-4 to 4.8e-4 at 2k-8k triangles on
# Tresca soil whose strength rises from zero at the surface. Both values are
# upper bounds of the same field and the larger is reported, so this tolerance
# screens for a solution the solver got wrong; it costs no rigour.
LOAD_TOLERANCE = 1e-3
USABLE = ("optimal", "almost optimal")


def stress_scale(case: Case, pressure_kPa: float, field_kPa: float = 0.0) -> float:
    """kPa: the size against which stress residuals are judged, the problem's own: the
    largest of the collapse pressure, each stratum's strength a footing width below its
    top, the overburden and gamma B. A problem with none of these (weightless soil with
    no strength at zero stress and no surcharge: every load is zero) is judged against
    the largest stress of its own field, ``field_kPa``."""
    B = case.footing.width
    scale = max([abs(pressure_kPa), case.overburden_kPa()]
                + [max(s.c_top + s.c_gradient * B, s.unit_weight * B) for s in case.strata()])
    return scale if scale > 0.0 else (field_kPa if field_kPa > 0.0 else 1.0)


def solver_slack(program: ConicProgram, x: np.ndarray, homogeneous: bool = False,
                 feasibility: float | None = None) -> float:
    """The largest residual of one row of the program that the solver's own stopping test
    lets through at ``x`` (times FLOW_FACTOR, for the flow rule's breach): its feasibility
    tolerance relative to max(1, ||b|| + ||x|| + ||s||), 2-norms (solver.conic.FEASIBILITY).
    ``homogeneous``: x is a ray, judged against b = 0; ``feasibility``: the tolerance the
    program was solved to, by default the one conic.default_settings gives it."""
    if feasibility is None:
        feasibility = default_settings(program)["tol_feas"]
    b = 0.0 * program.b if homogeneous else program.b
    s = b - program.A @ x
    return float(FLOW_FACTOR * feasibility * max(1.0, np.linalg.norm(b) + np.linalg.norm(x) + np.linalg.norm(s)))


def certify_lower(case: Case, mesh: Mesh, program: ConicProgram, solution: Solution) -> dict:
    """Residuals of the lower-bound stress field (kPa) and whether they pass."""
    if solution.x is None:
        return {"passed": False, "reason": f"no solution ({solution.status})", **solution.notes}
    x = solution.x
    field = lower_stress_field(case, mesh, program, x)
    sigma = field["stress"]
    load = -float(program.c @ x)
    scale = stress_scale(case, load / case.footing.width, float(np.max(np.abs(sigma), initial=0.0)))
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
            "load_kN_per_m": load, **residuals, "limits": limits, **solution.notes,
            **({} if passed else {"reason": _reason(solution.status, residuals, limits)})}


def certify_upper(case: Case, mesh: Mesh, program: ConicProgram, solution: Solution, ray: bool = False) -> dict:
    """Residuals of the upper-bound velocity field and the load recomputed from it, after
    the velocities are restored (:func:`restore_velocities`; pass a restored solution to
    have the fields of exactly the field certified).

    ``ray``: ``solution.x`` is the direction the solver found the program unbounded along
    (a mechanism with no work of the load whose dissipation is less than the work the
    ground's weight and surcharge do on it, if it passes). It is certified as a mechanism
    of the ground alone: the load does no work, and the energy it releases (dissipation
    plus the work against weight and surcharge, ``load_kN_per_m``) must be negative by
    more than RAY_MARGIN of the terms it sums: then every footing load, zero included, is
    above the collapse load."""
    if solution.x is None:
        return {"passed": False, "reason": f"no solution ({solution.status})"}
    work = 0.0 if ray else 1.0
    solution = restore_velocities(case, mesh, program, solution, work)
    x = solution.x
    field = upper_velocity_field(case, mesh, program, x)
    vel = field["velocity"]
    scale = max(1.0, float(np.max(np.abs(x[:program.layout["T"].shape[1]]))))  # the largest velocity
    boundary = kinematic_residual(case, mesh, vel, footing_motion(program, x), work) / scale

    mat = material_arrays(case)
    tri = mesh.triangles
    v = vel[tri, 1]
    ex, ey, gxy = field["strain_rate"][..., 0], field["strain_rate"][..., 1], field["strain_rate"][..., 2]
    phi = np.broadcast_to(mat["phi"][mesh.layer][:, None], ex.shape)
    shear = np.hypot(ex - ey, gxy)
    area = mesh.areas()
    L = np.sqrt(2.0 * area)[:, None]
    # flow rule, in velocity units (rates times the element size): ex + ey = 0 where phi = 0
    # (restored to round-off), ex + ey >= sin(phi) ||(ex - ey, gxy)|| where phi > 0
    tresca = phi == 0
    incompressible = float(np.max((np.abs(ex + ey) * L)[tresca], initial=0.0))
    flow = float(np.max(((np.sin(phi) * shear - (ex + ey)) * L)[~tresca], initial=0.0))
    dissipation = float(np.sum(field["dissipation_density"] * area))
    if "jump_dissipation" in field:  # velocity jumps, recomputed with the field
        incompressible = max(incompressible, field["jump_tresca_breach"])
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
    objective = float(program.c @ x) if ray else solution.objective
    # Both are upper bounds of the same field to solver precision; report the larger.
    load = max(recomputed, objective)
    mismatch = abs(recomputed - objective) / max(abs(objective), abs(recomputed), np.finfo(float).tiny)
    slack = solver_slack(program, x, homogeneous=ray)
    residuals = {"velocity_boundary": boundary, "incompressibility": incompressible / scale,
                 "flow_rule": max(flow, 0.0), "load_mismatch": mismatch}
    limits = {"velocity_boundary": RESTORED_TOLERANCE, "incompressibility": RESTORED_TOLERANCE,
              "flow_rule": slack, "load_mismatch": LOAD_TOLERANCE}
    if ray:  # energy released, relative to the terms it sums: negative beyond what residuals account for
        residuals["energy_balance"] = load / (factor * (abs(dissipation) + abs(gravity) + abs(surcharge)) or 1.0)
        limits["energy_balance"] = -RAY_MARGIN
        # the solver's objective counts its own rho~ >= ||(ex - ey, gxy)||, slack on a ray: only
        # the larger (less negative) of the two is claimed, so no agreement is asked of them
        del residuals["load_mismatch"], limits["load_mismatch"]
        passed = solution.status == "unbounded" and all(residuals[k] <= limits[k] for k in residuals)
    else:
        passed = solution.status in USABLE and all(residuals[k] <= limits[k] for k in residuals)
    out = {"passed": bool(passed), "restored_tolerance": RESTORED_TOLERANCE, "flow_tolerance": slack,
           "load_tolerance": LOAD_TOLERANCE, "load_kN_per_m": load, "objective_kN_per_m": objective,
           "recomputed_kN_per_m": recomputed, "dissipation_kN_per_m": factor * dissipation,
           "gravity_work_kN_per_m": factor * gravity, "surcharge_work_kN_per_m": factor * surcharge,
           **residuals, "limits": limits, **solution.notes}
    if ray:  # a direction, not a field of unit footing velocity: no load, only the sign of its energy
        out["energy_of_the_mechanism"] = out.pop("load_kN_per_m")
    if not passed:
        out["reason"] = _reason(solution.status, residuals, limits, ("unbounded",) if ray else USABLE)
    return out


@dataclasses.dataclass(frozen=True)
class VelocityRows:
    """Rows over an upper bound's free velocities z, for :func:`restore_velocities`.

    ``exact``: what the velocities must meet exactly (Tresca incompressibility). ``held``:
    the quantities in the flow rule's cones, which a restoration may hold: ``components``
    rows for each of ``points`` frictional points (component-major), then rows always held
    (the strip's frictional velocity jumps). ``work``: the load's work rate, a row vector.
    ``breach``: the flow rule's breach at each frictional point from z (velocity units)."""

    exact: sp.csr_matrix
    held: sp.csr_matrix
    work: np.ndarray
    points: int
    components: int
    breach: Callable[[np.ndarray], np.ndarray]


def velocity_rows(case: Case, mesh: Mesh, program: ConicProgram) -> VelocityRows:
    """Rows over the strip's upper-bound free velocities z (:class:`VelocityRows`).

    ``exact``: what Tresca soil must meet exactly, incompressibility L (ex + ey) = 0 at each
    corner of each triangle (L = sqrt(2 area)) and n.b_i = 0 for each Bernstein coefficient
    of each velocity jump. ``held``: the strain rate of every other corner, L (ex + ey,
    ex - ey, gxy), and the Bernstein coefficients (n.b_i, t.b_i) of every other jump: the
    quantities in the flow rule's cones, which a restoration may hold: first the three
    components for every frictional corner (component-major), then the jumps. ``work``:
    the load's work rate, a row vector. ``breach``: sin(phi) ||(ex - ey, gxy)|| - (ex + ey)
    at each frictional corner, times L."""
    T = program.layout["T"]
    n_w = 2 * len(mesh.points)
    phi = material_arrays(case)["phi"]
    tresca = phi[mesh.layer] == 0.0
    grad = corner_shape_gradients(mesh) * np.sqrt(2.0 * mesh.areas())[:, None, None, None]  # (n_el, 3, 6, 2)
    gx, gy = grad[..., 0], grad[..., 1]
    cols = 2 * mesh.triangles[:, None, :]
    # (u, v) coefficients of L (ex + ey), L (ex - ey), L gxy at each corner
    strains = [(gx, gy), (gx, -gy), (gy, gx)]
    blocks = {True: [], False: []}  # exact (Tresca) and held rows, as lists of (rows, cols, vals) per part
    for is_tresca, comps in ((True, strains[:1]), (False, strains)):
        mask = tresca == is_tresca
        for coeff_u, coeff_v in comps:
            blocks[is_tresca].append((cols[mask], coeff_u[mask], coeff_v[mask]))
    if mesh.jumps is not None and len(mesh.jumps):
        geometry = jump_geometry(mesh)
        on_tresca = phi[mesh.layer[geometry["element"]]] == 0.0
        nodes = np.concatenate([geometry["side2"], geometry["side1"]], axis=1)  # (n, 6)
        coeff = np.concatenate([BERNSTEIN_FROM_NODES, -BERNSTEIN_FROM_NODES], axis=1)[None]  # (1, 3, 6)
        jump_cols = 2 * nodes[:, None, :]
        for is_tresca, directions in ((True, ("normal",)), (False, ("normal", "tangent"))):
            mask = on_tresca == is_tresca
            for direction in directions:
                unit = geometry[direction][mask]
                blocks[is_tresca].append((jump_cols[mask], unit[:, 0, None, None] * coeff,
                                          unit[:, 1, None, None] * coeff))

    def assemble_rows(parts: list) -> sp.csr_matrix:
        rows, cols_, vals, count = [], [], [], 0
        for c, cu, cv in parts:  # c (n, 1, 6) columns of u; cu, cv (n, 3, 6)
            cu, cv = np.broadcast_to(cu, (len(cu), 3, 6)), np.broadcast_to(cv, (len(cv), 3, 6))
            r = count + 3 * np.arange(len(cu))[:, None, None] + np.arange(3)[None, :, None]
            rows += [np.broadcast_to(r, cu.shape).ravel()] * 2
            cols_ += [np.broadcast_to(c, cu.shape).ravel(), np.broadcast_to(c + 1, cv.shape).ravel()]
            vals += [cu.ravel(), cv.ravel()]
            count += 3 * len(cu)
        if not rows:
            return sp.csr_matrix((0, T.shape[1]))
        w = sp.coo_matrix((np.concatenate(vals), (np.concatenate(rows), np.concatenate(cols_))),
                          shape=(count, n_w)).tocsr()
        return (w @ T).tocsr()

    motion = program.layout["motion"]
    delta = np.radians(case.footing.load_inclination)
    work_row = np.zeros(T.shape[1])
    for key, value in (("u", np.sin(delta)), ("v", -np.cos(delta))):
        if motion[key] >= 0:
            work_row[motion[key]] = value
    sin_phi = np.sin(np.repeat(phi[mesh.layer][~tresca], 3))  # each held corner's, in the held rows' order
    held = assemble_rows(blocks[False])
    corners = held[:3 * len(sin_phi)]

    def breach(z: np.ndarray) -> np.ndarray:
        volumetric, difference, shear = (corners @ z).reshape(3, -1)
        return sin_phi * np.hypot(difference, shear) - volumetric

    return VelocityRows(assemble_rows(blocks[True]), held, work_row, len(sin_phi), 3, breach)


def restore_velocities(case: Case, mesh: Mesh, program: ConicProgram, solution: Solution,
                       work: float = 1.0, rows: VelocityRows | None = None) -> Solution:
    """The solution with its velocities restored, when what they miss is solver slack (at
    most :func:`solver_slack`); else unchanged (the certificate then fails on it).

    Two steps: (1) the whole point is divided by its load's work rate, which makes that
    exactly ``work`` (1), every cone and every equality being homogeneous; (2) the free
    velocities get the smallest change (least squares) that makes the ``exact`` rows of
    :func:`velocity_rows` (Tresca incompressibility) hold, with the frictional jumps and
    the work rate unchanged (a ray's work rate, 0, is restored in this step). A frictional corner whose flow-rule
    breach the change would raise by more than a tenth of the slack is held too (its
    strain rate unchanged), and the change is found again (RESTORE_ROUNDS rounds, then once
    holding them all): the frictional cones stay as the solver left them. Each projection solves
    (A A^T + delta I) y = r by sparse LU, z += A^T y, refined iteratively (delta,
    relative 1e-12, keeps dependent rows from making it singular). What was done is kept
    in ``solution.notes``. ``rows``: the program's own (default: the strip's,
    :func:`velocity_rows`; the circle's: certify_axisym.velocity_rows_axisym)."""
    if solution.x is None:
        return solution
    rows = rows or velocity_rows(case, mesh, program)
    exact, held, work_row = rows.exact, rows.held, rows.work
    n_z = len(work_row)
    x = solution.x
    rate = float(work_row @ x[:n_z])
    slack = solver_slack(program, x, homogeneous=work == 0.0)
    if work != 0.0 and (rate <= 0.0 or abs(rate - work) > slack):
        return solution  # the load's work rate is not the solver's slack: left to the certificate
    if work != 0.0:
        x = x * (work / rate)
    z = x[:n_z]
    residual = exact @ z
    work_miss = float(work_row @ z) - work  # 0 after the division; a ray's own, left by the solver
    before = float(max(np.max(np.abs(residual), initial=0.0), abs(work_miss)))
    if before > slack:
        return solution  # more than slack: left for the certificate to judge
    notes = {**solution.notes, "work_rate_before": rate}
    if before > 0.1 * RESTORED_TOLERANCE * max(1.0, float(np.max(np.abs(z)))):
        n_c, k = rows.points, rows.components  # frictional points: k held rows each
        start = np.maximum(rows.breach(z), 0.0)
        hold = np.zeros(n_c, dtype=bool)
        for attempt in range(RESTORE_ROUNDS + 1):
            if attempt == RESTORE_ROUNDS:
                hold[:] = True  # the last try holds every frictional point
            kept = np.concatenate([np.flatnonzero(np.tile(hold, k)), np.arange(k * n_c, held.shape[0])])
            change = _least_change(sp.vstack([exact, held[kept], sp.csr_matrix(work_row)]).tocsr(),
                                   np.concatenate([-residual, np.zeros(len(kept)), [-work_miss]]))
            worse = rows.breach(z + change) > start + 0.1 * slack
            if not np.any(worse & ~hold):
                break
            hold |= worse
        z = z + change
        x = x.copy()
        x[:n_z] = z
        notes["restored"] = {"incompressibility_before": before,
                             "incompressibility_after": float(np.max(np.abs(exact @ z), initial=0.0)),
                             "largest_velocity_change": float(np.max(np.abs(change))),
                             "frictional_corners_held": int(hold.sum())}
    return dataclasses.replace(solution, x=x, notes=notes)


def _least_change(A: sp.csr_matrix, target: np.ndarray, steps: int = 4) -> np.ndarray:
    """The smallest change v with A v = target (least squares), through the regularised
    normal equations (A A^T + delta I) y = target, v = A^T y, refined ``steps - 1`` times."""
    gram = (A @ A.T).tocsc()
    factor = spla.splu((gram + 1e-12 * float(gram.diagonal().max()) * sp.identity(gram.shape[0],
                                                                                  format="csc")).tocsc())
    change = np.zeros(A.shape[1])
    for _ in range(steps):
        change += A.T @ factor.solve(target - A @ change)
    return change


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
    ``jump_flow_breach`` the largest breach of n.b_i >= tan(phi) |t.b_i| where phi > 0 and
    ``jump_tresca_breach`` the largest |n.b_i| where phi = 0, in velocity units;
    ``jump_dissipation`` (n_jump,) kN/m per unit footing
    velocity, sum_i integral(c B_i) * (n.b_i cot(phi), or |t.b_i| below sin(phi) = 1e-3);
    ``jump_ends`` (n_jump, 2, 2) m."""
    geometry = jump_geometry(mesh)
    jump = vel[geometry["side2"]] - vel[geometry["side1"]]  # (n_jump, 3 nodes, 2)
    coeff = np.einsum("in,jnd->jid", BERNSTEIN_FROM_NODES, jump)  # (n_jump, 3, 2)
    normal = np.einsum("jid,jd->ji", coeff, geometry["normal"])
    shear = np.abs(np.einsum("jid,jd->ji", coeff, geometry["tangent"]))
    phi = np.broadcast_to(material_arrays(case)["phi"][mesh.layer[geometry["element"]]][:, None], normal.shape)
    frictional = np.sin(phi) > 1e-3
    rate = np.where(frictional, normal / np.where(frictional, np.tan(phi), 1.0), shear)
    return {"jump_slip": shear.mean(axis=1),
            "jump_flow_breach": float(max(np.max((np.tan(phi) * shear - normal)[phi > 0], initial=0.0), 0.0)),
            "jump_tresca_breach": float(np.max(np.abs(normal)[phi == 0], initial=0.0)),
            "jump_dissipation": np.sum(jump_dissipation_weights(case, mesh, geometry) * rate, axis=1),
            "jump_ends": mesh.points[geometry["side1"][:, :2]]}


def kinematic_residual(case: Case, mesh: Mesh, vel: np.ndarray, motion: dict, work: float = 1.0) -> float:
    """Largest breach of the velocity boundary conditions: far boundary at rest, no
    normal velocity on the symmetry line, footing nodes moving with the rigid
    footing (rough: no slip), and the load's work rate ``work`` (1; 0 for a mechanism
    of the ground alone)."""
    edges, kind = mesh.boundary_edges, mesh.boundary_kind
    far = np.unique(edges[np.isin(kind, (FAR_SIDE, FAR_BASE, FIXED))])  # at rest, fixed boundaries too
    sym = np.unique(edges[kind == SYMMETRY])
    foot = np.unique(edges[kind == FOOTING])
    rigid_v = motion["v"] + motion["omega"] * (mesh.points[foot, 0] - case.footing.eccentricity)
    delta = np.radians(case.footing.load_inclination)
    parts = [np.abs(vel[far]).ravel(), np.abs(vel[sym, 0]), np.abs(vel[foot, 1] - rigid_v),
             [abs(np.sin(delta) * motion["u"] - np.cos(delta) * motion["v"] - work)]]
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


def _reason(status: str, residuals: dict, limits: dict, usable: tuple = USABLE) -> str:
    """The solver's status if unusable, else the residual furthest over its own limit."""
    if status not in usable:
        return f"solver ended with status '{status}'"
    worst = max(residuals, key=lambda k: residuals[k] - limits[k] if limits[k] <= 0 else residuals[k] / limits[k])
    return f"certificate failed: {worst} = {residuals[worst]:.3g} > {limits[worst]:.3g}"
