"""Work done beside the main computation: a job run in a forked child process.

``stability analyze`` draws the data-over-time figure while the statistics are
computed: the figure needs only the prepared data, and drawing is pure Python
that would otherwise wait for the statistics (or they for it). On Linux the job
runs in a child made with ``fork()`` [1]_, which starts at once and shares the
parent's memory copy-on-write, so nothing is copied or pickled on the way in.
Elsewhere, or when the environment variable ``STABILITY_SERIAL`` is set to
anything but ``0`` or empty, the job simply runs when its result is asked for.
Either way the caller sees the same outcome: :meth:`BackgroundJob.wait` returns
once the work is done, or raises the error the work raised.

The child never returns into the caller's code: it runs the function, reports
success or the pickled exception (with its traceback text) through a pipe, and
leaves with ``os._exit`` so that no buffered output or exit handler of the
parent runs twice [2]_.

References
----------
.. [1] IEEE Std 1003.1-2017 (POSIX), ``fork()``: the child is a copy of the
   calling thread's process; only async-signal-safe work is portable in a
   multi-threaded parent, which is why the job is started only on Linux, where
   the libraries used here (numpy, matplotlib's Agg) are fork-safe.
.. [2] Python documentation, ``os._exit``: "Exit the process ... without calling
   cleanup handlers, flushing stdio buffers, etc." (meant for a child after fork).
"""

from __future__ import annotations

import os
import pickle
import signal
import sys
import traceback
from collections.abc import Callable
from typing import Any

from .errors import AnalysisError

__all__ = ["BackgroundJob", "forking_enabled"]


def forking_enabled() -> bool:
    """True when jobs run in a forked child (Linux, and STABILITY_SERIAL unset or 0)."""
    if os.environ.get("STABILITY_SERIAL", "").strip() not in ("", "0"):
        return False
    return sys.platform.startswith("linux") and hasattr(os, "fork")


def _read_all(fd: int) -> bytes:
    chunks = []
    while True:
        block = os.read(fd, 1 << 16)
        if not block:
            return b"".join(chunks)
        chunks.append(block)


class BackgroundJob:
    """Run ``func(*args, **kwargs)`` beside the caller; :meth:`wait` for it.

    Parameters
    ----------
    func
        The work; its return value is not kept (it should write its result
        somewhere, e.g. a file).
    label
        A few words naming the work, used in error messages.
    """

    def __init__(self, func: Callable[..., Any], *args: Any, label: str, **kwargs: Any) -> None:
        self.label = label
        self._call = (func, args, kwargs)
        self._pid: int | None = None
        self._fd: int | None = None
        self._done = False
        if forking_enabled():
            self._start()

    @property
    def forked(self) -> bool:
        """True while the work runs (or ran) in a child process."""
        return self._pid is not None

    def _start(self) -> None:
        read_end, write_end = os.pipe()
        for stream in (sys.stdout, sys.stderr):  # nothing buffered may be written twice
            try:
                stream.flush()
            except (OSError, ValueError, AttributeError):
                pass
        pid = os.fork()
        if pid == 0:  # the child: do the work, report, and leave without returning
            os.close(read_end)
            status = 0
            try:
                signal.signal(signal.SIGINT, signal.SIG_DFL)
                func, args, kwargs = self._call
                func(*args, **kwargs)
                payload = b""
            except BaseException as exc:  # noqa: BLE001 - everything goes back to the parent
                status = 1
                text = "".join(traceback.format_exception(exc))
                try:
                    payload = pickle.dumps((exc, text))
                except Exception:  # noqa: BLE001 - an exception that cannot be pickled
                    payload = pickle.dumps((None, text))
            try:
                view = memoryview(payload)
                while view:
                    view = view[os.write(write_end, view) :]
            finally:
                os._exit(status)
        os.close(write_end)
        self._pid, self._fd = pid, read_end

    def wait(self) -> None:
        """Wait for the work; raise what it raised (once). Runs it here when not forked."""
        if self._done:
            return
        self._done = True
        if self._pid is None:
            func, args, kwargs = self._call
            func(*args, **kwargs)
            return
        assert self._fd is not None
        try:
            payload = _read_all(self._fd)
        finally:
            os.close(self._fd)
            _, status = os.waitpid(self._pid, 0)
        if status == 0 and not payload:
            return
        exc, text = pickle.loads(payload) if payload else (None, "")
        if isinstance(exc, BaseException):
            exc.add_note(f"(raised while {self.label}, in a worker process)\n{text}")
            raise exc
        last = text.strip().splitlines()[-1] if text.strip() else f"exit status {status}"
        raise AnalysisError(f"{self.label} failed: {last}")

    def cancel(self) -> None:
        """Stop the work if it still runs and reap the child; nothing is raised."""
        if self._done:
            return
        self._done = True
        if self._pid is None:
            return
        try:
            os.kill(self._pid, signal.SIGTERM)
        except ProcessLookupError:
            pass
        if self._fd is not None:
            os.close(self._fd)
        os.waitpid(self._pid, 0)
