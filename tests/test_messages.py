"""What reaches the terminal and the report: user text escaped and cut short, no library
warning, one line per problem. The soil data are invented for the tests."""
from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest

from solver.mesh import _GMSH_LOCK, _start_gmsh
from solver.sitefile import _build_drawing, parse_geo
from test_outputs import QUICK, bearbound

SWEEP_BASE = QUICK.replace("[footing]", "[base.footing]").replace("[[layers]]", "[[base.layers]]") \
    .replace("[analysis]", "[base.analysis]")
ESCAPE = "\x1b[2J\x1b[31m"  # clear the screen, then red
IN_TOML = "\\u001b[2J\\u001b[31m"  # the same, as a TOML string writes it
LONG = "k" * 3000


def clean_line(done: subprocess.CompletedProcess, status: int = 2) -> str:
    """One printable line of reasonable length, no escape code, no traceback."""
    assert done.returncode == status, done.stderr
    line = done.stderr
    assert line.endswith("\n") and line.count("\n") == 1, line
    assert line[:-1].isprintable() and len(line) < 500, line
    return line


@pytest.mark.parametrize("name", [f"a{ESCAPE}b.toml", "line\nbreak.toml", f"{LONG}.toml"[:250]])
def test_paths_are_escaped_and_cut_short(tmp_path: Path, name: str) -> None:
    line = clean_line(bearbound("run", name, cwd=tmp_path))  # no such file
    assert "no such case file" in line and ("\\x1b[2J" in line or "\\n" in line or "..." in line)
    (tmp_path / "taken").write_text("")
    line = clean_line(bearbound("hand", f"{name}/x.toml", cwd=tmp_path))
    (tmp_path / "case.toml").write_text(QUICK, encoding="utf-8")
    (tmp_path / name).write_text("a file where the folder should be")
    line = clean_line(bearbound("run", "case.toml", "--out", name, cwd=tmp_path))
    assert "it is a file" in line


@pytest.mark.parametrize("text, says", [
    (f'"{IN_TOML}" = 1\n[vary]\n"footing.width" = [1.0]\n', "\\x1b[2J\\x1b[31m: unknown key"),
    (f'"{LONG}" = 1\n[vary]\n"footing.width" = [1.0]\n', "kkk...: unknown key"),
    (f'[vary]\n"footing.wi{IN_TOML}dth" = [1.0]\n', "vary.footing.wi\\x1b[2J\\x1b[31mdth: unknown key"),
    (f'[vary]\n"footing.{LONG}" = [1.0]\n', "vary.footing.kkk"),
    (f'[vary]\n"footing.width" = {{start = 1, stop = 2, num = 2, "n{IN_TOML}" = 1}}\n', "vary.footing.width.n\\x1b"),
    (f'[vary]\n"footing.width" = [1.0]\n[chart]\n"{IN_TOML}" = 1\n', "chart.\\x1b[2J"),
    (f'[vary]\n"layers.{IN_TOML}.thickness" = [1.0]\n', "layer index '\\x1b[2J\\x1b[31m'"),
])
def test_sweep_keys_are_escaped_and_cut_short(tmp_path: Path, text: str, says: str) -> None:
    (tmp_path / "s.toml").write_text(text + SWEEP_BASE, encoding="utf-8")
    line = clean_line(bearbound("sweep", "s.toml", cwd=tmp_path))
    assert says in line, line


def test_msh_group_names_must_be_one_printable_line(tmp_path: Path) -> None:
    text = (Path(__file__).parent / "bad_geometry" / "site.geo").read_text(encoding="utf-8")
    drawing = parse_geo(text)
    with _GMSH_LOCK:
        gmsh = _start_gmsh()
        try:
            _build_drawing(gmsh, drawing)
            gmsh.model.addPhysicalGroup(2, [1], name=f"clay{ESCAPE}")
            for name, tags in drawing.curve_groups.items():
                gmsh.model.addPhysicalGroup(1, list(tags), name=name)
            gmsh.model.mesh.generate(2)
            gmsh.write(str(tmp_path / "site.msh"))
        finally:
            gmsh.finalize()
    (tmp_path / "c.toml").write_text(QUICK.replace("[analysis]", '[geometry]\nfile = "site.msh"\n[analysis]'),
                                     encoding="utf-8")
    line = clean_line(bearbound("run", "c.toml", cwd=tmp_path))
    assert "site.msh: physical group 1 has the name 'clay\\x1b[2J\\x1b[31m'; must be a one-line name" in line


def test_a_strange_case_name_is_escaped_in_the_summary_and_report(tmp_path: Path) -> None:
    name = "site\u202eevil"  # a text-direction override: would print the rest backwards
    (tmp_path / f"{name}.toml").write_text(QUICK.replace('title = "Strip on clay"\n', ""), encoding="utf-8")
    done = bearbound("run", f"{name}.toml", "--no-pictures", "--out", "run", cwd=tmp_path)
    assert done.returncode == 0, done.stderr
    assert done.stdout.splitlines()[0] == "site\\u202eevil"  # the title: the name, escaped
    assert "\u202e" not in done.stdout + done.stderr
    report = (tmp_path / "run" / "report.html").read_text(encoding="utf-8")
    assert "\u202e" not in report and "site\\u202eevil" in report


# -- library warnings ----------------------------------------------------------------------------

def test_characters_the_font_lacks_give_no_warning(tmp_path: Path) -> None:
    """A title and a layer name in a script the pictures' font lacks: the pictures show
    boxes there (the report has the text); matplotlib's warning per glyph stays off the terminal."""
    text = QUICK.replace('"Strip on clay"', '"基礎 🏗 footing"').replace('"clay"', '"粘土 🧱"')
    (tmp_path / "cjk.toml").write_text(text, encoding="utf-8")
    done = bearbound("run", "cjk.toml", "--no-progress", cwd=tmp_path)
    assert done.returncode == 0 and done.stderr == "", done.stderr  # no progress asked: anything there is a warning
    assert (tmp_path / "out" / "cjk" / "model.png").is_file()
    assert "粘土 🧱" in (tmp_path / "out" / "cjk" / "report.html").read_text(encoding="utf-8")


NOISY = """\
import sys, warnings
import numpy as np
import solver.cli

def noisy(args):
    np.log(np.zeros(1))  # numpy: RuntimeWarning, divide by zero
    warnings.warn("a library's remark", UserWarning)
    print("done")
    return 0

solver.cli._hand = noisy
sys.exit(solver.cli.main(["hand", "any.toml"]))
"""


def test_library_warnings_stay_off_the_terminal_but_errors_do_not(tmp_path: Path) -> None:
    def run(*options: str, **env: str) -> subprocess.CompletedProcess:
        import os

        return subprocess.run([sys.executable, *options, "-c", NOISY], cwd=tmp_path, capture_output=True,
                              text=True, timeout=60, env={**os.environ, **env})

    quiet = run()
    assert quiet.returncode == 0 and quiet.stdout == "done\n" and quiet.stderr == ""
    loud = run(BEARBOUND_TRACEBACK="1")  # developers see them, one line each, after the command
    lines = loud.stderr.splitlines()
    assert len(lines) == 2 and all(line.startswith("bearbound: library warning: ") for line in lines)
    assert "RuntimeWarning: divide by zero" in lines[0] and "UserWarning: a library's remark" in lines[1]
    strict = run("-W", "error::RuntimeWarning")  # a warning made an error stays an error
    assert strict.returncode == 3 and "internal error" in strict.stderr and "divide by zero" in strict.stderr
