"""The quick verification subset (verification/cases.toml, quick = true) and the runner's own parts.

The runner is loaded by path, the way ``bearbound verify`` loads it. Every
reference and its source are in cases.toml; the few published numbers quoted
here name their source beside them.
"""
from __future__ import annotations

import importlib.util
import json
import math
import tomllib
from pathlib import Path

import numpy as np
import pytest

from solver.hand import bearing_factors
from solver.result import CAUTION

RUNNER_PATH = Path(__file__).resolve().parent.parent / "verification" / "runner.py"
MAX_QUICK_GAP_PERCENT = 10.0


def _load_runner():
    spec = importlib.util.spec_from_file_location("bearbound_verification_test", RUNNER_PATH)
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


runner = _load_runner()


@pytest.fixture(scope="module")
def quick_rows() -> list[dict]:
    return runner.run_cases(quick=True)


def test_quick_subset_is_what_the_file_marks(quick_rows: list[dict]) -> None:
    marked = [c["id"] for c in tomllib.loads(runner.CASES_PATH.read_text())["cases"] if c["quick"]]
    assert [row["id"] for row in quick_rows] == marked
    assert marked, "the quick subset is empty"


def test_every_quick_bracket_contains_its_reference(quick_rows: list[dict]) -> None:
    # Each row's own check (bracket, at_least, at_most); hand-method rows are reported, not
    # checked, and skipped rows are counted in the test below.
    failed = [f"{r['id']}: check {r['check']}, lower {r['lower']}, reference {r['reference']:.6g}, "
              f"upper {r['upper']} ({r['lower_status']} / {r['upper_status']})"
              for r in quick_rows if runner.row_passed(r) is False]
    assert not failed, "\n".join(failed)
    checked = [r for r in quick_rows if runner.row_passed(r) is True]
    assert checked, "no quick case was checked"
    for row in checked:  # a bracket check means the reference really lies between the bounds
        if row["check"] == "bracket":
            assert row["lower"] <= row["reference"] * (1 + row["slack"] + 1e-6) and \
                row["upper"] >= row["reference"] * (1 - row["slack"] - 1e-6), row["id"]


def test_every_quick_gap_is_small(quick_rows: list[dict]) -> None:
    wide = [f"{r['id']}: gap {r['gap_percent']}" for r in quick_rows if not r["skipped"]
            and (r["gap_percent"] is None or not r["gap_percent"] < MAX_QUICK_GAP_PERCENT)]
    assert not wide, "\n".join(wide)


def test_quick_bounds_never_cross_and_reports_carry_both_bounds(quick_rows: list[dict]) -> None:
    for row in quick_rows:
        if row["skipped"]:
            continue
        assert row["lower"] is not None and row["upper"] is not None, row["id"]
        assert row["lower"] <= row["upper"] * (1 + 1e-6), row["id"]
        if row["check"] == "report":
            assert row["passed"] is None and row["inside"] in (True, False), row["id"]


def test_quick_cases_the_engine_refuses_are_skipped_by_name(quick_rows: list[dict]) -> None:
    skipped = [r for r in quick_rows if r["skipped"]]
    marked = {c["id"]: c.get("requires") for c in runner.load_cases()}
    for row in skipped:  # only a case that names the feature may be skipped, with its message
        assert marked[row["id"]] is not None, row["id"]
        assert row["skipped"] == runner.REQUIRES[marked[row["id"]]][1]
        assert row["passed"] is None and row["lower"] is None
    if skipped:
        pytest.skip("; ".join(f"{r['id']}: {r['skipped']}" for r in skipped))


def test_table_and_report(quick_rows: list[dict], tmp_path: Path) -> None:
    table = runner.format_table(quick_rows)
    lines = table.splitlines()
    assert len(lines) == len(quick_rows) + 2
    assert len({len(line) for line in lines[:2]}) == 1  # header and rule aligned
    for row in quick_rows:
        assert row["id"] in table
    report = runner.write_report(quick_rows, tmp_path / "report.md").read_text()
    assert CAUTION in report
    for row in quick_rows:
        assert row["source"] in report
    assert "bearbound " in report and "date:" in report


# -- parts that need no solve ----------------------------------------------------

def test_closed_forms_match_published_and_hand_values() -> None:
    # Published values of the Prandtl-Reissner factors for phi = 30: Nq = 18.40,
    # Nc = 30.14 (Vesic 1973, J. SMFD ASCE 99(SM1), table of bearing-capacity factors;
    # values from memory); and an independent implementation in solver.hand.
    assert runner.reissner_nq(30.0) == pytest.approx(18.40, abs=0.005)
    assert runner.prandtl_reissner_nc(30.0) == pytest.approx(30.14, abs=0.005)
    assert runner.prandtl_tresca(0.0) == pytest.approx(2.0 + math.pi, rel=1e-15)
    for phi in (10.0, 20.0, 30.0):
        factors = bearing_factors("meyerhof", phi)
        assert runner.reissner_nq(phi) == pytest.approx(factors["Nq"], rel=1e-12)
        assert runner.prandtl_reissner_nc(phi) == pytest.approx(factors["Nc"], rel=1e-12)
    # phi -> 0: Nc tends to 2 + pi (Prandtl 1920)
    assert runner.prandtl_reissner_nc(1e-4) == pytest.approx(2.0 + math.pi, rel=1e-3)


def test_bracket_check_is_strict() -> None:
    ref = 2.0 + math.pi
    assert runner.bracket_contains(ref, ref, ref) is True
    assert runner.bracket_contains(ref * (1 + 1e-5), ref * 1.1, ref) is False  # lower above
    assert runner.bracket_contains(ref * 0.9, ref * (1 - 1e-5), ref) is False  # upper below
    assert runner.bracket_contains(None, ref * 1.1, ref) == "n/a"
    assert runner.bracket_contains(ref * 0.9, None, ref) == "n/a"


def _write_cases(path: Path, text: str) -> Path:
    path.write_text(text, encoding="utf-8")
    return path


GOOD_ENTRY = """\
[[cases]]
id = "t"
description = "d"
source = "Prandtl (1920)"
source_short = "Prandtl (1920)"
reference_formula = "prandtl_tresca"
quantity = "pressure_over_c"
reference_note = "exact"
quick = true
elements_quick = 600
elements_full = 600
[cases.case]
footing = { width = 1.0 }
layers = [{ name = "clay", model = "tresca", unit_weight = 0.0, undrained_strength = 10.0 }]
"""


def test_cases_file_is_valid_and_references_are_computed() -> None:
    cases = runner.load_cases()
    raw = tomllib.loads(runner.CASES_PATH.read_text())["cases"]
    assert len(cases) == len(raw) == len({c["id"] for c in cases})
    for entry, text in zip(cases, raw):
        # an exact reference is computed, never typed into the file
        assert ("reference" in text) != ("reference_formula" in text)
        if entry["reference_note"] == "exact":
            assert "reference" not in text


@pytest.mark.parametrize("change, message", [
    (('reference_formula = "prandtl_tresca"', 'reference_formula = "prandtl_reissner_nc"'), "needs 'mohr-coulomb'"),
    (('quantity = "pressure_over_c"', 'quantity = "nq"'), "quantity"),
    (('reference_formula = "prandtl_tresca"', 'reference = 5.14'), "'exact' needs a reference_formula"),
    (('reference_note = "exact"', 'reference_note = "guess"'), "reference_note"),
    (("unit_weight = 0.0", "unit_weight = 18.0"), "unit_weight must be 0"),
    (("width = 1.0", "width = -1.0"), "footing.width"),
    (('id = "t"', 'id = "t"\ncolour = "red"'), "unknown key"),
    (('layers = [{ name = "clay", model = "tresca", unit_weight = 0.0, undrained_strength = 10.0 }]',
      'layers = [{ name = "a", model = "tresca", thickness = 0.2, unit_weight = 0.0, undrained_strength = 10.0 },'
      ' { name = "b", model = "tresca", unit_weight = 0.0, undrained_strength = 30.0 }]'),
     "deeper layers may change"),
])
def test_bad_cases_file_is_refused_in_one_line(tmp_path: Path, change: tuple[str, str], message: str) -> None:
    path = _write_cases(tmp_path / "cases.toml", GOOD_ENTRY.replace(*change))
    assert runner.load_cases(_write_cases(tmp_path / "good.toml", GOOD_ENTRY))
    with pytest.raises(runner.VerificationError) as error:
        runner.load_cases(path)
    assert message in str(error.value)
    assert "\n" not in str(error.value)


def test_unknown_only_id_exits_2_and_writes_nothing(tmp_path: Path, capsys) -> None:
    out = tmp_path / "report"
    assert runner.main(["--only", "no-such-case", "--out", str(out)]) == 2
    assert not out.exists()
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1 and "no-such-case" in err


def test_main_writes_report_and_rows(tmp_path: Path, monkeypatch: pytest.MonkeyPatch, capsys) -> None:
    # The exit status follows the brackets: fake rows, one inside and one outside.
    rows = [{"id": "a", "description": "d", "source": "S a", "source_short": "S", "quantity": "nq",
             "reference": 1.0, "reference_note": "exact", "elements": 600, "lower": 0.9, "upper": 1.1,
             "inside": True, "gap_percent": 22.2, "time_s": 0.1, "lower_kPa": 9.0, "upper_kPa": 11.0,
             "lower_status": "optimal", "upper_status": "optimal", "lower_elements": 600,
             "upper_elements": 600, "notes": []}]
    monkeypatch.setattr(runner, "run_cases", lambda quick, only, progress=None: rows)
    assert runner.main(["--out", str(tmp_path)]) == 0
    assert json.loads((tmp_path / "rows.json").read_text())[0]["id"] == "a"
    assert CAUTION in (tmp_path / "report.md").read_text()
    rows.append({**rows[0], "id": "b", "lower": 1.05, "inside": False})
    assert runner.main(["--out", str(tmp_path)]) == 1
    assert "NO" in capsys.readouterr().out


# -- issue 3: the new references, checks and the skip marker (no solve) -------------

def test_green_envelope_ends_and_fixed_point() -> None:
    # Green (1954), envelope from memory: V/(su B) = 1 + pi - arcsin(h) + sqrt(1 - h^2).
    # Its ends: 2 + pi at h = 0 (Prandtl 1920) and 1 + pi/2 at h = 1, the sliding limit.
    assert runner.green_inclined(0.0) == pytest.approx(2.0 + math.pi, rel=1e-15)
    slide = 1.0 / (1.0 + math.pi / 2.0)  # tan(delta) at which the envelope meets h = 1
    assert runner.green_inclined(slide * (1 - 1e-9)) == pytest.approx(1.0 + math.pi / 2.0, rel=1e-4)
    with pytest.raises(ValueError, match="slides"):
        runner.green_inclined(slide * 1.01)
    previous = 2.0 + math.pi
    for delta in (5.0, 10.0, 15.0, 20.0):
        t = math.tan(math.radians(delta))
        v = runner.green_inclined(t)
        h = v * t
        assert v == pytest.approx(1.0 + math.pi - math.asin(h) + math.sqrt(1.0 - h * h), rel=1e-12)
        assert v < previous  # more inclination, less vertical capacity
        previous = v


def test_prandtl_gradient_mechanism_against_numerical_dissipation() -> None:
    # The closed form (2 + pi) + 2 rho B/su0 re-derived by integrating the dissipation of
    # Prandtl's (1920) mechanism numerically over su = su0 + rho z (one side, doubled).
    x, w = np.polynomial.legendre.leggauss(40)
    s, ws = (x + 1.0) / 2.0, w / 2.0

    def pressure(su0: float, rho: float, width: float) -> float:
        r0, v_star = width / math.sqrt(2.0), 1.0 / math.sqrt(2.0)  # unit footing velocity
        su = lambda depth: su0 + rho * depth  # noqa: E731
        faces = 2.0 * r0 * np.sum(ws * su(s * width / 2.0))  # wedge face and passive face
        angles = np.radians(45.0 + 90.0 * s)  # fan, measured from the surface
        arc = r0 * (np.pi / 2.0) * np.sum(ws * su(r0 * np.sin(angles)))
        fan = r0 * (np.pi / 2.0) * np.sum(np.outer(ws, ws) * su(np.outer(s * r0, np.sin(angles))))
        return 2.0 * v_star * (faces + arc + fan) / width

    for kappa in (0.0, 2.0, 10.0):
        su0, width = 40.0, 2.0
        numerical = pressure(su0, kappa * su0 / width, width) / su0
        assert numerical == pytest.approx(runner.prandtl_gradient_mechanism(kappa), rel=1e-10)


def test_davis_booker_and_meyerhof_forms() -> None:
    assert runner.davis_booker(1.0, 0.0) == pytest.approx(2.0 + math.pi)
    assert runner.davis_booker(1.27, 10.0) == pytest.approx(1.27 * (2.0 + math.pi + 2.5))
    assert runner.meyerhof_effective_width(0.1) == pytest.approx((2.0 + math.pi) * 0.8)
    assert runner.meyerhof_effective_width(-0.1) == runner.meyerhof_effective_width(0.1)


def test_each_kind_of_check() -> None:
    assert runner.check_holds("bracket", 0.99, 1.01, 1.0) is True
    assert runner.check_holds("bracket", 1.02, 1.05, 1.0) is False
    assert runner.check_holds("bracket", 1.02, 1.05, 1.0, slack=0.05) is True
    assert runner.check_holds("at_least", 1.2, 1.3, 1.0) is True  # lower above: not judged
    assert runner.check_holds("at_least", 0.8, 0.9, 1.0) is False
    assert runner.check_holds("at_most", 0.8, 0.9, 1.0) is True  # upper below: not judged
    assert runner.check_holds("at_most", 1.1, 1.2, 1.0) is False
    assert runner.check_holds("report", 1.1, 1.2, 1.0) is False  # outside; the caller does not fail
    assert runner.check_holds("at_most", None, 1.2, 1.0) == "n/a"


SLOPE_ENTRY = GOOD_ENTRY.replace('reference_formula = "prandtl_tresca"', 'reference_formula = "level_ground_tresca"') \
    .replace('reference_note = "exact"', 'reference_note = "common practice"\nrequires = "slope"') \
    .replace("footing = { width = 1.0 }",
             "footing = { width = 1.0 }\nground = { slope_angle = 30.0, crest_setback = 2.0, slope_height = 1.0 }")


@pytest.mark.parametrize("entry, change, message", [
    (GOOD_ENTRY, ('reference_note = "exact"', 'reference_note = "exact"\nslack = 0.05'), "slack is only for"),
    (GOOD_ENTRY, ('reference_note = "exact"', 'reference_note = "exact"\ncheck = "report"'), "'report' goes with"),
    (GOOD_ENTRY, ('reference_note = "exact"', 'reference_note = "exact"\ncheck = "sideways"'), "check"),
    (GOOD_ENTRY, ('reference_note = "exact"', 'reference_note = "exact"\ncheck = "at_most"'), "one-sided"),
    (GOOD_ENTRY, ('reference_note = "exact"', 'reference_note = "exact"\nrequires = "slope"'), "does not use"),
    (GOOD_ENTRY, ('reference_note = "exact"', 'reference_note = "exact"\nchart_factor = 1.2'), "chart_factor"),
    (GOOD_ENTRY, ('reference_formula = "prandtl_tresca"\nquantity = "pressure_over_c"\nreference_note = "exact"',
                  'reference_formula = "green_inclined"\nquantity = "vertical_over_c"\nreference_note = "from memory"'),
     "load_inclination: 0 is not allowed"),
    (GOOD_ENTRY, ('reference_formula = "prandtl_tresca"\nquantity = "pressure_over_c"\nreference_note = "exact"',
                  'reference_formula = "davis_booker"\nquantity = "pressure_over_c"\nreference_note = "from memory"'),
     "chart_factor: missing"),
    (GOOD_ENTRY, ('reference_formula = "prandtl_tresca"\nquantity = "pressure_over_c"\nreference_note = "exact"',
                  'reference_formula = "prandtl_tresca_weakest"\nquantity = "pressure_kPa"\n'
                  'reference_note = "rigorous limit"\ncheck = "at_least"'), "two or more Tresca layers"),
    (GOOD_ENTRY, ("footing = { width = 1.0 }", "footing = { width = 1.0, load_inclination = 10.0 }"),
     "load_inclination: not allowed with 'prandtl_tresca'"),
    (SLOPE_ENTRY, ("crest_setback = 2.0", "crest_setback = 1.0"), "setback of at least 2 B"),
])
def test_bad_issue_3_entries_are_refused_in_one_line(tmp_path: Path, entry: str, change: tuple[str, str],
                                                     message: str) -> None:
    assert change[0] in entry
    with pytest.raises(runner.VerificationError) as error:
        runner.load_cases(_write_cases(tmp_path / "cases.toml", entry.replace(*change)))
    assert message in str(error.value)
    assert "\n" not in str(error.value)


def test_a_refused_feature_skips_only_the_case_that_requires_it(tmp_path: Path,
                                                                monkeypatch: pytest.MonkeyPatch) -> None:
    slope_entry = runner.load_cases(_write_cases(tmp_path / "slope.toml", SLOPE_ENTRY))[0]
    plain_entry = runner.load_cases(_write_cases(tmp_path / "plain.toml", GOOD_ENTRY))[0]

    def refuse(case, **kwargs):
        raise runner.CaseError("ground.slope_angle: not solved by this version of the engine; remove the key")

    monkeypatch.setattr(runner, "analyse", refuse)
    row = runner._run_one(slope_entry, 600)
    assert row["skipped"] == "skipped: slopes not yet supported"
    assert row["passed"] is None and runner.row_passed(row) is None
    assert "skipped" in runner.format_table([row]) and "skipped" in runner._summary([row])
    row = runner._run_one(plain_entry, 600)  # no requires: the same refusal is a failure
    assert row["skipped"] is None and row["passed"] is False and row["lower_status"].startswith("error")

    def other(case, **kwargs):
        raise runner.CaseError("ground.water_table: not solved by this version of the engine; remove the key")

    monkeypatch.setattr(runner, "analyse", other)
    assert runner._run_one(slope_entry, 600)["passed"] is False  # a different feature is not excused

    def bad_value(case, **kwargs):
        raise runner.CaseError("ground.slope_angle: 30 is not allowed; the slope is unstable")

    monkeypatch.setattr(runner, "analyse", bad_value)
    assert runner._run_one(slope_entry, 600)["passed"] is False  # not a refusal: a failure


def test_exit_status_ignores_skipped_and_report_rows(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    base = {"id": "a", "description": "d", "source": "S a", "source_short": "S", "quantity": "nq",
            "reference": 1.0, "reference_note": "exact", "elements": 600, "lower": 0.9, "upper": 1.1,
            "inside": True, "gap_percent": 22.2, "time_s": 0.1, "lower_kPa": 9.0, "upper_kPa": 11.0,
            "lower_status": "optimal", "upper_status": "optimal", "lower_elements": 600,
            "upper_elements": 600, "notes": [], "check": "bracket", "slack": 0.0, "skipped": None,
            "passed": True}
    rows = [base,
            {**base, "id": "b", "check": "report", "reference_note": "hand method", "inside": False,
             "passed": None},
            {**base, "id": "c", "skipped": "skipped: slopes not yet supported", "passed": None,
             "lower": None, "upper": None, "inside": "n/a", "gap_percent": None}]
    monkeypatch.setattr(runner, "run_cases", lambda quick, only, progress=None: rows)
    assert runner.main(["--out", str(tmp_path)]) == 0
    report = (tmp_path / "report.md").read_text()
    assert "outside" in report and "skipped: slopes not yet supported" in report
    rows.append({**base, "id": "d", "lower": 1.05, "inside": False, "passed": False})
    assert runner.main(["--out", str(tmp_path)]) == 1
