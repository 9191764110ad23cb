"""What a command is doing while it works, on the standard error.

A run spends seconds to minutes in the solver, the strength search and the
pictures; a terminal that shows nothing for that long looks hung. Two kinds of
output:

* lines (:meth:`Progress.say`, :meth:`Progress.stage`): one event each, printed
  as ``bearbound: ...`` on a line of their own, on a terminal or in a log file;
* on a terminal only, a status line at the bottom (:meth:`Progress.doing`,
  :meth:`Progress.bar`): what runs now and for how long, redrawn in place with a
  carriage return at most once a second (:meth:`Progress.tick`, called by the
  main thread while it waits) and wiped before the next line or the summary.

On anything but a terminal (a file, a pipe, a batch system's log) no status line
is drawn: no carriage return reaches the output, only the lines. A disabled
Progress (``--no-progress``) prints nothing at all.
"""
from __future__ import annotations

import os
import shutil
import sys
import threading
import time
from typing import TextIO

PREFIX = "bearbound: "
BAR_CELLS = 20  # characters of a bar
REDRAW_S = 1.0  # the status line's elapsed time moves on at most this often


class Progress:
    """Progress of one command on ``stream`` (default: the standard error).

    ``terminal``: draw the status line (default: when ``stream`` is a terminal).
    Safe to call from several threads (the solve and the strength searches run on
    threads of their own; the main thread ticks).

    >>> import io
    >>> log = io.StringIO()
    >>> p = Progress(log, terminal=False)
    >>> p.stage("drawing the pictures"); p.doing("solve", "lower bound"); p.bar("pictures", 1, 4); p.tick()
    >>> p.say("bracket [1.00, 2.00] kPa"); p.clear()
    >>> log.getvalue()
    'bearbound: drawing the pictures\\nbearbound: bracket [1.00, 2.00] kPa\\n'
    """

    def __init__(self, stream: TextIO | None = None, *, enabled: bool = True, terminal: bool | None = None) -> None:
        self.stream = stream if stream is not None else sys.stderr
        self.enabled = enabled
        if terminal is None:
            isatty = getattr(self.stream, "isatty", None)
            terminal = bool(isatty and isatty())
        self.terminal = terminal and enabled
        self._lock = threading.RLock()
        self._activities: dict[str, str] = {}  # key -> what runs, in the order they started
        self._title = ""  # the stage the activities belong to
        self._since = time.monotonic()  # when the stage started
        self._drawn = 0  # characters of the status line now on the screen
        self._last_draw = 0.0

    # -- lines --------------------------------------------------------------------------

    def say(self, text: str) -> None:
        """One line, on a terminal or not (the status line, if any, is redrawn below it)."""
        if not self.enabled:
            return
        with self._lock:
            self._wipe()
            self.stream.write(PREFIX + text + "\n")
            self.stream.flush()
            self._draw(force=True)

    def stage(self, text: str) -> None:
        """A new stage begins: a line of its own off a terminal; on one, the status line's title
        (its time counts from now)."""
        if not self.enabled:
            return
        with self._lock:
            self._title, self._since = text, time.monotonic()
            self._activities.clear()
            if not self.terminal:
                self.stream.write(PREFIX + text + "\n")
                self.stream.flush()
            else:
                self._draw(force=True)

    # -- the status line (a terminal only) ----------------------------------------------

    def doing(self, key: str, text: str | None) -> None:
        """``key`` now runs ``text`` (None: it ended), shown after the stage's title."""
        with self._lock:
            if text is None:
                self._activities.pop(key, None)
            else:
                self._activities[key] = text
            self._draw(force=True)

    def bar(self, label: str, done: int, total: int) -> None:
        """A bar of ``done`` out of ``total`` items as the status line."""
        with self._lock:
            filled = BAR_CELLS * done // max(total, 1)
            self._activities = {"bar": f"{label} [{'#' * filled}{'.' * (BAR_CELLS - filled)}] {done}/{total}"}
            self._draw(force=True)

    def tick(self) -> None:
        """Move the status line's elapsed time on (at most once every REDRAW_S)."""
        with self._lock:
            self._draw()

    def clear(self) -> None:
        """Wipe the status line and forget the stage (before the summary is printed)."""
        with self._lock:
            self._wipe()
            self._title, self._activities = "", {}

    def _status(self) -> str:
        """``bearbound: <stage> (<s> s): <what runs>``; the time first, so a narrow terminal keeps it."""
        if not (self._title or self._activities):
            return ""
        doing = ", ".join(self._activities.values())
        return f"{PREFIX}{self._title} ({time.monotonic() - self._since:.0f} s)" + (f": {doing}" if doing else "")

    def _columns(self) -> int:
        """The terminal's width (a pseudo-terminal may report 0: then $COLUMNS, or 80)."""
        try:
            columns = os.get_terminal_size(self.stream.fileno()).columns
        except (AttributeError, ValueError, OSError):
            columns = 0
        return columns or shutil.get_terminal_size((80, 24)).columns

    def _draw(self, force: bool = False) -> None:
        if not self.terminal:
            return
        now = time.monotonic()
        if not force and now - self._last_draw < REDRAW_S:
            return
        # one screen line only: a line that wraps cannot be redrawn in place
        text = self._status()[:max(self._columns() - 1, 20)]
        self.stream.write("\r" + text.ljust(self._drawn))
        self.stream.flush()
        self._drawn, self._last_draw = len(text), now

    def _wipe(self) -> None:
        if self.terminal and self._drawn:
            self.stream.write("\r" + " " * self._drawn + "\r")
            self._drawn = 0
