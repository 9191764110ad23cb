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

Which bound is refined, and by how much: both are solved at the first step;
then the upper bound is refined (on the benchmark cases it is the weaker side),
then whichever has the larger estimated error (its last change scaled by an
assumed convergence rate, or the gap less the other's error), since the gap is
the sum of the two. Each refined bound grows by as much as the time left
allows (at most GROWTH_MAX), predicted from its last solve; no step starts
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

from .analysis import run_bounds
from .mesh import SizeHint, fan_reach, graded_size
from .model import Case

GROWTH_MAX = 4.0  # element target growth of a refined bound per step, at most ...
GROWTH_MIN = 1.3  # ... and at least (a smaller step is not worth its solve)
TIME_EXPONENT = 2.2  # wall time of a bound ~ elements^this (measured 1.5-2.1 at 4k-20k; the safe side)
TIME_MARGIN = 0.85  # plan a step into this share of the time left (the prediction is rough: a Prandtl
#                    run with a 60 s limit, on a shared machine, ended at 61.9 s planning into all of it)
CONVERGENCE_RATE = 0.6  # error of either bound ~ elements^-this (measured on Prandtl and N_gamma, 2k-16k)
PLASTIC = 0.98  # lower bound: utilisation at which a triangle counts as plastic
PLASTIC_VELOCITY = 1e-3  # upper bound: velocity change across a triangle (of the footing's) that counts as plastic
RIGID_COARSENING = 6.0  # size in the rigid zone / graded size (measured 2, 3, 6: 6 best)


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


def refine_until(case: Case, bounds: str, elements: int, backend: str, domain, settings,
                 progress: bool = False, parallel: bool = False):
    """Solve, refine and solve again until the target gap, max_steps or time_limit_s.

    ``parallel``: the bounds of a step solve at once (analysis.run_bounds), and a step
    that refines one bound refines the other too, as far as it can without outlasting
    the first (the second core would idle otherwise).

    Returns (best lower BoundResult, best upper BoundResult, history rows, timing).
    """
    target = case.analysis.target_gap * 100.0  # percent
    limit = case.analysis.time_limit_s
    start = time.perf_counter()
    kinds = [k for k in ("lower", "upper") if bounds in (k, "both")]
    count = {k: elements for k in kinds}
    hint = {k: None for k in kinds}
    current: dict = {}
    best: dict = {}
    history: list[dict] = []
    timing = {"mesh_s": 0.0, "assemble_s": 0.0, "solve_s": 0.0, "certify_s": 0.0, "solve_wall_s": 0.0}
    refine = list(kinds)
    refined_before: set = set()
    bar = _progress(case.analysis.max_steps) if progress else None
    for step in range(case.analysis.max_steps):
        done, solve_wall = run_bounds(case, [(k, count[k], hint[k]) for k in refine], backend, domain,
                                      settings, parallel)
        timing["solve_wall_s"] += solve_wall
        for kind in refine:
            bound = done[kind]
            for key in bound.timing:
                timing[key] += bound.timing[key]
            previous = current.get(kind)
            current[kind] = bound
            if bound.pressure_kPa is not None:
                better = kind == "lower" and (best.get(kind) is None or bound.pressure_kPa > best[kind][1].pressure_kPa)
                better |= kind == "upper" and (best.get(kind) is None or bound.pressure_kPa < best[kind][1].pressure_kPa)
                if better:
                    best[kind] = (step, bound)
            bound.extra["adapt_step"] = step
            bound.extra["change_from_previous_step_kPa"] = (
                None if previous is None or previous.pressure_kPa is None or bound.pressure_kPa is None
                else bound.pressure_kPa - previous.pressure_kPa)
            bound.extra["elements_previous_step"] = None if previous is None else previous.elements
        lo = current["lower"].pressure_kPa if "lower" in current else None
        up = current["upper"].pressure_kPa if "upper" in current else None
        best_lo = best["lower"][1].pressure_kPa if "lower" in best else None
        best_up = best["upper"][1].pressure_kPa if "upper" in best else None
        gap = 100.0 * (best_up - best_lo) / best_lo if best_lo and best_up else None
        wall = time.perf_counter() - start
        history.append({"step": step, "refined": list(refine),
                        "elements_lower": current["lower"].elements if "lower" in current else None,
                        "elements_upper": current["upper"].elements if "upper" in current else None,
                        "lower": lo, "upper": up, "best_lower": best_lo, "best_upper": best_up,
                        "gap_percent": gap, "wall_s": wall})
        if bar is not None:
            bar.set_postfix_str(_row_text(history[-1]))
            bar.update(1)
        if gap is not None and gap <= target:
            break
        if len(kinds) < 2 and step > 0 and all(current[k].pressure_kPa is None for k in kinds):
            break
        # Grow the refined bound as far as the time left allows (time ~ elements^TIME_EXPONENT
        # from its last solve), at most GROWTH_MAX; no step that would end after the limit. If
        # the bound with the larger error cannot grow enough in the time left, the other may.
        left = TIME_MARGIN * max(limit - (time.perf_counter() - start), 0.0)
        growth = {k: min(GROWTH_MAX, (left / max(sum(current[k].timing.values()), 1e-9)) ** (1.0 / TIME_EXPONENT))
                  for k in kinds}
        order = _next_to_refine(kinds, current, refined_before, best_up - best_lo if gap is not None else None)
        order += [k for k in kinds if k not in order]
        refine = [k for k in order if growth[k] >= GROWTH_MIN][:1]
        if not refine:
            history[-1]["stopped"] = "time limit"
            break
        if parallel:  # the other bound on the other core, predicted to end no later
            first = refine[0]
            window = sum(current[first].timing.values()) * growth[first] ** TIME_EXPONENT
            for k in kinds:
                if k != first and current[k].pressure_kPa is not None:
                    growth[k] = min(GROWTH_MAX, (window / max(sum(current[k].timing.values()), 1e-9))
                                    ** (1.0 / TIME_EXPONENT))
                    if growth[k] >= GROWTH_MIN:
                        refine.append(k)
        refined_before.update(refine)
        for kind in refine:
            if current[kind].pressure_kPa is None:
                continue
            hint[kind] = (lower_size_hint if kind == "lower" else upper_size_hint)(current[kind])
            count[kind] = int(min(count[kind] * growth[kind], 400_000))
    else:
        history[-1]["stopped"] = "step limit"
    if bar is not None:
        bar.close()
    if gap is not None and gap <= target:
        history[-1]["stopped"] = "target gap reached"
    chosen = {k: (best[k][1] if k in best else current.get(k)) for k in ("lower", "upper")}
    return chosen["lower"], chosen["upper"], history, timing


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
    fmt = lambda v: "-" if v is None else f"{v:.2f}"
    return (f"step {row['step']}: {row['elements_lower']}/{row['elements_upper']} triangles, "
            f"lower {fmt(row['best_lower'])}, upper {fmt(row['best_upper'])} kPa, "
            f"gap {fmt(row['gap_percent'])} %, {row['wall_s']:.0f} s")


def _progress(total: int):
    from tqdm import tqdm
    return tqdm(total=total, desc="adaptive refinement", unit="step", leave=True)
