"""Where a run writes, and how: never outside its folder, checked before the solve,
whole or not at all, one run at a time, and no file that is not a file.

Every run here goes through the real command line (a subprocess) unless it needs to
interrupt itself at a chosen moment. The soil data are invented for the tests.
"""
from __future__ import annotations

import contextlib
import hashlib
import json
import os
import signal
import stat
import subprocess
import sys
import threading
import time
from pathlib import Path

import pytest

import solver.cli
import solver.report
from solver.outdir import folder_name, locked_folder

QUICK = """\
title = "Strip on clay"
[footing]
width = 2.0
[[layers]]
name = "clay"
model = "tresca"
undrained_strength = 30.0
unit_weight = 0.0
[analysis]
elements = 300
mesh = "fixed"
bounds = "upper"
"""
# Would take far longer than any test's timeout: a check that came after the solve fails
# these tests by timing out rather than passing.
ENDLESS = QUICK.replace("elements = 300", "elements = 400000").replace('bounds = "upper"', 'bounds = "both"')
SLOW = QUICK.replace("elements = 300", "elements = 20000")


def bearbound(*args: str, cwd: Path, timeout: float = 120, **kwargs) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "solver.cli", *args], cwd=cwd, capture_output=True, text=True,
                          timeout=timeout, **kwargs)


def files_under(folder: Path) -> list[Path]:
    return sorted(p for p in folder.rglob("*") if p.is_file() or p.is_fifo())


def one_line(done: subprocess.CompletedProcess, status: int, *words: str) -> str:
    assert done.returncode == status, done.stderr
    assert done.stderr.count("\n") == 1 and "Traceback" not in done.stderr, done.stderr
    for word in words:
        assert word in done.stderr, done.stderr
    return done.stderr


# -- no name leads outside the out folder -----------------------------------------------------

NAMES = {  # file name -> the folder under out/ it gives
    "...toml": "case",  # stem '..': the parent folder
    "..toml": "case",  # stem '.'
    "a\nb.toml": "a_b",
    "\x1b[31mred.toml": "__31mred",
    "x" * 200 + ".toml": "x" * 100,
}


@pytest.mark.parametrize("name", sorted(NAMES), ids=lambda n: repr(n[:12]))
def test_no_case_name_leads_outside_the_out_folder(tmp_path: Path, name: str) -> None:
    work = tmp_path / "work"
    work.mkdir()
    (work / name).write_text(QUICK, encoding="utf-8")
    done = bearbound("run", name, "--no-pictures", "--no-report", cwd=work)
    assert done.returncode == 0, done.stderr
    assert [p.name for p in tmp_path.iterdir()] == ["work"]  # nothing beside the working folder
    assert sorted(p.name for p in work.iterdir()) == sorted([name, "out"])
    assert [p.name for p in (work / "out").iterdir()] == [NAMES[name]]
    written = {p.name for p in files_under(work / "out" / NAMES[name])}
    assert written == {"result.json", "summary.csv", "fields.vtu", "case.toml"}
    assert "\x1b" not in done.stdout and "\x1b" not in done.stderr


def test_folder_names_are_plain() -> None:
    for stem in ["..", ".", "", "/", "a/../../b", "a\\b", "\x00", "\u202e", " .hidden", "x" * 300, "é" * 80]:
        name = folder_name(stem, "case")
        assert name not in (".", "..") and "/" not in name and "\\" not in name and not name.startswith(".")
        assert name.isprintable() and 0 < len(name.encode()) <= 100
    assert folder_name("Pump house (2) v1.5+", "case") == "Pump house (2) v1.5+"  # ordinary names kept


def test_sweep_named_dot_dot_writes_inside_out(tmp_path: Path) -> None:
    work = tmp_path / "work"
    work.mkdir()
    base = QUICK.replace("[footing]", "[base.footing]").replace("[[layers]]", "[[base.layers]]") \
        .replace("[analysis]", "[base.analysis]").replace('title = "Strip on clay"\n', "")
    (work / "...toml").write_text('[vary]\n"footing.width" = [2.0]\n' + base, encoding="utf-8")
    done = bearbound("sweep", "...toml", "--workers", "1", "--no-progress", cwd=work, timeout=300)
    assert done.returncode == 0, done.stderr
    assert [p.name for p in tmp_path.iterdir()] == ["work"]
    assert [p.name for p in (work / "out").iterdir()] == ["sweep"]
    assert (work / "out" / "sweep" / "sweep.csv").is_file()


# -- the out folder is checked before the solve -------------------------------------------------

def test_out_that_is_a_file_is_refused_before_solving(tmp_path: Path) -> None:
    (tmp_path / "endless.toml").write_text(ENDLESS, encoding="utf-8")
    (tmp_path / "taken").write_text("the user's file\n")
    done = bearbound("run", "endless.toml", "--out", "taken", cwd=tmp_path, timeout=60)
    one_line(done, 2, "--out: taken is not allowed; it is a file")
    assert (tmp_path / "taken").read_text() == "the user's file\n"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["endless.toml", "taken"]


def test_out_that_cannot_be_written_is_refused_before_solving(tmp_path: Path) -> None:
    (tmp_path / "endless.toml").write_text(ENDLESS, encoding="utf-8")
    done = bearbound("run", "endless.toml", "--out", "/proc/bearbound-test", cwd=tmp_path, timeout=60)
    one_line(done, 2, "--out: /proc/bearbound-test is not allowed; cannot write")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["endless.toml"]


@pytest.mark.skipif(os.geteuid() == 0, reason="permissions do not bind the superuser")
def test_out_in_a_read_only_folder_is_refused_before_solving(tmp_path: Path) -> None:
    (tmp_path / "endless.toml").write_text(ENDLESS, encoding="utf-8")
    locked = tmp_path / "locked"
    locked.mkdir()
    locked.chmod(stat.S_IRUSR | stat.S_IXUSR)
    try:
        done = bearbound("run", "endless.toml", "--out", "locked/run", cwd=tmp_path, timeout=60)
    finally:
        locked.chmod(stat.S_IRWXU)
    one_line(done, 2, "--out: locked/run is not allowed; cannot")


def test_out_with_other_files_is_refused_and_left_alone(tmp_path: Path) -> None:
    (tmp_path / "clay.toml").write_text(QUICK, encoding="utf-8")
    notes = tmp_path / "notes"
    notes.mkdir()
    (notes / "site visit.txt").write_text("keep me\n")
    done = bearbound("run", "clay.toml", "--out", "notes", cwd=tmp_path)
    one_line(done, 2, "it holds site visit.txt, which is not an earlier run's")
    assert [p.name for p in notes.iterdir()] == ["site visit.txt"]
    own = tmp_path / "project"  # a file named as a run's copy, but no run's folder (no result.json)
    own.mkdir()
    (own / "case.toml").write_text("# another case, the user's own\n")
    one_line(bearbound("run", "clay.toml", "--out", "project", cwd=tmp_path), 2,
             "it holds case.toml, which is not an earlier run's")
    assert (own / "case.toml").read_text() == "# another case, the user's own\n"
    for folder in (".", str(tmp_path)):  # the working folder: the swap would take the case file with it
        done = bearbound("run", "clay.toml", "--out", folder, cwd=tmp_path)
        one_line(done, 2, "it is the working folder or holds it")


# -- a run's files appear together -----------------------------------------------------------------

def test_a_new_run_replaces_the_whole_folder(tmp_path: Path) -> None:
    (tmp_path / "clay.toml").write_text(QUICK, encoding="utf-8")
    stale = tmp_path / "out" / ".clay.new-killed"  # left by a run killed outright (SIGKILL)
    stale.mkdir(parents=True)
    (stale / "result.json").write_text("{")
    assert bearbound("run", "clay.toml", cwd=tmp_path).returncode == 0
    run = tmp_path / "out" / "clay"
    assert (run / "mechanism.png").is_file()
    assert bearbound("run", "clay.toml", "--no-pictures", cwd=tmp_path).returncode == 0
    # the pictures of the earlier run are gone with it: no file of two runs side by side
    assert {p.name for p in run.iterdir()} == {"result.json", "summary.csv", "fields.vtu", "case.toml",
                                                "report.html"}
    assert [p.name for p in (tmp_path / "out").iterdir()] == ["clay"]  # no lock, staging or stale folder


def test_an_error_while_writing_leaves_the_earlier_run_whole(
        tmp_path: Path, monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture) -> None:
    monkeypatch.chdir(tmp_path)
    monkeypatch.delenv("BEARBOUND_TRACEBACK", raising=False)
    (tmp_path / "clay.toml").write_text(QUICK, encoding="utf-8")
    assert solver.cli.main(["run", "clay.toml", "--no-pictures"]) == 0
    run = tmp_path / "out" / "clay"
    before = {p.name: p.read_bytes() for p in run.iterdir()}
    write_run_files = solver.report.write_run_files

    def fails_half_way(result, case, case_path, out_dir, **kwargs):
        write_run_files(result, case, case_path, out_dir, pictures=False, report=False)
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(solver.report, "write_run_files", fails_half_way)
    (tmp_path / "clay.toml").write_text(QUICK.replace("30.0", "35.0"), encoding="utf-8")
    capsys.readouterr()
    assert solver.cli.main(["run", "clay.toml", "--no-pictures", "--no-progress"]) == 2
    err = capsys.readouterr().err
    assert err == ("bearbound: --out: cannot write the outputs to out/clay (No space left on device); anything "
                   "there before is unchanged\n")
    assert {p.name: p.read_bytes() for p in run.iterdir()} == before  # the earlier run, every byte
    assert [p.name for p in (tmp_path / "out").iterdir()] == ["clay"]


def test_sigterm_while_writing_finishes_every_output_first(
        tmp_path: Path, monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture) -> None:
    monkeypatch.chdir(tmp_path)
    (tmp_path / "clay.toml").write_text(QUICK, encoding="utf-8")
    assert solver.cli.main(["run", "clay.toml", "--no-pictures", "--no-report"]) == 0
    write_run_files = solver.report.write_run_files

    def terminated_write(*args, **kwargs):
        os.kill(os.getpid(), signal.SIGTERM)  # after result.json, before the rest
        time.sleep(0.2)  # a signal not held would act here
        return write_run_files(*args, **kwargs)

    monkeypatch.setattr(solver.report, "write_run_files", terminated_write)
    before = signal.getsignal(signal.SIGTERM)
    capsys.readouterr()
    assert solver.cli.main(["run", "clay.toml", "--no-pictures", "--no-progress"]) == 130
    assert signal.getsignal(signal.SIGTERM) is before  # restored
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "finished first" in err
    # the new run, whole: its report is there, which the earlier run did not write
    assert {p.name for p in (tmp_path / "out" / "clay").iterdir()} == {
        "result.json", "summary.csv", "fields.vtu", "case.toml", "report.html"}


def test_sigterm_while_solving_stops_at_once_and_writes_nothing(tmp_path: Path) -> None:
    (tmp_path / "slow.toml").write_text(SLOW, encoding="utf-8")
    run = subprocess.Popen([sys.executable, "-m", "solver.cli", "run", "slow.toml", "--no-progress"], cwd=tmp_path,
                           stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    time.sleep(3.0)  # past start-up and gmsh's start (which resets SIGTERM's action), inside the solve
    assert run.poll() is None, "the run ended before it could be stopped"
    run.send_signal(signal.SIGTERM)
    out, err = run.communicate(timeout=60)
    assert run.returncode == 130, err
    assert err.count("\n") == 1 and err.startswith("bearbound: interrupted") and out == ""
    assert files_under(tmp_path) == [tmp_path / "slow.toml"]  # no output, no lock, no staging folder


# -- one run at a time per folder -----------------------------------------------------------------

def test_a_folder_another_run_is_writing_is_refused(tmp_path: Path) -> None:
    (tmp_path / "clay.toml").write_text(QUICK, encoding="utf-8")
    with locked_folder(tmp_path / "shared"):  # as a run holds it from before its solve to the swap
        done = bearbound("run", "clay.toml", "--out", "shared", cwd=tmp_path)
        one_line(done, 2, "--out: shared is not allowed; another bearbound run",
                 f"(process {os.getpid()}) is writing there")
        (tmp_path / "s.toml").write_text('base = "clay.toml"\n[vary]\n"footing.width" = [1.0]\n', encoding="utf-8")
        sweep = bearbound("sweep", "s.toml", "--out", "shared", cwd=tmp_path)
        one_line(sweep, 2, "--out: shared is not allowed; another bearbound run")  # before any worker starts
        report = bearbound("report", "shared", cwd=tmp_path)
        one_line(report, 2, "another bearbound run")
    assert not any((tmp_path / "shared").iterdir())
    one_line(bearbound("sweep", "s.toml", "--out", "clay.toml", cwd=tmp_path), 2, "--out: clay.toml is not allowed; "
             "it is a file")
    done = bearbound("run", "clay.toml", "--out", "shared", cwd=tmp_path)  # free again
    assert done.returncode == 0, done.stderr


def test_two_runs_into_one_folder_at_once_never_mix(tmp_path: Path) -> None:
    (tmp_path / "a.toml").write_text(QUICK, encoding="utf-8")
    (tmp_path / "b.toml").write_text(QUICK.replace("30.0", "45.0"), encoding="utf-8")
    runs = [subprocess.Popen([sys.executable, "-m", "solver.cli", "run", name, "--out", "shared",
                              "--no-pictures"], cwd=tmp_path, stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                             text=True) for name in ("a.toml", "b.toml")]
    ended = [(run.wait(timeout=120), run.stderr.read()) for run in runs]
    assert sorted(code for code, _ in ended) in ([0, 0], [0, 2])  # the second one waits for no one
    for code, err in ended:
        assert code == 0 or "another bearbound run" in err
    copy = (tmp_path / "shared" / "case.toml").read_bytes()
    result = json.loads((tmp_path / "shared" / "result.json").read_text())
    assert result["case"]["sha256"] == hashlib.sha256(copy).hexdigest()  # result and case of one run


# -- nothing that is not a file is read ---------------------------------------------------------

def _fifo(path: Path) -> Path:
    os.mkfifo(path)
    return path


@pytest.mark.parametrize("command", ["run", "hand", "sweep"])
def test_a_fifo_for_a_case_or_sweep_file_is_refused_at_once(tmp_path: Path, command: str) -> None:
    _fifo(tmp_path / "pipe.toml")
    done = bearbound(command, "pipe.toml", cwd=tmp_path, timeout=60)
    one_line(done, 2, "pipe.toml: is a named pipe (FIFO), not a file")


def test_a_device_for_a_case_file_is_refused(tmp_path: Path) -> None:
    done = bearbound("run", "/dev/zero", cwd=tmp_path, timeout=60)
    one_line(done, 2, "/dev/zero: is a character device, not a file")


def test_a_fifo_for_a_site_file_or_base_case_is_refused_at_once(tmp_path: Path) -> None:
    _fifo(tmp_path / "site.geo")
    (tmp_path / "drawn.toml").write_text(QUICK.replace("[analysis]", '[geometry]\nfile = "site.geo"\n[analysis]'),
                                         encoding="utf-8")
    one_line(bearbound("run", "drawn.toml", cwd=tmp_path, timeout=60), 2,
             "geometry.file: site.geo is not allowed; it is a named pipe (FIFO)")
    _fifo(tmp_path / "base.toml")
    (tmp_path / "s.toml").write_text('base = "base.toml"\n[vary]\n"footing.width" = [1.0]\n', encoding="utf-8")
    one_line(bearbound("sweep", "s.toml", cwd=tmp_path, timeout=60), 2, "base.toml: is a named pipe (FIFO)")


def test_report_on_a_folder_with_a_fifo_does_not_hang(tmp_path: Path) -> None:
    run = tmp_path / "run"
    run.mkdir()
    _fifo(run / "result.json")
    done = bearbound("report", "run", cwd=tmp_path, timeout=60)
    one_line(done, 2, "result.json: not a readable result")


def test_a_fifo_is_refused_even_while_a_writer_waits(tmp_path: Path) -> None:
    """The refusal does not depend on the pipe being empty: a writer blocked on it is
    released by the open, and still nothing is read from it."""
    pipe = _fifo(tmp_path / "pipe.toml")
    def write() -> None:
        with contextlib.suppress(OSError):  # the pipe is closed unread: a broken pipe here
            pipe.write_text(QUICK)

    writer = threading.Thread(target=write, daemon=True)
    writer.start()
    done = bearbound("run", "pipe.toml", cwd=tmp_path, timeout=60)
    one_line(done, 2, "is a named pipe (FIFO)")


STUCK = """\
import ctypes, signal, sys
from pathlib import Path
import solver.cli
from solver.outdir import RunFolder

def stuck(args):
    with RunFolder(Path("out/stuck"), ("result.json",)) as folder:
        # The main thread inside a library call that no signal interrupts (as gmsh meshing
        # a drawing): SIGTERM blocked here goes to another thread, and libc's sleep holds
        # the main thread without returning to Python.
        signal.pthread_sigmask(signal.SIG_BLOCK, {signal.SIGTERM})
        print(folder.staging.name, flush=True)
        ctypes.CDLL(None).sleep(60)
    return 0

solver.cli._hand = stuck
sys.exit(solver.cli.main(["hand", "any.toml"]))
"""


def test_sigterm_while_a_library_call_holds_the_main_thread_ends_the_run(tmp_path: Path) -> None:
    run = subprocess.Popen([sys.executable, "-c", STUCK], cwd=tmp_path, stdout=subprocess.PIPE,
                           stderr=subprocess.PIPE, text=True)
    staging = run.stdout.readline().strip()
    assert staging.startswith(".stuck.new-") and (tmp_path / "out" / staging).is_dir()
    sent = time.perf_counter()
    run.send_signal(signal.SIGTERM)
    out, err = run.communicate(timeout=50)  # the call holds the main thread for 60 s
    assert run.returncode == 130, err
    assert time.perf_counter() - sent < 30
    # Either the watch's line (the main thread never came back) or, when a loaded machine let the
    # interpreter run its handler first, the handler's: both end the run with nothing half-written
    # (the latter seen once under load 5; the outcome, not the race, is what a user meets).
    assert err in ("bearbound: interrupted inside a library call; no output was left half-written\n",
                   "bearbound: interrupted; no output was left half-written\n"), err
    assert list(tmp_path.iterdir()) == []  # staging folder, lock and the out/ made for it: all gone


def test_report_on_a_hand_edited_case_copy_is_bad_input(tmp_path: Path) -> None:
    (tmp_path / "clay.toml").write_text(QUICK, encoding="utf-8")
    assert bearbound("run", "clay.toml", "--no-pictures", "--no-report", cwd=tmp_path).returncode == 0
    for text in (b"[footing\n", b"\xff\xfe not UTF-8"):
        (tmp_path / "out" / "clay" / "case.toml").write_bytes(text)
        done = bearbound("report", "out/clay", cwd=tmp_path)
        one_line(done, 2, "out/clay/case.toml: not a readable case file")


def test_doctests() -> None:
    import doctest

    import solver.outdir

    failures, _ = doctest.testmod(solver.outdir)
    assert failures == 0


PROBE_SIGNALS = """\
import os
from solver.mesh import _start_gmsh

_start_gmsh().finalize()
r, w = os.pipe()
os.close(r)
try:
    os.write(w, b"x")  # with SIGPIPE's default action back, the process dies here (status -13)
except BrokenPipeError:
    print("broken pipe reported")
"""


def test_starting_gmsh_keeps_every_signal_action(tmp_path: Path) -> None:
    """gmsh.initialize resets signal actions at the C level (measured: SIGTERM, SIGHUP,
    SIGPIPE); the mesh stage puts back every catchable one, so a closed pipe is still a
    BrokenPipeError and not a silent death of the process."""
    done = subprocess.run([sys.executable, "-c", PROBE_SIGNALS], capture_output=True, text=True, timeout=60)
    assert done.returncode == 0, (done.returncode, done.stderr)
    assert done.stdout.strip() == "broken pipe reported"
