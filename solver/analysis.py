"""The one way through: Case -> mesh -> each bound's conic program -> solve ->
certificate -> Result. Each bound runs on its own mesh (first order for the
lower bound, second order for the upper)."""
from __future__ import annotations

import dataclasses
import datetime
import math
import os
import threading
import time

import numpy as np

from .certify import certify_lower, certify_upper, lower_stress_field, restore_velocities, upper_velocity_field
from .certify_axisym import (certify_lower_axisym, certify_upper_axisym, lower_stress_field_axisym,
                             restore_velocities_axisym, upper_velocity_field_axisym)
from .conic import solve, stronger_settings
from .ground import material_arrays, node_cohesion
from .hand import hand_methods, information_only, where_it_falls
from .lower import lower_bound_program
from .lower_axisym import lower_bound_program_axisym
from .mesh import Mesh, build_mesh, far_edge_names, grow_domain, open_velocity_jumps, plan_domain
from .model import Case, davis_reduction
from .plausible import input_warnings
from .result import MOVING_SPEED_FRACTION, BoundResult, Result, caveats
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
SLOPE_UNSTABLE = ("the slope is not stable under its own weight: a certified mechanism of the ground alone "
                  "releases energy, so the collapse load is zero or negative; no capacity is reported")
NO_CAPACITY = ("the ground cannot carry the footing: a certified mechanism needs no positive load, so the "
               "collapse load is zero or negative; no capacity is reported")
UNPROVEN_UNBOUNDED = ("the solver found the upper-bound program unbounded, but the mechanism it returned did "
                      "not pass the certificate: that proves nothing about the ground; no capacity is reported")
CROSSED = ("the lower bound exceeds the upper bound by more than their certificates allow: at least one is "
           "wrong, so neither is reported (please report the case)")
CLEAR_FRACTION = 1e-3  # upper bound: mechanism 'clear of the boundary' if |velocity| there < this


def analyse(case: Case, *, bounds: str | None = None, elements: int | None = None,
            backend: str | None = None, solver_settings: dict | None = None,
            progress=None, parallel: bool | None = None, adaptive: bool | None = None) -> Result:
    """Run the bounds the case asks for and return the certified Result.

    ``adaptive`` (default: the case's ``[analysis] mesh``): refine until the target gap
    or the time limit (solver.adapt); otherwise one mesh of ``elements`` per bound.
    Either way a bound whose field reaches the edge of its domain is solved again on a
    larger one (:func:`solve_fixed`, solver.adapt). ``progress``: a callable taking
    one line per adaptive step. ``parallel``: solve the two bounds at once, one per
    core (:func:`run_bounds`); default: when this process may use two cores or more."""
    parallel = two_cores_free() if parallel is None else parallel
    adaptive = case.analysis.adaptive if adaptive is None else adaptive
    bounds = bounds or case.analysis.bounds
    backend = backend or case.analysis.backend
    elements = elements or case.analysis.elements
    run_date = datetime.datetime.now().astimezone().isoformat(timespec="seconds")
    start = time.perf_counter()
    domain = plan_domain(case)
    kinds = [k for k in ("lower", "upper") if bounds in (k, "both")]
    history = refinement = None
    if adaptive:
        from .adapt import refine_until  # adaptive refinement wraps run_bounds
        lower, upper, history, timing, refinement = refine_until(
            case, kinds, elements, backend, domain, solver_settings, progress=progress, parallel=parallel)
    else:
        done, timing = solve_fixed(case, kinds, elements, backend, domain, solver_settings, parallel)
        lower, upper = done.get("lower"), done.get("upper")
        refinement = {"mesh": "fixed", "elements": elements}
    timing["total_s"] = time.perf_counter() - start
    notes = []
    if _crossed(lower, upper):
        reason = f"the bounds cross (lower {lower.pressure_kPa:.6g} kPa > upper {upper.pressure_kPa:.6g} kPa)"
        for bound in (lower, upper):
            _withhold(bound, reason)
        notes.append(CROSSED)
    if _no_capacity(upper):
        notes.append(SLOPE_UNSTABLE if case.ground.slope_angle > 0 else NO_CAPACITY)
    elif upper is not None and "unbounded" in upper.status:
        notes.append(UNPROVEN_UNBOUNDED)
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
    if lower and "infeasible" in lower.status and not _no_capacity(upper):
        notes.append("the lower bound found no statically admissible stress field on this mesh; "
                     "that is a limit of the discretisation, not a proof that the ground fails: "
                     "try more elements")
    for bound, what in ((lower, "the lower bound's stress field is at yield"),
                        (upper, "the upper bound's mechanism moves")):
        if bound and bound.pressure_kPa is not None and bound.extra.get("field_at_edge"):
            larger = bound.extra.get("larger_model_tried")
            done = (f"it was solved on a larger one too ({larger['domain_width_m']:.3g} m wide, "
                    f"{larger['domain_depth_m']:.3g} m deep), which gave {larger['pressure']}, no tighter on the same "
                    "number of triangles, so this one is kept" if larger else
                    f"it was not solved on a larger one ({_why_at_edge(case, bound)})")
            notes.append(f"{what} at the {' and '.join(bound.extra['field_at_edge'])} edge of its model "
                         f"({bound.extra['domain_width_m']:.3g} m wide, {bound.extra['domain_depth_m']:.3g} m "
                         f"deep), and {done}: it is still rigorous but may be "
                         + ("low" if bound.kind == "lower" else "high"))
    used = [b.mesh.domain for b in (lower, upper) if b is not None and b.mesh is not None] or [domain]
    result = Result(title=case.title, case_name=case.name, case_sha256=case.source_sha256,
                    footing_width_m=case.footing.width, footing_shape=case.footing.shape,
                    lower=lower, upper=upper, timing=timing, domain=domain_record(domain, used),
                    pore_pressure_at_base_kPa=case.pore_pressure_at_base_kPa(),
                    backend=backend, notes=notes, input_warnings=input_warnings(case))
    result.adapt_history = history
    result.refinement = refinement
    result.run_date = run_date
    lo = lower.pressure_kPa if lower else None
    up = upper.pressure_kPa if upper else None
    result.hand_methods = [_hand_row(h, where_it_falls(h.pressure_kPa, lo, up)) for h in hand_methods(case)]
    # compared like with like above; the strength as typed, for information only
    result.hand_methods_as_given = [_hand_row(h, "information only") for h in information_only(case)]
    result.caveats = caveats(case, result.to_dict())
    return result


def domain_record(planned, used: list) -> dict:
    """result.json's "domain": the box holding every domain ``used`` (each bound's, grown or
    not) and what was ``planned`` (solver.mesh.Domain, m)."""
    box = {"x_min_m": min(d.x_min for d in used), "x_max_m": max(d.x_max for d in used),
           "depth_m": max(d.depth for d in used)}
    return {"half_domain_by_symmetry": planned.half, "width_m": box["x_max_m"] - box["x_min_m"], **box,
            "estimated_mechanism_width_m": planned.mechanism_width,
            "estimated_mechanism_depth_m": planned.mechanism_depth,
            "planned_width_m": planned.x_max - planned.x_min, "planned_depth_m": planned.depth,
            "slope_crest_x_m": planned.crest_x, "slope_toe_x_m": planned.toe_x, "slope_height_m": planned.slope_height}


def _hand_row(h, where: str) -> dict:
    return {"method": h.method, "source": h.source, "pressure_kPa": h.pressure_kPa, "factors": h.factors,
            "note": h.note, "where": where}


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


MAX_GROWTHS = 3  # a bound's domain grows at most this many times (GROWTH^3 = 8 times the plan)


def can_grow(case: Case, edges) -> set[str]:
    """The edges among ``edges`` that may move: not those of a drawn site, nor those the
    user fixed with [analysis] model_width / model_depth."""
    if case.geometry is not None:
        return set()
    a = case.analysis
    return {e for e in edges if (e == "base" and a.model_depth is None) or (e != "base" and a.model_width is None)}


def _why_at_edge(case: Case, bound: BoundResult) -> str:
    """Why a bound whose field reached the edge was not solved on a larger domain."""
    if case.geometry is not None:
        return "a drawn site keeps the extent of its drawing"
    if not can_grow(case, bound.extra.get("field_at_edge", ())):
        return "[analysis] model_width / model_depth fix that edge"
    if bound.extra.get("domain_growths", 0) >= MAX_GROWTHS:
        return f"the domain grew {MAX_GROWTHS} times already"
    return "no time was left for a solve on a larger one"


def next_domain(case: Case, bound: BoundResult):
    """The larger domain a bound should be solved on again, or None: when its field
    reached an edge that may grow, and it has grown fewer than MAX_GROWTHS times."""
    edges = can_grow(case, bound.extra.get("field_at_edge", ()))
    if not edges or bound.pressure_kPa is None or bound.extra.get("domain_growths", 0) >= MAX_GROWTHS:
        return None
    return grow_domain(case, bound.mesh.domain, edges)


def solve_fixed(case: Case, kinds: list[str], elements: int, backend: str, domain, settings,
                parallel: bool) -> tuple[dict[str, BoundResult], dict]:
    """One mesh of ``elements`` triangles per bound; a bound whose field reaches the edge
    of its domain is solved again on a larger one (:func:`next_domain`), and the better
    certified value is kept (both are rigorous). Returns the bounds and the timing."""
    timing = {"mesh_s": 0.0, "assemble_s": 0.0, "solve_s": 0.0, "certify_s": 0.0, "solve_wall_s": 0.0}
    best: dict[str, BoundResult] = {}
    requests = [(k, elements, None, domain) for k in kinds]
    growths = dict.fromkeys(kinds, 0)
    while requests:
        done, wall = run_bounds(case, requests, backend, settings, parallel)
        timing["solve_wall_s"] += wall
        requests = []
        for kind, bound in done.items():
            for key in ("mesh_s", "assemble_s", "solve_s", "certify_s"):
                timing[key] += bound.timing[key]
            bound.extra["domain_growths"] = growths[kind]
            if is_better(bound, best.get(kind)):
                best[kind] = bound
            elif growths[kind]:  # the larger model's solve kept nothing: say so beside the one kept
                best[kind].extra["larger_model_tried"] = {
                    "domain_width_m": bound.extra.get("domain_width_m"),
                    "domain_depth_m": bound.extra.get("domain_depth_m"),
                    "pressure": "nothing certified" if bound.pressure_kPa is None else f"{bound.pressure_kPa:.2f} kPa"}
            grown = next_domain(case, bound)
            if grown is not None:
                growths[kind] += 1
                requests.append((kind, elements, None, grown))
    return best, timing


def is_better(bound: BoundResult, than: BoundResult | None) -> bool:
    """Whether ``bound`` is a tighter certified bound than ``than`` (or ``than`` has none)."""
    if than is None or than.pressure_kPa is None:
        return than is None or bound.pressure_kPa is not None
    if bound.pressure_kPa is None:
        return False
    return bound.pressure_kPa > than.pressure_kPa if bound.kind == "lower" else bound.pressure_kPa < than.pressure_kPa


def finish(jobs) -> None:
    """Wait for every started job. Before an error leaves the caller: a solve still running
    inside Clarabel when the interpreter exits is killed mid-call, which aborts the whole
    process ("FATAL: exception not rethrown", exit 134) instead of reporting the error."""
    for job in jobs:
        if job.ident is not None:
            job.join()


def run_bounds(case: Case, requests: list, backend: str, settings, parallel: bool
               ) -> tuple[dict[str, BoundResult], float]:
    """Run bounds given as (kind, elements, size_hint, domain); returns them by kind and
    the wall time (s) during which at least one of them was solving.

    With ``parallel`` each solve starts on a thread of its own as soon as its program is
    assembled, and the next bound is meshed meanwhile (gmsh stays on the calling thread:
    its state is global), so the two bounds' solves share two cores. The results are the
    same as one after the other (tests/test_bounds.py): each solve is deterministic and
    shares nothing with the other."""
    jobs = []
    try:
        for kind, elements, size_hint, domain in requests:
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
    finally:  # an error meshing the second bound must not leave the first one's solve running
        finish(job for _, _, _, job, _ in jobs)
    done = {}
    for (kind, mesh, program, job, timing), (_, elements, size_hint, domain) in zip(jobs, requests):
        solution = job.result()
        timing["solve_s"] = job.ended_at - job.started_at
        if kind == "lower" and solution.status == "infeasible" and mesh.fan:
            # The fans' triangles all meet at the footing edges and cover much of the ground under
            # the footing; under an eccentric load on weak ground they lacked the freedom the stress
            # field needs (a random layered case: infeasible with fans at 400 and 800 triangles,
            # feasible without at 800, and a higher bound without at every size to 2400): mesh again
            # without them.
            t0 = time.perf_counter()
            mesh = build_mesh(case, order=1, elements=elements, domain=domain, size_hint=size_hint, fan=False)
            program = STAGES[case.footing.shape, kind][0](case, mesh)
            timing["mesh_s"] += time.perf_counter() - t0
            again = solve(program, backend, settings=settings)
            timing["solve_s"] += again.solve_s
            solution = dataclasses.replace(again, iterations=solution.iterations + again.iterations,
                                           notes={**again.notes, "meshed_again_without_fans": "infeasible with fans"})
        done[kind] = _certified_bound(case, kind, mesh, program, solution, timing, backend, settings)
        if (solution.linear_solver == "mkl" and not done[kind].certificate["passed"]
                and "direct_solve_method" not in (settings or {})):
            # MKL was the automatic choice: its answer failed the certificate, so qdldl solves it
            # again (measured: MKL's residuals sit closer to the certificate's limits)
            retry = solve(program, backend, settings={**(settings or {}), "direct_solve_method": "qdldl"})
            retry.linear_solver = f"mkl, then qdldl (mkl: {done[kind].status})"
            timing["solve_s"] += retry.solve_s
            done[kind] = _certified_bound(case, kind, mesh, program, retry, timing, backend, settings)
    spans = sorted((job.started_at, job.ended_at) for _, _, _, job, _ in jobs)
    wall, reach = 0.0, -math.inf
    for begin, end in spans:  # length of the union of the solve intervals
        wall += max(0.0, end - max(begin, reach))
        reach = max(reach, end)
    return done, wall


def _certify(case: Case, kind: str, mesh: Mesh, program, solution):
    """The solution (an upper bound's velocities restored: certify.restore_velocities, for a
    circle certify_axisym.restore_velocities_axisym) and its certificate."""
    if case.footing.shape != "strip":
        if kind == "upper":
            solution = restore_velocities_axisym(case, mesh, program, solution)
        return solution, STAGES[case.footing.shape, kind][1](case, mesh, program, solution)
    if kind == "lower":
        return solution, certify_lower(case, mesh, program, solution)
    solution = restore_velocities(case, mesh, program, solution)
    return solution, certify_upper(case, mesh, program, solution)


def _certified_bound(case: Case, kind: str, mesh: Mesh, program, solution, timing: dict,
                     backend: str = "clarabel", settings: dict | None = None) -> BoundResult:
    """Certify a solved bound and package it (fields, load components, timings). A point
    whose certificate fails on the residuals the solver left (or that the solver ended in
    trouble) is solved once more with stronger settings (conic.stronger_settings), and that
    solve is certified instead."""
    t3 = time.perf_counter()
    strip = case.footing.shape == "strip"
    solution, certificate = _certify(case, kind, mesh, program, solution)
    stronger = stronger_settings(program)
    again_s = 0.0
    if (not certificate["passed"] and solution.x is not None and stronger is not None
            and solution.status not in ("iteration limit", "time limit")):  # limits the caller set stand
        first = certificate.get("reason", solution.status)
        again = solve(program, backend, settings={**(settings or {}), **stronger})
        again_s = again.solve_s
        iterations = solution.iterations + again.iterations
        solution, certificate = _certify(case, kind, mesh, program, again)
        solution = dataclasses.replace(solution, iterations=iterations)
        certificate["solved_again_after"] = first
    if kind == "upper" and solution.ray is not None and strip:  # "unbounded": is the solver's mechanism real?
        certificate = certify_upper(case, mesh, program, dataclasses.replace(solution, x=solution.ray), ray=True)
    timing["solve_s"] += again_s
    timing["certify_s"] = time.perf_counter() - t3 - again_s
    load = (certificate.get("load_kN_per_m" if strip else "load_kN")
            if certificate["passed"] and solution.x is not None else None)
    _, _, field_of, method = STAGES[case.footing.shape, kind]
    status = solution.status if certificate["passed"] else f"withheld: {certificate.get('reason', solution.status)}"
    if solution.ray is not None:  # no bound either way; the certificate says whether the mechanism is real
        proven = certificate["passed"]
        certificate = {**certificate, "passed": False, "mechanism_of_the_ground_certified": proven}
        status = ("withheld: unbounded: a certified mechanism of the ground alone releases energy with the "
                  "footing unloaded, so the collapse load is zero or negative" if proven else
                  "withheld: the solver found the program unbounded, but the mechanism it returned did not "
                  f"pass the certificate ({certificate.get('reason', '')}): nothing is proven")
    if load is not None and load <= 0.0:
        load, status = None, (f"withheld: the lower bound's best stress field carries {load:.3g} kN/m, no "
                              "positive load: it proves nothing on this mesh" if kind == "lower" else
                              f"withheld: a certified mechanism needs a load of {load:.3g} kN/m: the collapse "
                              "load is zero or negative")
    extra, fields = {}, {}
    if solution.x is not None:
        fields = field_of(case, mesh, program, solution.x)
        if kind == "upper":
            extra = _mechanism_extent(mesh, fields["velocity"])
        else:
            extra = _yield_at_far_boundary(case, mesh, program, solution.x, fields)
    extra.update({"domain_width_m": mesh.domain.x_max - mesh.domain.x_min, "domain_depth_m": mesh.domain.depth,
                  "linear_solver": solution.linear_solver})
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


def _no_capacity(upper: BoundResult | None) -> bool:
    """The ground cannot carry the footing: a certified mechanism needs a load of zero or
    less, or releases energy with the footing unloaded (an unbounded program whose mechanism
    passed its certificate). Only the upper bound can prove it; a lower-bound program with no
    solution on a given mesh, or an unbounded one whose mechanism fails, proves nothing."""
    return bool(upper is not None and "zero or negative" in upper.status)


def _crossed(lower: BoundResult | None, upper: BoundResult | None) -> bool:
    """Both bounds certified, and the lower above the upper by more than the lower bound's
    stress tolerance and round-off allow: a contradiction, never two certified bounds."""
    if not (lower and upper and lower.pressure_kPa is not None and upper.pressure_kPa is not None):
        return False
    allowed = lower.certificate.get("tolerance_kPa", 0.0) + 1e-6 * abs(upper.pressure_kPa)
    return lower.pressure_kPa > upper.pressure_kPa + allowed


def _withhold(bound: BoundResult, reason: str) -> None:
    """Withdraw a certified bound after the fact: no number of any kind is left in it."""
    bound.pressure_kPa = bound.load_kN_per_m = None
    bound.status = f"withheld: {reason}"
    bound.certificate = {**bound.certificate, "passed": False, "reason": reason}
    for key in ("vertical_kN_per_m", "horizontal_kN_per_m", "moment_kNm_per_m"):
        bound.extra.pop(key, None)


EDGE_YIELD = 0.999  # lower bound: utilisation at which a node at the far boundary counts as at yield
EDGE_RADIUS = 1e-2  # ... among nodes whose yield radius is at least this share of the median one
#                     (a cohesionless soil's surface nodes sit at the cone's apex at any load)
EDGE_HITS = 2  # ... and an edge counts as reached when at least this many of its triangles or strips
#               have such a node. Measured (tests/test_domain.py's crust case, 1k and 4k triangles):
#               where a larger model raised the bound by 3-20 %, 4 to 24 triangles on the edge had a
#               node at utilisation >= 0.999; where it did not, none, or one triangle at the surface
#               (sand, 1k triangles: 250.15 kPa on the plan, 250.70 on twice its width)


def _yield_at_far_boundary(case: Case, mesh: Mesh, program, x: np.ndarray, fields: dict) -> dict:
    """Lower bound: the far edges ("left", "right", "base") at which the stress field is at
    yield, in triangles on that edge or at finite points of the extension elements beyond it:
    there the model's extent, not the soil, limits the load the field can carry."""
    names = far_edge_names(mesh)
    far = names != ""
    radius = fields.get("radius_kPa")  # a circle's field gives the utilisation only
    floor = EDGE_RADIUS * np.median(radius) if radius is not None else 0.0
    at_yield = (fields["utilisation"] >= EDGE_YIELD) & ((radius > floor) if radius is not None else True)
    hits = at_yield[mesh.boundary_element[far]].any(axis=1)  # per far edge: its triangle or its strip
    strips = program.layout.get("strips", {}).get("strip")
    if strips is not None and len(strips) == far.sum():  # one strip per far edge, in boundary order
        mat = material_arrays(case)
        e, k = mesh.boundary_element[far], mesh.boundary_local[far]
        layer = mesh.layer[e]
        for end, node in ((0, mesh.triangles[e, k]), (1, mesh.triangles[e, (k + 1) % 3])):
            sigma = x[strips[:, end]]
            c, phi = node_cohesion(mat, layer, -mesh.points[node, 1]), mat["phi"][layer]
            radius = 2 * c * np.cos(phi) - (sigma[:, 0] + sigma[:, 1]) * np.sin(phi)
            deviator = np.hypot(sigma[:, 0] - sigma[:, 1], 2 * sigma[:, 2])
            hits |= (deviator >= EDGE_YIELD * radius) & (radius > floor)
    names = names[far]
    return {"field_at_edge": [str(n) for n in ("base", "left", "right") if hits[names == n].sum() >= EDGE_HITS]}


def _mechanism_extent(mesh: Mesh, velocity: np.ndarray) -> dict:
    """Where the soil moves: extent of nodes moving faster than MOVING_SPEED_FRACTION of the
    footing (the pictures' frame and arrows use the same), whether any node next to the fixed
    far boundary moves faster than the much smaller CLEAR_FRACTION, and next to which far edges."""
    speed = np.hypot(velocity[:, 0], velocity[:, 1])
    moving = speed > MOVING_SPEED_FRACTION
    names = far_edge_names(mesh)
    far_nodes = np.unique(mesh.boundary_edges[names != ""])
    near_far = np.zeros(len(mesh.points), dtype=bool)
    # nodes of elements touching the far boundary
    touching = np.isin(mesh.triangles, far_nodes).any(axis=1)
    near_far[mesh.triangles[touching].ravel()] = True
    near_far[far_nodes] = False
    edges = []
    for name in ("base", "left", "right"):
        nodes = np.unique(mesh.boundary_edges[names == name])
        near = np.isin(mesh.triangles, nodes).any(axis=1)
        beside = np.zeros(len(mesh.points), dtype=bool)
        beside[mesh.triangles[near].ravel()] = True
        beside[nodes] = False
        if len(nodes) and speed[beside].max(initial=0.0) >= CLEAR_FRACTION:
            edges.append(name)
    B = mesh.footing_width
    depth = float(-mesh.points[moving, 1].min()) if moving.any() else 0.0
    half_width = float(np.abs(mesh.points[moving, 0]).max()) if moving.any() else 0.0
    x_lo = float(mesh.points[moving, 0].min()) if moving.any() else 0.0
    x_hi = float(mesh.points[moving, 0].max()) if moving.any() else 0.0
    if mesh.domain.half:
        x_lo = -x_hi
    return {"mechanism_speed_fraction": MOVING_SPEED_FRACTION,
            "mechanism_depth_m": depth, "mechanism_depth_over_B": depth / B,
            "mechanism_x_min_m": x_lo, "mechanism_x_max_m": x_hi,
            "mechanism_width_m": x_hi - x_lo, "mechanism_width_over_B": (x_hi - x_lo) / B,
            "mechanism_half_width_m": half_width, "mechanism_half_width_over_B": half_width / B,
            "max_speed_next_to_far_boundary": float(speed[near_far].max(initial=0.0)),
            "mechanism_clear_of_boundary": bool(speed[near_far].max(initial=0.0) < CLEAR_FRACTION),
            "field_at_edge": edges}
