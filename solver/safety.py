"""Factors of safety against a design load, and the check with the user's partial factors.

Three figures, each from certified bounds only:

* **Load factor**: collapse load over design load. The bracket of the collapse
  load divided by ``[footing] design_load`` (kN/m) brackets it.
* **Strength-reduction factor** F: the factor by which the strength of every
  layer must be divided (c' and tan(phi') for Mohr-Coulomb, su and its gradient
  for Tresca) for the design load to cause collapse. The true collapse load
  Q(F) of the idealised problem does not rise with F (the yield surfaces are
  nested), so a certified lower bound LB(F) >= design load proves F_true >= F,
  and a certified upper bound UB(F) <= design load proves F_true <= F. Each
  bound is searched on F separately (a few trials aimed at the root, then
  bisection) until its bracket of the root is narrower than the stated
  tolerance; the reported values are F values that were actually solved and
  certified, so they hold whatever the mesh (coarser meshes only widen them).
* **Partial factors** (``[factors]``): the design resistance is the collapse
  load with design strengths (c'/gamma_c, tan(phi')/gamma_phi, su/gamma_cu)
  divided by the resistance factor; it is compared with the action
  (design_load times the load factor). Names as in EN 1997-1; values are the
  user's: no design approach is assumed here.

A bound that is withheld at some F (solver trouble or failed certificate) is
never used: the search with that bound stops there and says so.
"""
from __future__ import annotations

import math
import time
from dataclasses import replace
from typing import Any, Callable

from .model import Case, Factors, Layer
from .result import figure

STRENGTH_TOLERANCE = 0.01  # stop when the bracket of the root has hi/lo <= 1 + this (relative width)
F_RANGE = (0.05, 20.0)  # strength factors searched; outside it the factor is reported as beyond
EXPAND = 1.5  # ratio by which a bracket is widened until it holds the root
MAX_SOLVES = 40  # per bound: a safety net, never reached with the tolerance above


def reduce_layer(layer: Layer, strength: float, friction: float | None = None) -> Layer:
    """The layer with its strength divided: c' and su (with its gradient) by ``strength``,
    tan(phi') by ``friction`` (default: the same factor).

    >>> sand = Layer("sand", "mohr-coulomb", None, 19.0, cohesion=10.0, friction_angle=45.0)
    >>> soft = reduce_layer(sand, 2.0)
    >>> soft.cohesion, round(math.tan(math.radians(soft.friction_angle)), 12)
    (5.0, 0.5)
    """
    friction = strength if friction is None else friction
    if layer.is_tresca:
        return replace(layer, undrained_strength=layer.undrained_strength / strength,
                       strength_gradient=layer.strength_gradient / strength)
    phi = math.degrees(math.atan(math.tan(math.radians(layer.friction_angle)) / friction))
    return replace(layer, cohesion=layer.cohesion / strength, friction_angle=phi)


def reduce_strength(case: Case, F: float) -> Case:
    """The case with every layer's strength divided by F (c', tan(phi'), su and its gradient)."""
    return replace(case, layers=tuple(reduce_layer(layer, F) for layer in case.layers))


def design_strength_case(case: Case, factors: Factors) -> Case:
    """The case with design strengths: c'/cohesion, tan(phi')/friction on Mohr-Coulomb
    layers, su/undrained_strength (and its gradient) on Tresca layers."""
    layers = tuple(reduce_layer(layer, factors.undrained_strength) if layer.is_tresca
                   else reduce_layer(layer, factors.cohesion, factors.friction)
                   for layer in case.layers)
    return replace(case, layers=layers)


def load_factor(lower_kN_per_m: float | None, upper_kN_per_m: float | None,
                design_load_kN_per_m: float) -> dict:
    """Bracket of collapse load / design load (None where a bound is not certified).

    >>> load_factor(300.0, 330.0, 150.0)
    {'lower': 2.0, 'upper': 2.2}
    """
    return {"lower": None if lower_kN_per_m is None else lower_kN_per_m / design_load_kN_per_m,
            "upper": None if upper_kN_per_m is None else upper_kN_per_m / design_load_kN_per_m}


Solver = Callable[[Case, str], Any]  # (case, "lower" | "upper") -> BoundResult


def search_strength(kind: str, case: Case, design_load: float, load_at_1: float | None,
                    solve: Solver, tolerance: float = STRENGTH_TOLERANCE,
                    progress: Callable[[str], None] | None = None) -> dict:
    """Bracket the strength factor F with one bound: secant estimates, then bisection.

    Parameters
    ----------
    kind : "lower" | "upper"
    case : Case
        The case at F = 1.
    design_load : float
        kN/m.
    load_at_1 : float or None
        The certified collapse load of this bound at F = 1 (kN/m), from the main run;
        None when it was withheld (then nothing is proven and nothing is solved).
    solve : callable
        ``solve(case_F, kind)`` returns a BoundResult (``load_kN_per_m`` None when withheld).

    Returns
    -------
    dict
        ``value``: the proven bound on F (lower: largest F solved with LB(F) >= design load;
        upper: smallest F solved with UB(F) <= design load), None if none was proven;
        ``beyond``: ">=" or "<=" when the root lies outside F_RANGE; ``solves``;
        ``evaluations``: every F tried; ``notes``.
    """
    evaluations: list[dict] = []
    notes: list[str] = []
    if load_at_1 is None:
        return {"value": None, "solves": 0, "evaluations": evaluations,
                "notes": [f"the {kind} bound at F = 1 was withheld, so no strength factor is taken from it"]}
    evaluations.append({"F": 1.0, "load_kN_per_m": load_at_1, "status": "from the main run"})

    def proves(load: float) -> bool:  # does this certified load prove something about F_true at its F?
        return load >= design_load if kind == "lower" else load <= design_load

    def above_root(load: float) -> bool:  # is F at or beyond the root of bound(F) = design load?
        return load < design_load if kind == "lower" else load <= design_load

    solves = 0
    withheld = False

    def trial(F: float) -> float | None:
        nonlocal solves, withheld
        solves += 1
        bound = solve(reduce_strength(case, F), kind)
        load = bound.load_kN_per_m
        evaluations.append({"F": F, "load_kN_per_m": load, "status": bound.status})
        if progress:
            text = "withheld" if load is None else f"{figure(load)} kN/m"
            progress(f"strength reduction, {kind} bound at F = {F:.4f}: {text}")
        if load is None:
            withheld = True
            notes.append(f"the {kind} bound at F = {F:.4g} was withheld ({bound.status}); it is not used "
                         "and the search with this bound stopped there")
        return load

    # Bracket [lo, hi] of the root: lo below it (bound > design load), hi at or beyond it.
    # F = 1 is known from the main run. The first trial is the load factor (exact for
    # weightless Tresca ground); then each trial is the secant estimate of the root through
    # the last two points in (log F, log load), kept inside the bracket and, once it lies
    # within the tolerance of one end, pushed past the root by half the tolerance so that
    # the next trial closes the bracket. Two steps in a row that do not halve the bracket
    # are followed by a bisection (in log F): never much slower than bisection alone.
    lo, hi = (None, 1.0) if above_root(load_at_1) else (1.0, None)
    known = [(1.0, load_at_1)]

    def closed() -> bool:
        return lo is not None and hi is not None

    def secant() -> float | None:
        """Root of the line through the last two points in (log F, log load), or None."""
        (fa, la), (fb, lb) = known[-2], known[-1]
        if min(la, lb) <= 0 or fa == fb or la == lb:
            return None
        slope = (math.log(lb) - math.log(la)) / (math.log(fb) - math.log(fa))
        root = math.log(fa) + (math.log(design_load) - math.log(la)) / slope
        return math.exp(min(max(root, -50.0), 50.0))

    slow, width = 0, None
    while solves < MAX_SOLVES:
        if closed() and hi / lo <= 1 + tolerance:
            break
        estimate = load_at_1 / design_load if len(known) == 1 else secant()
        if not closed():  # the root lies beyond every F tried: widen, guided by the estimate
            if lo is None:
                F = hi / EXPAND if estimate is None else min(max(estimate, hi / EXPAND ** 3), hi / (1 + tolerance))
            else:
                F = lo * EXPAND if estimate is None else max(min(estimate, lo * EXPAND ** 3), lo * (1 + tolerance))
        elif estimate is None or not lo < estimate < hi or slow >= 2:
            F, slow = math.sqrt(lo * hi), 0
        else:
            near_lo, near_hi = estimate / lo <= 1 + tolerance, hi / estimate <= 1 + tolerance
            F = estimate
            if near_hi and not near_lo:
                F = max(estimate / (1 + tolerance / 2), math.sqrt(lo * estimate))
            elif near_lo and not near_hi:
                F = min(estimate * (1 + tolerance / 2), math.sqrt(hi * estimate))
        F = min(max(F, F_RANGE[0]), F_RANGE[1])
        if any(abs(math.log(F / p[0])) < 1e-12 for p in known):
            if not closed():
                break  # at the end of the range searched
            F, slow = math.sqrt(lo * hi), 0
        load = trial(F)
        if load is None:
            break
        known.append((F, load))
        if above_root(load):
            hi = F if hi is None else min(hi, F)
        else:
            lo = F if lo is None else max(lo, F)
        if closed():
            new_width = math.log(hi / lo)
            slow = slow + 1 if width is not None and new_width > 0.5 * width else 0
            width = new_width
    proven = [e["F"] for e in evaluations if e["load_kN_per_m"] is not None and proves(e["load_kN_per_m"])]
    value = (max(proven) if kind == "lower" else min(proven)) if proven else None
    beyond = None
    if not withheld and kind == "lower" and hi is None:
        beyond = ">="
        notes.append(f"the lower bound still carries the design load at F = {F_RANGE[1]:g}, "
                     f"the end of the range searched: F >= {F_RANGE[1]:g}")
    if not withheld and kind == "lower" and lo is None:
        notes.append(f"the lower bound does not carry the design load even at F = {F_RANGE[0]:g}, "
                     "the end of the range searched: no lower bound on F")
    if not withheld and kind == "upper" and lo is None:
        beyond = "<="
        notes.append(f"the upper bound is at or below the design load even at F = {F_RANGE[0]:g}, "
                     f"the end of the range searched: F <= {F_RANGE[0]:g}")
    if not withheld and kind == "upper" and hi is None:
        notes.append(f"the upper bound exceeds the design load even at F = {F_RANGE[1]:g}, "
                     "the end of the range searched: no upper bound on F")
    return {"value": value, "beyond": beyond, "solves": solves, "evaluations": evaluations, "notes": notes}


def factor_of_safety(case: Case, result, *, elements: int | None = None, backend: str | None = None,
                     tolerance: float = STRENGTH_TOLERANCE,
                     progress: Callable[[str], None] | None = None, solve: Solver | None = None,
                     parallel: bool | None = None) -> dict | None:
    """Load factor, strength-reduction factor and partial-factor check for a finished Result.

    Parameters
    ----------
    case : Case
        The case that ``result`` solved.
    result : Result
        Its bounds at F = 1 (reused, not solved again).
    elements, backend : optional
        As given to :func:`solver.analysis.analyse` for the main run: every extra
        solve uses the same back end and one fixed mesh with as many triangles as
        the main run's last mesh of that bound (``elements`` when it has none).
    tolerance : float
        Relative width hi/lo - 1 at which the search with each bound stops.
    solve : callable, optional
        ``solve(case, kind) -> BoundResult``; default: :func:`solver.analysis.analyse`
        with that bound alone.
    parallel : bool, optional
        Search with the two bounds at once, one thread each (their solves share the
        cores; meshing takes turns); default: when two cores are free. The values
        are the same either way: the two searches share nothing.

    Returns
    -------
    dict or None
        None when the case gives neither ``design_load`` nor ``[factors]``; else
        ``{"design_load_kN_per_m", "load", "strength", "partial_factors"}`` (those that apply).
    """
    design_load = case.footing.design_load
    if design_load is None and case.factors is None:
        return None
    if solve is None:
        from .analysis import analyse

        def solve(case_F: Case, kind: str):
            # one fixed mesh per solve, as fine as the main run's last one for this bound
            main = getattr(result, kind)
            size = main.elements if main is not None and main.elements else elements
            return getattr(analyse(case_F, bounds=kind, elements=size, backend=backend, adaptive=False), kind)

    start = time.perf_counter()
    lo1 = result.lower.load_kN_per_m if result.lower else None
    up1 = result.upper.load_kN_per_m if result.upper else None
    out: dict = {"design_load_kN_per_m": design_load}
    if design_load is not None:
        out["load"] = load_factor(lo1, up1, design_load)
        strength = {"lower": None, "upper": None, "solves": 0, "tolerance": tolerance,
                    "method": "each bound separately: estimates aimed at the root (the load factor, then "
                              "secants in log F and log load), then bisection on F to the tolerance; "
                              "the values are F actually solved and certified", "evaluations": {}, "notes": []}
        asked = [(k, load) for k, bound, load in (("lower", result.lower, lo1), ("upper", result.upper, up1))
                 if bound is not None]
        if parallel is None:
            from .analysis import two_cores_free
            parallel = two_cores_free()
        found_by_kind = _run_each(lambda k, load: search_strength(k, case, design_load, load, solve, tolerance,
                                                                  progress), asked, parallel and len(asked) > 1)
        for kind in ("lower", "upper"):
            if kind not in found_by_kind:
                strength["notes"].append(f"the {kind} bound was not asked for")
                continue
            found = found_by_kind[kind]
            strength[kind] = found["value"]
            strength["solves"] += found["solves"]
            strength["evaluations"][kind] = found["evaluations"]
            strength["notes"] += found["notes"]
            if found.get("beyond"):
                strength[f"{kind}_beyond_range"] = found["beyond"]
        out["strength"] = strength
    if case.factors is not None:
        out["partial_factors"] = partial_factor_check(case, result, design_load, solve)
    out["wall_s"] = time.perf_counter() - start
    return out


def _run_each(work: Callable, asked: list, parallel: bool) -> dict:
    """``{kind: work(kind, load)}`` for each (kind, load) asked, each on a thread of its
    own when ``parallel`` (analysis.Job)."""
    from .analysis import Job, finish

    jobs = {kind: Job(work, kind, load) for kind, load in asked}
    for job in jobs.values():
        job.start() if parallel else job.run()
    finish(jobs.values())  # both ended before either's error is raised
    return {kind: job.result() for kind, job in jobs.items()}


def partial_factor_check(case: Case, result, design_load: float | None, solve: Solver) -> dict:
    """Design resistance R_d = R(design strengths) / resistance factor against the action
    E_d = load factor * design_load. Proven covered when the lower bound of R_d >= E_d,
    proven not covered when the upper bound of R_d < E_d; otherwise undecided."""
    factors = case.factors
    unfactored = all(getattr(factors, k) == 1.0 for k in ("friction", "cohesion", "undrained_strength"))
    design_case = design_strength_case(case, factors)
    loads, statuses, solves = {}, {}, 0
    for kind in ("lower", "upper"):
        bound = getattr(result, kind)
        if bound is None:
            loads[kind], statuses[kind] = None, "not asked for"
            continue
        if unfactored:  # design strengths equal the characteristic ones: reuse the main run
            loads[kind], statuses[kind] = bound.load_kN_per_m, bound.status
        else:
            solves += 1
            design = solve(design_case, kind)
            loads[kind], statuses[kind] = design.load_kN_per_m, design.status
    resistance = {k: None if v is None else v / factors.resistance for k, v in loads.items()}
    action = None if design_load is None else design_load * factors.load
    if action is None:
        covered, verdict = None, "no design_load given: the design resistance is shown without a check"
    elif resistance["lower"] is not None and resistance["lower"] >= action:
        covered, verdict = True, "the design resistance covers the design action (proven by the lower bound)"
    elif resistance["upper"] is not None and resistance["upper"] < action:
        covered, verdict = False, "the design resistance does NOT cover the design action (proven by the upper bound)"
    elif resistance["lower"] is None:
        covered, verdict = None, ("undecided: there is no certified lower bound of the design resistance "
                                  f"({statuses['lower']}), and the upper bound alone cannot show that it covers "
                                  "the action")
    else:
        covered, verdict = None, ("undecided: the action lies inside the bracket of the design resistance; "
                                  "a finer mesh narrows the bracket")
    return {"factors": {k: getattr(factors, k) for k in ("friction", "cohesion", "undrained_strength",
                                                          "load", "resistance")},
            "action_kN_per_m": action,
            "design_strength_collapse_kN_per_m": loads, "status": statuses,
            "design_resistance_kN_per_m": resistance, "covered": covered, "verdict": verdict,
            "solves": solves}


def format_safety(fos: dict) -> list[str]:
    """Summary lines for the command line.

    >>> format_safety({"design_load_kN_per_m": 150.0, "load": {"lower": 2.0, "upper": 2.1},
    ...                "strength": {"lower": 1.5, "upper": 1.6, "solves": 6, "tolerance": 0.01}})[1]
    '    load factor      [2.000, 2.100]  (collapse load / design load)'
    """
    def show(value, prefix=""):
        return "none" if value is None else f"{prefix}{figure(value, 3)}"

    lines = []
    if fos.get("design_load_kN_per_m") is not None:
        lines.append(f"  factor of safety against the design load {figure(fos['design_load_kN_per_m'])} kN/m")
        load = fos.get("load", {})
        lines.append(f"    load factor      [{show(load.get('lower'))}, {show(load.get('upper'))}]  "
                     "(collapse load / design load)")
        strength = fos.get("strength")
        if strength:
            lower = show(strength.get("lower"), ">= " if strength.get("lower_beyond_range") else "")
            lines.append(f"    strength factor  [{lower}, {show(strength.get('upper'))}]  (c, su and tan phi "
                         f"divided by F; searched to {strength['tolerance']:.0%}, {strength['solves']} solves)")
            lines += [f"    NOTE: {note}" for note in strength.get("notes", [])]
    partial = fos.get("partial_factors")
    if partial:
        res = partial["design_resistance_kN_per_m"]
        action = partial["action_kN_per_m"]
        lines.append(f"  partial factors: design resistance [{show(res['lower'])}, {show(res['upper'])}] kN/m"
                     + (f", design action {figure(action)} kN/m" if action is not None else ""))
        lines.append(f"    {partial['verdict']}")
    return lines
