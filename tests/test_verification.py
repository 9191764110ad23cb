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
    outside = [f"{r['id']}: lower {r['lower']}, reference {r['reference']:.6g}, upper {r['upper']} "
               f"({r['lower_status']} / {r['upper_status']})" for r in quick_rows if r["inside"] is not True]
    assert not outside, "\n".join(outside)


def test_every_quick_gap_is_small(quick_rows: list[dict]) -> None:
    wide = [f"{r['id']}: gap {r['gap_percent']}" for r in quick_rows
            if r["gap_percent"] is None or not r["gap_percent"] < MAX_QUICK_GAP_PERCENT]
    assert not wide, "\n".join(wide)


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
