"""Run the verification cases of verification/cases.toml and check each bracket.

For every case both bounds are computed and turned into the case's
dimensionless quantity (q_u / c, q_u / q, q_u / (0.5 gamma B) or q_u in kPa);
the bracket passes when ``lower <= reference <= upper`` up to a relative
1e-6 (round-off only). A bound on the wrong side of an exact reference is a
defect of the engine, never a tolerance to loosen.

Exact references are evaluated here from their closed forms, with the
friction angle read from the case itself, so no reference number is typed
twice; a reference without a closed form is given as a number in the file.

Usage (from the repository root)::

    python verification/runner.py [--quick] [--only ID ...] [--out DIR]

Exit status: 0 when every bracket contains its reference, 1 when any does not
(or a bound is missing), 2 for a bad cases file or an unknown case id.
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
from solver.case import CaseError, parse_case  # noqa: E402
from solver.model import Case  # noqa: E402
from solver.result import CAUTION, write_atomic  # noqa: E402

CASES_PATH = Path(__file__).resolve().with_name("cases.toml")
RELATIVE_ROUND_OFF = 1e-6  # the only slack in the bracket check
QUANTITIES = ("pressure_over_c", "nq", "ngamma", "pressure_kPa")
NOTES = ("exact", "method of characteristics", "from memory")
REQUIRED_KEYS = ("id", "description", "source", "source_short", "quantity", "reference_note",
                 "quick", "elements_quick", "elements_full", "case")
KEY_TYPES = {"id": str, "description": str, "source": str, "source_short": str, "quantity": str,
             "reference_note": str, "quick": bool, "elements_quick": int, "elements_full": int,
             "case": dict, "reference_formula": str, "reference": float}


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


def normaliser_kPa(quantity: str, case: Case) -> float:
    """kPa: q_u divided by this is the case's quantity."""
    below = case.layers_below_base()
    if quantity == "pressure_over_c":
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
        if "reference_formula" in raw:
            if raw["reference_note"] != "exact":
                raise VerificationError(f"{where}.reference_note: {raw['reference_note']!r} is not "
                                        "allowed with a reference_formula; must be 'exact'")
            reference = exact_reference(raw["reference_formula"], case, raw["quantity"], where)
        else:
            if raw["reference_note"] == "exact":
                raise VerificationError(f"{where}.reference_note: 'exact' needs a reference_formula, "
                                        "so that the number is computed, not typed")
            reference = float(raw["reference"])
        if not (math.isfinite(reference) and reference > 0):
            raise VerificationError(f"{where}.reference: {reference!r} is not allowed; must be > 0")
        if not normaliser_kPa(raw["quantity"], case) > 0:
            raise VerificationError(f"{where}.quantity: {raw['quantity']!r} is not allowed for this "
                                    "case; its divisor (c, q or 0.5 gamma B of one soil) is zero")
        cases.append({**raw, "reference": reference, "parsed": case})
    return cases


# -- running ------------------------------------------------------------------

def bracket_contains(lower: float | None, upper: float | None, reference: float) -> bool | str:
    """True when lower <= reference <= upper (round-off slack only); "n/a" if a bound is missing.

    >>> bracket_contains(5.0, 5.3, 2 + math.pi), bracket_contains(5.2, 5.3, 2 + math.pi)
    (True, False)
    >>> bracket_contains(None, 5.3, 2 + math.pi)
    'n/a'
    """
    if lower is None or upper is None:
        return "n/a"
    return bool(lower <= reference * (1 + RELATIVE_ROUND_OFF)
                and upper >= reference * (1 - RELATIVE_ROUND_OFF))


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
                raise VerificationError(f"--only: {case_id!r} is not allowed; must be one of "
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
    try:
        result = analyse(case, bounds="both", elements=elements)
        for kind in ("lower", "upper"):
            bound = getattr(result, kind)
            bounds[kind] = None if bound.pressure_kPa is None else bound.pressure_kPa / divisor
            bounds[f"{kind}_kPa"] = bound.pressure_kPa
            bounds[f"{kind}_status"] = bound.status
            bounds[f"{kind}_elements"] = bound.elements
        notes = list(result.notes)
    except Exception as error:  # an engine failure is a failed check, reported, not a crash
        for kind in ("lower", "upper"):
            bounds.update({kind: None, f"{kind}_kPa": None, f"{kind}_elements": None,
                           f"{kind}_status": f"error: {type(error).__name__}: {error}"})
    elapsed = time.perf_counter() - start
    lower, upper = bounds["lower"], bounds["upper"]
    gap = (100.0 * (upper - lower) / lower
           if lower is not None and upper is not None and lower > 0 else None)
    return {"id": entry["id"], "description": entry["description"], "source": entry["source"],
            "source_short": entry["source_short"], "quantity": entry["quantity"],
            "reference": entry["reference"], "reference_note": entry["reference_note"],
            "elements": elements, "lower": lower, "upper": upper,
            "inside": bracket_contains(lower, upper, entry["reference"]),
            "gap_percent": gap, "time_s": elapsed, **{k: v for k, v in bounds.items()
                                                      if k not in ("lower", "upper")},
            "notes": notes}


# -- output -------------------------------------------------------------------

HEADERS = ("case", "source", "quantity", "reference", "lower", "upper", "inside?", "gap %", "time s")


def _cells(row: dict) -> list[str]:
    number = lambda v: "n/a" if v is None else f"{v:.4f}"  # noqa: E731
    inside = {True: "yes", False: "NO"}.get(row["inside"], "n/a")
    gap = "n/a" if row["gap_percent"] is None else f"{row['gap_percent']:.2f}"
    return [row["id"], row["source_short"], row["quantity"], number(row["reference"]),
            number(row["lower"]), number(row["upper"]), inside, gap, f"{row['time_s']:.1f}"]


def format_table(rows: list[dict]) -> str:
    """The rows as an aligned text table (numbers right-aligned)."""
    cells = [list(HEADERS)] + [_cells(row) for row in rows]
    widths = [max(len(line[i]) for line in cells) for i in range(len(HEADERS))]
    left = {0, 1, 2}
    lines = ["  ".join(text.ljust(w) if i in left else text.rjust(w)
                       for i, (text, w) in enumerate(zip(line, widths))).rstrip() for line in cells]
    lines.insert(1, "  ".join("-" * w for w in widths))
    return "\n".join(lines)


def _summary(rows: list[dict]) -> str:
    bad = [row["id"] for row in rows if row["inside"] is not True]
    if not bad:
        return f"All {len(rows)} brackets contain their reference."
    return (f"{len(bad)} of {len(rows)} brackets do NOT contain their reference "
            f"(or a bound is missing): {', '.join(bad)}. A bound on the wrong side of an exact "
            "reference is a defect.")


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
                    f"({row['reference_note']})",
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
        "- check: lower <= reference <= upper, with a relative slack of "
        f"{RELATIVE_ROUND_OFF:g} for round-off only", "",
        f"**{_summary(rows)}**", "",
        *table, "",
        "lower, upper and reference are in the case's quantity: pressure_over_c = q_u / c, "
        "nq = q_u / q, ngamma = q_u / (0.5 gamma B), pressure_kPa = q_u (kPa). "
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
    """Command line; returns the exit status (0 all inside, 1 any outside, 2 bad input)."""
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
    return 0 if all(row["inside"] is True for row in rows) else 1


if __name__ == "__main__":
    sys.exit(main())
