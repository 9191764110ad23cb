"""Factors of safety against a design load, and the check with the user's partial factors.

Words, used the same way in result.json, summary.csv, the terminal, the report
and the README (the partial factor on the action is never called a "load
factor", so that the two are never confused):

* **Factor of safety on load** (``on_load``): collapse load over design load.
  The bracket of the collapse load divided by ``[footing] design_load`` brackets
  it. Units (``result.load_unit``): a strip's design load is a line load in kN/m
  (per m run, along the load's line of action, as the bounds' ``load_kN_per_m``);
  a circle's is the whole vertical load on the footing in kN (as the bounds'
  ``load_kN``). Every key holding a load says its unit (``design_load_kN_per_m``
  or ``design_load_kN``, and so on), and ``design_pressure_kPa`` gives the
  design load's vertical component over the footing's area (B, or pi B^2/4).
* **Factor of safety on strength** (``on_strength``, the strength-reduction
  factor F): the factor by which the strength of every layer must be divided
  (c' and tan(phi') for Mohr-Coulomb, su and its gradient for Tresca) for the
  design load to cause collapse. The true collapse load Q(F) of the idealised
  problem does not rise with F (the yield surfaces are nested), so a certified
  lower bound LB(F) >= design load proves F_true >= F, and a certified upper
  bound UB(F) <= design load proves F_true <= F. Each bound is searched on F
  separately (a few trials aimed at the root, then bisection) until its
  bracket of the root is narrower than the stated tolerance; the reported
  values are F values that were actually solved and certified, so they hold
  whatever the mesh (coarser meshes only widen them).
* **Checks** (``checks``), each a verdict line "met", "not met" or
  "undecided" (by the bracket): whether the collapse load carries the design
  load, and, when the case gives them, whether the factors of safety reach
  ``[footing] required_factor_of_safety_on_load`` and ``..._on_strength``.
* **Partial factors** (``[factors]``): the design resistance is the collapse
  load with design strengths (c'/gamma_c, tan(phi')/gamma_phi, su/gamma_cu)
  divided by the resistance factor; it is compared with the design action
  (design_load times the partial factor on the action). Names as in EN 1997-1;
  values are the user's: no design approach is assumed here.

A bound that is withheld at some F (solver trouble or failed certificate) is
never used: the search with that bound goes on below (or above) it, and says
so; a value the search did not prove is never given.
"""
from __future__ import annotations

import math
import time
from dataclasses import replace
from typing import Any, Callable

from .model import Case, Factors, Layer
from .result import design_load_of, figure, load_unit

STRENGTH_TOLERANCE = 0.01  # stop when the bracket of the root has hi/lo <= 1 + this (relative width)
F_RANGE = (0.05, 20.0)  # strength-reduction factors searched; outside it the factor is reported as beyond
EXPAND = 1.5  # ratio by which a bracket is widened until it holds the root
MAX_SOLVES = 40  # per bound: a safety net, never reached with the tolerance above
MAX_WITHHELD = 3  # per bound: withheld solves after which the search stops (each is a full solve)


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


def factor_on_load(lower: float | None, upper: float | None, design_load: float) -> dict:
    """The factor of safety on load: the bracket of collapse load / design load (None where a
    bound is not certified); all three loads in one unit (kN/m for a strip, kN for a circle).

    >>> factor_on_load(300.0, 330.0, 150.0)
    {'lower': 2.0, 'upper': 2.2}
    """
    return {"lower": None if lower is None else lower / design_load,
            "upper": None if upper is None else upper / design_load}


Solver = Callable[[Case, str], Any]  # (case, "lower" | "upper") -> BoundResult


def search_strength(kind: str, case: Case, design_load: float, load_at_1: float | None,
                    solve: Solver, tolerance: float = STRENGTH_TOLERANCE,
                    progress: Callable[[str], None] | None = None,
                    starting: Callable[[str, str], None] | None = None, shape: str = "strip") -> dict:
    """Bracket the factor of safety on strength F with one bound: secant estimates, then bisection.

    Parameters
    ----------
    kind : "lower" | "upper"
    case : Case
        The case at F = 1.
    design_load : float
        kN/m for a strip, kN for a circle (``shape``).
    load_at_1 : float or None
        The certified collapse load of this bound at F = 1 (same unit), from the main run;
        None when it was withheld (then nothing is proven and nothing is solved).
    solve : callable
        ``solve(case_F, kind)`` returns a BoundResult (``load_kN_per_m``, a circle's
        ``load_kN``, None when withheld).
    progress, starting : callable, optional
        ``progress(line)`` after each solve, with its outcome; ``starting(kind, "F = ...")``
        before it (a terminal shows what runs meanwhile).

    Returns
    -------
    dict
        ``value``: the proven bound on F (lower: largest F solved with LB(F) >= design load;
        upper: smallest F solved with UB(F) <= design load), None if the search proved
        nothing beyond the main run's F = 1 without closing its bracket (then ``reason``
        says why); ``search``: "found" (the bracket of the root closed to the tolerance, or
        the root lies beyond F_RANGE), "incomplete" (a value, but a withheld solve kept the
        bracket open: ``reason``) or "not found"; ``beyond``: ">=" or "<=" when the root
        lies outside F_RANGE; ``solves``; ``evaluations``: every F tried, its load under
        ``load_kN_per_m`` (a circle's ``load_kN``); ``notes``.

    A withheld solve at some F proves nothing at that F, so it is never used; the search
    goes on between the nearest proven F and the withheld one (a wall it does not try
    again), at most MAX_WITHHELD times, so that one failed solve does not end it.
    """
    evaluations: list[dict] = []
    notes: list[str] = []
    unit, suffix = load_unit(shape)
    if load_at_1 is None:
        reason = f"the {kind} bound at F = 1 was withheld, so no factor of safety on strength is taken from it"
        return {"value": None, "search": "not found", "reason": reason, "solves": 0,
                "evaluations": evaluations, "notes": [reason]}
    evaluations.append({"F": 1.0, f"load_{suffix}": load_at_1, "status": "from the main run"})

    def proves(load: float) -> bool:  # does this certified load prove something about F_true at its F?
        return load >= design_load if kind == "lower" else load <= design_load

    def above_root(load: float) -> bool:  # is F at or beyond the root of bound(F) = design load?
        return load < design_load if kind == "lower" else load <= design_load

    solves = 0
    failed: list[float] = []  # F values at which the bound was withheld

    def trial(F: float) -> float | None:
        nonlocal solves
        solves += 1
        if starting:
            starting(kind, f"F = {F:.4f}")
        bound = solve(reduce_strength(case, F), kind)
        load = getattr(bound, f"load_{suffix}")
        evaluations.append({"F": F, f"load_{suffix}": load, "status": bound.status})
        if progress:
            text = "withheld" if load is None else f"{figure(load)} {unit}"
            progress(f"strength reduction, {kind} bound at F = {F:.4f}: {text}")
        if load is None:
            failed.append(F)
            notes.append(f"the {kind} bound at F = {F:.4g} was withheld ({bound.status}); it is not used, "
                         "and the search went on between the nearest F proven and this one")
        return load

    # Bracket [lo, hi] of the root: lo below it (bound > design load), hi at or beyond it.
    # F = 1 is known from the main run. The first trial is the factor of safety on load (exact for
    # weightless Tresca ground); then each trial is the secant estimate of the root through
    # the last two points in (log F, log load), kept inside the bracket and, once it lies
    # within the tolerance of one end, pushed past the root by half the tolerance so that
    # the next trial closes the bracket. Two steps in a row that do not halve the bracket
    # are followed by a bisection (in log F): never much slower than bisection alone.
    # A withheld F becomes a wall (wall_lo or wall_hi): later trials stay strictly inside
    # the interval between the walls, and the search ends when that interval is within
    # the tolerance, or after MAX_WITHHELD withheld solves.
    lo, hi = (None, 1.0) if above_root(load_at_1) else (1.0, None)
    wall_lo = wall_hi = None
    known = [(1.0, load_at_1)]

    def side(proven: float | None, wall: float | None, pick) -> float | None:
        ends = [x for x in (proven, wall) if x is not None]
        return pick(ends) if ends else None

    def secant() -> float | None:
        """Root of the line through the last two points in (log F, log load), or None."""
        (fa, la), (fb, lb) = known[-2], known[-1]
        if min(la, lb) <= 0 or fa == fb or la == lb:
            return None
        slope = (math.log(lb) - math.log(la)) / (math.log(fb) - math.log(fa))
        root = math.log(fa) + (math.log(design_load) - math.log(la)) / slope
        return math.exp(min(max(root, -50.0), 50.0))

    slow, width = 0, None
    while solves < MAX_SOLVES and len(failed) < MAX_WITHHELD:
        a, b = side(lo, wall_lo, max), side(hi, wall_hi, min)  # the interval trials may use
        if a is not None and b is not None and b / a <= 1 + tolerance:
            break  # closed on proven ends, or as close to a withheld F as the tolerance asks
        estimate = load_at_1 / design_load if len(known) == 1 else secant()
        if a is None or b is None:  # the root lies beyond every F tried: widen, guided by the estimate
            if a is None:
                F = b / EXPAND if estimate is None else min(max(estimate, b / EXPAND ** 3), b / (1 + tolerance))
            else:
                F = a * EXPAND if estimate is None else max(min(estimate, a * EXPAND ** 3), a * (1 + tolerance))
        elif estimate is None or not a < estimate < b or slow >= 2 or failed:
            F, slow = math.sqrt(a * b), 0  # after a withheld solve: bisection toward the proven end
        else:
            near_lo, near_hi = estimate / a <= 1 + tolerance, b / estimate <= 1 + tolerance
            F = estimate
            if near_hi and not near_lo:
                F = max(estimate / (1 + tolerance / 2), math.sqrt(a * estimate))
            elif near_lo and not near_hi:
                F = min(estimate * (1 + tolerance / 2), math.sqrt(b * estimate))
        F = min(max(F, F_RANGE[0]), F_RANGE[1])
        if any(abs(math.log(F / p)) < 1e-12 for p in [k[0] for k in known] + failed):
            if a is None or b is None:
                break  # at the end of the range searched
            F, slow = math.sqrt(a * b), 0
        load = trial(F)
        if load is None:
            # the wall goes on the side away from this bound's proven value, so the search
            # keeps improving it: above lo for the lower bound, below hi for the upper
            beyond_value = (lo is not None and F > lo) if kind == "lower" else not (hi is not None and F < hi)
            if beyond_value:
                wall_hi = F if wall_hi is None else min(wall_hi, F)
            else:
                wall_lo = F if wall_lo is None else max(wall_lo, F)
            continue
        known.append((F, load))
        if above_root(load):
            hi = F if hi is None else min(hi, F)
        else:
            lo = F if lo is None else max(lo, F)
        if lo is not None and hi is not None:
            new_width = math.log(hi / lo)
            slow = slow + 1 if width is not None and new_width > 0.5 * width else 0
            width = new_width
    proven = [e["F"] for e in evaluations if e[f"load_{suffix}"] is not None and proves(e[f"load_{suffix}"])]
    value = (max(proven) if kind == "lower" else min(proven)) if proven else None
    beyond, reason = None, None
    if not failed and kind == "lower" and hi is None:
        beyond = ">="
        notes.append(f"the lower bound still carries the design load at F = {F_RANGE[1]:g}, "
                     f"the end of the range searched: F >= {F_RANGE[1]:g}")
    if not failed and kind == "lower" and lo is None:
        reason = (f"the lower bound does not carry the design load even at F = {F_RANGE[0]:g}, "
                  "the end of the range searched: no lower bound on F")
    if not failed and kind == "upper" and lo is None:
        beyond = "<="
        notes.append(f"the upper bound is at or below the design load even at F = {F_RANGE[0]:g}, "
                     f"the end of the range searched: F <= {F_RANGE[0]:g}")
    if not failed and kind == "upper" and hi is None:
        reason = (f"the upper bound exceeds the design load even at F = {F_RANGE[1]:g}, "
                  "the end of the range searched: no upper bound on F")
    closed = lo is not None and hi is not None and hi / lo <= 1 + tolerance
    if value is not None and (closed or beyond):
        search = "found"
    elif failed:
        shown = ", ".join(f"{F:.4g}" for F in sorted(failed))
        reason = (f"the {kind} bound was withheld at F = {shown} (solver trouble or a failed certificate "
                  "on this mesh, not a property of the ground)")
        if value is not None and value != 1.0:
            search = "incomplete"
            nearest = min(failed, key=lambda F: abs(math.log(F / value)))
            reason += (f"; {value:.4g} is the {'largest' if kind == 'lower' else 'smallest'} F proven, "
                       f"{abs(math.log(nearest / value)) * 100:.2g} % from the nearest withheld F; the "
                       "root may lie beyond it")
        else:  # only the main run's F = 1: that is the design load's check, not a factor of safety on strength found
            search, value = "not found", None
            reason += "; no F but the main run's F = 1 was proven, so no value is given (a finer mesh may help)"
    else:
        search = "found" if value is not None else "not found"
        if value is None and reason is None:
            reason = f"the search with the {kind} bound proved no F"
    if reason:
        notes.append(reason)
    return {"value": value, "search": search, "reason": reason, "beyond": beyond, "solves": solves,
            "evaluations": evaluations, "notes": notes}


def factor_of_safety(case: Case, result, *, elements: int | None = None, backend: str | None = None,
                     tolerance: float = STRENGTH_TOLERANCE,
                     progress: Callable[[str], None] | None = None, solve: Solver | None = None,
                     parallel: bool | None = None,
                     starting: Callable[[str, str], None] | None = None) -> dict | None:
    """Factors of safety on load and on strength, the checks and the partial-factor check
    for a finished Result.

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
    progress, starting : callable, optional
        ``progress(line)`` after each solve of the search; ``starting(kind, what)`` before
        every extra solve ("F = 1.2345", "design strengths").
    parallel : bool, optional
        Search with the two bounds at once, one thread each (their solves share the
        cores; meshing takes turns); default: when two cores are free. The values
        are the same either way: the two searches share nothing.

    Returns
    -------
    dict or None
        None when the case gives neither ``design_load`` nor ``[factors]``; else
        ``{"design_load_kN_per_m" (a circle: "design_load_kN"), "load_unit", "design_pressure_kPa",
        "on_load", "on_strength", "checks", "partial_factors"}`` (those that apply).
    """
    design_load = case.footing.design_load
    unit, suffix = load_unit(case.footing.shape)
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
    lo1 = getattr(result.lower, f"load_{suffix}") if result.lower else None
    up1 = getattr(result.upper, f"load_{suffix}") if result.upper else None
    out: dict = {f"design_load_{suffix}": design_load, "load_unit": unit}
    if design_load is not None:
        out["design_pressure_kPa"] = design_pressure(case)
        out["on_load"] = factor_on_load(lo1, up1, design_load)
        strength = {"lower": None, "upper": None, "solves": 0, "tolerance": tolerance,
                    "method": "each bound separately: estimates aimed at the root (the factor of safety on "
                              "load, then secants in log F and log load), then bisection on F to the "
                              "tolerance; the values are F actually solved and certified", "search": {},
                    "reason": {}, "evaluations": {}, "notes": []}
        asked = [(k, load) for k, bound, load in (("lower", result.lower, lo1), ("upper", result.upper, up1))
                 if bound is not None]
        if parallel is None:
            from .analysis import two_cores_free
            parallel = two_cores_free()
        found_by_kind = _run_each(lambda k, load: search_strength(k, case, design_load, load, solve, tolerance,
                                                                  progress, starting, case.footing.shape),
                                  asked, parallel and len(asked) > 1)
        for kind in ("lower", "upper"):
            if kind not in found_by_kind:
                strength["search"][kind] = "not asked for"
                strength["reason"][kind] = f"the {kind} bound was not asked for"
                strength["notes"].append(strength["reason"][kind])
                continue
            found = found_by_kind[kind]
            strength[kind] = found["value"]
            strength["search"][kind] = found["search"]
            strength["reason"][kind] = found["reason"]
            strength["solves"] += found["solves"]
            strength["evaluations"][kind] = found["evaluations"]
            strength["notes"] += found["notes"]
            if found.get("beyond"):
                strength[f"{kind}_beyond_range"] = found["beyond"]
        out["on_strength"] = strength
        out["checks"] = safety_checks(case, lo1, up1, out["on_load"], strength)
    if case.factors is not None:
        def announced(case_design: Case, kind: str):
            if starting:
                starting(kind, "design strengths")
            return solve(case_design, kind)

        out["partial_factors"] = partial_factor_check(case, result, design_load, announced)
    out["wall_s"] = time.perf_counter() - start
    return out


def design_pressure(case: Case) -> float:
    """The design load's vertical component over the footing's area (kPa): over B for a
    strip (kN/m over m), over pi B^2/4 for a circle (kN over m^2).

    >>> from types import SimpleNamespace as NS
    >>> round(design_pressure(NS(footing=NS(design_load=1000.0, load_inclination=0.0, bearing_area=12.5))), 3)
    80.0
    """
    f = case.footing
    return f.design_load * math.cos(math.radians(f.load_inclination)) / f.bearing_area


def design_load_words(case: Case) -> str:
    """The design load with its unit, as the verdicts say it: a circle's with its pressure
    over the footing's area, so that kN is never read as kN/m or kPa.

    >>> from types import SimpleNamespace as NS
    >>> design_load_words(NS(footing=NS(design_load=150.0)))
    '150.0 kN/m'
    >>> circle = NS(design_load=2000.0, shape="circular", width=5.0, load_inclination=0.0, bearing_area=19.635)
    >>> design_load_words(NS(footing=circle))
    '2000.0 kN (the whole vertical load: 101.9 kPa over the area pi B^2/4 = 19.64 m^2)'
    """
    f = case.footing
    if getattr(f, "shape", "strip") == "strip":
        return f"{figure(f.design_load)} kN/m"
    return (f"{figure(f.design_load)} kN (the whole vertical load: {figure(design_pressure(case))} kPa over the "
            f"area pi B^2/4 = {figure(f.bearing_area, 2)} m^2)")


def _verdict(check: str, outcome: str, text: str, **more) -> dict:
    return {"check": check, **more, "outcome": outcome, "verdict": text}


def safety_checks(case: Case, lower: float | None, upper: float | None,
                  on_load: dict, on_strength: dict) -> list[dict]:
    """Verdict lines: is the design load carried, and are the required factors of safety met?

    ``lower``, ``upper``: the certified collapse loads, in the design load's unit (kN/m for a
    strip, kN for a circle). Each verdict is ``{"check", "outcome", "verdict"}`` with outcome
    "met", "not met" or "undecided" (the bracket cannot tell); "met" is proven by a lower
    bound, "not met" by an upper bound.

    >>> from types import SimpleNamespace as NS
    >>> case = NS(footing=NS(design_load=120.0, required_factor_of_safety_on_load=None,
    ...                      required_factor_of_safety_on_strength=None))
    >>> safety_checks(case, 26.8, 27.1, {"lower": 0.223, "upper": 0.226}, {})[0]["outcome"]
    'not met'
    """
    P = case.footing.design_load
    unit = load_unit(getattr(case.footing, "shape", "strip"))[0]
    along = " (along the load's line of action)" if getattr(case.footing, "load_inclination", 0.0) else ""
    checks = []
    if lower is not None and lower >= P:
        checks.append(_verdict("design load carried", "met",
                               f"the design load {design_load_words(case)} is carried: the lower bound of the "
                               f"collapse load{along}, {figure(lower)} {unit}, is above it"))
    elif upper is not None and upper < P:
        checks.append(_verdict("design load carried", "not met",
                               f"the design load {design_load_words(case)} is ABOVE the collapse load: the upper "
                               f"bound{along}, {figure(upper)} {unit}, is below it, so the footing collapses under "
                               f"the design load (factor of safety on load at most {figure(upper / P, 3)})"))
    elif lower is not None and upper is not None:
        checks.append(_verdict("design load carried", "undecided",
                               f"the design load {design_load_words(case)} lies inside the collapse bracket{along} "
                               f"[{figure(lower)}, {figure(upper)}] {unit}: the footing is at "
                               "collapse under it, and the bracket cannot tell whether it is carried"))
    else:
        checks.append(_verdict("design load carried", "undecided",
                               "no complete bracket of the collapse load (a bound was withheld or not asked "
                               "for): whether the design load is carried is not decided"))
    required = (("on load", case.footing.required_factor_of_safety_on_load, on_load, {}),
                ("on strength", case.footing.required_factor_of_safety_on_strength, on_strength,
                 on_strength.get("reason") or {}))
    for name, R, found, reasons in required:
        if R is None:
            continue
        lo, up = found.get("lower"), found.get("upper")
        shown = f"[{'none' if lo is None else figure(lo, 3)}, {'none' if up is None else figure(up, 3)}]"
        check, head = f"required factor of safety {name}", f"required factor of safety {name} {R:g}"
        if lo is not None and lo >= R:
            checks.append(_verdict(check, "met", f"{head}: met (the factor is {shown}; its lower value, "
                                                  "proven by the lower bound, reaches it)", required=R))
        elif up is not None and up < R:
            checks.append(_verdict(check, "not met", f"{head}: NOT met (the factor is {shown}; its upper "
                                                      "value, proven by the upper bound, is below it)", required=R))
        else:
            why = ("the required value lies inside the bracket; a finer mesh narrows it" if lo is not None
                   and up is not None else "; ".join(r for r in (reasons.get("lower"), reasons.get("upper")) if r)
                   or "a bound of the factor is missing")
            checks.append(_verdict(check, "undecided", f"{head}: undecided by the bracket {shown} ({why})",
                                   required=R))
    return checks


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
    E_d = partial factor on the action * design_load. Proven covered when the lower bound of R_d >= E_d,
    proven not covered when the upper bound of R_d < E_d; otherwise undecided."""
    factors = case.factors
    unit, suffix = load_unit(case.footing.shape)
    unfactored = all(getattr(factors, k) == 1.0 for k in ("friction", "cohesion", "undrained_strength"))
    design_case = design_strength_case(case, factors)
    loads, statuses, solves = {}, {}, 0
    for kind in ("lower", "upper"):
        bound = getattr(result, kind)
        if bound is None:
            loads[kind], statuses[kind] = None, "not asked for"
            continue
        if unfactored:  # design strengths equal the characteristic ones: reuse the main run
            loads[kind], statuses[kind] = getattr(bound, f"load_{suffix}"), bound.status
        else:
            solves += 1
            design = solve(design_case, kind)
            loads[kind], statuses[kind] = getattr(design, f"load_{suffix}"), design.status
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
            f"action_{suffix}": action,
            f"design_strength_collapse_{suffix}": loads, "status": statuses,
            f"design_resistance_{suffix}": resistance, "covered": covered, "verdict": verdict,
            "solves": solves}


def format_safety(fos: dict) -> list[str]:
    """Summary lines for the command line.

    >>> format_safety({"design_load_kN_per_m": 150.0, "on_load": {"lower": 2.0, "upper": 2.1},
    ...                "on_strength": {"lower": 1.5, "upper": 1.6, "solves": 6, "tolerance": 0.01}})[1]
    '    on load      [2.000, 2.100]  (collapse load / design load)'
    >>> format_safety({"design_load_kN": 2000.0, "design_pressure_kPa": 101.86, "on_load": {}})[0]
    '  factor of safety against the design load 2000.0 kN (the whole vertical load on the circular footing: 101.9 kPa over its area pi B^2/4)'
    """
    def show(value, prefix=""):
        return "none" if value is None else f"{prefix}{figure(value, 3)}"

    lines = []
    design, unit, suffix = design_load_of(fos)
    if design is not None:
        what = ("(along the load's line of action)" if unit == "kN/m" else
                f"(the whole vertical load on the circular footing: {figure(fos['design_pressure_kPa'])} kPa "
                "over its area pi B^2/4)")
        lines.append(f"  factor of safety against the design load {figure(design)} {unit} {what}")
        load = fos.get("on_load", {})
        lines.append(f"    on load      [{show(load.get('lower'))}, {show(load.get('upper'))}]  "
                     "(collapse load / design load)")
        strength = fos.get("on_strength")
        if strength:
            search = strength.get("search") or {}
            lower = show(strength.get("lower"), ">= " if strength.get("lower_beyond_range") else "")
            upper = show(strength.get("upper"), "<= " if strength.get("upper_beyond_range") else "")
            marks = [k for k in ("lower", "upper") if search.get(k) in ("incomplete", "not found")]
            lines.append(f"    on strength  [{lower}, {upper}]  (strength-reduction factor: c', su and tan phi' "
                         f"divided by F until collapse; searched to {strength['tolerance']:.0%}, "
                         f"{strength['solves']} solves)")
            lines += [f"    NOTE: {kind} value {search[kind]}: {(strength.get('reason') or {}).get(kind)}"
                      for kind in marks]
            lines += [f"    NOTE: {note}" for note in strength.get("notes", [])
                      if note not in (strength.get("reason") or {}).values()]
    lines += [f"  VERDICT: {check['verdict']}" for check in fos.get("checks", [])]
    partial = fos.get("partial_factors")
    if partial:
        res = partial[f"design_resistance_{suffix}"]
        action = partial[f"action_{suffix}"]
        lines.append(f"  partial factors: design resistance [{show(res['lower'])}, {show(res['upper'])}] {unit}"
                     + (f", design action {figure(action)} {unit} (partial factor on the action "
                        f"{partial['factors']['load']:g} x design load)" if action is not None else ""))
        lines.append(f"    {partial['verdict']}")
    return lines
