"""A program that never lies under bad input or solver trouble.

* Every bad case file (tests/bad_cases/, plus a 5 MB file made here) gives, from the
  command line, one line naming the problem, exit status 2, no traceback, and
  nothing written.
* Solver failure modes: an unstable slope (infeasible), the iteration limit and
  numerical trouble each give a withheld bound with its cause and no number;
  the command line then exits 1 and says why.
* Ctrl-C leaves no half-written output, and a run is deterministic.

The soil data are invented for the tests.
"""
from __future__ import annotations

import csv
import json
import os
import re
import signal
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pytest

import solver.analysis
import solver.cli
import solver.report
from solver.analysis import SLOPE_UNSTABLE, analyse
from solver.case import CaseError, load_case, parse_case
from solver.conic import Solution

BAD_CASES = Path(__file__).parent / "bad_cases"


def bearbound(*args: str, cwd: Path, timeout: float = 120) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "solver.cli", *args], cwd=cwd,
                          capture_output=True, text=True, timeout=timeout)


def case_file(folder: Path, name: str, text: str) -> Path:
    path = folder / name
    path.write_text(text, encoding="utf-8")
    return path


# -- bad input: the whole corpus through the command line -----------------------

def test_corpus_is_large_enough() -> None:
    assert len(list(BAD_CASES.glob("*.toml"))) >= 40


def test_command_line_loads_no_solver_before_the_case_is_checked(tmp_path: Path) -> None:
    # Bad input is reported in a fraction of a second because nothing heavy is imported
    # until the case has passed its checks.
    probe = ("import sys, solver.cli; heavy = ('gmsh', 'cvxpy', 'clarabel', 'scipy', 'numpy', "
             "'matplotlib', 'meshio'); print(sorted(m for m in sys.modules if m.split('.')[0] in heavy))")
    done = subprocess.run([sys.executable, "-c", probe], cwd=tmp_path, capture_output=True, text=True,
                          timeout=60)
    assert done.returncode == 0, done.stderr
    assert done.stdout.strip() == "[]"


@pytest.fixture(scope="module")
def five_megabytes(tmp_path_factory) -> Path:
    """Valid TOML (comments), 5 MB: made here rather than kept in the repository."""
    path = tmp_path_factory.mktemp("big") / "five_megabytes.toml"
    path.write_text("# padding padding padding padding padding padding\n" * 100_000)
    assert path.stat().st_size >= 5_000_000
    return path


@pytest.mark.parametrize("name", sorted(p.name for p in BAD_CASES.glob("*.toml")) + ["five_megabytes.toml"])
def test_bad_case_from_the_command_line(name: str, tmp_path: Path, five_megabytes: Path) -> None:
    path = five_megabytes if name == "five_megabytes.toml" else BAD_CASES / name
    before = sorted(path.parent.iterdir())
    with pytest.raises(CaseError) as expected:
        load_case(path)  # the message test_case.py checks names the key
    done = bearbound("run", str(path), cwd=tmp_path)
    assert done.returncode == 2, done.stderr
    assert done.stdout == ""
    assert "Traceback" not in done.stderr
    assert done.stderr == f"bearbound: {expected.value}\n"  # one line, the one naming the problem
    assert done.stderr[:-1].isprintable() and len(done.stderr) < 400  # no escape code, no key printed whole
    assert list(tmp_path.iterdir()) == []  # no out/ folder, nothing else
    assert sorted(path.parent.iterdir()) == before  # nothing written beside the case either


# -- solver failure modes ---------------------------------------------------------

UNSTABLE_SLOPE = """\
title = "Footing above a steep cutting in soft clay"
[footing]
width = 2.0
[ground]
slope_angle = 60.0
slope_height = 12.0
crest_setback = 1.0
[[layers]]
name = "soft clay"
model = "tresca"
undrained_strength = 10.0
unit_weight = 18.0
[analysis]
elements = 400
mesh = "fixed"
"""
# Tresca slope, 60 degrees, H = 12 m: su / (gamma H) = 10 / 216 = 0.046, far below the
# stability number of about 0.19 such a slope needs (Taylor 1937 chart, from memory): the
# slope cannot stand under its own weight, so there is no bearing capacity to report.

CLAY = """\
title = "Strip on clay"
[footing]
width = 2.0
[[layers]]
name = "clay"
model = "tresca"
undrained_strength = 30.0
unit_weight = 18.0
[analysis]
elements = 400
mesh = "fixed"
"""


def clay_case():
    return parse_case({"footing": {"width": 2.0}, "layers": [
        {"name": "clay", "model": "tresca", "undrained_strength": 30.0, "unit_weight": 18.0}]})


def assert_withheld(bound, cause: str) -> None:
    assert bound.pressure_kPa is None and bound.load_kN_per_m is None
    assert bound.status.startswith("withheld"), bound.status
    assert cause in bound.status, bound.status
    assert bound.certificate["passed"] is False
    for key in ("vertical_kN_per_m", "horizontal_kN_per_m", "moment_kNm_per_m"):
        assert key not in bound.extra  # no load of any kind is derived from a withheld bound


def test_unstable_slope_gives_no_capacity(tmp_path: Path) -> None:
    result = analyse(load_case(case_file(tmp_path, "cutting.toml", UNSTABLE_SLOPE)), adaptive=False)
    assert_withheld(result.lower, "infeasible")  # no stress field carries the ground
    assert_withheld(result.upper, "unbounded")  # a mechanism releases energy
    assert SLOPE_UNSTABLE in result.notes
    assert result.gap_percent is None


def test_unstable_slope_from_the_command_line_exits_1_and_says_why(tmp_path: Path) -> None:
    case_file(tmp_path, "cutting.toml", UNSTABLE_SLOPE)
    done = bearbound("run", "cutting.toml", "--no-pictures", cwd=tmp_path)
    assert done.returncode == 1, done.stderr
    assert "Traceback" not in done.stderr
    assert "the slope is not stable under its own weight" in done.stdout
    bound_lines = [line for line in done.stdout.splitlines() if re.match(r"\s+(lower|upper) bound ", line)]
    assert len(bound_lines) == 2 and all(" none " in line and "withheld" in line for line in bound_lines)
    result = json.loads((tmp_path / "out" / "cutting" / "result.json").read_text())
    assert result["lower"]["pressure_kPa"] is None and result["upper"]["pressure_kPa"] is None
    assert result["gap_percent"] is None


def test_iteration_limit_is_withheld_with_its_cause() -> None:
    result = analyse(clay_case(), elements=400, solver_settings={"max_iter": 3}, adaptive=False)
    for bound in (result.lower, result.upper):
        assert bound.iterations <= 3
        assert_withheld(bound, "iteration limit")
    assert result.gap_percent is None


def _fake_solve(status: str):
    """A solver that ends with ``status`` and a meaningless point (finite, far from any solution)."""
    def fake(program, backend="clarabel", **kwargs):
        x = np.random.default_rng(7).normal(size=program.n_variables) * 1e3
        return Solution(x=x, status=status, objective=float(program.c @ x + program.objective_constant),
                        iterations=11, solve_s=0.0, backend=backend)
    return fake


def test_numerical_trouble_is_withheld_whatever_the_point(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr(solver.analysis, "solve", _fake_solve("numerical trouble"))
    result = analyse(clay_case(), elements=400, adaptive=False)
    for bound in (result.lower, result.upper):
        assert_withheld(bound, "'numerical trouble'")
    assert SLOPE_UNSTABLE not in result.notes  # trouble is not reported as an unstable slope


def test_a_meaningless_point_called_optimal_is_withheld(monkeypatch: pytest.MonkeyPatch) -> None:
    # The certificate decides, not the solver's status word.
    monkeypatch.setattr(solver.analysis, "solve", _fake_solve("optimal"))
    result = analyse(clay_case(), elements=400, adaptive=False)
    for bound in (result.lower, result.upper):
        assert_withheld(bound, "certificate failed")


def test_real_numerical_trouble_is_withheld_or_certified_right() -> None:
    # Without static regularisation Clarabel ends the lower bound of a Tresca case with
    # numerical trouble (DEVELOPERS.md, measured with the Clarabel of this venv). Should a later
    # Clarabel solve it, the bound must then be certified and agree with the default solve.
    troubled = analyse(clay_case(), bounds="lower", elements=400,
                       solver_settings={"static_regularization_enable": False}, adaptive=False).lower
    if troubled.pressure_kPa is None:
        assert troubled.status.startswith("withheld: ") and "'" in troubled.status, troubled.status
        assert troubled.certificate["passed"] is False
    else:
        reference = analyse(clay_case(), bounds="lower", elements=400, adaptive=False).lower
        assert troubled.certificate["passed"]
        assert troubled.pressure_kPa == pytest.approx(reference.pressure_kPa, rel=1e-5)


def test_withheld_bound_from_the_command_line_exits_1_and_says_why(
        monkeypatch: pytest.MonkeyPatch, tmp_path: Path, capsys: pytest.CaptureFixture) -> None:
    monkeypatch.setattr(solver.analysis, "solve", _fake_solve("numerical trouble"))
    monkeypatch.chdir(tmp_path)
    case_file(tmp_path, "clay.toml", CLAY)
    assert solver.cli.main(["run", "clay.toml", "--no-pictures"]) == 1
    out = capsys.readouterr().out
    bound_lines = [line for line in out.splitlines() if re.match(r"\s+(lower|upper) bound ", line)]
    assert len(bound_lines) == 2
    for line in bound_lines:
        assert " none " in line and "withheld: solver ended with status 'numerical trouble'" in line
    assert not re.search(r"^\s+bracket ", out, re.MULTILINE)  # no bracket printed
    result = json.loads((tmp_path / "out" / "clay" / "result.json").read_text())
    assert result["lower"]["pressure_kPa"] is None and result["upper"]["pressure_kPa"] is None


# -- Ctrl-C -----------------------------------------------------------------------

SLOW = """\
title = "Interrupted run"
[footing]
width = 2.0
[[layers]]
name = "sand"
model = "mohr-coulomb"
cohesion = 5.0
friction_angle = 30.0
unit_weight = 18.0
[analysis]
elements = 6000
mesh = "fixed"
"""  # about 20 s to solve on the 2-core test machine


def files_under(folder: Path) -> list[Path]:
    return sorted(p for p in folder.rglob("*") if p.is_file())


def _take_ctrl_c() -> None:
    """In the child before exec: take SIGINT as a terminal would deliver it, even when
    this test runs under a shell that ignores it (a background job: `make test &`)."""
    signal.signal(signal.SIGINT, signal.SIG_DFL)


@pytest.fixture
def ctrl_c_delivered():
    """Python's own Ctrl-C handler in this process for the test (see _take_ctrl_c)."""
    previous = signal.signal(signal.SIGINT, signal.default_int_handler)
    yield
    signal.signal(signal.SIGINT, previous)


def test_ctrl_c_while_solving_stops_at_once_and_writes_nothing(tmp_path: Path) -> None:
    case_file(tmp_path, "slow.toml", SLOW)
    run = subprocess.Popen([sys.executable, "-m", "solver.cli", "run", "slow.toml"], cwd=tmp_path,
                           stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
                           preexec_fn=_take_ctrl_c)
    time.sleep(2.5)  # past start-up, inside meshing or the first solve
    assert run.poll() is None, "the run ended before it could be interrupted"
    run.send_signal(signal.SIGINT)
    sent = time.perf_counter()
    out, err = run.communicate(timeout=120)
    waited = time.perf_counter() - sent
    assert run.returncode == 130, err
    assert err.count("\n") == 1 and err.startswith("bearbound: interrupted") and "Traceback" not in err
    assert out == ""
    assert files_under(tmp_path) == [tmp_path / "slow.toml"]  # no output, no temporary file
    # The solve takes far longer than this; the interrupt must not wait for it to end.
    assert waited < 5.0, f"Ctrl-C took {waited:.1f} s to act"


def test_ctrl_c_while_writing_finishes_every_output_first(
        monkeypatch: pytest.MonkeyPatch, tmp_path: Path, capsys: pytest.CaptureFixture,
        ctrl_c_delivered) -> None:
    # A Ctrl-C between two output files would leave this run's result.json beside an
    # earlier run's report: the outputs are finished first, then the run reports the interrupt.
    write_run_files = solver.report.write_run_files

    def interrupted_write(*args, **kwargs):
        os.kill(os.getpid(), signal.SIGINT)  # Ctrl-C after result.json, before the rest
        time.sleep(0.2)  # a signal not held would be raised here
        return write_run_files(*args, **kwargs)

    monkeypatch.setattr(solver.report, "write_run_files", interrupted_write)
    monkeypatch.chdir(tmp_path)
    case_file(tmp_path, "clay.toml", CLAY)
    assert solver.cli.main(["run", "clay.toml", "--no-pictures"]) == 130
    captured = capsys.readouterr()
    assert captured.err.count("\n") == 1 and "finished first" in captured.err
    written = {p.name for p in files_under(tmp_path / "out" / "clay")}
    assert written == {"result.json", "report.html", "summary.csv", "fields.vtu", "case.toml"}
    assert signal.getsignal(signal.SIGINT) is signal.default_int_handler  # restored


# -- determinism ------------------------------------------------------------------

TIMES = re.compile(r"\d+\.\d+ s\b")  # wall times in the printed summary


def _without_timing(value):
    if isinstance(value, dict):
        return {k: _without_timing(v) for k, v in value.items() if k != "timing"}
    if isinstance(value, list):
        return [_without_timing(v) for v in value]
    return value


def test_same_case_gives_the_same_numbers_and_files(tmp_path: Path) -> None:
    runs = []
    for name in ("first", "second"):  # separate processes, separate folders
        folder = tmp_path / name
        folder.mkdir()
        case_file(folder, "clay.toml", CLAY)
        done = bearbound("run", "clay.toml", cwd=folder)
        assert done.returncode == 0, done.stderr
        runs.append((folder / "out" / "clay", done.stdout))
    (a, a_out), (b, b_out) = runs
    # the printed summary, to the last digit, apart from wall times
    assert TIMES.sub("", a_out) == TIMES.sub("", b_out)
    assert len(TIMES.findall(a_out)) >= 3  # the masking hid the times and only them
    # result.json: every number, bounds, iterations, residuals, apart from timing
    result_a, result_b = (json.loads((d / "result.json").read_text()) for d in (a, b))
    assert result_a["lower"]["iterations"] > 0 and result_a["upper"]["pressure_kPa"] is not None
    assert _without_timing(result_a) == _without_timing(result_b)
    rows_a, rows_b = (list(csv.DictReader((d / "summary.csv").open())) for d in (a, b))
    for row in rows_a + rows_b:
        row.pop("wall_time_s")
    assert rows_a == rows_b
    # the pictures and the fields file, byte for byte (README: "the same pictures")
    for name in ("fields.vtu", "model.png", "model.svg", "mechanism.png", "mechanism.svg",
                 "stress.png", "stress.svg"):
        assert (a / name).read_bytes() == (b / name).read_bytes(), name


# -- a defect is reported as one, in one line -------------------------------------

def test_internal_error_is_one_line_and_exit_3(monkeypatch: pytest.MonkeyPatch, tmp_path: Path,
                                               capsys: pytest.CaptureFixture) -> None:
    def broken(*args, **kwargs):
        raise RuntimeError("mesh: something the checks did not foresee\nsecond line")

    monkeypatch.setattr(solver.analysis, "analyse", broken)
    monkeypatch.delenv("BEARBOUND_TRACEBACK", raising=False)
    monkeypatch.chdir(tmp_path)
    case_file(tmp_path, "clay.toml", CLAY)
    assert solver.cli.main(["run", "clay.toml"]) == 3
    captured = capsys.readouterr()
    assert captured.out == "" and captured.err.count("\n") == 1
    assert captured.err.startswith("bearbound: internal error")
    assert "RuntimeError: mesh: something the checks did not foresee second line" in captured.err
    assert files_under(tmp_path) == [tmp_path / "clay.toml"]
    monkeypatch.setenv("BEARBOUND_TRACEBACK", "1")  # developers get the traceback
    with pytest.raises(RuntimeError, match="did not foresee"):
        solver.cli.main(["run", "clay.toml"])
