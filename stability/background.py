"""Work done beside the main computation: tasks run in order by a forked child process.

``stability analyze`` draws its two figures while it reads and computes: a
child process started at the beginning loads the plotting library while the
parent reads the log, draws the data-over-time figure while the parent computes
the statistics, and draws the stability plot once the results table arrives.
Drawing is pure Python, so on a machine with two or more cores it then costs
almost no wall time.

On Linux the worker is a child made with ``fork()`` [1]_, which shares the
parent's memory copy-on-write; tasks (a module-level function and its
arguments) reach it pickled through a pipe, written by a small thread of the
parent so that a long task never blocks the parent's own work. Elsewhere, when
the caller runs other threads, or when the environment variable
``STABILITY_SERIAL`` is set to anything but ``0`` or empty, the tasks simply
run in order when :meth:`BackgroundWorker.wait` is called. Either way the
caller sees the same outcome: ``wait`` returns once every task is done, or
raises the first error a task raised.

The child never returns into the caller's code: it runs the tasks, reports
success or the pickled exception (with its traceback text) through a second
pipe, and leaves with ``os._exit`` so that no buffered output or exit handler
of the parent runs twice [2]_.

References
----------
.. [1] IEEE Std 1003.1-2017 (POSIX), ``fork()``: the child is a copy of the
   calling thread's process; which is why the worker is started only on Linux,
   where the libraries used here (numpy, matplotlib's Agg) are fork-safe, and
   before the parent starts threads of its own.
.. [2] Python documentation, ``os._exit``: "Exit the process ... without calling
   cleanup handlers, flushing stdio buffers, etc." (meant for a child after fork).
"""

from __future__ import annotations

import importlib
import os
import pickle
import queue
import signal
import struct
import sys
import threading
import traceback
from collections.abc import Callable
from typing import Any

from .errors import AnalysisError

__all__ = ["BackgroundWorker", "forking_enabled"]

_HEADER = struct.Struct("<Q")
#: fcntl command that sets a pipe's buffer size (Linux, fcntl(2)).
_F_SETPIPE_SZ = 1031


def forking_enabled() -> bool:
    """True when tasks run in a forked child.

    That is on Linux, with STABILITY_SERIAL unset or 0, and while the caller's
    process runs no other Python thread (a thread could hold a lock at the moment
    of the fork; in a notebook or a threaded application the tasks run in-process).
    """
    if os.environ.get("STABILITY_SERIAL", "").strip() not in ("", "0"):
        return False
    if threading.active_count() != 1:
        return False
    return sys.platform.startswith("linux") and hasattr(os, "fork")


def _read_exactly(fd: int, size: int) -> bytes | None:
    """``size`` bytes from a pipe, or None at end of file."""
    chunks, got = [], 0
    while got < size:
        block = os.read(fd, min(size - got, 1 << 20))
        if not block:
            return None
        chunks.append(block)
        got += len(block)
    return b"".join(chunks)


def _write_all(fd: int, data: bytes) -> None:
    view = memoryview(data)
    while view:
        view = view[os.write(fd, view) :]


def _child(tasks_fd: int, report_fd: int, warm_up: tuple[str, ...]) -> None:
    """The worker's whole life: warm up, run each task sent, report, exit."""
    status, payload = 0, b""
    try:
        signal.signal(signal.SIGINT, signal.SIG_DFL)
        for name in warm_up:
            importlib.import_module(name)
        while True:
            header = _read_exactly(tasks_fd, _HEADER.size)
            if header is None:
                break
            body = _read_exactly(tasks_fd, _HEADER.unpack(header)[0])
            if body is None:
                break
            func, args, kwargs = pickle.loads(body)
            func(*args, **kwargs)
    except BaseException as exc:  # noqa: BLE001 - everything goes back to the parent
        status = 1
        text = "".join(traceback.format_exception(exc))
        try:
            payload = pickle.dumps((exc, text))
        except Exception:  # noqa: BLE001 - an exception that cannot be pickled
            payload = pickle.dumps((None, text))
    try:
        _write_all(report_fd, payload)
    finally:
        os._exit(status)


class BackgroundWorker:
    """Run tasks, in the order submitted, beside the caller; :meth:`wait` for them all.

    Parameters
    ----------
    label
        A few words naming the work, used in error messages.
    warm_up
        Modules the worker imports before its first task (while the caller
        goes on with its own work).
    """

    def __init__(self, *, label: str, warm_up: tuple[str, ...] = ()) -> None:
        self.label = label
        self._serial: list[tuple[Callable[..., Any], tuple, dict]] = []
        self._pid: int | None = None
        self._done = False
        if forking_enabled():
            self._start(tuple(warm_up))

    @property
    def forked(self) -> bool:
        """True when the tasks run in a child process."""
        return self._pid is not None

    def _start(self, warm_up: tuple[str, ...]) -> None:
        tasks_read, tasks_write = os.pipe()
        try:  # a 1 MiB pipe buffer: large arguments go across in few writes
            import fcntl  # POSIX only; this path runs on Linux only

            fcntl.fcntl(tasks_write, _F_SETPIPE_SZ, 1 << 20)
        except OSError:
            pass
        report_read, report_write = os.pipe()
        for stream in (sys.stdout, sys.stderr):  # nothing buffered may be written twice
            try:
                stream.flush()
            except (OSError, ValueError, AttributeError):
                pass
        pid = os.fork()
        if pid == 0:
            os.close(tasks_write)
            os.close(report_read)
            _child(tasks_read, report_write, warm_up)
        os.close(tasks_read)
        os.close(report_write)
        self._pid, self._tasks_fd, self._report_fd = pid, tasks_write, report_read
        self._queue: queue.Queue[bytes | None] = queue.Queue()
        self._writer = threading.Thread(target=self._send, daemon=True)
        self._writer.start()

    def _send(self) -> None:
        """Writer thread: frames go out in order; a child that died ends the sending."""
        while True:
            frame = self._queue.get()
            if frame is None:
                break
            try:
                _write_all(self._tasks_fd, frame)
            except OSError:  # the child has gone; wait() reports why
                break
        try:
            os.close(self._tasks_fd)
        except OSError:
            pass

    def submit(self, func: Callable[..., Any], *args: Any, **kwargs: Any) -> None:
        """Queue ``func(*args, **kwargs)``; ``func`` must be a module-level function."""
        if self._done:
            raise AnalysisError(f"{self.label}: the worker has already finished")
        if self._pid is None:
            self._serial.append((func, args, kwargs))
            return
        body = pickle.dumps((func, args, kwargs), protocol=pickle.HIGHEST_PROTOCOL)
        self._queue.put(_HEADER.pack(len(body)) + body)

    def wait(self) -> None:
        """Wait for every task; raise what the first failing one raised (once)."""
        if self._done:
            return
        self._done = True
        if self._pid is None:
            for func, args, kwargs in self._serial:
                func(*args, **kwargs)
            return
        self._queue.put(None)
        try:
            payload = b""
            while True:
                block = os.read(self._report_fd, 1 << 16)
                if not block:
                    break
                payload += block
        finally:
            os.close(self._report_fd)
            _, status = os.waitpid(self._pid, 0)
            self._writer.join()
        if status == 0 and not payload:
            return
        exc, text = pickle.loads(payload) if payload else (None, "")
        if isinstance(exc, BaseException):
            exc.add_note(f"(raised while {self.label}, in a worker process)\n{text}")
            raise exc
        last = text.strip().splitlines()[-1] if text.strip() else f"wait status {status}"
        raise AnalysisError(f"{self.label} failed: {last}")

    def cancel(self) -> None:
        """Stop the worker if it still runs and reap it; nothing is raised."""
        if self._done:
            return
        self._done = True
        if self._pid is None:
            return
        try:
            os.kill(self._pid, signal.SIGTERM)
        except ProcessLookupError:
            pass
        self._queue.put(None)
        os.close(self._report_fd)
        os.waitpid(self._pid, 0)
        self._writer.join()
