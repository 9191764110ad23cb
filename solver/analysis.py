"""The one way through: Case -> mesh -> each bound's conic program -> solve ->
certificate -> Result. Each bound runs on its own mesh (first order for the
lower bound, second order for the upper)."""
from __future__ import annotations

import math
import os
import threading
import time

import numpy as np

from .certify import certify_lower, certify_upper, lower_stress_field, upper_velocity_field
from .certify_axisym import (certify_lower_axisym, certify_upper_axisym, lower_stress_field_axisym,
                             upper_velocity_field_axisym)
from .conic import solve
from .hand import hand_methods, where_it_falls
from .lower import lower_bound_program
from .lower_axisym import lower_bound_program_axisym
from .mesh import FAR_BASE, FAR_SIDE, Mesh, build_mesh, open_velocity_jumps, plan_domain
from .model import Case, davis_reduction
from .result import BoundResult, Result
from .upper import upper_bound_program
from .upper_axisym import upper_bound_program_axisym

LOWER_METHOD = ("linear stress triangles with stress discontinuities on every edge (Sloan 1988); "
                "semi-infinite extension elements beyond the far boundary (after Pastor 1978; Sloan 1988)")
UPPER_METHOD = ("6-node triangles, quadratic continuous velocity, flow rule as cones at the corners "
                "(Makrodimopoulos & Martin 2006, 2007); far boundary fixed")
LOWER_METHOD_AXISYM = ("axisymmetric: weighted stresses r sigma quadratic in each triangle, in exact pointwise "
                       "equilibrium with the hoop stress, discontinuities on every edge, Mohr-Coulomb over all "
                       "three principal pairs at Bernstein control points; a far field admissible to infinity")
UPPER_METHOD_AXISYM = ("axisymmetric: 6-node triangles, weighted velocities (r u_r, r u_z) quadratic and continuous, "
                       "3D flow rule at the Bernstein coefficients of r^2 times the strain rate, dissipation exact "
                       "(phi > 0) or bounded from above (Tresca); far boundary fixed")
# (program, certificate, fields) of each bound, by footing shape
STAGES = {("strip", "lower"): (lower_bound_program, certify_lower, lower_stress_field, LOWER_METHOD),
          ("strip", "upper"): (upper_bound_program, certify_upper, upper_velocity_field, UPPER_METHOD),
          ("circular", "lower"): (lower_bound_program_axisym, certify_lower_axisym, lower_stress_field_axisym,
                                  LOWER_METHOD_AXISYM),
          ("circular", "upper"): (upper_bound_program_axisym, certify_upper_axisym, upper_velocity_field_axisym,
                                  UPPER_METHOD_AXISYM)}
UPPER_JUMPS = ("; except that the velocity may jump across every interior edge (after Sloan & Kleeman 1995), "
               "flow rule and dissipation of each jump bounded through its Bernstein coefficients")
SLOPE_UNSTABLE = ("the slope is not stable under its own weight: the collapse load is zero or negative "
                  "(no statically admissible stress field carries the ground, or a mechanism releases "
                  "energy); no capacity is reported")
CLEAR_FRACTION = 1e-3  # upper bound: mechanism 'clear of the boundary' if |velocity| there < this


def analyse(case: Case, *, bounds: str | None = None, elements: int | None = None,
            backend: str | None = None, solver_settings: dict | None = None,
            progress: bool = False, parallel: bool | None = None) -> Result:
    """Run the bounds the case asks for and return the certified Result.

    ``parallel``: solve the two bounds at once, one per core (:func:`run_bounds`);
    default: when this process may use two cores or more."""
    parallel = two_cores_free() if parallel is None else parallel
    bounds = bounds or case.analysis.bounds
    backend = backend or case.analysis.backend
    elements = elements or case.analysis.elements
    start = time.perf_counter()
    domain = plan_domain(case)
    lower = upper = None
    history = None
    if case.analysis.target_gap is not None:
        from .adapt import refine_until  # adaptive refinement wraps run_bounds
        lower, upper, history, timing = refine_until(case, bounds, elements, backend, domain, solver_settings,
                                                     progress=progress, parallel=parallel)
    else:
        kinds = [k for k in ("lower", "upper") if bounds in (k, "both")]
        done, solve_wall = run_bounds(case, [(k, elements, None) for k in kinds], backend, domain,
                                      solver_settings, parallel)
        lower, upper = done.get("lower"), done.get("upper")
        timing = {key: sum(b.timing[key] for b in (lower, upper) if b) for key in
                  ("mesh_s", "assemble_s", "solve_s", "certify_s")}
        timing["solve_wall_s"] = solve_wall
    timing["total_s"] = time.perf_counter() - start
    notes = []
    if lower and upper and lower.pressure_kPa is not None and upper.pressure_kPa is not None \
            and lower.pressure_kPa > upper.pressure_kPa * (1 + 1e-6):
        notes.append("lower bound exceeds upper bound: this is a defect; do not use these numbers")
    if _slope_unstable(lower, upper):
        notes.append(SLOPE_UNSTABLE)
    if case.pore_pressure_at_base_kPa() > 0:
        notes.append(f"the water table is above the footing base: pressures are effective; the total "
                     f"contact pressure adds the pore pressure at the base, "
                     f"{case.pore_pressure_at_base_kPa():.1f} kPa")
    reduced = [layer for layer in case.layers if layer.dilation_angle is not None and not layer.is_tresca]
    if reduced:
        notes.append("non-associated flow by the Davis (1968) reduction ("
                     + "; ".join(f"{l.name}: psi = {l.dilation_angle:g}, c* = {davis_reduction(l)[0] * l.cohesion:.3g} kPa, "
                                 f"phi* = {math.degrees(davis_reduction(l)[1]):.2f} deg" for l in reduced)
                     + "): the accepted approximation, no longer rigorous bounds on the non-associated problem")
    if lower and "infeasible" in lower.status and not _slope_unstable(lower, upper):
        notes.append("the lower bound found no statically admissible stress field on this mesh; "
                     "that is a limit of the discretisation, not a proof that the ground fails: "
                     "try more elements")
    if upper and upper.pressure_kPa is not None and upper.extra.get("mechanism_clear_of_boundary") is False:
        notes.append("the upper-bound mechanism reaches the far boundary: the upper bound is still "
                     "rigorous but may be loose")
    result = Result(title=case.title, case_name=case.name, case_sha256=case.source_sha256,
                    footing_width_m=case.footing.width, footing_shape=case.footing.shape,
                    lower=lower, upper=upper, timing=timing,
                    domain={"half_domain_by_symmetry": domain.half, "width_m": domain.x_max - domain.x_min,
                            "depth_m": domain.depth, "estimated_mechanism_width_m": domain.mechanism_width,
                            "estimated_mechanism_depth_m": domain.mechanism_depth,
                            "x_min_m": domain.x_min, "x_max_m": domain.x_max,
                            "slope_crest_x_m": domain.crest_x, "slope_toe_x_m": domain.toe_x,
                            "slope_height_m": domain.slope_height},
                    pore_pressure_at_base_kPa=case.pore_pressure_at_base_kPa(),
                    backend=backend, notes=notes)
    result.adapt_history = history
    lo = lower.pressure_kPa if lower else None
    up = upper.pressure_kPa if upper else None
    result.hand_methods = [{"method": h.method, "source": h.source, "pressure_kPa": h.pressure_kPa,
                            "factors": h.factors, "note": h.note,
                            "where": where_it_falls(h.pressure_kPa, lo, up)} for h in hand_methods(case)]
    return result


def two_cores_free() -> bool:
    """Whether this process may run on two cores or more (its CPU affinity)."""
    try:
        return len(os.sched_getaffinity(0)) >= 2
    except AttributeError:  # no affinity call on this platform
        return (os.cpu_count() or 1) >= 2


class Job(threading.Thread):
    """One call, on a thread of its own (``start``) or on the caller's (``run``);
    ``result()`` waits for it and raises its error, if any, on the caller's thread.
    A daemon, so that a Ctrl-C never waits for it. Clarabel releases the GIL while it
    solves, so two solves on two of these use two cores."""

    def __init__(self, call, *args, **kwargs) -> None:
        super().__init__(name="bearbound-job", daemon=True)
        self.call, self.call_args, self.call_kwargs = call, args, kwargs
        self.value = self.error = None
        self.started_at = self.ended_at = 0.0

    def run(self) -> None:
        self.started_at = time.perf_counter()
        try:
            self.value = self.call(*self.call_args, **self.call_kwargs)
        except BaseException as error:  # raised again on the caller's thread by result()
            self.error = error
        self.ended_at = time.perf_counter()

    def result(self):
        if self.ident is not None:  # started on a thread of its own
            self.join()
        if self.error is not None:
            raise self.error
        return self.value


def run_bounds(case: Case, requests: list, backend: str, domain, settings, parallel: bool
               ) -> tuple[dict[str, BoundResult], float]:
    """Run bounds given as (kind, elements, size_hint); returns them by kind and the
    wall time (s) during which at least one of them was solving.

    With ``parallel`` each solve starts on a thread of its own as soon as its program is
    assembled, and the next bound is meshed meanwhile (gmsh stays on the calling thread:
    its state is global), so the two bounds' solves share two cores. The results are the
    same as one after the other (tests/test_bounds.py): each solve is deterministic and
    shares nothing with the other."""
    jobs = []
    for kind, elements, size_hint in requests:
        t0 = time.perf_counter()
        mesh = build_mesh(case, order=1 if kind == "lower" else 2, elements=elements, domain=domain,
                          size_hint=size_hint)
        if kind == "upper" and uses_velocity_jumps(case):
            mesh = open_velocity_jumps(mesh)
        t1 = time.perf_counter()
        program = STAGES[case.footing.shape, kind][0](case, mesh)
        t2 = time.perf_counter()
        job = Job(solve, program, backend, settings=settings)
        job.start() if parallel and len(requests) > 1 else job.run()
        jobs.append((kind, mesh, program, job, {"mesh_s": t1 - t0, "assemble_s": t2 - t1}))
    done = {}
    for kind, mesh, program, job, timing in jobs:
        solution = job.result()
        timing["solve_s"] = job.ended_at - job.started_at
        done[kind] = _certified_bound(case, kind, mesh, program, solution, timing)
    spans = sorted((job.started_at, job.ended_at) for _, _, _, job, _ in jobs)
    wall, reach = 0.0, -math.inf
    for begin, end in spans:  # length of the union of the solve intervals
        wall += max(0.0, end - max(begin, reach))
        reach = max(reach, end)
    return done, wall


def _certified_bound(case: Case, kind: str, mesh: Mesh, program, solution, timing: dict) -> BoundResult:
    """Certify a solved bound and package it (fields, load components, timings)."""
    t3 = time.perf_counter()
    _, certify, field_of, method = STAGES[case.footing.shape, kind]
    certificate = certify(case, mesh, program, solution)
    timing["certify_s"] = time.perf_counter() - t3
    strip = case.footing.shape == "strip"
    load = certificate.get("load_kN_per_m" if strip else "load_kN") if certificate["passed"] else None
    status = solution.status if certificate["passed"] else f"withheld: {certificate.get('reason', solution.status)}"
    if load is not None and load <= 0.0:
        load, status = None, "withheld: the collapse load is zero or negative"
    extra, fields = {}, {}
    if solution.x is not None:
        fields = field_of(case, mesh, program, solution.x)
        if kind == "upper":
            extra = _mechanism_extent(mesh, fields["velocity"])
    delta = math.radians(case.footing.load_inclination)
    if load is not None and strip:
        extra.update({"vertical_kN_per_m": load * math.cos(delta), "horizontal_kN_per_m": load * math.sin(delta),
                      "moment_kNm_per_m": load * math.cos(delta) * case.footing.eccentricity})
    elif load is not None:
        extra["vertical_kN"] = load
    return BoundResult(
        kind=kind, pressure_kPa=None if load is None else load * math.cos(delta) / case.footing.bearing_area,
        load_kN_per_m=load if strip else None, load_kN=None if strip else load, status=status,
        certificate=certificate, elements=mesh.n_elements,
        variables=program.n_variables, equalities=program.n_zero, cones=program.n_soc,
        iterations=solution.iterations,
        timing=timing,
        method=method + (UPPER_JUMPS if mesh.jumps is not None else ""),
        extra=extra, mesh=mesh, fields=fields)


def uses_velocity_jumps(case: Case) -> bool:
    """Whether the upper bound lets the velocity jump across every interior edge
    ([analysis] velocity_jumps = "all"; default "none": DEVELOPERS.md, "Upper-bound details worth knowing")."""
    return case.analysis.velocity_jumps == "all"


def _slope_unstable(lower: BoundResult | None, upper: BoundResult | None) -> bool:
    """The ground cannot carry itself: the upper bound finds a mechanism with zero or
    negative load (or an unbounded one)."""
    # Only the upper bound can prove it (a mechanism that releases energy); a lower-bound
    # program with no solution on a given mesh proves nothing about the ground.
    return bool(upper is not None and ("unbounded" in upper.status or "zero or negative" in upper.status))


def _mechanism_extent(mesh: Mesh, velocity: np.ndarray) -> dict:
    """Where the soil moves: extent of nodes moving faster than CLEAR_FRACTION of the footing,
    and whether any node next to the fixed far boundary does."""
    speed = np.hypot(velocity[:, 0], velocity[:, 1])
    moving = speed > CLEAR_FRACTION
    far_nodes = np.unique(mesh.boundary_edges[np.isin(mesh.boundary_kind, (FAR_SIDE, FAR_BASE))])
    near_far = np.zeros(len(mesh.points), dtype=bool)
    # nodes of elements touching the far boundary
    touching = np.isin(mesh.triangles, far_nodes).any(axis=1)
    near_far[mesh.triangles[touching].ravel()] = True
    near_far[far_nodes] = False
    B = mesh.footing_width
    depth = float(-mesh.points[moving, 1].min()) if moving.any() else 0.0
    half_width = float(np.abs(mesh.points[moving, 0]).max()) if moving.any() else 0.0
    x_lo = float(mesh.points[moving, 0].min()) if moving.any() else 0.0
    x_hi = float(mesh.points[moving, 0].max()) if moving.any() else 0.0
    if mesh.domain.half:
        x_lo = -x_hi
    return {"mechanism_depth_m": depth, "mechanism_depth_over_B": depth / B,
            "mechanism_x_min_m": x_lo, "mechanism_x_max_m": x_hi,
            "mechanism_width_m": x_hi - x_lo, "mechanism_width_over_B": (x_hi - x_lo) / B,
            "mechanism_half_width_m": half_width, "mechanism_half_width_over_B": half_width / B,
            "max_speed_next_to_far_boundary": float(speed[near_far].max(initial=0.0)),
            "mechanism_clear_of_boundary": bool(speed[near_far].max(initial=0.0) < CLEAR_FRACTION)}
