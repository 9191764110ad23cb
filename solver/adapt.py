"""Adaptive refinement: re-mesh where each bound says the collapse happens,
until the bracket is tight enough, the step limit or the time limit.

Indicators (after Lyamin, Sloan, Krabbenhoft & Hjiaj 2005 and Munoz, Bonet,
Huerta & Peraire 2009, who refine where the plastic flow and the bound gap
concentrate; the two bounds here live on different meshes, so each bound's
own field drives its own mesh). Each bound's solution marks its plastic zone:

* upper bound: triangles across which the velocity changes by at least
  PLASTIC_VELOCITY of the footing's (rho h, rho = ||(ex - ey, gxy)||, the
  plastic shear strain rate; nonzero in cohesionless soil too, where the
  dissipation itself vanishes), or beside a velocity jump that slips that much;
* lower bound: triangles at yield (utilisation >= PLASTIC at a node).

The next mesh keeps build_mesh's grading toward the footing edges inside the
plastic zone and is RIGID_COARSENING times coarser outside it; build_mesh
scales the whole to the next element target, so the elements leave the rigid
soil for the plastic zone.

Measured (4k -> 8k triangles, against the graded mesh of the same size):
Prandtl upper +0.30 % (graded +0.41 %), lower -0.024 % (-0.022 %); N_gamma
(phi 30) upper +2.15 % (+2.72 %), lower -0.49 % (-0.87 %). An earlier
indicator that equidistributed rho itself (h ~ rho^-1/2) did worse than the
graded mesh (N_gamma upper +4.2 % at 8k): near the footing edge rho ~ 1/r asks
for h ~ r^1/2, coarser than the grading h ~ r that the singularity needs.

The upper bound's next mesh follows the gap itself once a lower bound is certified
(:func:`gap_density`, :func:`gap_size_hint`): each upper-bound triangle's share of
the gap, D(strain rate) - sigma : strain rate integrated with the lower bound's
stress (Munoz et al. 2009), marks the triangles holding 60 % of it for half their
size, and sizes carry over from step to step. Measured, upper bound refined 4k -> 8k
-> 16k triangles from the same 8k lower bound, error and solve time at 16k, gap
indicator against the plastic zone: Prandtl +0.156 % in 11.6 s against +0.219 % in
26.5 s; N_gamma (phi 30) +1.09 % in 14.7 s against +1.56 % in 29.0 s (fewer
iterations too: 20 against 24, 25 against 29); sand over clay 167.20 against 167.41
kPa, clay slope 177.51 against 177.77 kPa, in 16.3 / 12.9 s against 19.5 / 14.7 s
(shared machine). The lower bound keeps the plastic zone (its fan carries the edge).

Which bound is refined, and by how much: both are solved at the first step;
then the upper bound is refined (on the benchmark cases it is the weaker side),
then whichever has the larger estimated error (its last change scaled by an
assumed convergence rate, or the gap less the other's error), since the gap is
the sum of the two. Each refined bound grows by as much as the time left
allows (at most GROWTH_MAX), predicted from its last solves (time_exponent); no step starts
that would end after the time limit.

On two cores (analysis.run_bounds) a step that refines one bound refines the
other as well, by as much as its predicted solve fits in the first one's: the
other core would idle otherwise.

Every bound at every step is solved and certified as usual, so every value is
rigorous; the bracket reported is the best certified lower and upper bound
of all steps, each with the step it came from, and adapt_history lists every
step as it was, improvements and setbacks alike.
"""
from __future__ import annotations

import time

import numpy as np

from .analysis import is_better, next_domain, run_bounds
from .mesh import SizeHint, fan_reach, graded_size
from .model import Case

GROWTH_MAX = 4.0  # element target growth of a refined bound per step, at most ...
GROWTH_MIN = 1.3  # ... and at least (a smaller step is not worth its solve)
# Wall time of a bound ~ elements^k: TIME_EXPONENT_MAX (the safe side) until the bound has two
# runs on one domain whose sizes differ by GROWTH_MIN or more, then k from those two runs
# (:func:`time_exponent`), within [TIME_EXPONENT_MIN, TIME_EXPONENT_MAX]. Measured (one bound's
# mesh, assembly, solve and certificate): upper bound, graded mesh, N_gamma (phi 30) 4k -> 20k
# triangles 3.5 -> 19.7 s, k = 1.07; lower bound with qdldl only, Prandtl 5k -> 20k -> 80k,
# k = 2.05 (README, make bench), with MKL Pardiso 1.45. Goal table (benchmarks/cases.py, 60 s,
# quiet machine), one k of 2.2 throughout against this: N_gamma phi 30 1.35 -> 1.02 %, phi 35
# 1.34 -> 1.17 %, sand over clay 1.35 -> 0.90 %, eccentric 0.92 -> 0.88 %, all within 60 s;
# with TIME_EXPONENT_MIN 1.0 N_gamma ran 64-65 s (a step costs more than its predecessor's
# pace: iterations rise, fill-in grows); a first guess of 1.3 for the upper bound (not 2.2)
# made its first step 4x and did worse.
TIME_EXPONENT_MIN = 1.3  # a step grows its solve more than its last one did (iterations rise, fill-in grows)
TIME_EXPONENT_MAX = 2.2
TIME_MARGIN = 0.85  # plan a step into this share of the time left (the prediction is rough: a Prandtl
#                    run with a 60 s limit, on a shared machine, ended at 61.9 s planning into all of it)
CONVERGENCE_RATE = 0.6  # error of either bound ~ elements^-this (measured on Prandtl and N_gamma, 2k-16k)
PLASTIC = 0.98  # lower bound: utilisation at which a triangle counts as plastic
PLASTIC_VELOCITY = 1e-3  # upper bound: velocity change across a triangle (of the footing's) that counts as plastic
RIGID_COARSENING = 6.0  # size in the rigid zone / graded size (measured 2, 3, 6: 6 best)
EXTEND_CELLS = 30  # grid cells across a grown domain, where the previous hint has no sizes


def upper_size_hint(bound) -> SizeHint:
    """Sizes for the next upper-bound mesh: the graded size where the soil deforms
    (the velocity changes by PLASTIC_VELOCITY of the footing's across a triangle,
    rho h, or a velocity jump beside it slips that much), RIGID_COARSENING times
    it where the soil is rigid."""
    mesh, fields = bound.mesh, bound.fields
    strain = fields["strain_rate"]  # (n_el, 3, 3): ex, ey, gxy at the corners
    rho = np.hypot(strain[..., 0] - strain[..., 1], strain[..., 2]).mean(axis=1)
    change = rho * np.sqrt(2.0 * mesh.areas())
    if "jump_slip" in fields:
        np.maximum.at(change, mesh.jumps[:, 0], fields["jump_slip"])
        np.maximum.at(change, mesh.jumps[:, 2], fields["jump_slip"])
    return _plastic_zone_hint(mesh, change >= PLASTIC_VELOCITY)


GAP_SHARE = 0.6  # upper bound: the elements holding this share of the bound gap are refined ...
GAP_REFINE = 0.5  # ... to this times their size; elements with under GAP_QUIET of the mean
GAP_COARSEN = 2.0  # share are coarsened by this factor; the rest keep their size
GAP_QUIET = 1e-3
GAUSS_POINTS = np.array([[2 / 3, 1 / 6, 1 / 6], [1 / 6, 2 / 3, 1 / 6], [1 / 6, 1 / 6, 2 / 3]])  # barycentric


def gap_density(case: Case, lower, upper) -> np.ndarray:
    """(n_el,) kN/m per unit footing velocity: each upper-bound triangle's share of the gap,
    the integral of D(strain rate) - sigma : strain rate with the lower bound's stress sigma
    (after Munoz, Bonet, Huerta & Peraire 2009, who split the gap of two bounds on one mesh
    so). sigma is statically admissible and the velocity kinematically admissible, so the
    integrand is nonnegative everywhere (D is the largest work of any stress inside the
    yield cone) and its integral over the domain is the gap (times the half-domain's 1/2;
    the three-point rule makes it close, not exact: N_gamma 4k, 7.50 against 7.46 kN/m).
    Points outside the lower bound's mesh count D alone; velocity jumps are not counted.

    A circle's (axisymmetric) share is the same integral over the ring, 2 pi r dA, with the
    hoop terms: the upper bound's own dissipation of each triangle (exact, whole ring) less
    the three-point rule of 2 pi r (sigma : strain rate + sigma_theta e_theta)."""
    from matplotlib.tri import Triangulation

    from .ground import material_arrays, node_cohesion

    lo, up = lower.mesh, upper.mesh
    finder = Triangulation(lo.points[:, 0], lo.points[:, 1], lo.triangles).get_trifinder()
    corners = up.points[up.triangles[:, :3]]  # (n, 3, 2)
    mat = material_arrays(case)
    phi = mat["phi"][up.layer]
    frictional = (np.sin(phi) > 1e-3)[:, None]
    strain = upper.fields["strain_rate"]  # (n, 3 corners, 3)
    # rho at the corners, interpolated linearly as the upper bound's dissipation is (for phi = 0
    # it lies above the norm of the interpolated strain rate inside the triangle)
    rho = np.where(frictional, (strain[..., 0] + strain[..., 1]) / np.where(frictional, np.sin(phi)[:, None], 1.0),
                   np.hypot(strain[..., 0] - strain[..., 1], strain[..., 2]))
    axisymmetric = "hoop_rate" in upper.fields
    eta = upper.fields["dissipation"].copy() if axisymmetric else np.zeros(up.n_elements)
    for weights in GAUSS_POINTS:
        x = np.einsum("c,ncd->nd", weights, corners)
        ex, ey, gxy = np.einsum("c,ncs->ns", weights, strain).T
        dissipation = node_cohesion(mat, up.layer, -x[:, 1]) * np.cos(phi) * (rho @ weights)
        element = finder(x[:, 0], x[:, 1])
        inside = element >= 0
        p = lo.points[lo.triangles[element[inside]]]  # (k, 3, 2): barycentric coordinates of x there
        local = np.linalg.solve(np.stack([p[:, 1] - p[:, 0], p[:, 2] - p[:, 0]], axis=2),
                                (x[inside] - p[:, 0])[..., None])[..., 0]
        bary = np.column_stack([1.0 - local.sum(axis=1), local])
        sigma = np.zeros((len(x), 3))
        sigma[inside] = np.einsum("kn,knc->kc", bary, lower.fields["stress"][element[inside]])
        work = sigma[:, 0] * ex + sigma[:, 1] * ey + sigma[:, 2] * gxy
        if axisymmetric:  # the ring: 2 pi r dA, and the hoop stress's work on the hoop strain rate
            hoop = np.zeros(len(x))
            hoop[inside] = np.einsum("kn,kn->k", bary, lower.fields["hoop_kPa"][element[inside]])
            work = 2.0 * np.pi * x[:, 0] * (work + hoop * (upper.fields["hoop_rate"] @ weights))
            eta -= up.areas() / 3.0 * work
        else:
            eta += up.areas() / 3.0 * (dissipation - work)
    return eta


def gap_size_hint(upper, eta: np.ndarray) -> SizeHint:
    """Sizes for the next upper-bound mesh from its share of the gap: the triangles holding
    GAP_SHARE of it (largest first) at GAP_REFINE of their size, those with under GAP_QUIET
    of the mean share at GAP_COARSEN, the rest as they are; build_mesh scales the whole to
    the next element target. Sizes carry over from step to step, so refinement accumulates
    where the gap stays."""
    mesh = upper.mesh
    order = np.argsort(-eta)
    marked = np.zeros(len(eta), dtype=bool)
    marked[order[:np.searchsorted(np.cumsum(eta[order]), GAP_SHARE * eta.sum()) + 1]] = True
    factor = np.where(marked, GAP_REFINE, np.where(eta < GAP_QUIET * eta.mean(), GAP_COARSEN, 1.0))
    corners = mesh.triangles[:, :3]
    node_factor = np.full(len(mesh.points), np.inf)
    np.minimum.at(node_factor, corners.ravel(), np.repeat(factor, 3))
    size, count = np.zeros(len(mesh.points)), np.zeros(len(mesh.points))
    np.add.at(size, corners.ravel(), np.repeat(np.sqrt(2.0 * mesh.areas()), 3))
    np.add.at(count, corners.ravel(), 1.0)
    used = count > 0
    size[used] = size[used] / count[used] * node_factor[used]
    size[~used] = 1.0  # midside nodes: not corners of any triangle, never read
    return SizeHint(points=mesh.points, triangles=corners, size=size)


def lower_size_hint(bound) -> SizeHint:
    """Sizes for the next lower-bound mesh: the graded size (fan included) where a
    triangle is at yield (utilisation >= PLASTIC at a node), RIGID_COARSENING times
    it elsewhere."""
    return _plastic_zone_hint(bound.mesh, bound.fields["utilisation"].max(axis=1) >= PLASTIC)


def _plastic_zone_hint(mesh, plastic: np.ndarray) -> SizeHint:
    """The graded size of build_mesh at the previous mesh's corner nodes, times
    RIGID_COARSENING at nodes with no plastic triangle around them."""
    corners = mesh.triangles[:, :3]
    factor = np.full(len(mesh.points), RIGID_COARSENING)
    np.minimum.at(factor, corners.ravel(), np.repeat(np.where(plastic, 1.0, RIGID_COARSENING), 3))
    fan = mesh.order == 1 and fan_reach(mesh.domain, mesh.footing_width) > 0
    size = graded_size(mesh.points, mesh.domain, mesh.footing_width, fan) * factor
    return SizeHint(points=mesh.points, triangles=corners, size=size)


def refine_until(case: Case, kinds: list[str], elements: int, backend: str, domain, settings,
                 progress=None, parallel: bool = False):
    """Solve, refine and solve again until the target gap, max_steps or time_limit_s.

    ``parallel``: the bounds of a step solve at once (analysis.run_bounds), and a step
    that refines one bound refines the other too, as far as it can without outlasting
    the first (the second core would idle otherwise). A bound whose field reached the
    edge of its domain (analysis.next_domain) is solved at the next step on a larger
    one, before any other choice. ``progress``: called with one line per step.

    Returns (best lower BoundResult, best upper BoundResult, history rows, timing,
    refinement summary: target, whether it was reached, and why the refinement stopped).
    """
    target = case.analysis.target_gap * 100.0  # percent
    limit = case.analysis.time_limit_s
    start = time.perf_counter()
    count = {k: elements for k in kinds}
    hint = {k: None for k in kinds}
    domains = {k: domain for k in kinds}
    growths = {k: 0 for k in kinds}
    runs: dict = {k: [] for k in kinds}  # (triangles, s, domain) of each run of each bound
    current: dict = {}
    best: dict = {}
    history: list[dict] = []
    timing = {"mesh_s": 0.0, "assemble_s": 0.0, "solve_s": 0.0, "certify_s": 0.0, "solve_wall_s": 0.0}
    refine = list(kinds)
    refined_before: set = set()
    stopped, why = "step limit", f"the step limit, max_steps = {case.analysis.max_steps}"
    for step in range(case.analysis.max_steps):
        done, solve_wall = run_bounds(case, [(k, count[k], hint[k], domains[k]) for k in refine], backend,
                                      settings, parallel)
        timing["solve_wall_s"] += solve_wall
        for kind in refine:
            bound = done[kind]
            for key in timing:
                timing[key] += bound.timing.get(key, 0.0)
            previous = current.get(kind)
            current[kind] = bound
            if is_better(bound, best.get(kind)):
                best[kind] = bound
            bound.extra["adapt_step"] = step
            bound.extra["domain_growths"] = growths[kind]
            bound.extra["change_from_previous_step_kPa"] = (
                None if previous is None or previous.pressure_kPa is None or bound.pressure_kPa is None
                or previous.mesh.domain != bound.mesh.domain  # a larger domain: not a refinement
                else bound.pressure_kPa - previous.pressure_kPa)
            bound.extra["elements_previous_step"] = None if previous is None else previous.elements
        value = lambda table, k: table[k].pressure_kPa if k in table else None
        best_lo, best_up = value(best, "lower"), value(best, "upper")
        gap = 100.0 * (best_up - best_lo) / best_lo if best_lo and best_up else None
        # a bound whose field reached a growable edge is solved next on a larger domain
        grown = {k: next_domain(case, done[k]) for k in refine}
        grown = {k: d for k, d in grown.items() if d is not None}
        history.append({"step": step, "refined": list(refine),
                        "elements_lower": current["lower"].elements if "lower" in current else None,
                        "elements_upper": current["upper"].elements if "upper" in current else None,
                        "lower": value(current, "lower"), "upper": value(current, "upper"),
                        "best_lower": best_lo, "best_upper": best_up, "gap_percent": gap,
                        "wall_s": time.perf_counter() - start,
                        "field_at_edge": {k: done[k].extra.get("field_at_edge", []) for k in refine}})
        if progress is not None:
            progress(_row_text(history[-1]))
        if gap is not None and gap <= target:
            stopped, why = "target gap reached", None
            break
        if not any(current[k].pressure_kPa is not None for k in kinds) and step > 0:
            stopped, why = "no certified bound", "no bound was certified at two steps in a row"
            break
        # Grow the refined bound as far as the time left allows (time ~ elements^k from its
        # last solves: time_exponent), at most GROWTH_MAX; no step that would end after the limit. If
        # the bound with the larger error cannot grow enough in the time left, the other may.
        left = TIME_MARGIN * max(limit - (time.perf_counter() - start), 0.0)
        cost = {k: max(sum(current[k].timing.values()), 1e-9) for k in kinds}
        for kind in refine:
            runs[kind].append((current[kind].elements, cost[kind], domains[kind]))
        power = {k: time_exponent(runs[k]) for k in kinds}
        growth = {k: min(GROWTH_MAX, (left / cost[k]) ** (1.0 / power[k])) for k in kinds}
        # on a larger domain the same element count is worth a solve; a refinement needs GROWTH_MIN
        least = {k: 1.0 if k in grown else GROWTH_MIN for k in kinds}
        order = list(grown) + [k for k in _next_to_refine(kinds, current, refined_before,
                                                          best_up - best_lo if gap is not None else None)
                               if k not in grown]
        order += [k for k in kinds if k not in order]
        refine = [k for k in order if growth[k] >= least[k]][:1]
        if not refine:
            first = order[0]
            stopped = "time limit"
            why = (f"the time limit, time_limit_s = {limit:g}: the next step (the {first} bound"
                   + (" on a larger domain" if first in grown else f" on {least[first]:g} times the triangles")
                   + f") would take about {cost[first] * least[first] ** power[first]:.0f} s, more than "
                   f"{100 * TIME_MARGIN:.0f} % of the {max(limit - (time.perf_counter() - start), 0):.0f} s left")
            break
        if parallel:  # the other bound on the other core, predicted to end no later
            first = refine[0]
            window = cost[first] * growth[first] ** power[first]
            for k in kinds:
                if k != first and current[k].pressure_kPa is not None:
                    growth[k] = min(GROWTH_MAX, (window / cost[k]) ** (1.0 / power[k]))
                    if growth[k] >= least[k]:
                        refine.append(k)
        refined_before.update(refine)
        for kind in refine:
            if current[kind].pressure_kPa is None:
                continue
            if kind == "upper" and current.get("lower") is not None and current["lower"].pressure_kPa is not None:
                hint[kind] = gap_size_hint(current[kind], gap_density(case, current["lower"], current[kind]))
            else:
                hint[kind] = (lower_size_hint if kind == "lower" else upper_size_hint)(current[kind])
            if kind in grown:
                domains[kind], growths[kind] = grown[kind], growths[kind] + 1
                hint[kind] = extend_hint(hint[kind], domains[kind], current[kind].mesh)
            count[kind] = int(min(count[kind] * growth[kind], 400_000))
    history[-1]["stopped"] = stopped
    if len(kinds) < 2 and stopped != "target gap reached":
        why = f"only the {kinds[0]} bound was asked for, so there is no gap to reach; stopped by {why}"
    chosen = {k: (best[k] if k in best else current.get(k)) for k in ("lower", "upper")}
    summary = {"mesh": "adaptive", "target_gap_percent": target, "time_limit_s": limit,
               "max_steps": case.analysis.max_steps, "steps": len(history),
               "reached": stopped == "target gap reached", "stopped": stopped, "why": why}
    return chosen["lower"], chosen["upper"], history, timing, summary


def time_exponent(runs: list[tuple[int, float, object]]) -> float:
    """k in time ~ elements^k for a bound's next run: from its last two runs on the same domain
    whose sizes differ by GROWTH_MIN or more, within [TIME_EXPONENT_MIN, TIME_EXPONENT_MAX];
    TIME_EXPONENT_MAX until there are two such runs.

    >>> time_exponent([(4000, 3.5, "d")])
    2.2
    >>> round(time_exponent([(4000, 3.5, "d"), (16000, 14.0, "d")]), 2)  # linear: at least 1.3
    1.3
    >>> round(time_exponent([(4000, 2.0, "d"), (16000, 22.6, "d")]), 2)
    1.75
    >>> time_exponent([(4000, 2.0, "d"), (4000, 9.0, "larger")])  # a larger domain: no pair
    2.2
    """
    if len(runs) >= 2:
        (n0, t0, d0), (n1, t1, d1) = runs[-2], runs[-1]
        if d0 == d1 and n1 >= GROWTH_MIN * n0 and t0 > 0 and t1 > 0:
            k = np.log(t1 / t0) / np.log(n1 / n0)
            return float(min(max(k, TIME_EXPONENT_MIN), TIME_EXPONENT_MAX))
    return TIME_EXPONENT_MAX


def extend_hint(hint: SizeHint, domain, mesh) -> SizeHint:
    """The hint carried onto a larger domain: the old one inside the old domain's box,
    build_mesh's graded size on a grid of the rest (the field reached that edge, so
    the soil beyond it is not known to be rigid). Grid cells lie wholly outside the old
    box, whose edges are grid lines, so the two parts tile the new box without gaps."""
    old = mesh.domain
    B = mesh.footing_width
    xs = np.unique(np.concatenate([np.linspace(domain.x_min, domain.x_max, EXTEND_CELLS + 1), [old.x_min, old.x_max]]))
    ys = np.unique(np.concatenate([np.linspace(-domain.depth, 0.0, EXTEND_CELLS + 1), [-old.depth]]))
    X, Y = np.meshgrid(xs, ys, indexing="ij")
    grid = np.column_stack([X.ravel(), Y.ravel()])
    index = np.arange(len(grid)).reshape(X.shape)
    a, b = index[:-1, :-1].ravel(), index[1:, :-1].ravel()
    c, d = index[1:, 1:].ravel(), index[:-1, 1:].ravel()
    centre = 0.25 * (grid[a] + grid[b] + grid[c] + grid[d])
    outside = ((centre[:, 0] < old.x_min) | (centre[:, 0] > old.x_max) | (centre[:, 1] < -old.depth))
    cells = np.column_stack([a, b, c, d])[outside]
    triangles = np.concatenate([cells[:, [0, 1, 2]], cells[:, [0, 2, 3]]]) + len(hint.points)
    fan = mesh.order == 1 and fan_reach(old, B) > 0
    return SizeHint(points=np.concatenate([hint.points, grid]),
                    triangles=np.concatenate([hint.triangles, triangles]),
                    size=np.concatenate([hint.size, graded_size(grid, domain, B, fan)]))


def estimated_error(bound) -> float | None:
    """kPa: a bound's remaining error estimated from its last refinement, if it had one.

    With error ~ elements^-CONVERGENCE_RATE, a change dP from n0 to n1 elements
    leaves dP / ((n1/n0)^rate - 1) to go."""
    change, n0 = bound.extra.get("change_from_previous_step_kPa"), bound.extra.get("elements_previous_step")
    if change is None or not n0 or bound.elements <= n0:
        return None
    return abs(change) / ((bound.elements / n0) ** CONVERGENCE_RATE - 1.0)


def _next_to_refine(kinds: list[str], current: dict, refined_before: set, gap_kPa: float | None) -> list[str]:
    """The bound to refine next: the one with the larger estimated error
    (:func:`estimated_error`; the gap is the sum of both errors, so a bound with no
    estimate yet gets the gap less the other's). Before any estimate the upper bound
    goes first: measured on the benchmark cases at equal element counts, its error
    was 3 to 15 times the lower bound's (the lower bound has a fan at each footing
    edge; benchmarks/cases.py, DEVELOPERS.md)."""
    if len(kinds) < 2:
        return list(kinds)
    if "upper" not in refined_before:
        return ["upper"]
    error = {k: estimated_error(current[k]) for k in kinds}
    if gap_kPa is not None:
        for k, other in (("lower", "upper"), ("upper", "lower")):
            if error[k] is None and error[other] is not None:
                error[k] = max(gap_kPa - error[other], 0.0)
    if any(v is None for v in error.values()):
        return [k for k in kinds if error[k] is None]
    return [max(kinds, key=lambda k: error[k])]


def _row_text(row: dict) -> str:
    """One line per step: triangles, the best bounds so far, the gap, the time since the start."""
    fmt = lambda v, spec: "-" if v is None else format(v, spec)
    grew = [f"{k} at the {' and '.join(e)} edge" for k, e in row["field_at_edge"].items() if e]
    return (f"step {row['step'] + 1}: triangles lower {fmt(row['elements_lower'], 'd')} upper "
            f"{fmt(row['elements_upper'], 'd')}; lower {fmt(row['best_lower'], '.2f')} kPa, upper "
            f"{fmt(row['best_upper'], '.2f')} kPa, gap {fmt(row['gap_percent'], '.2f')} %; {row['wall_s']:.1f} s"
            + (f"; field reached the edge ({', '.join(grew)})" if grew else ""))
