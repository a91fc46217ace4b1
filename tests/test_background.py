"""Tests of stability.background (tasks in a forked child) and its use by analyze_into."""

from __future__ import annotations

import os
import signal
import threading
import time
from pathlib import Path

import numpy as np
import pytest

import stability
from stability.background import BackgroundWorker, forking_enabled
from stability.errors import AnalysisError, InputError
from stability.workflow import _draw_series, _draw_stability, analyze_into

needs_fork = pytest.mark.skipif(not forking_enabled(), reason="jobs run forked only on Linux")


def _write(path: Path, text: str) -> None:
    path.write_text(f"{text} from {os.getpid()}")


def _fail() -> None:
    raise InputError("bad column", path="log.csv", line=7, hint="pass --column")


class _Unpicklable(Exception):
    def __reduce__(self):
        raise TypeError("not picklable")


def _fail_oddly() -> None:
    raise _Unpicklable("odd")


class _NeedsTwo(Exception):
    def __init__(self, a, b):
        super().__init__(f"{a} and {b}")


def _fail_unrebuildable() -> None:
    raise _NeedsTwo("first", "second")  # pickles, but cannot be rebuilt from its args


def _fail_long() -> None:
    raise InputError("x" * 200_000)  # a report far larger than a pipe's buffer


def _pid_then_sleep(path: Path, seconds: float) -> None:
    path.write_text(str(os.getpid()))
    time.sleep(seconds)
    path.with_suffix(".late").write_text("woke up")


def _wait_for(path: Path) -> None:
    for _ in range(2000):  # at most ~20 s; returns as soon as the file is there
        if path.exists() and path.read_text():
            return
        time.sleep(0.01)
    raise AssertionError(f"{path} never appeared")


def _gone(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return True
    return False


@needs_fork
def test_tasks_run_in_order_in_one_child_process(tmp_path):
    first, second = tmp_path / "1.txt", tmp_path / "2.txt"
    worker = BackgroundWorker(label="writing", warm_up=("json",))
    assert worker.forked
    worker.submit(_write, first, "one")
    worker.submit(_write, second, "two")
    worker.wait()
    one, two = first.read_text(), second.read_text()
    assert one.startswith("one from ") and two.startswith("two from ")
    assert one.split()[-1] == two.split()[-1] != str(os.getpid())  # the same child
    worker.wait()  # a second wait does nothing
    with pytest.raises(AnalysisError, match="takes no more tasks"):
        worker.submit(_write, first, "late")


@needs_fork
def test_a_large_task_does_not_block_the_caller(tmp_path):
    # While the lane sleeps, 16 MB of arguments are queued: submit must return before the
    # lane has read them, i.e. before the first task has finished.
    worker = BackgroundWorker(label="copying")
    worker.submit(_pid_then_sleep, tmp_path / "busy.pid", 1.0)
    worker.submit(np.save, tmp_path / "big.npy", np.arange(2_000_000, dtype=np.float64))
    assert not (tmp_path / "busy.late").exists()
    worker.wait()
    assert np.load(tmp_path / "big.npy")[-1] == 1_999_999.0


@needs_fork
def test_child_error_is_raised_in_the_parent(tmp_path):
    worker = BackgroundWorker(label="reading")
    worker.submit(_fail)
    worker.submit(_write, tmp_path / "never.txt", "after")
    with pytest.raises(InputError, match=r"log.csv:7: bad column \(pass --column\)") as caught:
        worker.wait()
    assert any("worker process" in note for note in caught.value.__notes__)
    assert not (tmp_path / "never.txt").exists()  # tasks after a failure do not run


@needs_fork
def test_an_error_that_cannot_travel_becomes_an_analysis_error():
    worker = BackgroundWorker(label="drawing")
    worker.submit(_fail_oddly)
    with pytest.raises(AnalysisError, match="drawing failed: .*odd"):
        worker.wait()


@needs_fork
def test_cancel_stops_a_running_child(tmp_path):
    worker = BackgroundWorker(label="sleeping")
    worker.submit(_pid_then_sleep, tmp_path / "a.pid", 30)
    _wait_for(tmp_path / "a.pid")
    worker.cancel()
    assert _gone(int((tmp_path / "a.pid").read_text()))
    worker.wait()  # after cancel nothing is raised


@needs_fork
def test_an_exception_that_cannot_be_rebuilt_keeps_its_message():
    worker = BackgroundWorker(label="drawing")
    worker.submit(_fail_unrebuildable)
    with pytest.raises(AnalysisError, match="drawing failed: .*first and second"):
        worker.wait()


@needs_fork
def test_a_large_report_on_a_later_lane_does_not_hang():
    worker = BackgroundWorker(label="reading", lanes=2)
    worker.submit_to(1, _fail_long)
    with pytest.raises(InputError, match="x{1000}"):
        worker.wait()


@needs_fork
def test_a_killed_lane_is_reported_as_such(tmp_path):
    worker = BackgroundWorker(label="drawing")
    worker.submit(_pid_then_sleep, tmp_path / "a.pid", 30)
    _wait_for(tmp_path / "a.pid")
    os.kill(int((tmp_path / "a.pid").read_text()), signal.SIGKILL)
    with pytest.raises(AnalysisError, match="lane 0 ended without a report \\(killed or crashed"):
        worker.wait()


@needs_fork
def test_an_interrupted_wait_stops_the_lanes(tmp_path):
    worker = BackgroundWorker(label="sleeping", lanes=2)
    worker.submit_to(0, _pid_then_sleep, tmp_path / "a.pid", 30)
    worker.submit_to(1, _pid_then_sleep, tmp_path / "b.pid", 30)
    _wait_for(tmp_path / "a.pid")
    _wait_for(tmp_path / "b.pid")
    timer = threading.Timer(0.2, lambda: os.kill(os.getpid(), signal.SIGINT))
    timer.start()
    with pytest.raises(KeyboardInterrupt):
        worker.wait()
    timer.join()
    for name in ("a.pid", "b.pid"):
        assert _gone(int((tmp_path / name).read_text()))
    worker.cancel()  # nothing left to do, nothing raised


def test_no_process_to_spare_runs_the_tasks_here(tmp_path, monkeypatch):
    def refuse():
        raise BlockingIOError("fork: resource temporarily unavailable")

    monkeypatch.setattr(os, "fork", refuse)
    worker = BackgroundWorker(label="writing", lanes=2)
    assert not worker.forked
    worker.submit_to(1, _write, tmp_path / "t.txt", "here")
    worker.wait()
    assert (tmp_path / "t.txt").read_text() == f"here from {os.getpid()}"


def test_serial_mode_runs_the_tasks_on_wait(tmp_path, monkeypatch):
    monkeypatch.setenv("STABILITY_SERIAL", "1")
    assert not forking_enabled()
    target = tmp_path / "out.txt"
    worker = BackgroundWorker(label="writing", warm_up=("json",))
    worker.submit(_write, target, "later")
    assert not worker.forked and not target.exists()
    worker.wait()
    assert target.read_text() == f"later from {os.getpid()}"
    failing = BackgroundWorker(label="reading")
    failing.submit(_fail)
    with pytest.raises(InputError, match="bad column"):
        failing.wait()


def _log(tmp_path: Path) -> Path:
    # Invented data: seeded white FM, 1 s samples, written as a plain column.
    y = np.random.default_rng(5).normal(0.0, 1e-11, 3000)
    path = tmp_path / "white.txt"
    path.write_text("".join(f"{v:.6e}\n" for v in y))
    return path


def test_forked_and_serial_runs_write_the_same_files(tmp_path, monkeypatch):
    log = _log(tmp_path)
    forked_run, forked = analyze_into(
        log, tmp_path / "a", kind="fractional", tau0=1.0, stats="oadev,tdev"
    )
    monkeypatch.setenv("STABILITY_SERIAL", "1")
    serial_run, serial = analyze_into(
        log, tmp_path / "b", kind="fractional", tau0=1.0, stats="oadev,tdev"
    )
    assert sorted(p.name for p in (tmp_path / "a").iterdir()) == sorted(
        ["table.csv", "table.md", "summary.json", "sigma_tau.png", "series.png"]
    )
    for name in ("table.csv", "table.md"):
        assert forked[name].read_bytes() == serial[name].read_bytes()
    np.testing.assert_array_equal(
        forked_run.table["oadev"].deviation, serial_run.table["oadev"].deviation
    )
    # the figures drawn in the child are the ones this process draws from the same run
    moment = forked_run.analysis_time
    here = _draw_series(tmp_path / "here.png", "png", *forked_run.series_inputs(), moment)
    assert forked["series"].read_bytes() == here.read_bytes()
    model = forked_run.model_curves()
    here = _draw_stability(tmp_path / "st.png", "png", forked_run.table, model, None, None, moment)
    assert forked["sigma_tau"].read_bytes() == here.read_bytes()
    assert forked["series"].stat().st_size > 20_000


def test_a_failed_analysis_leaves_no_figure_and_no_new_folder(tmp_path):
    log = _log(tmp_path)
    folder = tmp_path / "never"
    with pytest.raises(stability.AnalysisError, match="tau 1e\\+06 s is too long"):
        analyze_into(log, folder, kind="fractional", tau0=1.0, stats="oadev", taus=[1e6])
    assert not folder.exists()
    kept = tmp_path / "kept"
    kept.mkdir()
    with pytest.raises(stability.AnalysisError):
        analyze_into(log, kept, kind="fractional", tau0=1.0, stats="oadev", taus=[1e6])
    assert list(kept.iterdir()) == []  # no pending figure left behind


@pytest.mark.parametrize("serial", [False, True])
def test_a_run_failing_while_drawing_changes_no_earlier_output(tmp_path, monkeypatch, serial):
    if serial:
        monkeypatch.setenv("STABILITY_SERIAL", "1")
    log = _log(tmp_path)
    out = tmp_path / "out"
    opts = {"kind": "fractional", "tau0": 1.0}
    analyze_into(log, out, stats="oadev", **opts)
    before = {p.name: p.read_bytes() for p in out.iterdir()}
    # limits on a statistic the table lacks: the stability plot cannot be drawn
    with pytest.raises(stability.InputError, match="limits_statistic 'hdev' is not in the table"):
        analyze_into(log, out, stats="oadev,mdev", limits_statistic="hdev", **opts)
    assert {p.name: p.read_bytes() for p in out.iterdir()} == before  # nothing new, no pending
    nested = tmp_path / "a" / "b" / "c"
    with pytest.raises(stability.InputError):
        analyze_into(log, nested, stats="oadev", limits_statistic="hdev", **opts)
    assert not (tmp_path / "a").exists()  # every folder made for the run is gone again


def test_no_fork_while_other_threads_run(tmp_path):
    # A thread could hold a lock at the moment of a fork: with one running, tasks run here.
    import threading

    release = threading.Event()
    other = threading.Thread(target=release.wait)
    other.start()
    try:
        assert not forking_enabled()
        worker = BackgroundWorker(label="writing")
        assert not worker.forked
        worker.submit(_write, tmp_path / "t.txt", "here")
        worker.wait()
        assert (tmp_path / "t.txt").read_text() == f"here from {os.getpid()}"
    finally:
        release.set()
        other.join()


@needs_fork
@pytest.mark.parametrize("lanes", [2, 3])
def test_lanes_run_side_by_side_in_their_own_processes(tmp_path, lanes):
    worker = BackgroundWorker(label="writing", warm_up=("json",), lanes=lanes)
    for lane in range(lanes):
        worker.submit_to(lane, _write, tmp_path / f"{lane}.txt", f"lane {lane}")
    worker.wait()
    pids = {(tmp_path / f"{lane}.txt").read_text().split()[-1] for lane in range(lanes)}
    assert len(pids | {str(os.getpid())}) == lanes + 1
    with pytest.raises(AnalysisError, match="takes no more tasks"):
        worker.submit_to(1, _write, tmp_path / "late.txt", "late")


@needs_fork
def test_a_failure_on_the_second_lane_is_raised(tmp_path):
    worker = BackgroundWorker(label="reading", lanes=2)
    worker.submit_to(0, _write, tmp_path / "a.txt", "fine")
    worker.submit_to(1, _fail)
    with pytest.raises(InputError, match="bad column"):
        worker.wait()
    assert (tmp_path / "a.txt").exists()


@needs_fork
def test_a_failed_warm_up_is_raised():
    worker = BackgroundWorker(label="loading", warm_up=("no_such_module_anywhere",), lanes=2)
    worker.submit_to(1, time.sleep, 0)
    with pytest.raises(ModuleNotFoundError, match="no_such_module_anywhere"):
        worker.wait()


@needs_fork
def test_cancel_stops_every_lane(tmp_path):
    worker = BackgroundWorker(label="sleeping", lanes=2)
    worker.submit_to(0, _pid_then_sleep, tmp_path / "a.pid", 30)
    worker.submit_to(1, _pid_then_sleep, tmp_path / "b.pid", 30)
    _wait_for(tmp_path / "a.pid")
    _wait_for(tmp_path / "b.pid")
    worker.cancel()
    for name in ("a.pid", "b.pid"):
        assert _gone(int((tmp_path / name).read_text()))


def test_lanes_in_serial_mode_and_a_missing_lane(tmp_path, monkeypatch):
    monkeypatch.setenv("STABILITY_SERIAL", "1")
    worker = BackgroundWorker(label="writing", lanes=2)
    worker.submit_to(1, _write, tmp_path / "b.txt", "one")
    worker.submit_to(0, _write, tmp_path / "a.txt", "zero")
    with pytest.raises(AnalysisError, match="no lane 2 \\(lanes 0 to 1\\)"):
        worker.submit_to(2, _write, tmp_path / "c.txt", "two")
    worker.wait()
    assert (tmp_path / "a.txt").exists() and (tmp_path / "b.txt").exists()
