"""Run the verification cases of verification/cases.toml and check each bracket.

For every case both bounds are computed and turned into the case's
dimensionless quantity (q_u / c, q_u / q, q_u / (0.5 gamma B), V / (c B) or
q_u in kPa) and checked against the case's reference, the way its ``check``
key says:

* ``bracket`` (the default): ``lower <= reference <= upper`` up to a relative
  1e-6 (round-off only), widened by the case's ``slack`` only for a reference
  recalled from memory;
* ``at_least``: the reference is a rigorous lower limit of the true collapse
  load, so ``upper >= reference`` must hold (the lower bound is shown only);
* ``at_most``: the reference is a rigorous upper limit, so ``lower <= reference``;
* ``report``: a hand method, not a rigorous reference: the bracket and whether
  the value lies inside are recorded, and nothing fails on it.

In every case ``lower <= upper``. A bound on the wrong side of an exact
reference is a defect of the engine, never a tolerance to loosen.

References are evaluated here from their closed forms, with the soil and the
footing read from the case itself, so no reference number is typed twice; a
reference without a closed form is given as a number in the file (or, for a
factor read from a chart, as ``chart_factor`` beside its formula).

A case marked ``requires = "slope"`` (or another feature the engine may not
solve yet) is skipped with a clear message while ``solver.analysis`` refuses
that feature, and run as soon as it accepts it.

Usage (from the repository root)::

    python verification/runner.py [--quick] [--only ID ...] [--out DIR]

Exit status: 0 when every check passes (skipped cases are listed), 1 when any
fails (or a bound is missing), 2 for a bad cases file or an unknown case id.
The module is also loaded by path (``bearbound verify``), so it keeps no state
in ``sys.modules`` and uses no dataclasses.
"""
from __future__ import annotations

import argparse
import datetime
import json
import math
import platform
import sys
import time
import tomllib
from collections.abc import Callable
from pathlib import Path
from typing import Any

ROOT = Path(__file__).resolve().parent.parent
try:
    import solver  # noqa: F401  (installed, or run from the repository root)
except ImportError:  # `python verification/runner.py` without an installed package
    sys.path.insert(0, str(ROOT))

from solver import __version__  # noqa: E402
from solver.analysis import analyse  # noqa: E402
from solver.case import CaseError, _show, parse_case  # noqa: E402
from solver.model import Case  # noqa: E402
from solver.result import CAUTION, write_atomic  # noqa: E402

CASES_PATH = Path(__file__).resolve().with_name("cases.toml")
RELATIVE_ROUND_OFF = 1e-6  # the only slack in the bracket check of a reference not from memory
QUANTITIES = ("pressure_over_c", "nq", "ngamma", "pressure_kPa", "vertical_over_c")
NOTES = ("exact", "method of characteristics", "from memory", "common practice",
         "rigorous limit", "hand method")
CHECKS = ("bracket", "at_least", "at_most", "report")
MAX_SLACK = 0.2  # a slack beyond 20 % would no longer check anything
# requires -> (the case-file keys analysis names when it refuses the feature, the skip message).
# Only a refusal skips: a CaseError that starts with one of those keys and says the engine does
# not solve it; any other error on such a case (a bad value, an unstable slope) is a failure.
REFUSAL_WORDS = ("not solved", "not supported")
REQUIRES = {
    "slope": (("ground.slope_angle", "ground.crest_setback", "ground.slope_height"),
              "skipped: slopes not yet supported"),
    "load_inclination": (("footing.load_inclination",), "skipped: inclined loads not yet supported"),
    "eccentricity": (("footing.eccentricity",), "skipped: eccentric loads not yet supported"),
    "water_table": (("ground.water_table",), "skipped: water tables not yet supported"),
}
REQUIRED_KEYS = ("id", "description", "source", "source_short", "quantity", "reference_note",
                 "quick", "elements_quick", "elements_full", "case")
KEY_TYPES = {"id": str, "description": str, "source": str, "source_short": str, "quantity": str,
             "reference_note": str, "quick": bool, "elements_quick": int, "elements_full": int,
             "case": dict, "reference_formula": str, "reference": float, "check": str,
             "slack": float, "requires": str, "chart_factor": float}


class VerificationError(ValueError):
    """One line about a bad cases file or a bad request: key, value, what is allowed."""


# -- closed forms -------------------------------------------------------------

def reissner_nq(phi_deg: float) -> float:
    """Nq = exp(pi tan phi) tan^2(45 + phi/2) (Reissner 1924).

    >>> round(reissner_nq(30.0), 3)
    18.401
    """
    phi = math.radians(phi_deg)
    return math.exp(math.pi * math.tan(phi)) * math.tan(math.pi / 4 + phi / 2) ** 2


def prandtl_reissner_nc(phi_deg: float) -> float:
    """Nc = (Nq - 1) cot phi (Prandtl 1920; Reissner 1924); 2 + pi in the limit phi -> 0.

    >>> round(prandtl_reissner_nc(20.0), 3)
    14.835
    """
    if phi_deg == 0.0:
        return 2.0 + math.pi
    return (reissner_nq(phi_deg) - 1.0) / math.tan(math.radians(phi_deg))


def prandtl_tresca(phi_deg: float) -> float:
    """2 + pi, the weightless Tresca value (Prandtl 1920); ``phi_deg`` is 0.

    >>> round(prandtl_tresca(0.0), 6)
    5.141593
    """
    return 2.0 + math.pi


def green_inclined(tan_delta: float) -> float:
    """V / (su B) at collapse of a rough strip on weightless Tresca soil under a load
    inclined at delta from vertical (Green 1954; formula from memory).

    The collapse envelope is V/(su B) = 1 + pi - arcsin(h) + sqrt(1 - h^2),
    h = H/(su B) <= 1. With H = V tan(delta) this is solved for V (brentq):
    2 + pi at delta = 0 (Prandtl 1920), and 1 + pi/2 where h reaches 1, the
    sliding limit.

    >>> round(green_inclined(0.0), 6), round(green_inclined(math.tan(math.radians(10.0))), 4)
    (5.141593, 4.0474)
    """
    from scipy.optimize import brentq

    if tan_delta == 0.0:
        return 2.0 + math.pi

    def envelope_gap(v: float) -> float:
        h = min(v * tan_delta, 1.0)
        return v - (1.0 + math.pi - math.asin(h) + math.sqrt(1.0 - h * h))

    v_slide = 1.0 / tan_delta  # h = 1
    if envelope_gap(v_slide) <= 0.0:
        raise ValueError(f"tan_delta: {tan_delta!r} is not allowed; beyond tan(delta) = "
                         f"{1.0 / (1.0 + math.pi / 2.0):.4f} the footing slides (h = 1) before "
                         "the envelope is reached")
    return float(brentq(envelope_gap, 0.0, min(2.0 + math.pi, v_slide), xtol=1e-14))


def davis_booker(chart_factor: float, kappa: float) -> float:
    """q_u / su0 = F [(2 + pi) + kappa/4], kappa = rho B / su0, for su = su0 + rho z below a
    strip on weightless Tresca soil (Davis & Booker 1973; F is read from their chart).

    >>> round(davis_booker(1.0, 0.0), 6)
    5.141593
    """
    return chart_factor * (2.0 + math.pi + kappa / 4.0)


def prandtl_gradient_mechanism(kappa: float) -> float:
    """q_u / su0 <= (2 + pi) + 2 kappa for su = su0 + rho z, kappa = rho B / su0.

    An upper bound (a rigorous upper limit of the collapse load, rough or
    smooth base): the symmetric Prandtl (1920) mechanism -- central wedge at
    45 degrees, fans of radius B/sqrt(2), passive wedges -- with its dissipation
    integrated against the linear su profile (derived here: the depth-weighted
    part adds rho B^2 per side).

    >>> round(prandtl_gradient_mechanism(2.0), 6)
    9.141593
    """
    return 2.0 + math.pi + 2.0 * kappa


def meyerhof_effective_width(eccentricity_over_width: float) -> float:
    """q_u / su = (2 + pi)(B - 2|e|)/B: Meyerhof's (1953) effective width on weightless
    Tresca soil, a hand method (not a rigorous bound).

    >>> round(meyerhof_effective_width(0.25), 6)
    2.570796
    """
    return (2.0 + math.pi) * (1.0 - 2.0 * abs(eccentricity_over_width))


# formula -> (function of phi in degrees, soil model it applies to, quantity it gives)
FORMULAS: dict[str, tuple[Callable[[float], float], str, str]] = {
    "prandtl_tresca": (prandtl_tresca, "tresca", "pressure_over_c"),
    "prandtl_reissner_nc": (prandtl_reissner_nc, "mohr-coulomb", "pressure_over_c"),
    "reissner_nq": (reissner_nq, "mohr-coulomb", "nq"),
}


def prandtl_mechanism_depth_m(width_m: float, phi_deg: float) -> float:
    """m: no point of the Prandtl-Reissner mechanism lies deeper than this.

    The fan is a log spiral about the footing edge from r0 = B / (2 cos(45 + phi/2))
    to r1 = r0 exp(pi/2 tan phi) (common practice); every point is within r1 of the edge.
    """
    phi = math.radians(phi_deg)
    r0 = width_m / (2.0 * math.cos(math.pi / 4 + phi / 2))
    return r0 * math.exp(math.pi / 2 * math.tan(phi))


def exact_reference(formula: str, case: Case, quantity: str, where: str) -> float:
    """Evaluate ``formula`` for ``case``, refusing a case the closed form does not describe.

    The closed forms are for one weightless soil under the footing. Deeper
    layers are allowed when they leave the exact value unchanged: identical to
    the top one, or at least as strong (same model and friction angle, no smaller
    cohesion) under a top layer deeper than the whole mechanism; then the
    homogeneous stress field is still admissible and the homogeneous mechanism
    still fits, so both bounds of the homogeneous problem still hold.
    """
    if formula not in FORMULAS:
        raise VerificationError(f"{where}.reference_formula: {formula!r} is not allowed; "
                                f"must be one of {', '.join(map(repr, FORMULAS))}")
    function, model, gives = FORMULAS[formula]
    if quantity != gives:
        raise VerificationError(f"{where}.quantity: {quantity!r} is not allowed with "
                                f"reference_formula = {formula!r}; must be {gives!r}")
    _plain_strip(case, where, formula)
    below = case.layers_below_base()
    top, _, top_bottom, top_c = below[0]
    if top.model != model:
        raise VerificationError(f"{where}.case: the layer under the footing is {top.model!r}; "
                                f"{formula!r} needs {model!r}")
    if not case.is_weightless:
        raise VerificationError(f"{where}.case: unit_weight must be 0 below the footing for {formula!r}")
    if formula == "reissner_nq":
        if any(c_top != 0.0 for *_, c_top in below):
            raise VerificationError(f"{where}.case: cohesion must be 0 for {formula!r}")
    elif case.overburden_kPa() != 0.0:
        raise VerificationError(f"{where}.case: surcharge and embedment must be 0 for {formula!r} "
                                "(q_u / c holds no surcharge term)")
    for layer, _, _, c_top in below:
        if layer.c_gradient_kPa_per_m != 0.0:
            raise VerificationError(f"{where}.case: layer {layer.name!r} has a strength gradient; "
                                    f"{formula!r} needs uniform strength")
    deeper = below[1:]
    same = all(layer.model == top.model and layer.friction_angle == top.friction_angle
               and c_top == top_c for layer, _, _, c_top in deeper)
    stronger = all(layer.model == top.model and layer.friction_angle == top.friction_angle
                   and c_top >= top_c for layer, _, _, c_top in deeper)
    deep_enough = top_bottom >= prandtl_mechanism_depth_m(case.footing.width, top.friction_angle)
    if not (same or (stronger and deep_enough)):
        raise VerificationError(f"{where}.case: the deeper layers may change the collapse load; "
                                f"{formula!r} needs them identical to the top one, or at least as "
                                "strong below a top layer deeper than the mechanism")
    return function(top.friction_angle if model == "mohr-coulomb" else 0.0)


# -- references that are not the classical closed forms --------------------------

def _fail(where: str, text: str) -> None:
    raise VerificationError(f"{where}.{text}")


def _plain_strip(case: Case, where: str, formula: str, allow: tuple[str, ...] = ()) -> None:
    """Refuse what ``formula`` does not describe: a slope, a water table, an inclined
    or eccentric load (unless ``allow`` names it)."""
    if case.footing.shape != "strip":
        _fail(where, f"case.footing.shape: {case.footing.shape!r} is not allowed with {formula!r}; the "
                     "reference is for a strip footing")
    checks = [("slope", "ground.slope_angle", case.ground.slope_angle != 0.0),
              ("water_table", "ground.water_table", case.ground.water_table is not None),
              ("load_inclination", "footing.load_inclination", case.footing.load_inclination != 0.0),
              ("eccentricity", "footing.eccentricity", case.footing.eccentricity != 0.0)]
    for feature, key, used in checks:
        if used and feature not in allow:
            _fail(where, f"case.{key}: not allowed with {formula!r}; the reference is for "
                         "level ground, no water table and a central vertical load"
                         + (f" (it allows only: {', '.join(allow)})" if allow else ""))


def _weightless_unloaded(case: Case, where: str, formula: str) -> None:
    if not case.is_weightless:
        _fail(where, f"case: unit_weight must be 0 below the footing for {formula!r}")
    if case.overburden_kPa() != 0.0:
        _fail(where, f"case: surcharge and embedment must be 0 for {formula!r}")


def _one_tresca_soil(case: Case, where: str, formula: str, uniform: bool) -> tuple[float, float]:
    """(su0 at the base in kPa, gradient in kPa/m) of the one Tresca soil below the base;
    deeper layers must continue its straight su profile. ``uniform``: no gradient."""
    below = case.layers_below_base()
    first, top, bottom, su0 = below[0]
    rho = first.c_gradient_kPa_per_m
    if not first.is_tresca:
        _fail(where, f"case: the layer under the footing is {first.model!r}; {formula!r} needs 'tresca'")
    for layer, layer_top, _, c_top in below[1:]:
        if not (layer.is_tresca and math.isclose(layer.c_gradient_kPa_per_m, rho)
                and math.isclose(c_top, su0 + rho * layer_top, rel_tol=1e-9, abs_tol=1e-9)):
            _fail(where, f"case: layer {layer.name!r} breaks the one straight su profile {formula!r} needs")
    if uniform and rho != 0.0:
        _fail(where, f"case: layer {first.name!r} has a strength gradient; {formula!r} needs uniform strength")
    _weightless_unloaded(case, where, formula)
    return su0, rho


def _green_value(case: Case, raw: dict, where: str) -> float:
    _plain_strip(case, where, "green_inclined", allow=("load_inclination",))
    if case.footing.load_inclination == 0.0:
        _fail(where, "case.footing.load_inclination: 0 is not allowed with 'green_inclined'; "
                     "use 'prandtl_tresca' for a vertical load")
    _one_tresca_soil(case, where, "green_inclined", uniform=True)
    try:
        return green_inclined(math.tan(math.radians(abs(case.footing.load_inclination))))
    except ValueError as error:
        raise VerificationError(f"{where}.case.footing.load_inclination: {error}") from None


def _davis_booker_value(case: Case, raw: dict, where: str) -> float:
    _plain_strip(case, where, "davis_booker")
    su0, rho = _one_tresca_soil(case, where, "davis_booker", uniform=False)
    if "chart_factor" not in raw:
        _fail(where, "chart_factor: missing; required with 'davis_booker' (F read from the chart)")
    return davis_booker(raw["chart_factor"], rho * case.footing.width / su0)


def _gradient_mechanism_value(case: Case, raw: dict, where: str) -> float:
    _plain_strip(case, where, "prandtl_gradient_mechanism")
    su0, rho = _one_tresca_soil(case, where, "prandtl_gradient_mechanism", uniform=False)
    return prandtl_gradient_mechanism(rho * case.footing.width / su0)


def _meyerhof_width_value(case: Case, raw: dict, where: str) -> float:
    _plain_strip(case, where, "meyerhof_effective_width", allow=("eccentricity",))
    if case.footing.eccentricity == 0.0:
        _fail(where, "case.footing.eccentricity: 0 is not allowed with 'meyerhof_effective_width'")
    _one_tresca_soil(case, where, "meyerhof_effective_width", uniform=True)
    return meyerhof_effective_width(case.footing.eccentricity / case.footing.width)


def _weakest_value(case: Case, raw: dict, where: str) -> float:
    """(2 + pi) su_min, kPa: the homogeneous field of the weakest su is admissible in
    every layer at least as strong, so the collapse load is at least this."""
    _plain_strip(case, where, "prandtl_tresca_weakest")
    below = case.layers_below_base()
    if len(below) < 2 or not all(layer.is_tresca for layer, *_ in below):
        _fail(where, "case: 'prandtl_tresca_weakest' needs two or more Tresca layers below the base")
    _weightless_unloaded(case, where, "prandtl_tresca_weakest")
    return (2.0 + math.pi) * min(c_top for *_, c_top in below)  # su >= c_top in each (gradient >= 0)


def _top_mechanism_value(case: Case, raw: dict, where: str) -> float:
    """2 + pi of the top layer: Prandtl's mechanism fits inside it, so the collapse load
    is at most this, whatever lies deeper."""
    _plain_strip(case, where, "prandtl_tresca_top")
    top, _, bottom, _ = case.layers_below_base()[0]
    if not top.is_tresca or top.c_gradient_kPa_per_m != 0.0:
        _fail(where, f"case: 'prandtl_tresca_top' needs a uniform Tresca top layer ({top.name!r})")
    _weightless_unloaded(case, where, "prandtl_tresca_top")
    depth = prandtl_mechanism_depth_m(case.footing.width, 0.0)
    if bottom < depth:
        _fail(where, f"case: top layer {top.name!r} ends {bottom:g} m below the base, above the "
                     f"Prandtl mechanism's depth {depth:.4g} m; 'prandtl_tresca_top' needs it deeper")
    return 2.0 + math.pi


def _level_ground_value(case: Case, raw: dict, where: str) -> float:
    """2 + pi for a footing set back from a slope: the level-ground value."""
    _plain_strip(case, where, "level_ground_tresca", allow=("slope",))
    setback = case.ground.crest_setback
    if case.ground.slope_angle == 0.0 or setback < 2.0 * case.footing.width:
        _fail(where, f"case.ground.crest_setback: {setback:g} is not allowed with "
                     "'level_ground_tresca'; needs a slope and a setback of at least 2 B")
    _one_tresca_soil(case, where, "level_ground_tresca", uniform=True)
    return 2.0 + math.pi


def _terzaghi_circle_value(case: Case, raw: dict, where: str) -> float:
    """kPa: Terzaghi's (1943) circle form, 1.3 c Nc + q Nq + 0.3 gamma B Ngamma, as solver.hand
    prints it beside the bracket (a hand method: reported, never a reference to fail on)."""
    if case.footing.shape != "circular":
        _fail(where, "case.footing.shape: 'terzaghi_circle' needs shape = 'circular'")
    from solver.hand import hand_methods

    rows = [h for h in hand_methods(case) if h.method.startswith("Terzaghi (1943), general shear")]
    if not rows or rows[0].pressure_kPa is None:
        _fail(where, "case: 'terzaghi_circle' gives no value here"
              + (f" ({rows[0].note})" if rows and rows[0].note else ""))
    row = rows[0]
    return row.pressure_kPa


# formula -> (value from case, entry and place; quantity it gives; allowed notes; allowed checks)
CASE_FORMULAS: dict[str, tuple[Callable[[Case, dict, str], float], str, tuple[str, ...], tuple[str, ...]]] = {
    "green_inclined": (_green_value, "vertical_over_c", ("from memory",), ("bracket",)),
    "davis_booker": (_davis_booker_value, "pressure_over_c", ("from memory",), ("bracket",)),
    "prandtl_gradient_mechanism": (_gradient_mechanism_value, "pressure_over_c",
                                   ("rigorous limit",), ("at_most",)),
    "meyerhof_effective_width": (_meyerhof_width_value, "pressure_over_c", ("hand method",), ("report",)),
    "prandtl_tresca_weakest": (_weakest_value, "pressure_kPa", ("rigorous limit",), ("at_least",)),
    "prandtl_tresca_top": (_top_mechanism_value, "pressure_over_c", ("rigorous limit",), ("at_most",)),
    "level_ground_tresca": (_level_ground_value, "pressure_over_c", ("common practice",), ("bracket",)),
    "terzaghi_circle": (_terzaghi_circle_value, "pressure_kPa", ("hand method",), ("report",)),
}


def reference_value(raw: dict, case: Case, where: str) -> float:
    """The reference of a case with a ``reference_formula``, checked against what the
    formula needs: the note, the check, the quantity and the case itself."""
    formula, note, check = raw["reference_formula"], raw["reference_note"], raw.get("check", "bracket")
    if formula in FORMULAS:
        if note != "exact":
            _fail(where, f"reference_note: {note!r} is not allowed with a reference_formula "
                         f"{formula!r}; must be 'exact'")
        if check != "bracket":
            _fail(where, f"check: {check!r} is not allowed with {formula!r}; must be 'bracket'")
        return exact_reference(formula, case, raw["quantity"], where)
    if formula not in CASE_FORMULAS:
        _fail(where, f"reference_formula: {formula!r} is not allowed; must be one of "
                     + ", ".join(map(repr, [*FORMULAS, *CASE_FORMULAS])))
    function, gives, notes, checks = CASE_FORMULAS[formula]
    if raw["quantity"] != gives:
        _fail(where, f"quantity: {raw['quantity']!r} is not allowed with reference_formula = "
                     f"{formula!r}; must be {gives!r}")
    if note not in notes:
        _fail(where, f"reference_note: {note!r} is not allowed with {formula!r}; must be "
                     + " or ".join(map(repr, notes)))
    if check not in checks:
        _fail(where, f"check: {check!r} is not allowed with {formula!r}; must be "
                     + " or ".join(map(repr, checks)))
    return function(case, raw, where)


def normaliser_kPa(quantity: str, case: Case) -> float:
    """kPa: q_u divided by this is the case's quantity."""
    below = case.layers_below_base()
    if quantity in ("pressure_over_c", "vertical_over_c"):
        value = below[0][3]
    elif quantity == "nq":
        value = case.overburden_kPa()
    elif quantity == "ngamma":
        gammas = {layer.unit_weight for layer, *_ in below}
        value = 0.5 * below[0][0].unit_weight * case.footing.width if len(gammas) == 1 else 0.0
    else:
        value = 1.0
    return value


# -- the cases file -----------------------------------------------------------

def load_cases(path: Path = CASES_PATH) -> list[dict]:
    """Read and check the cases file; each entry gets ``reference`` and the parsed ``Case``."""
    try:
        data = tomllib.loads(Path(path).read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, tomllib.TOMLDecodeError) as error:
        raise VerificationError(f"{path}: cannot read the cases file ({' '.join(str(error).split())})") from None
    raw_cases = data.get("cases")
    if set(data) != {"cases"} or not isinstance(raw_cases, list) or not raw_cases:
        raise VerificationError(f"{path}: must hold only an array of tables [[cases]], at least one")
    cases, seen = [], set()
    for i, raw in enumerate(raw_cases, 1):
        where = f"cases[{i}]"
        if not isinstance(raw, dict):
            raise VerificationError(f"{where}: must be a table [[cases]]")
        for key in raw:
            if key not in KEY_TYPES:
                raise VerificationError(f"{where}.{key}: unknown key; allowed: {', '.join(KEY_TYPES)}")
        for key in REQUIRED_KEYS:
            if key not in raw:
                raise VerificationError(f"{where}.{key}: missing; required")
        for key, value in raw.items():
            kind = KEY_TYPES[key]
            ok = isinstance(value, (int, float)) and not isinstance(value, bool) if kind is float \
                else isinstance(value, kind) and (kind is bool or not isinstance(value, bool))
            if not ok:
                raise VerificationError(f"{where}.{key}: {value!r} is not allowed; must be {kind.__name__}")
        where = f"cases[{i}] ({raw['id']})"
        if raw["id"] in seen:
            raise VerificationError(f"{where}.id: {raw['id']!r} is not allowed; must be unique")
        seen.add(raw["id"])
        if raw["quantity"] not in QUANTITIES:
            raise VerificationError(f"{where}.quantity: {raw['quantity']!r} is not allowed; "
                                    f"must be one of {', '.join(map(repr, QUANTITIES))}")
        if raw["reference_note"] not in NOTES:
            raise VerificationError(f"{where}.reference_note: {raw['reference_note']!r} is not allowed; "
                                    f"must be one of {', '.join(map(repr, NOTES))}")
        for key in ("elements_quick", "elements_full"):
            if not 200 <= raw[key] <= 400_000:
                raise VerificationError(f"{where}.{key}: {raw[key]} is not allowed; must be 200 to 400000")
        try:
            case = parse_case(raw["case"], name=raw["id"])
        except CaseError as error:
            raise VerificationError(f"{where}.case.{error}") from None
        if ("reference" in raw) == ("reference_formula" in raw):
            raise VerificationError(f"{where}: give exactly one of reference and reference_formula")
        _check_extra_keys(raw, case, where)
        if "reference_formula" in raw:
            reference = reference_value(raw, case, where)
        else:
            if raw["reference_note"] == "exact":
                raise VerificationError(f"{where}.reference_note: 'exact' needs a reference_formula, "
                                        "so that the number is computed, not typed")
            if raw.get("check", "bracket") not in ("bracket", "report"):
                raise VerificationError(f"{where}.check: {raw['check']!r} is not allowed with a typed "
                                        "reference; must be 'bracket' or 'report'")
            reference = float(raw["reference"])
        if not (math.isfinite(reference) and reference > 0):
            raise VerificationError(f"{where}.reference: {reference!r} is not allowed; must be > 0")
        if not normaliser_kPa(raw["quantity"], case) > 0:
            raise VerificationError(f"{where}.quantity: {raw['quantity']!r} is not allowed for this "
                                    "case; its divisor (c, q or 0.5 gamma B of one soil) is zero")
        cases.append({"check": "bracket", "slack": 0.0, **raw, "reference": reference, "parsed": case})
    return cases


def _check_extra_keys(raw: dict, case: Case, where: str) -> None:
    """check, slack, requires and chart_factor: allowed values and the company they keep."""
    check = raw.get("check", "bracket")
    if check not in CHECKS:
        raise VerificationError(f"{where}.check: {check!r} is not allowed; must be one of "
                                f"{', '.join(map(repr, CHECKS))}")
    if (check == "report") != (raw["reference_note"] == "hand method"):
        raise VerificationError(f"{where}.check: {check!r} is not allowed with reference_note = "
                                f"{raw['reference_note']!r}; 'report' goes with 'hand method' and only "
                                "with it (a hand method is no reference to fail on)")
    if check in ("at_least", "at_most") and raw["reference_note"] != "rigorous limit":
        raise VerificationError(f"{where}.check: {check!r} is not allowed with reference_note = "
                                f"{raw['reference_note']!r}; a one-sided check needs a 'rigorous limit'")
    if "slack" in raw:
        slack = raw["slack"]
        if raw["reference_note"] != "from memory":
            raise VerificationError(f"{where}.slack: {slack!r} is not allowed with reference_note = "
                                    f"{raw['reference_note']!r}; slack is only for a reference from memory")
        if check != "bracket" or not (math.isfinite(slack) and 0.0 <= slack <= MAX_SLACK):
            raise VerificationError(f"{where}.slack: {slack!r} is not allowed; must be a fraction from "
                                    f"0 to {MAX_SLACK:g} with check = 'bracket'")
    if "chart_factor" in raw and raw.get("reference_formula") != "davis_booker":
        raise VerificationError(f"{where}.chart_factor: not allowed; only with reference_formula = "
                                "'davis_booker'")
    if "chart_factor" in raw and not (math.isfinite(raw["chart_factor"]) and raw["chart_factor"] > 0):
        raise VerificationError(f"{where}.chart_factor: {raw['chart_factor']!r} is not allowed; must be > 0")
    if "requires" in raw:
        feature = raw["requires"]
        if feature not in REQUIRES:
            raise VerificationError(f"{where}.requires: {feature!r} is not allowed; must be one of "
                                    f"{', '.join(map(repr, REQUIRES))}")
        used = {"slope": case.ground.slope_angle != 0.0,
                "load_inclination": case.footing.load_inclination != 0.0,
                "eccentricity": case.footing.eccentricity != 0.0,
                "water_table": case.ground.water_table is not None}[feature]
        if not used:
            raise VerificationError(f"{where}.requires: {feature!r} is not allowed; the case does not "
                                    "use that feature")


# -- running ------------------------------------------------------------------

def bracket_contains(lower: float | None, upper: float | None, reference: float,
                     slack: float = 0.0) -> bool | str:
    """True when lower <= reference <= upper (round-off slack, widened by ``slack``, a
    fraction, for a reference from memory); "n/a" if a bound is missing.

    >>> bracket_contains(5.0, 5.3, 2 + math.pi), bracket_contains(5.2, 5.3, 2 + math.pi)
    (True, False)
    >>> bracket_contains(5.2, 5.3, 2 + math.pi, slack=0.05)
    True
    >>> bracket_contains(None, 5.3, 2 + math.pi)
    'n/a'
    """
    if lower is None or upper is None:
        return "n/a"
    return bool(lower <= reference * (1 + slack) * (1 + RELATIVE_ROUND_OFF)
                and upper >= reference * (1 - slack) * (1 - RELATIVE_ROUND_OFF))


def check_holds(check: str, lower: float | None, upper: float | None, reference: float,
                slack: float = 0.0) -> bool | str:
    """The verdict of one check (see the module docstring); "n/a" when a bound it needs,
    or the lower <= upper test, is missing. ``report`` returns whether the reference
    lies inside the bracket; the caller does not fail on it.

    >>> check_holds("at_least", 9.0, 10.0, 10.0), check_holds("at_most", 10.5, 11.0, 10.0)
    (True, False)
    """
    if lower is None or upper is None:
        return "n/a"
    if check == "at_least":
        return bool(upper >= reference * (1 - RELATIVE_ROUND_OFF))
    if check == "at_most":
        return bool(lower <= reference * (1 + RELATIVE_ROUND_OFF))
    return bracket_contains(lower, upper, reference, slack if check == "bracket" else 0.0)


def row_passed(row: dict) -> bool | None:
    """True or False for a row that counts, None for a skipped or report-only row."""
    if "passed" not in row:  # rows made before checks had kinds: the bracket alone
        return row["inside"] is True
    return row["passed"]


def run_cases(quick: bool, only: list[str] | None = None,
              progress: Callable[[str], None] | None = None) -> list[dict]:
    """Run the cases and return one row (plain dict) each.

    ``quick``: the quick subset on its coarse meshes (``elements_quick``);
    otherwise every case on ``elements_full``. ``only``: these ids (any case,
    quick or not), on the mesh size ``quick`` chooses. ``progress`` receives one
    line per finished case.
    """
    cases = load_cases()
    if only:
        known = [c["id"] for c in cases]
        for case_id in only:
            if case_id not in known:
                raise VerificationError(f"--only: {_show(case_id)} is not allowed; must be one of "
                                        + ", ".join(known))
        cases = [c for c in cases if c["id"] in only]
    elif quick:
        cases = [c for c in cases if c["quick"]]
    rows = []
    for number, entry in enumerate(cases, 1):
        row = _run_one(entry, entry["elements_quick"] if quick else entry["elements_full"])
        rows.append(row)
        if progress:
            progress(f"[{number}/{len(cases)}] {row['id']}: inside = {row['inside']}, "
                     f"{row['time_s']:.1f} s")
    return rows


def _run_one(entry: dict, elements: int) -> dict:
    case: Case = entry["parsed"]
    divisor = normaliser_kPa(entry["quantity"], case)
    start = time.perf_counter()
    bounds: dict[str, Any] = {}
    notes: list[str] = []
    skipped = None
    try:
        result = analyse(case, bounds="both", elements=elements, adaptive=False)
        for kind in ("lower", "upper"):
            bound = getattr(result, kind)
            bounds[kind] = None if bound.pressure_kPa is None else bound.pressure_kPa / divisor
            bounds[f"{kind}_kPa"] = bound.pressure_kPa
            bounds[f"{kind}_status"] = bound.status
            bounds[f"{kind}_elements"] = bound.elements
        notes = list(result.notes)
    except Exception as error:  # an engine failure is a failed check, reported, not a crash
        feature = entry.get("requires")
        if isinstance(error, CaseError) and feature and str(error).startswith(REQUIRES[feature][0]) \
                and any(words in str(error) for words in REFUSAL_WORDS):
            skipped = REQUIRES[feature][1]  # the engine refuses the feature: not yet a check
            notes = [f"{skipped} ({error})"]
        status = skipped or f"error: {type(error).__name__}: {error}"
        for kind in ("lower", "upper"):
            bounds.update({kind: None, f"{kind}_kPa": None, f"{kind}_elements": None,
                           f"{kind}_status": status})
    elapsed = time.perf_counter() - start
    lower, upper = bounds["lower"], bounds["upper"]
    gap = (100.0 * (upper - lower) / lower
           if lower is not None and upper is not None and lower > 0 else None)
    check, slack = entry["check"], entry["slack"]
    inside = check_holds(check, lower, upper, entry["reference"], slack)
    crossed = lower is not None and upper is not None and lower > upper * (1 + RELATIVE_ROUND_OFF)
    if crossed:
        notes.append("lower bound exceeds upper bound: a defect")
    if skipped:
        passed = None
    elif inside == "n/a" or crossed:
        passed = False  # a missing bound or crossed bounds fail whatever the check
    else:
        passed = None if check == "report" else inside is True
    return {"id": entry["id"], "description": entry["description"], "source": entry["source"],
            "source_short": entry["source_short"], "quantity": entry["quantity"],
            "reference": entry["reference"], "reference_note": entry["reference_note"],
            "check": check, "slack": slack, "skipped": skipped, "passed": passed,
            "elements": elements, "lower": lower, "upper": upper,
            "inside": inside, "gap_percent": gap, "time_s": elapsed,
            **{k: v for k, v in bounds.items() if k not in ("lower", "upper")},
            "notes": notes}


# -- output -------------------------------------------------------------------

HEADERS = ("case", "source", "quantity", "check", "reference", "lower", "upper", "passed?",
           "gap %", "time s")
CHECK_LABELS = {"bracket": "lower <= ref <= upper", "at_least": "upper >= ref",
                "at_most": "lower <= ref", "report": "report only"}


def _check_label(row: dict) -> str:
    check = row.get("check", "bracket")
    label = CHECK_LABELS[check]
    if check == "bracket" and row.get("slack", 0.0):
        label += f" +-{100 * row['slack']:g}%"
    return label


def _verdict(row: dict) -> str:
    if row.get("skipped"):
        return "skipped"
    passed = row_passed(row)
    if passed is None:  # a report row: where the hand method lies
        return "inside" if row["inside"] is True else "outside"
    return "yes" if passed else ("n/a" if row["inside"] == "n/a" else "NO")


def _cells(row: dict) -> list[str]:
    number = lambda v: "n/a" if v is None else f"{v:.4f}"  # noqa: E731
    gap = "n/a" if row["gap_percent"] is None else f"{row['gap_percent']:.2f}"
    return [row["id"], row["source_short"], row["quantity"], _check_label(row),
            number(row["reference"]), number(row["lower"]), number(row["upper"]), _verdict(row),
            gap, f"{row['time_s']:.1f}"]


def format_table(rows: list[dict]) -> str:
    """The rows as an aligned text table (numbers right-aligned)."""
    cells = [list(HEADERS)] + [_cells(row) for row in rows]
    widths = [max(len(line[i]) for line in cells) for i in range(len(HEADERS))]
    left = {0, 1, 2, 3}
    lines = ["  ".join(text.ljust(w) if i in left else text.rjust(w)
                       for i, (text, w) in enumerate(zip(line, widths))).rstrip() for line in cells]
    lines.insert(1, "  ".join("-" * w for w in widths))
    return "\n".join(lines)


def _summary(rows: list[dict]) -> str:
    bad = [row["id"] for row in rows if row_passed(row) is False]
    skipped = [row["id"] for row in rows if row.get("skipped")]
    reported = [row["id"] for row in rows if not row.get("skipped") and row_passed(row) is None]
    counted = len(rows) - len(skipped) - len(reported)
    text = (f"All {counted} checks pass." if not bad else
            f"{len(bad)} of {counted} checks do NOT pass (or a bound is missing): {', '.join(bad)}. "
            "A bound on the wrong side of an exact reference is a defect.")
    if reported:
        text += f" {len(reported)} hand-method comparison(s) reported, not checked: {', '.join(reported)}."
    if skipped:
        text += (f" {len(skipped)} skipped, the engine does not solve them yet: "
                 + ", ".join(f"{row['id']} ({row['skipped']})" for row in rows if row.get("skipped")) + ".")
    return text


def write_report(rows: list[dict], path: Path | str) -> Path:
    """Write a Markdown report of ``rows`` to ``path`` (atomically); returns the path."""
    import clarabel
    import numpy

    path = Path(path)
    now = datetime.datetime.now(datetime.timezone.utc).strftime("%Y-%m-%d %H:%M UTC")
    table = [f"| {' | '.join(HEADERS)} |", "|" + "|".join("---" for _ in HEADERS) + "|"]
    table += [f"| {' | '.join(_cells(row))} |" for row in rows]
    details = []
    for row in rows:
        details += [f"### {row['id']}", "", row["description"], "",
                    f"- quantity: {row['quantity']}; reference {row['reference']:.6g} "
                    f"({row['reference_note']}); check: {_check_label(row)}; result: {_verdict(row)}",
                    f"- lower bound: {_kpa(row['lower_kPa'])}, status: {row['lower_status']}, "
                    f"{row['lower_elements']} elements",
                    f"- upper bound: {_kpa(row['upper_kPa'])}, status: {row['upper_status']}, "
                    f"{row['upper_elements']} elements",
                    *[f"- note: {note}" for note in row["notes"]], ""]
    sources = sorted({row["source"] for row in rows})
    text = "\n".join([
        "# bearbound verification report", "",
        f"- date: {now}",
        f"- software: bearbound {__version__} (Python {platform.python_version()}, "
        f"numpy {numpy.__version__}, clarabel {clarabel.__version__})",
        f"- cases: {len(rows)}, target elements per bound: "
        + ", ".join(sorted({str(row['elements']) for row in rows})),
        "- checks: lower <= reference <= upper (a relative slack of "
        f"{RELATIVE_ROUND_OFF:g} for round-off, widened only for a reference from memory by the "
        "slack shown); upper >= reference for a rigorous lower limit; lower <= reference for a "
        "rigorous upper limit; hand methods reported, not checked; lower <= upper always", "",
        f"**{_summary(rows)}**", "",
        *table, "",
        "lower, upper and reference are in the case's quantity: pressure_over_c = q_u / c, "
        "nq = q_u / q, ngamma = q_u / (0.5 gamma B), vertical_over_c = V / (c B), "
        "pressure_kPa = q_u (kPa), with q_u the vertical collapse load / B. "
        "A reference marked 'from memory' is not a rigorous bound check.", "",
        "## Cases", "", *details,
        "## Sources", "", *[f"- {source}" for source in sources], "",
        "## Caution", "", CAUTION, "",
    ])
    write_atomic(path, text)
    return path


def _kpa(value: float | None) -> str:
    return "withheld" if value is None else f"{value:.4f} kPa"


def main(argv: list[str] | None = None) -> int:
    """Command line; returns the exit status (0 every check passes, 1 any fails, 2 bad input)."""
    parser = argparse.ArgumentParser(prog="verification/runner.py", description=__doc__.splitlines()[0],
                                     epilog=CAUTION)
    parser.add_argument("--quick", action="store_true", help="the quick subset on coarse meshes")
    parser.add_argument("--only", action="append", metavar="ID", default=None,
                        help="run only this case (repeat for several)")
    parser.add_argument("--out", type=Path, default=Path("out/verification"),
                        help="folder for report.md and rows.json (default out/verification)")
    args = parser.parse_args(argv)
    try:
        rows = run_cases(args.quick, args.only,
                         progress=lambda line: print(line, file=sys.stderr, flush=True))
    except VerificationError as error:
        print(f"verification: {error}", file=sys.stderr)
        return 2
    print(format_table(rows))
    print(_summary(rows))
    report = write_report(rows, args.out / "report.md")
    write_atomic(args.out / "rows.json", json.dumps(rows, indent=2, default=str) + "\n")
    print(f"report: {report}")
    print(f"Caution: {CAUTION}")
    return 1 if any(row_passed(row) is False for row in rows) else 0


if __name__ == "__main__":
    sys.exit(main())
