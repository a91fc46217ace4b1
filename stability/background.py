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
import warnings
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
    """Run the tasks arriving on ``tasks_fd`` until end of file; report; return the status.

    The report pipe is closed here, before the process waits for anything else,
    so the parent sees each lane's end as soon as that lane is done.
    """
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
    finally:
        os.close(report_fd)
    return status


def _failure(exc: BaseException) -> bytes:
    """The report of a failed lane: the pickled exception (if it pickles) and its traceback."""
    text = "".join(traceback.format_exception(exc))
    try:
        exc_bytes: bytes | None = pickle.dumps(exc)
    except Exception:  # noqa: BLE001 - an exception that cannot be pickled
        exc_bytes = None
    return pickle.dumps((exc_bytes, text))


def _die_with_parent() -> None:
    """Ask Linux to send SIGTERM to this process when its parent dies (prctl(2))."""
    try:
        import ctypes

        ctypes.CDLL(None).prctl(1, signal.SIGTERM)  # 1 = PR_SET_PDEATHSIG
    except (OSError, AttributeError):  # not Linux or no libc: lanes end at end of input
        pass


def _child(lanes: list[tuple[int, int]], warm_up: tuple[str, ...]) -> None:
    """The first lane's process: warm up, fork the other lanes from itself, serve lane 0.

    The other lanes are forked after the warm-up, so they start with the warmed-up
    modules in memory instead of loading them a second time. Never returns.
    """
    others: list[int] = []

    def stop(_signum: int, _frame: Any) -> None:  # cancel(): stop and reap the other lanes too
        for other in others:
            try:
                os.kill(other, signal.SIGKILL)
                os.waitpid(other, 0)
            except OSError:
                pass
        os._exit(1)

    status = 1
    try:
        signal.signal(signal.SIGINT, signal.SIG_DFL)
        signal.signal(signal.SIGTERM, stop)
        _die_with_parent()
        forked = 1
        try:
            for name in warm_up:
                importlib.import_module(name)
            for index in range(1, len(lanes)):
                pid = os.fork()
                if pid == 0:
                    try:
                        signal.signal(signal.SIGTERM, signal.SIG_DFL)
                        _die_with_parent()
                        # lane 0's ends and those of lanes not forked yet (the others are
                        # closed in lane 0 already)
                        for j, (tasks_fd, report_fd) in enumerate(lanes):
                            if j == 0 or j > index:
                                os.close(tasks_fd)
                                os.close(report_fd)
                        status = _serve(*lanes[index])
                    finally:
                        os._exit(status)
                others.append(pid)
                forked += 1
                os.close(lanes[index][0])
                os.close(lanes[index][1])
        except BaseException as exc:  # noqa: BLE001 - reported on every lane not running
            report = _failure(exc)
            for j in [0, *range(forked, len(lanes))]:
                try:
                    _write_all(lanes[j][1], report)
                    os.close(lanes[j][1])
                except OSError:
                    pass
            for pid in others:
                os.waitpid(pid, 0)
            status = 1
            return
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
        self._done = False  # no more tasks are taken
        self._reaped = True  # no child process is left to stop or wait for
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
        try:
            with warnings.catch_warnings():
                # Python 3.12+ warns on fork() when the OS reports other threads; here
                # those are only the BLAS pool's, which re-initialises after a fork
                # (the caller's process runs no other Python thread, see forking_enabled).
                warnings.filterwarnings("ignore", "This process .* is multi-threaded")
                pid = os.fork()
        except OSError:  # no process to spare: the tasks run here, at wait()
            for fd_pair in (*parent_ends, *child_ends):
                for fd in fd_pair:
                    os.close(fd)
            return
        if pid == 0:
            try:
                for fd_pair in parent_ends:
                    for fd in fd_pair:
                        os.close(fd)
                _child(child_ends, warm_up)
            finally:
                os._exit(1)  # never back into the caller's code
        for fd_pair in child_ends:
            for fd in fd_pair:
                os.close(fd)
        self._pid, self._reaped = pid, False
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
            raise AnalysisError(f"{self.label}: the worker takes no more tasks")
        if not 0 <= lane < self.lanes:
            raise AnalysisError(f"{self.label}: no lane {lane} (lanes 0 to {self.lanes - 1})")
        if self._pid is None:
            self._serial.append((func, args, kwargs))
            return
        body = pickle.dumps((func, args, kwargs), protocol=pickle.HIGHEST_PROTOCOL)
        self._queues[lane].put(_HEADER.pack(len(body)) + body)

    def _read_reports(self) -> list[bytes]:
        """Every lane's report, read side by side until each pipe ends (none can block another)."""
        import selectors

        chunks: dict[int, list[bytes]] = {fd: [] for fd in self._report_fds}
        with selectors.DefaultSelector() as selector:
            for fd in self._report_fds:
                selector.register(fd, selectors.EVENT_READ)
            open_fds = set(self._report_fds)
            while open_fds:
                for key, _ in selector.select():
                    block = os.read(key.fd, 1 << 16)
                    if block:
                        chunks[key.fd].append(block)
                    else:
                        selector.unregister(key.fd)
                        open_fds.discard(key.fd)
        return [b"".join(chunks[fd]) for fd in self._report_fds]

    def _reap(self, stop: bool) -> int:
        """Close the report pipes, wait for lane 0 (stopping it first if asked); its status."""
        if self._reaped:
            return 0
        self._reaped = True
        assert self._pid is not None
        if stop:
            try:  # the first lane stops and reaps the others (see _child)
                os.kill(self._pid, signal.SIGTERM)
            except OSError:
                pass
        for lane_queue in self._queues:
            lane_queue.put(None)
        for fd in self._report_fds:
            try:
                os.close(fd)
            except OSError:
                pass
        status = 0
        try:
            status = os.waitstatus_to_exitcode(os.waitpid(self._pid, 0)[1])
        except ChildProcessError:  # SIGCHLD ignored by the host: nothing to reap
            pass
        for writer in self._writers:
            writer.join()
        return status

    def wait(self) -> None:
        """Wait for every task; raise what the first failing lane raised (once).

        Interrupted (for example by Ctrl-C), it stops the lanes before passing
        the interruption on.
        """
        if self._done:
            return
        self._done = True
        if self._pid is None:
            for func, args, kwargs in self._serial:
                func(*args, **kwargs)
            return
        for lane_queue in self._queues:
            lane_queue.put(None)
        try:
            payloads = self._read_reports()
        except BaseException:
            self._reap(stop=True)
            raise
        status = self._reap(stop=False)
        for lane, payload in enumerate(payloads):
            if payload == _DONE:
                continue
            if not payload:
                raise AnalysisError(
                    f"{self.label} failed: worker lane {lane} ended without a report "
                    f"(killed or crashed; exit code {status})"
                )
            exc_bytes, text = pickle.loads(payload)
            try:
                exc = pickle.loads(exc_bytes) if exc_bytes is not None else None
            except Exception:  # noqa: BLE001 - an exception that cannot be rebuilt here
                exc = None
            if isinstance(exc, BaseException):
                exc.add_note(f"(raised while {self.label}, in a worker process)\n{text}")
                raise exc
            last = text.strip().splitlines()[-1] if text.strip() else "no message"
            raise AnalysisError(f"{self.label} failed: {last}")

    def cancel(self) -> None:
        """Stop every lane if still running and reap the worker; nothing is raised."""
        self._done = True
        if self._pid is None:
            return
        self._reap(stop=True)
