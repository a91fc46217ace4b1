"""Work done beside the main computation: tasks run in order by a forked child process.

``stability analyze`` draws its two figures while it reads and computes: a
child process started at the beginning loads the plotting library while the
parent reads the log, then forks a second lane from itself; the first lane
draws the data-over-time figure while the parent computes the statistics, the
second draws the stability plot as soon as the results table arrives. Drawing
is pure Python, so on a machine with two or more cores it then costs little
wall time.

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


_DONE = b"done"  # a lane's report when every task succeeded


def _serve(tasks_fd: int, report_fd: int) -> int:
    """Run the tasks arriving on ``tasks_fd`` until end of file; report; return the status."""
    status, payload = 0, _DONE
    try:
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
        payload = _failure(exc)
    try:
        _write_all(report_fd, payload)
    except OSError:
        status = 1
    return status


def _failure(exc: BaseException) -> bytes:
    text = "".join(traceback.format_exception(exc))
    try:
        return pickle.dumps((exc, text))
    except Exception:  # noqa: BLE001 - an exception that cannot be pickled
        return pickle.dumps((None, text))


def _child(lanes: list[tuple[int, int]], warm_up: tuple[str, ...]) -> None:
    """The first lane's process: warm up, fork the other lanes from itself, serve lane 0.

    The other lanes are forked after the warm-up, so they start with the warmed-up
    modules in memory instead of loading them a second time.
    """
    status = 0
    try:
        signal.signal(signal.SIGINT, signal.SIG_DFL)
        for name in warm_up:
            importlib.import_module(name)
    except BaseException as exc:  # noqa: BLE001 - reported on every lane
        for _, report_fd in lanes:
            try:
                _write_all(report_fd, _failure(exc))
            except OSError:
                pass
        os._exit(1)
    others: list[int] = []

    def stop(_signum: int, _frame: Any) -> None:  # cancel(): stop and reap the other lanes too
        for other in others:
            try:
                os.kill(other, signal.SIGKILL)
                os.waitpid(other, 0)
            except OSError:
                pass
        os._exit(1)

    signal.signal(signal.SIGTERM, stop)
    for index in range(1, len(lanes)):
        pid = os.fork()
        if pid == 0:
            signal.signal(signal.SIGTERM, signal.SIG_DFL)
            # lane 0's ends and those of lanes not forked yet (earlier ones are closed here)
            for j, (tasks_fd, report_fd) in enumerate(lanes):
                if j == 0 or j > index:
                    os.close(tasks_fd)
                    os.close(report_fd)
            os._exit(_serve(*lanes[index]))
        others.append(pid)
        os.close(lanes[index][0])
        os.close(lanes[index][1])
    try:
        status = _serve(*lanes[0])
        for pid in others:  # reap the other lanes before leaving
            os.waitpid(pid, 0)
    finally:
        os._exit(status)


class BackgroundWorker:
    """Run tasks beside the caller, in order within each lane; :meth:`wait` for them all.

    Parameters
    ----------
    label
        A few words naming the work, used in error messages.
    warm_up
        Modules the worker imports before its first task (while the caller
        goes on with its own work).
    lanes
        Number of processes; tasks of different lanes run side by side (each
        lane is forked from the first after its warm-up).
    """

    def __init__(self, *, label: str, warm_up: tuple[str, ...] = (), lanes: int = 1) -> None:
        self.label = label
        self.lanes = max(1, int(lanes))
        self._serial: list[tuple[Callable[..., Any], tuple, dict]] = []
        self._pid: int | None = None
        self._done = False
        if forking_enabled():
            self._start(tuple(warm_up))

    @property
    def forked(self) -> bool:
        """True when the tasks run in child processes."""
        return self._pid is not None

    def _start(self, warm_up: tuple[str, ...]) -> None:
        parent_ends, child_ends = [], []
        for _ in range(self.lanes):
            tasks_read, tasks_write = os.pipe()
            try:  # a 1 MiB pipe buffer: large arguments go across in few writes
                import fcntl  # POSIX only; this path runs on Linux only

                fcntl.fcntl(tasks_write, _F_SETPIPE_SZ, 1 << 20)
            except OSError:
                pass
            report_read, report_write = os.pipe()
            parent_ends.append((tasks_write, report_read))
            child_ends.append((tasks_read, report_write))
        for stream in (sys.stdout, sys.stderr):  # nothing buffered may be written twice
            try:
                stream.flush()
            except (OSError, ValueError, AttributeError):
                pass
        pid = os.fork()
        if pid == 0:
            try:
                for fd_pair in parent_ends:
                    for fd in fd_pair:
                        os.close(fd)
            finally:
                _child(child_ends, warm_up)
        for fd_pair in child_ends:
            for fd in fd_pair:
                os.close(fd)
        self._pid = pid
        self._tasks_fds = [t for t, _ in parent_ends]
        self._report_fds = [r for _, r in parent_ends]
        self._queues: list[queue.Queue[bytes | None]] = [queue.Queue() for _ in parent_ends]
        self._writers = [
            threading.Thread(target=self._send, args=(lane,), daemon=True)
            for lane in range(self.lanes)
        ]
        for writer in self._writers:
            writer.start()

    def _send(self, lane: int) -> None:
        """Writer thread of a lane: frames go out in order; a lane that died ends the sending."""
        fd = self._tasks_fds[lane]
        while True:
            frame = self._queues[lane].get()
            if frame is None:
                break
            try:
                _write_all(fd, frame)
            except OSError:  # the lane has gone; wait() reports why
                break
        try:
            os.close(fd)
        except OSError:
            pass

    def submit(self, func: Callable[..., Any], *args: Any, **kwargs: Any) -> None:
        """Queue ``func(*args, **kwargs)`` on lane 0; ``func`` must be a module-level function."""
        self.submit_to(0, func, *args, **kwargs)

    def submit_to(self, lane: int, func: Callable[..., Any], *args: Any, **kwargs: Any) -> None:
        """Queue ``func(*args, **kwargs)`` on one lane (0 ... lanes - 1)."""
        if self._done:
            raise AnalysisError(f"{self.label}: the worker has already finished")
        if not 0 <= lane < self.lanes:
            raise AnalysisError(f"{self.label}: no lane {lane} (lanes 0 to {self.lanes - 1})")
        if self._pid is None:
            self._serial.append((func, args, kwargs))
            return
        body = pickle.dumps((func, args, kwargs), protocol=pickle.HIGHEST_PROTOCOL)
        self._queues[lane].put(_HEADER.pack(len(body)) + body)

    def wait(self) -> None:
        """Wait for every task; raise what the first failing one raised (once)."""
        if self._done:
            return
        self._done = True
        if self._pid is None:
            for func, args, kwargs in self._serial:
                func(*args, **kwargs)
            return
        for lane_queue in self._queues:
            lane_queue.put(None)
        payloads = []
        try:
            for fd in self._report_fds:
                chunks = []
                while True:
                    block = os.read(fd, 1 << 16)
                    if not block:
                        break
                    chunks.append(block)
                payloads.append(b"".join(chunks))
        finally:
            for fd in self._report_fds:
                os.close(fd)
            _, status = os.waitpid(self._pid, 0)
            for writer in self._writers:
                writer.join()
        for payload in payloads:
            if payload == _DONE:
                continue
            exc, text = pickle.loads(payload) if payload else (None, "")
            if isinstance(exc, BaseException):
                exc.add_note(f"(raised while {self.label}, in a worker process)\n{text}")
                raise exc
            last = text.strip().splitlines()[-1] if text.strip() else f"wait status {status}"
            raise AnalysisError(f"{self.label} failed: {last}")

    def cancel(self) -> None:
        """Stop every lane if still running and reap the worker; nothing is raised."""
        if self._done:
            return
        self._done = True
        if self._pid is None:
            return
        try:  # the first lane stops and reaps the others (see _child)
            os.kill(self._pid, signal.SIGTERM)
        except OSError:
            pass
        for lane_queue in self._queues:
            lane_queue.put(None)
        for fd in self._report_fds:
            os.close(fd)
        os.waitpid(self._pid, 0)
        for writer in self._writers:
            writer.join()
