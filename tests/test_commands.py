"""The commands around a run: --version, init (a starter case), preview (the model
without solving) and `make help`."""
import re
import subprocess
import sys
import tomllib
from pathlib import Path

import pytest

from solver import __version__
from solver.case import (ANALYSIS_KEYS, FACTORS_KEYS, FOOTING_KEYS, GEOMETRY_KEYS, GROUND_KEYS, LAYER_KEYS,
                         MODEL_KEYS, REPORT_KEYS, TOP_KEYS, load_case, parse_case)
from solver.preview import preview_figure

REPO = Path(__file__).resolve().parent.parent
PNG = b"\x89PNG\r\n\x1a\n"

WET_SLOPE = """
title = "Preview: a footing beside a wet cutting"
[footing]
width = 1.0
[ground]
slope_angle = 30.0
crest_setback = 1.0
slope_height = 2.0
water_table = 1.5
[[layers]]
name = "sandy fill"
thickness = 1.0
model = "mohr-coulomb"
cohesion = 5.0
friction_angle = 30.0
unit_weight = 18.0
[[layers]]
name = "stiff clay"
model = "tresca"
undrained_strength = 60.0
unit_weight = 19.0
[analysis]
elements = 400
mesh = "fixed"
"""


def bearbound(*args, cwd, timeout=300):
    return subprocess.run([sys.executable, "-m", "solver.cli", *args], cwd=cwd, capture_output=True, text=True,
                          timeout=timeout)


def one_line_error(done, *words):
    assert done.returncode == 2 and done.stdout == "", done.stdout + done.stderr
    assert done.stderr.count("\n") == 1 and "Traceback" not in done.stderr, done.stderr
    for word in words:
        assert word in done.stderr, (word, done.stderr)


def test_version_prints_the_version_and_exits_0(tmp_path):
    done = bearbound("--version", cwd=tmp_path)
    assert done.returncode == 0 and done.stdout == f"bearbound {__version__}\n" and done.stderr == ""


# -- init -----------------------------------------------------------------------------

def test_init_writes_a_starter_that_names_every_key_with_what_is_allowed_and_solves(tmp_path):
    done = bearbound("init", cwd=tmp_path)
    assert done.returncode == 0, done.stderr
    path = tmp_path / "site.toml"
    assert "written: site.toml" in done.stdout and [p.name for p in tmp_path.iterdir()] == ["site.toml"]
    text = path.read_text(encoding="utf-8")
    assert "invented" in text and "qualified geotechnical engineer" in text
    # every key a case file may hold, given or commented out, each after a comment that says what is allowed
    schemas = [TOP_KEYS, FOOTING_KEYS, GROUND_KEYS, ANALYSIS_KEYS, FACTORS_KEYS, REPORT_KEYS, GEOMETRY_KEYS,
               LAYER_KEYS, *MODEL_KEYS.values()]
    lines = text.splitlines()
    for key in {key for schema in schemas for key in schema}:
        at = [i for i, line in enumerate(lines) if re.fullmatch(rf"(# )?{key} = .+", line)]
        assert at, key
        for i in at:  # the comment above it: the key, then (possibly wrapped) its allowed values
            start = max(j for j in range(i) if lines[j].startswith(f"# {key}: "))
            comment = " ".join(lines[start:i])
            assert "allowed: " in comment, key
    # the case check reads it as written, and it solves (one coarse fixed mesh, for the test)
    case = load_case(path)
    assert case.ground.water_table == 2.5 and len(case.layers) == 2 and case.footing.design_load == 120.0
    assert parse_case(tomllib.loads(text)) == parse_case(tomllib.loads(text))
    run = bearbound("run", "site.toml", "--fixed-mesh", "--elements", "300", "--no-pictures", "--no-report",
                    "--no-progress", cwd=tmp_path)
    assert run.returncode == 0, run.stdout + run.stderr
    assert "certified" in run.stdout and "VERDICT" in run.stdout


def test_init_never_overwrites_and_leaves_nothing_half_written(tmp_path):
    (tmp_path / "mine.toml").write_text("# my own notes\n")
    one_line_error(bearbound("init", "mine.toml", cwd=tmp_path), "init: mine.toml", "already exists")
    assert (tmp_path / "mine.toml").read_text() == "# my own notes\n"
    (tmp_path / "folder.toml").mkdir()
    one_line_error(bearbound("init", "folder.toml", cwd=tmp_path), "already exists")
    one_line_error(bearbound("init", "missing/site.toml", cwd=tmp_path), "missing/site.toml", "cannot write")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["folder.toml", "mine.toml"]  # no staging file left
    done = bearbound("init", "other.toml", cwd=tmp_path)
    assert done.returncode == 0 and (tmp_path / "other.toml").is_file()


# -- preview ----------------------------------------------------------------------------

def test_preview_draws_the_model_into_the_run_folder_without_solving(tmp_path):
    (tmp_path / "cutting.toml").write_text(WET_SLOPE)
    done = bearbound("preview", "cutting.toml", cwd=tmp_path)
    assert done.returncode == 0, done.stderr
    picture = tmp_path / "out" / "cutting" / "preview.png"
    assert done.stdout.startswith("written: out/cutting/preview.png") and "nothing was solved" in done.stdout
    assert picture.read_bytes().startswith(PNG)
    assert sorted(p.name for p in picture.parent.iterdir()) == ["preview.png"]  # no result, no lock left
    # a run into that folder is accepted and replaces it whole (its model.png shows the same and the mesh)
    run = bearbound("run", "cutting.toml", "--no-pictures", "--no-report", "--no-progress", cwd=tmp_path)
    assert run.returncode == 0, run.stderr
    assert "preview.png" not in {p.name for p in picture.parent.iterdir()}
    # a preview into the run's folder is added beside the run
    again = bearbound("preview", "cutting.toml", cwd=tmp_path)
    assert again.returncode == 0 and picture.is_file() and (picture.parent / "result.json").is_file()


def test_preview_refuses_bad_input_and_foreign_folders_in_one_line(tmp_path):
    (tmp_path / "bad.toml").write_text(WET_SLOPE.replace("width = 1.0", "width = -1.0"))
    one_line_error(bearbound("preview", "bad.toml", cwd=tmp_path), "footing.width", "-1.0")
    assert not (tmp_path / "out").exists()
    (tmp_path / "cutting.toml").write_text(WET_SLOPE)
    notes = tmp_path / "notes"
    notes.mkdir()
    (notes / "minutes.txt").write_text("site meeting")
    one_line_error(bearbound("preview", "cutting.toml", "--out", "notes", cwd=tmp_path), "--out", "minutes.txt")
    assert [p.name for p in notes.iterdir()] == ["minutes.txt"]


@pytest.mark.parametrize("mesh", [False, True])
def test_preview_names_the_layers_water_slope_and_footing_and_the_mesh_only_when_asked(mesh):
    case = parse_case(tomllib.loads(WET_SLOPE), name="cutting")
    figure = preview_figure(case, mesh=mesh)
    legend = " ".join(t.get_text() for t in figure.axes[2].get_legend().get_texts())
    titles = " ".join(ax.get_title(loc="left") for ax in figure.axes)
    assert "Preview of the model, not solved" in titles
    for words in ("sandy fill", "stiff clay", "water table, 1.5 m", "a slope of 30", "footing, B = 1 m"):
        assert words in legend, words
    assert ("mesh of the lower bound" in legend) is mesh
    mesh_lines = [line for ax in figure.axes[:2] for line in ax.get_lines() if line.get_linewidth() in (0.12, 0.3)]
    assert bool(mesh_lines) is mesh


# -- make help --------------------------------------------------------------------------

def test_make_help_lists_every_target():
    makefile = (REPO / "Makefile").read_text()
    phony = re.search(r"^\.PHONY:(.*)$", makefile, re.M).group(1).split()
    done = subprocess.run(["make", "--no-print-directory", "-s", "help"], cwd=REPO, capture_output=True, text=True,
                          timeout=60)
    assert done.returncode == 0, done.stderr
    listed = re.findall(r"make ([a-z]+)", done.stdout)
    assert sorted(listed) == sorted(phony), (listed, phony)
    for line in done.stdout.splitlines():
        assert len(line.split(None, 2)) == 3 or "," in line  # a name and what it does
