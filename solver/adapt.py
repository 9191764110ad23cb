"""Adaptive refinement: re-mesh where each bound says the collapse happens,
until the bracket is tight enough, the step limit or the time limit.

Indicators (after Lyamin, Sloan, Krabbenhoft & Hjiaj 2005 and Munoz, Bonet,
Huerta & Peraire 2009, who refine where the plastic flow and the bound gap
concentrate; the two bounds here live on different meshes, so each bound's
own field drives its own mesh):

* upper bound: the plastic shear strain rate of each triangle, mean corner
  rho = ||(ex - ey, gxy)||. It is the plastic flow the continuous velocity
  field has to resolve, and it is nonzero in cohesionless soil too, where the
  dissipation density itself vanishes;
* lower bound: the yield utilisation; triangles at yield (>= 0.98 at every
  node) form the plastic zone, whose stress field the linear triangles resolve.

New sizes equidistribute the indicator (h ~ density^(-1/2), each change
limited to a factor STEP_LIMIT); build_mesh scales them to the next element
target where they are finer than its graded field (kept at the size that alone
gives half the target, so the footing edges never lose their refinement).

Measured (Prandtl, 2k -> 3.6k triangles): the adapted upper bound came level
with the graded mesh of the same size (+0.70 % against +0.63 % at 4k), not
better: the graded mesh is already close to the best for this case. The step
is kept for cases where the graded mesh is placed poorly (slopes, deep
layers), and every step is reported. Which bound is refined at a step: both at the first;
afterwards the one whose last refinement moved it more (its error estimated by
that change), since the gap is the sum of the two errors.

Every bound at every step is solved and certified as usual, so every value is
rigorous; the bracket reported is the best certified lower and upper bound
of all steps, each with the step it came from, and adapt_history lists every
step as it was, improvements and setbacks alike.
"""
from __future__ import annotations

import time

import numpy as np

from .analysis import run_bound
from .mesh import SizeHint
from .model import Case

GROWTH_MAX = 4.0  # element target growth of a refined bound per step, at most ...
GROWTH_MIN = 1.3  # ... and at least (a smaller step is not worth its solve)
TIME_EXPONENT = 2.0  # wall time of a bound ~ elements^this (measured 1.8-1.9 at 4k-20k; kept on the safe side)
STEP_LIMIT = 4.0  # a size changes by at most this factor per step
PLASTIC = 0.98  # lower bound: utilisation at which a triangle counts as plastic


def upper_size_hint(bound) -> SizeHint:
    """Sizes for the next upper-bound mesh from the plastic strain rate."""
    mesh, fields = bound.mesh, bound.fields
    strain = fields["strain_rate"]  # (n_el, 3, 3): ex, ey, gxy at the corners
    rho = np.hypot(strain[..., 0] - strain[..., 1], strain[..., 2]).mean(axis=1)
    if "jump_slip" in fields:  # a jump of slip s beside a triangle of size h: a shear rate ~ s / h there
        h = np.sqrt(2.0 * mesh.areas())
        e1, e2 = mesh.jumps[:, 0], mesh.jumps[:, 2]
        np.add.at(rho, e1, fields["jump_slip"] / h[e1])
        np.add.at(rho, e2, fields["jump_slip"] / h[e2])
    return _equidistribute(mesh.points, mesh.triangles[:, :3], mesh.areas(), rho)


def lower_size_hint(bound) -> SizeHint:
    """Sizes for the next lower-bound mesh from the yield utilisation."""
    mesh, fields = bound.mesh, bound.fields
    utilisation = np.clip(fields["utilisation"].min(axis=1), 0.0, 1.0)
    density = np.where(utilisation >= PLASTIC, 1.0, utilisation ** 20)  # plastic zone first, then near it
    return _equidistribute(mesh.points, mesh.triangles[:, :3], mesh.areas(), density)


def _equidistribute(points, triangles, area, density) -> SizeHint:
    """h_new ~ density^(-1/2) (equal indicator per triangle), within STEP_LIMIT of h_old."""
    h_old = np.sqrt(2.0 * area)
    floor = 1e-3 * density.max() if density.max() > 0 else 1.0
    wanted = (np.maximum(density, floor)) ** -0.5
    wanted *= np.median(h_old / wanted)  # only the shape matters: build_mesh rescales
    h_new = np.clip(wanted, h_old / STEP_LIMIT, h_old * STEP_LIMIT)
    # element sizes to nodes: the smallest size of the triangles at each node
    node_size = np.full(len(points), np.inf)
    np.minimum.at(node_size, triangles.ravel(), np.repeat(h_new, 3))
    return SizeHint(points=points, triangles=triangles, size=node_size)


def refine_until(case: Case, bounds: str, elements: int, backend: str, domain, settings,
                 progress: bool = False):
    """Solve, refine and solve again until the target gap, max_steps or time_limit_s.

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
    timing = {"mesh_s": 0.0, "assemble_s": 0.0, "solve_s": 0.0, "certify_s": 0.0}
    refine = list(kinds)
    refined_before: set = set()
    bar = _progress(case.analysis.max_steps) if progress else None
    for step in range(case.analysis.max_steps):
        for kind in refine:
            bound = run_bound(case, kind, count[kind], backend, domain, settings, size_hint=hint[kind])
            for key in timing:
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
        refine = _next_to_refine(kinds, current, refined_before)
        refined_before.update(refine)
        # Grow each refined bound as far as the time left allows (time ~ elements^TIME_EXPONENT
        # from its last solve), at most GROWTH_MAX; no step that would end after the limit.
        left = limit - (time.perf_counter() - start)
        spent = {k: sum(current[k].timing.values()) for k in refine}
        share = left / max(sum(spent.values()), 1e-9)
        growth = min(GROWTH_MAX, share ** (1.0 / TIME_EXPONENT))
        if growth < GROWTH_MIN:
            history[-1]["stopped"] = "time limit"
            break
        for kind in refine:
            if current[kind].pressure_kPa is None:
                continue
            hint[kind] = (lower_size_hint if kind == "lower" else upper_size_hint)(current[kind])
            count[kind] = int(min(count[kind] * growth, 400_000))
    else:
        history[-1]["stopped"] = "step limit"
    if bar is not None:
        bar.close()
    if gap is not None and gap <= target:
        history[-1]["stopped"] = "target gap reached"
    chosen = {k: (best[k][1] if k in best else current.get(k)) for k in ("lower", "upper")}
    return chosen["lower"], chosen["upper"], history, timing


def _next_to_refine(kinds: list[str], current: dict, refined_before: set) -> list[str]:
    """The bound(s) to refine next: the one whose last refinement moved it more
    (its error estimated by that change; the gap is the sum of both errors).
    Before both have moved, the upper bound goes first, then the lower: measured
    on the four benchmark cases at equal element counts, the upper bound's error
    was 3 to 15 times the lower bound's (the lower bound's fan at each footing
    edge; benchmarks/cases.py, DEVELOPERS.md)."""
    if len(kinds) < 2:
        return list(kinds)
    for kind in ("upper", "lower"):
        if kind not in refined_before:
            return [kind]
    changes = {k: current[k].extra.get("change_from_previous_step_kPa") for k in kinds}
    if any(v is None for v in changes.values()):
        return [k for k in kinds if changes[k] is None]
    return [max(kinds, key=lambda k: abs(changes[k]))]


def _row_text(row: dict) -> str:
    fmt = lambda v: "-" if v is None else f"{v:.2f}"
    return (f"step {row['step']}: {row['elements_lower']}/{row['elements_upper']} triangles, "
            f"lower {fmt(row['best_lower'])}, upper {fmt(row['best_upper'])} kPa, "
            f"gap {fmt(row['gap_percent'])} %, {row['wall_s']:.0f} s")


def _progress(total: int):
    from tqdm import tqdm
    return tqdm(total=total, desc="adaptive refinement", unit="step", leave=True)
