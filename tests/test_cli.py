"""The command line as a user meets it: exit codes, one-line errors, outputs."""
import json
import subprocess
import sys

import pytest

SMALL_CASE = """
title = "Test strip on uniform clay"
[footing]
width = 2.0
base = "rough"
[[layers]]
name = "clay"
model = "tresca"
undrained_strength = 30.0
unit_weight = 0.0
[analysis]
elements = 600
mesh = "fixed"
"""


def bearbound(*args, cwd):
    return subprocess.run([sys.executable, "-m", "solver.cli", *args], cwd=cwd,
                          capture_output=True, text=True, timeout=300)


def test_bad_case_gives_one_line_exit_2_and_writes_nothing(tmp_path):
    case = tmp_path / "bad.toml"
    case.write_text(SMALL_CASE.replace("width = 2.0", "width = -2.0"))
    done = bearbound("run", str(case), cwd=tmp_path)
    assert done.returncode == 2
    assert done.stdout == ""
    message = done.stderr.strip()
    assert "\n" not in message and "footing.width" in message and "-2.0" in message
    assert "Traceback" not in done.stderr
    assert not (tmp_path / "out").exists()


def test_missing_file_is_exit_2(tmp_path):
    done = bearbound("run", str(tmp_path / "nope.toml"), cwd=tmp_path)
    assert done.returncode == 2 and "Traceback" not in done.stderr


def test_run_writes_result_contract(tmp_path):
    case = tmp_path / "clay.toml"
    case.write_text(SMALL_CASE)
    done = bearbound("run", str(case), cwd=tmp_path)
    assert done.returncode == 0, done.stderr
    result = json.loads((tmp_path / "out" / "clay" / "result.json").read_text())
    for side in ("lower", "upper"):
        bound = result[side]
        assert bound["status"] in ("optimal", "almost optimal")
        assert bound["certificate"]["passed"] is True
        assert bound["load_kN_per_m"] == pytest.approx(bound["pressure_kPa"] * 2.0)
        assert bound["elements"] > 0
    # Prandtl (1920): q_u = (2 + pi) su for a weightless Tresca half-space
    exact = (2 + 3.141592653589793) * 30.0
    assert result["lower"]["pressure_kPa"] <= exact * (1 + 1e-6) <= result["upper"]["pressure_kPa"] * (1 + 2e-6)
    gap = 100 * (result["upper"]["pressure_kPa"] / result["lower"]["pressure_kPa"] - 1)
    assert result["gap_percent"] == pytest.approx(gap)
    assert set(result["timing"]) >= {"mesh_s", "assemble_s", "solve_s", "certify_s", "total_s"}
    assert "qualified" in result["caution"]
    assert "certified" in done.stdout and "Caution" in done.stdout


def test_out_option_and_rerun_same_numbers(tmp_path):
    case = tmp_path / "clay.toml"
    case.write_text(SMALL_CASE)
    first = bearbound("run", str(case), "--out", "a", "--bounds", "upper", cwd=tmp_path)
    second = bearbound("run", str(case), "--out", "b", "--bounds", "upper", cwd=tmp_path)
    assert first.returncode == second.returncode == 0
    a = json.loads((tmp_path / "a" / "result.json").read_text())
    b = json.loads((tmp_path / "b" / "result.json").read_text())
    assert a["lower"] is None
    assert a["upper"]["pressure_kPa"] == b["upper"]["pressure_kPa"]  # deterministic


def test_hand_command_is_instant_and_lists_methods(tmp_path):
    case = tmp_path / "clay.toml"
    case.write_text(SMALL_CASE)
    done = bearbound("hand", str(case), cwd=tmp_path)
    assert done.returncode == 0
    assert "Terzaghi" in done.stdout and "Annex D" in done.stdout


def test_default_run_refines_prints_each_step_and_says_why_the_target_was_missed(tmp_path):
    case = tmp_path / "clay.toml"
    # no mesh key: adaptive by default; a target no mesh reaches, so the step limit stops it
    case.write_text(SMALL_CASE.replace('mesh = "fixed"\n', "target_gap = 0.0001\nmax_steps = 2\ntime_limit_s = 600\n"))
    done = bearbound("run", str(case), "--no-pictures", "--no-report", cwd=tmp_path)
    assert done.returncode == 0, done.stderr
    steps = [line for line in done.stderr.splitlines() if line.startswith("bearbound: step ")]
    assert [line.split(":")[1] for line in steps] == [" step 1", " step 2"]
    assert all("triangles lower" in line and "kPa" in line and "gap" in line and line.endswith(" s")
               for line in steps)
    result = json.loads((tmp_path / "out" / "clay" / "result.json").read_text())
    refinement = result["refinement"]
    assert (refinement["mesh"], refinement["reached"], refinement["steps"]) == ("adaptive", False, 2)
    assert "max_steps = 2" in refinement["why"]
    assert "target gap 0.01 % NOT reached" in done.stdout and "max_steps = 2" in done.stdout


def test_fixed_mesh_flag_solves_one_mesh_and_says_so(tmp_path):
    case = tmp_path / "clay.toml"
    case.write_text(SMALL_CASE.replace('mesh = "fixed"\n', "target_gap = 0.0001\n"))
    done = bearbound("run", str(case), "--fixed-mesh", "--no-pictures", "--no-report", cwd=tmp_path)
    assert done.returncode == 0, done.stderr
    assert "step 1" not in done.stderr
    result = json.loads((tmp_path / "out" / "clay" / "result.json").read_text())
    assert result["refinement"] == {"mesh": "fixed", "elements": 600} and "adapt_history" not in result
    assert "one fixed mesh per bound" in done.stdout
