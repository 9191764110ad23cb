"""Output folders: checked before anything is solved, written together, never left.

* :func:`folder_name` turns a case or sweep file's stem into the default folder name
  under ``out/``: one plain name (no separator, no ``.`` or ``..``, no control
  character, at most 100 bytes), so that no file name leads outside ``out/``.
* :class:`RunFolder` is a run's output folder. It is opened before the solve: the
  folder must be new, empty or hold an earlier run's files only (a run replaces the
  whole folder, so a folder with anything else in it is refused); a staging folder is
  made beside it at once (so a folder that cannot be written is found before the
  solve); and an exclusive lock is taken on ``.<name>.lock`` beside it, so that a
  second bearbound process writing to the same folder is refused. The run writes into
  the staging folder; :meth:`RunFolder.publish` swaps it in by renaming (an atomic
  exchange where the kernel offers one), so a reader sees the whole earlier run or the
  whole new one, never a mixture. Whatever happens, leaving the ``with`` block
  removes the staging folder, the replaced run and the lock.
* :func:`locked_folder` takes the same lock alone, for outputs that are added to a
  folder rather than replacing it (a sweep's points, a rebuilt report).

Every refusal is a CaseError naming ``--out`` (exit status 2).
"""
from __future__ import annotations

import contextlib
import ctypes
import errno
import fcntl
import os
import shutil
import tempfile
from collections.abc import Callable, Iterable, Iterator
from pathlib import Path

from .case import CaseError, shown

# Clean-ups of the folders open in this process, for a stop that cannot wait for the
# main thread (solver.cli's signal watch): staging folders and locks, never a finished run.
_OPEN: dict[int, Callable[[], None]] = {}
MAX_NAME_BYTES = 100  # a folder name; file systems allow 255, messages and paths stay readable
_NAME_EXTRA = " -_.+()"  # besides letters and digits, what a folder name keeps


def folder_name(stem: str, default: str) -> str:
    """The folder name under out/ for a file's stem: letters, digits and `` -_.+()``
    kept, anything else (separators, control characters) made ``_``, no leading dot,
    at most MAX_NAME_BYTES bytes; ``default`` when nothing is left.

    >>> folder_name("pump-house", "case"), folder_name("..", "case"), folder_name("a/b\\x1b[31m", "case")
    ('pump-house', 'case', 'a_b__31m')
    """
    kept = "".join(c if c.isalnum() or c in _NAME_EXTRA else "_" for c in stem)
    kept = kept.encode("utf-8")[:MAX_NAME_BYTES].decode("utf-8", errors="ignore")
    kept = kept.lstrip(". ").rstrip(" ")
    return kept or default


def abandon_open_folders() -> None:
    """Remove the staging folders and locks of this process (it is about to exit)."""
    for cleanup in list(_OPEN.values()):
        with contextlib.suppress(Exception):
            cleanup()


def _refuse(where: str, path: Path, why: str) -> CaseError:
    return CaseError(f"{where}: {shown(path)} is not allowed; {why}")


def _reason(error: OSError) -> str:
    return error.strerror or type(error).__name__


@contextlib.contextmanager
def locked_folder(out_dir: Path, where: str = "--out") -> Iterator[Path]:
    """Hold the lock of ``out_dir`` (created if missing, parents too) for the block.

    Another process holding it: CaseError at once (one line, exit 2), not a wait,
    since runs take minutes and the user should choose.
    """
    out_dir = Path(out_dir)
    target = _target(out_dir, where)
    if target.exists() and not target.is_dir():
        raise _refuse(where, out_dir, "it is a file; must be a folder")
    try:
        target.mkdir(parents=True, exist_ok=True)
    except OSError as error:
        raise _refuse(where, out_dir, f"cannot create it ({_reason(error)})") from None
    with _lock(target, out_dir, where):
        yield target


def _target(out_dir: Path, where: str, replaced: bool = False) -> Path:
    """The folder as an absolute path with its own name (links resolved); a folder that
    is to be ``replaced`` must not be the working folder or hold it."""
    target = Path(os.path.abspath(out_dir))
    if target.exists() or target.is_symlink():
        target = target.resolve()
    if target.name in ("", ".", ".."):
        raise _refuse(where, out_dir, "must be a folder of its own, not the file system's root")
    cwd = Path.cwd().resolve()
    if replaced and (target == cwd or target in cwd.parents):
        raise _refuse(where, out_dir, "it is the working folder or holds it; choose a folder of its own "
                                      "(a run replaces the whole folder)")
    return target


@contextlib.contextmanager
def _lock(target: Path, shown_as: Path, where: str) -> Iterator[None]:
    """flock on ``.<name>.lock`` beside ``target``; stale staging folders of that name are removed."""
    lock_path = target.parent / f".{target.name}.lock"
    while True:
        try:
            fd = os.open(lock_path, os.O_RDWR | os.O_CREAT | getattr(os, "O_CLOEXEC", 0), 0o644)
        except OSError as error:
            raise _refuse(where, shown_as, f"cannot write beside it in {shown(target.parent)} "
                                           f"({_reason(error)})") from None
        try:
            fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except BlockingIOError:
            holder = os.read(fd, 32).decode("ascii", errors="replace").strip()
            os.close(fd)
            process = f" (process {holder})" if holder.isdigit() else ""
            raise _refuse(where, shown_as, f"another bearbound run{process} is writing there; wait for it "
                                           "to finish or choose another folder") from None
        try:  # the file may have been removed by its last holder between open and flock
            same = os.stat(lock_path).st_ino == os.fstat(fd).st_ino
        except FileNotFoundError:
            same = False
        if same:
            break
        os.close(fd)
    _OPEN[fd] = lambda: os.unlink(lock_path)
    try:
        os.ftruncate(fd, 0)
        os.write(fd, f"{os.getpid()}\n".encode("ascii"))
        for stale in _staging_folders(target):  # left by a run that was killed outright
            shutil.rmtree(stale, ignore_errors=True)
        yield
    finally:
        _OPEN.pop(fd, None)
        with contextlib.suppress(OSError):
            os.unlink(lock_path)
        os.close(fd)


def _staging_folders(target: Path) -> list[Path]:
    prefixes = (f".{target.name}.new-", f".{target.name}.old-")
    with contextlib.suppress(OSError):
        return [entry for entry in target.parent.iterdir() if entry.name.startswith(prefixes) and entry.is_dir()
                and not entry.is_symlink()]
    return []


class RunFolder:
    """A run's output folder (see the module docstring). Use as a context manager:

    >>> import tempfile
    >>> with tempfile.TemporaryDirectory() as tmp:
    ...     with RunFolder(Path(tmp) / "clay", known=("result.json",)) as folder:
    ...         _ = (folder.staging / "result.json").write_text("{}")
    ...         folder.publish()
    ...     sorted(p.name for p in Path(tmp).iterdir()), sorted(p.name for p in (Path(tmp) / "clay").iterdir())
    (['clay'], ['result.json'])
    """

    def __init__(self, out_dir: Path, known: Iterable[str], where: str = "--out", marker: str = "result.json") -> None:
        self.shown_as = Path(out_dir)
        self.where = where
        self.known = frozenset(known)
        self.marker = marker  # the file every finished run leaves: a folder without it is no earlier run's
        self.path = _target(self.shown_as, where, replaced=True)  # final place, absolute
        self.staging: Path | None = None
        self._created: list[Path] = []  # folders made for this run, removed again if it writes nothing
        self._published = False
        self._stack = contextlib.ExitStack()

    def __enter__(self) -> RunFolder:
        try:
            self._check_existing()
            self._make_parents()
            self._stack.enter_context(_lock(self.path, self.shown_as, self.where))
            try:
                self.staging = Path(tempfile.mkdtemp(prefix=f".{self.path.name}.new-", dir=self.path.parent))
            except OSError as error:
                raise _refuse(self.where, self.shown_as, f"cannot write in {shown(self.path.parent)} "
                                                         f"({_reason(error)})") from None
            self.staging.chmod(0o777 & ~_umask())  # mkdtemp makes it private; a run folder is not
            _OPEN[id(self)] = self._abandon
        except BaseException:
            self._cleanup()
            raise
        return self

    def __exit__(self, *exc) -> None:
        self._cleanup()

    def _check_existing(self) -> None:
        path = self.path
        if not path.exists():
            if path.is_symlink():
                raise _refuse(self.where, self.shown_as, "it is a link to nothing; must be a folder")
            return
        if not path.is_dir():
            raise _refuse(self.where, self.shown_as, "it is a file; must be a folder (new, empty, or an "
                                                     "earlier run's)")
        try:
            entries = list(path.iterdir())
        except OSError as error:
            raise _refuse(self.where, self.shown_as, f"cannot read it ({_reason(error)})") from None
        foreign = sorted(e.name for e in entries if not self._ours(e))
        if not foreign and entries and not (path / self.marker).is_file():  # e.g. your own case.toml alone
            foreign = sorted(e.name for e in entries)
        if foreign:
            more = f" and {len(foreign) - 1} more" if len(foreign) > 1 else ""
            raise _refuse(self.where, self.shown_as, f"it holds {shown(foreign[0])}{more}, which is not an earlier "
                                                     "run's; a run replaces the whole folder, so choose a new or "
                                                     "empty folder or an earlier run's")

    def _ours(self, entry: Path) -> bool:
        """An earlier run's file, or a temporary file one left (``.<file>.<random>``)."""
        if entry.is_symlink() or not entry.is_file():
            return False
        name = entry.name
        return name in self.known or (name.startswith(".") and any(name.startswith(f".{k}.") for k in self.known))

    def _make_parents(self) -> None:
        missing = [p for p in reversed(self.path.parents) if not p.exists()]
        try:
            for folder in missing:
                folder.mkdir()
                self._created.append(folder)
        except OSError as error:
            raise _refuse(self.where, self.shown_as, f"cannot create {shown(folder)} ({_reason(error)})") from None

    def publish(self) -> None:
        """Put the staging folder in the run folder's place, in one rename where possible."""
        assert self.staging is not None and not self._published
        if self.path.exists() and _exchange(self.staging, self.path):
            self._published = True  # the staging name now holds the earlier run, removed on exit
            return
        if self.path.exists():
            old = Path(tempfile.mkdtemp(prefix=f".{self.path.name}.old-", dir=self.path.parent))
            os.replace(self.path, old / "run")
            try:
                os.replace(self.staging, self.path)
            except BaseException:  # put the earlier run back
                os.replace(old / "run", self.path)
                old.rmdir()
                raise
            self.staging = old
        else:
            os.replace(self.staging, self.path)
            self.staging = None
        self._published = True

    def _abandon(self) -> None:
        """From the signal watch, the main thread stuck in a library call: nothing is being
        written (the writing holds stop signals), so the staging folder can go."""
        if not self._published and self.staging is not None:
            shutil.rmtree(self.staging, ignore_errors=True)
            for folder in reversed(self._created):  # its lock is removed before (opened before)
                with contextlib.suppress(OSError):
                    folder.rmdir()

    def _cleanup(self) -> None:
        _OPEN.pop(id(self), None)
        if self.staging is not None:
            shutil.rmtree(self.staging, ignore_errors=True)
            self.staging = None
        self._stack.close()
        if not self._published:
            for folder in reversed(self._created):
                with contextlib.suppress(OSError):
                    folder.rmdir()


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


_RENAME_EXCHANGE, _AT_FDCWD = 2, -100  # linux/fs.h, fcntl.h


def _exchange(a: Path, b: Path) -> bool:
    """Swap two paths atomically (Linux renameat2 RENAME_EXCHANGE); False where not offered."""
    try:
        renameat2 = ctypes.CDLL(None, use_errno=True).renameat2
    except (AttributeError, OSError):
        return False
    renameat2.argtypes = [ctypes.c_int, ctypes.c_char_p, ctypes.c_int, ctypes.c_char_p, ctypes.c_uint]
    if renameat2(_AT_FDCWD, os.fsencode(a), _AT_FDCWD, os.fsencode(b), _RENAME_EXCHANGE) == 0:
        return True
    code = ctypes.get_errno()
    if code in (errno.ENOSYS, errno.EINVAL, errno.EOPNOTSUPP):
        return False
    raise OSError(code, os.strerror(code), str(b))
