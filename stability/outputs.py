"""A command's output files, written all or nothing into one folder.

An :class:`OutputSet` is how every command writes what it writes:

1. before anything is read or written, each output path is checked against the
   inputs: an output that is (or resolves to, through links) an input file is
   refused, so a run can never overwrite its own raw log;
2. the folder is locked for the run (an exclusive ``flock`` on the folder
   itself); a second run into a locked folder is refused with one line;
3. files are written under hidden pending names beside their targets;
4. :meth:`OutputSet.commit` checks every target first (a folder in the way, a
   file that may not be overwritten), then moves the new files in, keeping the
   old ones aside; if any move fails the earlier set is restored, so the folder
   holds either the whole old set or the whole new one. Without ``force`` a
   target is created exclusively (a hard link that fails when the name exists),
   so two runs cannot both think a name was free;
5. on any error, Ctrl-C, SIGTERM or SIGHUP the pending files are removed and the
   folders made for the run go again. SIGTERM and SIGHUP are turned into
   :class:`Interrupted` (a ``KeyboardInterrupt``) while the set is open, so the
   same clean-up runs; the command line exits with 128 + the signal number.
   Pending files left by a process that died without cleaning up (SIGKILL,
   power loss) are swept by the next run into that folder.

References
----------
.. [1] IEEE Std 1003.1-2017 (POSIX): ``rename()`` is atomic within a file
   system; ``link()`` fails with EEXIST when the new name exists; ``flock``
   (BSD; Linux flock(2)) advisory locks are released when the process ends.
"""

from __future__ import annotations

import contextlib
import errno
import fcntl
import os
import re
import secrets
import signal
import threading
from collections.abc import Iterable
from pathlib import Path
from types import FrameType
from typing import Any

from .errors import InputError
from .files import ensure_folder

__all__ = ["OutputSet", "Interrupted", "same_file"]

#: Errors of ``write()`` and ``close()`` (which name no file) that mean the outputs
#: could not be written: no space, quota exceeded, file too large, read-only, I/O.
_WRITE_ERRNOS = (errno.ENOSPC, errno.EDQUOT, errno.EFBIG, errno.EROFS, errno.EIO)
_PENDING = re.compile(r"^\.+(?P<name>.+?)\.(?P<pid>\d+)\.[0-9a-f]{8}\.(pending|old)(\..*)?$")


class Interrupted(KeyboardInterrupt):
    """A run stopped by a signal (SIGTERM, SIGHUP) while writing; ``signum`` says which.

    ``Interrupted.received`` keeps the last signal raised this way in the process:
    a signal that lands while a library's extension module initialises comes out
    as that library's ``ImportError``, not as this exception, and the command's
    error handler still has to call it a stop, not a defect.
    """

    received: int | None = None

    def __init__(self, signum: int) -> None:
        super().__init__(f"stopped by signal {signal.Signals(signum).name}")
        self.signum = signum
        Interrupted.received = signum


def same_file(a: Path, b: Path) -> bool:
    """Whether two paths name one file (same inode, or the same resolved path)."""
    try:
        return os.path.samefile(a, b)
    except OSError:  # one is missing (or a link loop): compare the paths, never raising
        return os.path.realpath(a) == os.path.realpath(b)


def _alive(pid: int) -> bool:
    if pid == os.getpid():
        return True
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    return True


class OutputSet:
    """Outputs written all or nothing into ``folder`` (see the module docstring).

    Parameters
    ----------
    folder
        The output folder (made when missing, removed again on failure if the
        run made it).
    names
        File names of the outputs, relative to the folder.
    inputs
        Input files of the run: an output naming one of them is refused.
    force
        Whether existing outputs may be replaced (default True: a fresh
        analysis replaces the earlier one; a calibration record passes False
        unless the user said ``--force``).
    stale
        Names of earlier outputs this run replaces without writing them again
        (for example the figures of another plot format); they go with the commit.
    """

    def __init__(
        self,
        folder: str | os.PathLike[str],
        names: Iterable[str],
        *,
        inputs: Iterable[str | os.PathLike[str]] = (),
        force: bool = True,
        stale: Iterable[str] = (),
    ) -> None:
        self.folder = Path(folder)
        self.names = list(dict.fromkeys(names))
        self.force = bool(force)
        self.stale = [n for n in dict.fromkeys(stale) if n not in self.names]
        self.pending: dict[str, Path] = {}
        self._made: list[Path] = []
        self._lock: int | None = None
        self._handlers: dict[int, Any] = {}
        self._committed = False
        self._refuse_inputs([Path(p) for p in inputs])

    # ------------------------------------------------------------------ checks
    def _refuse_inputs(self, inputs: list[Path]) -> None:
        for name in self.names:
            target = self.folder / name
            for source in inputs:
                if same_file(target, source):
                    raise InputError(
                        f"the output {name} would overwrite the input file",
                        path=str(source),
                        hint="pass another --out folder",
                    )

    # ------------------------------------------------------------------ context
    def __enter__(self) -> OutputSet:
        self._made = [p for p in (self.folder, *self.folder.parents) if not p.exists()]
        ensure_folder(self.folder)
        try:
            self._acquire_lock()
            if not self.force:  # refuse before anything is computed, not only at commit
                self._refuse_existing()
            self._catch_signals()
            self._sweep()
            self.pending = {name: self._pending_name(name, "pending") for name in self.names}
        except BaseException:
            self._release()
            raise
        return self

    def __exit__(self, kind: Any, exc: Any, tb: Any) -> None:
        try:
            if not self._committed:
                for path in self.pending.values():
                    path.unlink(missing_ok=True)
                    for part in path.parent.glob(f".{path.name}.*"):  # a writer's own temp
                        part.unlink(missing_ok=True)
                for path in self._made:  # folders made for this run (when left empty)
                    with contextlib.suppress(OSError):
                        path.rmdir()
        finally:
            self._release()
        if isinstance(exc, OSError) and self._writing(exc):
            raise self._write_error(exc) from None

    def _writing(self, exc: OSError) -> bool:
        """Whether an error came from writing the outputs (not from reading an input)."""
        if exc.filename is None:  # write() names no file: a full disk, a quota, an I/O error
            return exc.errno in _WRITE_ERRNOS
        return self.folder in Path(exc.filename).parents

    def _write_error(self, exc: OSError) -> InputError:
        """An error met while the outputs were written, naming the file (never a hidden
        pending name) or the folder."""
        where: Path = self.folder
        if exc.filename is not None:
            where = Path(exc.filename)
            for name, pending in self.pending.items():
                if where == pending:
                    where = self.folder / name
        reason = exc.strerror or str(exc)
        hint = "pass another --out"
        if exc.errno in (errno.ENOSPC, errno.EDQUOT):
            hint = "free some space on that disk, or pass an --out folder on another one"
        return InputError(
            f"cannot write the outputs: {reason}; nothing was written",
            path=str(where),
            hint=hint,
        )

    def path(self, name: str) -> Path:
        """The pending path to write output ``name`` to."""
        return self.pending[name]

    def write_text(self, name: str, text: str) -> Path:
        """Write output ``name`` as UTF-8 text (newlines as ``\\n``) to its pending path."""
        with open(self.pending[name], "w", encoding="utf-8", newline="\n") as handle:
            handle.write(text)
        return self.pending[name]

    # ------------------------------------------------------------------ lock and signals
    def _acquire_lock(self) -> None:
        # The lock is taken on the folder itself (flock works on a folder's
        # descriptor), so no lock file is left in it.
        try:
            fd = os.open(self.folder, os.O_RDONLY)
        except OSError as exc:
            raise InputError(
                f"cannot write in the output folder: {exc.strerror or exc}",
                path=str(self.folder),
                hint="pass a writable --out",
            ) from None
        try:
            fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except OSError as exc:
            os.close(fd)
            if exc.errno in (errno.EWOULDBLOCK, errno.EAGAIN, errno.EACCES):
                raise InputError(
                    "another stability run is writing into this folder",
                    path=str(self.folder),
                    hint="wait for it to finish or pass another --out",
                ) from None
            raise
        self._lock = fd

    def _catch_signals(self) -> None:
        if threading.current_thread() is not threading.main_thread():
            return

        def stop(signum: int, frame: FrameType | None) -> None:
            raise Interrupted(signum)

        for signum in (signal.SIGTERM, signal.SIGHUP):
            self._handlers[signum] = signal.signal(signum, stop)

    def _release(self) -> None:
        for signum, handler in self._handlers.items():
            signal.signal(signum, handler)
        self._handlers = {}
        if self._lock is not None:
            fcntl.flock(self._lock, fcntl.LOCK_UN)
            os.close(self._lock)
            self._lock = None

    def _pending_name(self, name: str, kind: str) -> Path:
        target = self.folder / name
        return target.parent / f".{target.name}.{os.getpid()}.{secrets.token_hex(4)}.{kind}"

    def _sweep(self) -> None:
        """Remove pending and set-aside files of processes that no longer run."""
        with contextlib.suppress(OSError):
            for entry in self.folder.iterdir():
                found = _PENDING.match(entry.name)
                if found and not _alive(int(found["pid"])):
                    with contextlib.suppress(OSError):
                        entry.unlink()

    # ------------------------------------------------------------------ commit
    def _refuse_existing(self) -> None:
        for name in self.names:
            target = self.folder / name
            if target.exists():
                raise InputError(
                    "exists already and is not overwritten; nothing was written",
                    path=str(target),
                    hint="pass --force to overwrite it",
                )

    def _check_targets(self) -> None:
        for name in self.names:
            if not self.pending[name].exists():
                raise InputError(f"the output {name} was not written", path=str(self.folder))
            target = self.folder / name
            if target.is_dir():
                raise InputError(
                    f"{name} is a folder, not a file; nothing was replaced",
                    path=str(target),
                    hint="move it away or pass another --out",
                )
        if not self.force:
            self._refuse_existing()

    def commit(self) -> dict[str, Path]:
        """Move every pending file into place, all or nothing; return name -> final path."""
        self._check_targets()
        aside: dict[str, Path] = {}
        placed: list[str] = []
        try:
            for name in [*self.names, *self.stale]:
                target = self.folder / name
                if target.exists() and not target.is_dir():
                    keep = self._pending_name(name, "old")
                    os.replace(target, keep)
                    aside[name] = keep
            for name in self.names:
                target = self.folder / name
                if self.force:
                    os.replace(self.pending[name], target)
                else:
                    os.link(self.pending[name], target)  # fails if the name was taken meanwhile
                    self.pending[name].unlink()
                placed.append(name)
        except BaseException as exc:
            for name in placed:
                with contextlib.suppress(OSError):
                    (self.folder / name).unlink()
            for name, keep in aside.items():
                with contextlib.suppress(OSError):
                    os.replace(keep, self.folder / name)
            if isinstance(exc, FileExistsError):
                raise InputError(
                    "another run wrote this output meanwhile; nothing was written",
                    path=str(exc.filename or self.folder),
                    hint="pass --force to overwrite it",
                ) from None
            if isinstance(exc, OSError):
                raise InputError(
                    f"cannot write the outputs: {exc.strerror or exc}; the earlier files were kept",
                    path=str(self.folder),
                ) from None
            raise
        for keep in aside.values():
            with contextlib.suppress(OSError):
                keep.unlink()
        self._committed = True
        return {name: self.folder / name for name in self.names}
