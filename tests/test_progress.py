"""Progress while a run works: lines for a log, a status line redrawn in place on a terminal
only, nothing with --no-progress (solver.progress, solver.cli)."""
import io
import os
import pty
import select
import subprocess
import sys

from test_failures import CLAY

from solver.progress import Progress

TINY = CLAY.replace("width = 2.0", "width = 2.0\ndesign_load = 150.0")  # a strength search to show


class Terminal(io.StringIO):
    """A stream that says it is a terminal."""

    def isatty(self) -> bool:
        return True


def test_off_a_terminal_only_lines_are_written():
    log = io.StringIO()
    progress = Progress(log)  # a StringIO is no terminal
    progress.stage("solving the bounds")
    progress.doing("lower", "lower bound at F = 1.2")
    progress.bar("pictures", 3, 8)
    progress.tick()
    progress.say("bracket: lower 1.00 kPa, upper 2.00 kPa")
    progress.clear()
    assert log.getvalue() == "bearbound: solving the bounds\nbearbound: bracket: lower 1.00 kPa, upper 2.00 kPa\n"


def test_on_a_terminal_the_status_line_is_redrawn_and_wiped_before_each_line(monkeypatch):
    monkeypatch.setenv("COLUMNS", "200")
    screen = Terminal()
    progress = Progress(screen)
    assert progress.terminal
    progress.stage("factor of safety")
    progress.doing("lower", "lower bound at F = 1.2000")
    progress.doing("upper", "upper bound at F = 1.3000")
    drawn = screen.getvalue().split("\r")[-1]
    assert drawn == "bearbound: factor of safety (0 s): lower bound at F = 1.2000, upper bound at F = 1.3000"
    progress.say("strength reduction, lower bound at F = 1.2000: 150.0 kN/m")
    # the status line is wiped (blanks over its width), the line printed, the status drawn again below it
    wipe = "\r" + " " * len(drawn) + "\r"
    assert wipe + "bearbound: strength reduction, lower bound at F = 1.2000: 150.0 kN/m\n" in screen.getvalue()
    assert screen.getvalue().endswith("\r" + drawn)
    progress.bar("model.png", 2, 8)
    assert screen.getvalue().split("\r")[-1].startswith("bearbound: factor of safety (0 s): model.png [#####.....")
    progress.clear()
    assert screen.getvalue().endswith("\r")  # nothing left on the line for the summary
    assert "\n" not in screen.getvalue().split("\r")[-2]


def test_the_status_line_never_wraps(monkeypatch):
    monkeypatch.setenv("COLUMNS", "40")  # a line that wraps could not be redrawn in place
    screen = Terminal()
    progress = Progress(screen)
    progress.stage("factor of safety")
    progress.doing("lower", "lower bound at F = 1.2000")
    assert screen.getvalue().split("\r")[-1] == "bearbound: factor of safety (0 s): lowe"


def test_disabled_progress_prints_nothing_even_on_a_terminal():
    screen = Terminal()
    progress = Progress(screen, enabled=False)
    progress.stage("solving the bounds")
    progress.doing("lower", "x")
    progress.say("bracket")
    progress.bar("pictures", 1, 2)
    progress.clear()
    assert screen.getvalue() == ""


def test_a_run_on_a_terminal_shows_what_runs_and_its_standard_output_stays_clean(tmp_path):
    (tmp_path / "clay.toml").write_text(TINY)
    leader, follower = pty.openpty()
    run = subprocess.Popen([sys.executable, "-m", "solver.cli", "run", "clay.toml"], cwd=tmp_path,
                           stdout=subprocess.PIPE, stderr=follower, text=True)
    os.close(follower)
    screen = b""
    while True:  # read the terminal until the run closes it
        ready, _, _ = select.select([leader], [], [], 120)
        if not ready:
            break
        try:
            chunk = os.read(leader, 65536)
        except OSError:  # EIO: the other end is closed
            break
        if not chunk:
            break
        screen += chunk
    out, _ = run.communicate(timeout=120)
    os.close(leader)
    assert run.returncode == 0, screen.decode(errors="replace")
    text = screen.decode()
    assert "\rbearbound: solving the bounds on one fixed mesh each (0 s)" in text
    assert "bearbound: bracket: lower " in text and "bearbound: factors of safety (extra solves" in text
    assert "[####################] 8/8" in text  # the pictures' bar, full
    assert "\r" not in out and "files written:" in out  # the summary on standard output is plain text
