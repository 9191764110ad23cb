"""Command line: ``bearbound run | hand | verify | sweep | report``.

Exit status: 0 when every bound asked for is certified; 1 when a bound is
withheld (solver trouble or a failed certificate; the result still says why);
2 for bad input (one line naming the key, the value and what is allowed,
nothing written), an output folder that cannot be used, or one that could not
be written to the end; 130 when interrupted by Ctrl-C or SIGTERM (nothing
half-written: a run writes its outputs into a staging folder only once every
bound is solved and swaps it in whole, and a stop while they are written waits
until all are whole); 3 for an internal error (a defect, not bad input: one
line naming the error; set BEARBOUND_TRACEBACK=1 for the traceback and the
library warnings, which are otherwise not printed).
"""
from __future__ import annotations

import argparse
import contextlib
import importlib.util
import os
import signal
import sys
import threading
import time
import warnings
from collections.abc import Callable, Iterator
from pathlib import Path
from typing import Any

from . import __version__
from .case import CaseError, load_case, shown
from .outdir import abandon_open_folders
from .result import CAUTION, refinement_line, wall_time_line

REPO_ROOT = Path(__file__).resolve().parent.parent
PREVIEW_FILE_NAME = "preview.png"  # solver.export.PREVIEW_FILE, without importing numpy to build the parser


def main(argv: list[str] | None = None) -> int:
    started = time.perf_counter()  # the command's wall time counts from here (solver.result.WallClock)
    parser = _parser()
    args = parser.parse_args(argv)
    args.started = started
    try:
        with _stop_signals(), _library_warnings():
            return args.handler(args)
    except CaseError as error:
        print(f"bearbound: {error}", file=sys.stderr)
        return 2
    except KeyboardInterrupt as interrupt:
        print(f"bearbound: {interrupt.args[0] if interrupt.args else 'interrupted; no output was left half-written'}",
              file=sys.stderr, flush=True)
        if isinstance(interrupt, _SolveAbandoned):
            # The solve thread is still inside the solver and cannot be stopped; it has
            # written nothing. Leave now rather than let interpreter shutdown race it.
            sys.stdout.flush()
            os._exit(130)
        return 130
    except Exception as error:  # a defect, never the user's input: say so in one line
        if os.environ.get("BEARBOUND_TRACEBACK"):
            raise
        reason = shown(" ".join(f"{type(error).__name__}: {error}".split()), 300)
        print(f"bearbound: internal error, the run stopped: {reason}; please report it with the "
              "case file (BEARBOUND_TRACEBACK=1 shows where)", file=sys.stderr)
        return 3


def _parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="bearbound",
        description="Rigorous lower and upper bounds on the collapse load of a strip footing.",
        epilog=CAUTION)
    parser.add_argument("--version", action="version", version=f"bearbound {__version__}")
    sub = parser.add_subparsers(dest="command", required=True)

    run = sub.add_parser("run", help="bracket the collapse load of a case file")
    run.add_argument("case", type=Path, help="case file (TOML)")
    run.add_argument("--out", type=Path, default=None, help="output folder (default out/<case name>)")
    run.add_argument("--bounds", choices=("lower", "upper", "both"), default=None,
                     help="override [analysis] bounds")
    run.add_argument("--elements", type=int, default=None, help="override [analysis] elements")
    run.add_argument("--backend", choices=("clarabel", "cvxpy"), default=None,
                     help="override [analysis] backend")
    run.add_argument("--fixed-mesh", action="store_true",
                     help="one mesh of --elements (or [analysis] elements) triangles per bound, no adaptive "
                          "refinement (default: refine until [analysis] target_gap or time_limit_s)")
    run.add_argument("--serial", action="store_true",
                     help="solve the two bounds one after the other on one core "
                          "(default: at once, one per core, when two cores are free)")
    run.add_argument("--no-pictures", action="store_true", help="skip the PNG and SVG pictures")
    run.add_argument("--no-report", action="store_true", help="skip report.html")
    run.add_argument("--no-progress", action="store_true",
                     help="print nothing while working (no step lines, no status line); the summary still prints")
    run.set_defaults(handler=_run)

    init = sub.add_parser("init", help="write a commented starter case file (an invented scenario) to edit")
    init.add_argument("file", type=Path, nargs="?", default=Path("site.toml"),
                      help="the case file to write (default site.toml); never one that exists")
    init.set_defaults(handler=_init)

    preview = sub.add_parser("preview", help="draw the model a case file describes, without solving")
    preview.add_argument("case", type=Path, help="case file (TOML)")
    preview.add_argument("--out", type=Path, default=None,
                         help=f"folder for {PREVIEW_FILE_NAME} (default out/<case name>, the run's folder)")
    preview.add_argument("--mesh", action="store_true",
                         help="mesh the model as a run's first step does and draw the mesh too (a few seconds)")
    preview.set_defaults(handler=_preview)

    report = sub.add_parser("report", help="rebuild report.html from a finished run's folder, without solving")
    report.add_argument("folder", type=Path, help="output folder of a finished run (out/<case>)")
    report.set_defaults(handler=_report)

    hand = sub.add_parser("hand", help="the classical hand methods alone, instantly")
    hand.add_argument("case", type=Path)
    hand.set_defaults(handler=_hand)

    verify = sub.add_parser("verify", help="verification cases against published solutions")
    verify.add_argument("--quick", action="store_true", help="the quick subset on coarse meshes")
    verify.add_argument("--only", action="append", default=None, metavar="ID", help="run only this case")
    verify.add_argument("--out", type=Path, default=Path("out/verification"), help="report folder")
    verify.set_defaults(handler=_verify)

    sweep = sub.add_parser("sweep", help="a base case with keys varied: every point on dask workers, "
                                         "sweep.csv and a chart")
    sweep.add_argument("sweep", type=Path, help="sweep file (TOML, see README)")
    sweep.add_argument("--out", type=Path, default=None,
                       help="output folder: points/, sweep.csv, the chart (default out/<sweep name>)")
    sweep.add_argument("--scheduler", default=None, metavar="ADDRESS",
                       help="an existing dask scheduler you control, e.g. tcp://127.0.0.1:8786 "
                            "(default: local worker processes on 127.0.0.1)")
    sweep.add_argument("--workers", type=int, default=None,
                       help="local worker processes (default: one per core)")
    sweep.add_argument("--no-progress", action="store_true", help="no progress bar")
    sweep.set_defaults(handler=_sweep)
    return parser


def _run(args) -> int:
    case = load_case(args.case)
    if args.elements is not None and not 200 <= args.elements <= 400_000:
        raise CaseError(f"--elements: {args.elements} is not allowed; must be a whole number from 200 to 400000")
    from .outdir import RunFolder, folder_name

    out_dir = args.out or Path("out") / folder_name(case.name, "case")
    from .export import FOLDER_FILES, PREVIEW_FILE, outputs_overwriting

    if (clash := outputs_overwriting(args.case, out_dir)) is not None:
        raise CaseError(f"--out: {shown(out_dir, 200)} is not allowed; writing {clash.name} there would "
                        "overwrite the case file, choose another folder")
    from .progress import Progress
    from .result import WallClock

    progress = Progress(enabled=not args.no_progress)
    clock = WallClock(args.started)
    # The folder is checked, locked and staged before the solve: a folder that cannot be
    # written or that another run is writing is found now, not after minutes of solving.
    try:
        with RunFolder(out_dir, FOLDER_FILES, loose=(PREVIEW_FILE,)) as folder:
            result, written = _solve_and_write(args, case, out_dir, folder, progress, clock)
    finally:
        progress.clear()
    print(format_summary(result, [out_dir / p.name for p in written]))
    asked = [b for b in (result.lower, result.upper) if b is not None]
    return 0 if all(b.pressure_kPa is not None for b in asked) else 1


def _solve_and_write(args, case, out_dir: Path, folder, progress, clock):
    """Solve, write every output into the run's staging folder and swap it in; returns the
    result and the files written (in the staging folder, by name as in the run folder)."""
    from .analysis import analyse  # imported late: bad input is reported before gmsh/cvxpy load
    from .report import write_run_files
    from .result import write_result

    def solve_case():
        adaptive = case.analysis.adaptive and not args.fixed_mesh
        progress.stage("solving the bounds" + (f", adaptive until a gap of {100 * case.analysis.target_gap:g} % "
                                               f"or {case.analysis.time_limit_s:g} s" if adaptive else
                                               " on one fixed mesh each"))
        with clock.part("bounds"):
            result = analyse(case, bounds=args.bounds, elements=args.elements, backend=args.backend,
                             progress=progress.say, parallel=False if args.serial else None,
                             adaptive=False if args.fixed_mesh else None)
        progress.say(bracket_line(result))
        if case.footing.design_load is not None or case.factors is not None:
            from .safety import factor_of_safety

            progress.stage("factors of safety (extra solves, each on one fixed mesh)")
            with clock.part("strength_search"):
                result.factor_of_safety = factor_of_safety(
                    case, result, elements=args.elements, backend=args.backend, progress=progress.say,
                    parallel=False if args.serial else None,
                    starting=lambda kind, what: progress.doing(kind, f"{kind} bound at {what}"))
            progress.say(f"factors of safety: {result.factor_of_safety['wall_s']:.1f} s")
        progress.stage("drawing the pictures" if not args.no_pictures else "writing the outputs")
        return result

    result = _solve_interruptibly(solve_case, out_dir, progress)
    with _interrupt_after_writing() as interrupted:
        try:
            write_result(result, folder.staging)
            written = write_run_files(result, case, args.case, folder.staging, pictures=not args.no_pictures,
                                      report=not args.no_report, progress=progress, clock=clock)
            folder.publish()
        except OSError as error:  # the disk filled up, the folder was taken away: not a defect
            raise CaseError(f"--out: cannot write the outputs to {shown(out_dir, 200)} "
                            f"({shown(error.strerror or error, 100)}); anything there before is unchanged") from None
    if interrupted:
        raise KeyboardInterrupt(f"interrupted while the outputs were written; they were finished "
                                f"first and are whole in {shown(out_dir, 200)}")
    return result, written


def bracket_line(result) -> str:
    """The bracket in one line, as soon as the bounds are known (before the factor of safety
    and the pictures)."""
    from .result import figure

    parts = []
    for bound in (result.lower, result.upper):
        if bound is not None:
            parts.append(f"{bound.kind} {figure(bound.pressure_kPa, 2)} kPa" if bound.pressure_kPa is not None
                         else f"{bound.kind} withheld")
    gap = f", gap {result.gap_percent:.2f} %" if result.gap_percent is not None else ""
    return f"bracket: {', '.join(parts)}{gap} ({result.timing['total_s']:.1f} s)"


@contextlib.contextmanager
def _library_warnings() -> Iterator[None]:
    """Warnings from the libraries (numpy, matplotlib, dask, ...) never reach the terminal: a
    user cannot act on them, and real trouble is reported as trouble (a withheld bound with
    its cause, a one-line error). They are kept and, with BEARBOUND_TRACEBACK=1, printed
    after the command, one line each. Only how a warning is shown changes, never the
    filters: an exception is never turned into a warning, and ``python -W error`` still
    makes warnings errors."""
    kept: list[str] = []

    def keep(message, category, filename, lineno, file=None, line=None) -> None:
        kept.append(shown(f"{category.__name__}: {' '.join(str(message).split())} ({Path(filename).name}:{lineno})",
                          300))

    with warnings.catch_warnings():
        warnings.showwarning = keep
        try:
            yield
        finally:
            if os.environ.get("BEARBOUND_TRACEBACK"):
                for text in dict.fromkeys(kept):
                    print(f"bearbound: library warning: {text}", file=sys.stderr)


class _SolveAbandoned(KeyboardInterrupt):
    """Ctrl-C during the solve: the solve thread is left running and nothing was written."""


def _solve_interruptibly(work: Callable[[], Any], out_dir: Path, progress=None) -> Any:
    """Run ``work`` (meshing and solving, no output) in a thread and wait for it.

    Python handles a signal only in the main thread, between bytecodes; a solve on
    the main thread would hold a Ctrl-C until Clarabel returns (tens of seconds on
    a fine mesh). Clarabel and gmsh release the GIL while they work, so the main
    thread, waiting here, takes the Ctrl-C at once. While it waits it moves the
    ``progress`` status line on.
    """
    from .analysis import Job

    job = Job(work)
    job.start()
    try:
        while job.is_alive():
            job.join(0.1)
            if progress is not None:
                progress.tick()
    except KeyboardInterrupt:
        raise _SolveAbandoned(f"interrupted while solving; nothing was written to {shown(out_dir, 200)}") from None
    return job.result()


STOP_SIGNALS = (signal.SIGINT, signal.SIGTERM)  # Ctrl-C, and `kill` / a shutdown / a batch system
GRACE_S = 1.0  # how long a stop signal may wait for the main thread before the watch acts on it
_HANDLED = threading.Event()  # the main thread has taken a stop signal
_HOLDING = threading.Event()  # the outputs are being written: a stop waits for them


def _stop(signum, frame) -> None:
    _HANDLED.set()
    raise KeyboardInterrupt()


@contextlib.contextmanager
def _stop_signals() -> Iterator[None]:
    """Ctrl-C and SIGTERM stop a command the same way: at once, exit status 130, nothing
    half-written (Python's default for SIGTERM is to die on the spot, mid-write).

    Python runs a signal handler on the main thread between bytecodes, so a main thread
    inside a long library call (gmsh meshing a site file while the case is read) would
    hold the signal until the call returns, for ever if it hangs. A watch thread learns of
    every signal at once through the wakeup file descriptor; when the main thread has not
    taken it within GRACE_S, and no output is being written, the watch ends the process
    itself: it removes any staging folder and lock (solver.outdir) and exits with 130.
    """
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    previous = {s: signal.signal(s, _stop) for s in STOP_SIGNALS if signal.getsignal(s) is not signal.SIG_IGN}
    read_fd, write_fd = os.pipe()
    os.set_blocking(write_fd, False)
    old_fd = signal.set_wakeup_fd(write_fd, warn_on_full_buffer=False)
    watch = threading.Thread(target=_watch, args=(read_fd, set(previous)), name="bearbound-signals", daemon=True)
    watch.start()
    try:
        yield
    finally:
        signal.set_wakeup_fd(old_fd)
        for number, handler in previous.items():
            signal.signal(number, handler)
        os.close(write_fd)  # the watch reads the end of the pipe and stops
        watch.join()


def _watch(read_fd: int, stops: set[int]) -> None:
    try:
        while data := os.read(read_fd, 64):
            if not stops.intersection(data) or _HOLDING.is_set():
                continue
            if _HANDLED.wait(GRACE_S) or _HOLDING.is_set():
                _HANDLED.clear()
                continue
            print("bearbound: interrupted inside a library call; no output was left half-written",
                  file=sys.stderr, flush=True)
            abandon_open_folders()
            os._exit(130)
    finally:
        os.close(read_fd)


@contextlib.contextmanager
def _interrupt_after_writing() -> Iterator[list[int]]:
    """Hold Ctrl-C and SIGTERM while the outputs are written and swapped in (a second or
    two) and report them after, so that the run's files appear whole and together. The
    list yielded holds the signals that arrived.
    """
    arrived: list[int] = []
    if threading.current_thread() is not threading.main_thread():
        yield arrived
        return
    held = [s for s in STOP_SIGNALS if signal.getsignal(s) is not signal.SIG_IGN]
    previous = {s: signal.signal(s, lambda signum, frame: arrived.append(signum)) for s in held}
    _HOLDING.set()
    try:
        yield arrived
    finally:
        _HOLDING.clear()
        for s, handler in previous.items():
            signal.signal(s, handler)


def format_summary(result, written: list[Path] | None = None) -> str:
    """The bracket, what limits trust in it, each bound's standing, the whole wall time, the
    factors of safety, the hand methods beside it and every file written."""
    area = result.bearing_area
    lines = [f"{result.title}"] + [f"  WARNING: {w}" for w in getattr(result, "input_warnings", [])]
    lines.append("  collapse pressure under the footing, kPa (compression positive)")
    for bound in (result.lower, result.upper):
        if bound is None:
            continue
        value = f"{bound.pressure_kPa:10.2f}" if bound.pressure_kPa is not None else "      none"
        standing = "certified" if bound.pressure_kPa is not None else bound.status
        t = sum(bound.timing.values())
        lines.append(f"    {bound.kind} bound {value}   {standing}   {bound.elements} triangles, "
                     f"{bound.iterations} iterations, {t:.1f} s")
    lo = result.lower.pressure_kPa if result.lower else None
    up = result.upper.pressure_kPa if result.upper else None
    if lo is not None and up is not None:
        lines.append(f"    bracket     [{lo:.2f}, {up:.2f}] kPa, gap {result.gap_percent:.2f} %; "
                     f"vertical collapse load [{lo * area:.1f}, {up * area:.1f}] {result.load_unit}")
        extra_lo, extra_up = result.lower.extra, result.upper.extra
        if extra_lo.get("horizontal_kN_per_m") or extra_lo.get("moment_kNm_per_m"):
            lines.append(f"    at collapse  H [{extra_lo['horizontal_kN_per_m']:.1f}, {extra_up['horizontal_kN_per_m']:.1f}] kN/m, "
                         f"M about the centre [{extra_lo['moment_kNm_per_m']:.1f}, {extra_up['moment_kNm_per_m']:.1f}] kNm/m")
    lines += [f"  CAVEAT: {c}" for c in getattr(result, "caveats", [])]
    if getattr(result, "refinement", None):
        lines.append(f"    mesh        {refinement_line(result.refinement, result.gap_percent)}")
    t = result.timing
    if getattr(result, "wall_time_s", None):
        lines.append(f"    wall time   {wall_time_line(result.wall_time_s)}")
    lines.append(f"    solve time  {t.get('solve_wall_s', t['solve_s']):.1f} s with a solve running, of the bounds' "
                 f"{t['total_s']:.1f} s (the solves took {t['solve_s']:.1f} s together)")
    if getattr(result, "factor_of_safety", None):
        from .safety import format_safety

        lines += format_safety(result.factor_of_safety)
    for note in result.notes:
        lines.append(f"  NOTE: {note}")
    if result.hand_methods:
        lines.append("  hand methods, kPa (vertical component / "
                     + ("B)" if result.footing_shape == "strip" else "footing area)"))
        lines += _hand_lines(result.hand_methods)
    if getattr(result, "hand_methods_as_given", None):
        lines.append(f"  hand methods on c', phi' as given, kPa: {AS_GIVEN}")
        lines += _hand_lines([r for r in result.hand_methods_as_given if r["pressure_kPa"] is not None])
    if written:
        lines.append("  files written:")
        lines += [f"    {shown(path, 300)}" for path in _reading_order(written)]
    lines.append(f"  Caution: {CAUTION}")
    return "\n".join(lines)


def _reading_order(paths: list[Path]) -> list[Path]:
    """The report first, then result.json, the pictures (PNG before SVG), the exports, the copies."""
    first = ("report.html", "result.json", "summary.csv", "fields.vtu")
    return sorted(paths, key=lambda p: (first.index(p.name) if p.name in first else len(first),
                                        p.suffix not in (".png", ".svg"), p.suffix != ".png", p.name))


AS_GIVEN = "information only, not compared with the bracket (the bounds use the Davis-reduced strength)"


def _hand_lines(rows: list[dict]) -> list[str]:
    """Methods with a number, one line each; those that do not apply, grouped by reason."""
    given = [r for r in rows if r["pressure_kPa"] is not None]
    width = max((len(r["method"]) for r in given), default=0)
    out = [f"    {r['method']:<{width}} {r['pressure_kPa']:10.1f}   {r.get('where', '')}" for r in given]
    reasons: dict[str, list[str]] = {}
    for r in rows:
        if r["pressure_kPa"] is None:
            reasons.setdefault(r["note"], []).append(r["method"])
    for note, methods in reasons.items():
        out.append(f"    no value ({'; '.join(methods)}): {note}")
    return out


def _hand(args) -> int:
    case = load_case(args.case)
    from .hand import hand_methods, information_only
    from .plausible import input_warnings

    def rows(estimates):
        return [{"method": h.method, "pressure_kPa": h.pressure_kPa, "note": h.note,
                 "where": "; ".join(f"{k} {v + 0.0:.3g}" for k, v in h.factors.items())} for h in estimates]

    print("\n".join([case.title] + [f"  WARNING: {w}" for w in input_warnings(case)]))
    print("  hand methods, kPa (vertical component / "
          + ("B)" if case.footing.shape == "strip" else "footing area)"))
    print("\n".join(_hand_lines(rows(hand_methods(case)))))
    if information_only(case):
        print(f"  hand methods on c', phi' as given, kPa: {AS_GIVEN}")
        print("\n".join(_hand_lines(rows(information_only(case)))))
    print(f"  Caution: {CAUTION}")
    return 0


def _init(args) -> int:
    from .outdir import write_new_file
    from .starter import starter_text

    path = write_new_file(args.file, starter_text().encode("utf-8"), where="init")
    print(f"written: {shown(path, 300)} (a starter case, an invented scenario: replace its values with "
          f"your own, then `bearbound preview {shown(path, 300)}` and `bearbound run {shown(path, 300)}`)")
    return 0


def _preview(args) -> int:
    case = load_case(args.case)
    from .export import FOLDER_FILES, PREVIEW_FILE, outputs_overwriting, write_bytes_atomic
    from .outdir import check_folder, folder_name, locked_folder

    out_dir = args.out or Path("out") / folder_name(case.name, "case")
    if (clash := outputs_overwriting(args.case, out_dir)) is not None:
        raise CaseError(f"--out: {shown(out_dir, 200)} is not allowed; writing {clash.name} there would "
                        "overwrite the case file, choose another folder")
    check_folder(Path(os.path.abspath(out_dir)), out_dir, "--out", FOLDER_FILES, loose=(PREVIEW_FILE,))
    from .preview import preview_png

    png = preview_png(case, mesh=args.mesh)  # drawn before the folder is taken: nothing half-written
    with locked_folder(out_dir) as folder:  # a run swapping the folder meanwhile would lose it
        path = Path(out_dir) / PREVIEW_FILE
        try:
            write_bytes_atomic(folder / PREVIEW_FILE, png)
        except OSError as error:
            raise CaseError(f"--out: cannot write {shown(path, 200)} ({shown(error.strerror or error, 100)})") from None
    print(f"written: {shown(path, 300)} (the model as the case file describes it; nothing was solved)")
    return 0


def _report(args) -> int:
    from .outdir import locked_folder
    from .report import ReportError, rebuild_report

    if not args.folder.is_dir():  # checked before the lock, which would create the folder
        print(f"bearbound: {shown(args.folder, 200)}: no such folder; give the output folder of a finished "
              "run (out/<case>)", file=sys.stderr)
        return 2
    try:
        with locked_folder(args.folder, where="report"):  # a run swapping the folder meanwhile would mix them
            path = rebuild_report(args.folder)
    except ReportError as error:
        print(f"bearbound: {error}", file=sys.stderr)
        return 2
    print(f"written: {shown(path, 200)}\n  Caution: {CAUTION}")
    return 0


def _verify(args) -> int:
    spec = importlib.util.spec_from_file_location("bearbound_verification", REPO_ROOT / "verification" / "runner.py")
    if spec is None or not (REPO_ROOT / "verification" / "runner.py").exists():
        print("bearbound: verification/runner.py not found beside the package", file=sys.stderr)
        return 2
    runner = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(runner)
    argv = (["--quick"] if args.quick else []) + ["--out", str(args.out)]
    for case_id in args.only or []:
        argv += ["--only", case_id]
    return runner.main(argv)


def _sweep(args) -> int:
    from .sweep import CERTIFIED, format_outcome, load_sweep, run_sweep

    sweep = load_sweep(args.sweep)
    if args.workers is not None and args.scheduler is not None:
        raise CaseError(f"--workers: {args.workers} is not allowed with --scheduler; "
                        "the cluster there has its own workers")
    if args.workers is not None and not 1 <= args.workers <= 256:
        raise CaseError(f"--workers: {args.workers} is not allowed; must be a whole number from 1 to 256")
    from .outdir import folder_name, locked_folder

    out_dir = args.out or Path("out") / folder_name(sweep.name, "sweep")
    try:
        with locked_folder(out_dir):  # points are added to the folder, so it is locked, not swapped
            outcome = run_sweep(sweep, out_dir, scheduler=args.scheduler, workers=args.workers,
                                progress=not args.no_progress)
    except KeyboardInterrupt:
        print(f"bearbound: points finished so far are kept in {shown(out_dir / 'points', 200)}; "
              "the same command again solves only the rest", file=sys.stderr)
        raise
    print(format_outcome(sweep, outcome))
    return 0 if outcome.count(CERTIFIED) == len(outcome.records) else 1


if __name__ == "__main__":
    sys.exit(main())
