"""``Watcher``: after each update the outputs equal a one-shot analysis of the same bytes.

The check values are ``stability.workflow.analyze_into`` run once on a file
holding the complete lines the watcher had read (the same name, in another
folder): the tables must match byte for byte and the summaries in everything
but the time of analysis.
"""

from __future__ import annotations

import json
import os
from pathlib import Path

import pytest
from live_logs import ChunkWriter, counter_bytes

from stability.errors import InputError
from stability.live.watch import Watcher, next_tau
from stability.reports.tables import table_csv, table_markdown
from stability.run import run_analysis
from stability.settings import RunSettings
from stability.summary import summary_json
from stability.workflow import analyze_into

SETTINGS = RunSettings.from_options(stats="oadev,mdev")


class FakeClock:
    def __init__(self) -> None:
        self.t = 1000.0

    def __call__(self) -> float:
        return self.t

    def sleep(self, seconds: float) -> None:
        self.t += seconds


def _summary(path: Path) -> dict:
    data = json.loads(path.read_text(encoding="utf-8"))
    data.pop("analysis_time")
    return data


def _equals_one_shot(
    tmp_path: Path, watcher: Watcher, name: str = "counter.csv", *, figures: bool = False
) -> None:
    """The watcher's outputs equal a one-shot analysis of a file with the same bytes.

    With ``figures`` the one-shot run is ``analyze_into`` itself (all five files);
    without, the same run's texts are made by the functions ``analyze_into`` writes
    them with (the figures are then only checked to exist), to keep the test fast.
    """
    folder = tmp_path / "one-shot"
    folder.mkdir(exist_ok=True)
    (folder / name).write_bytes(watcher.growing.data())
    cwd = os.getcwd()
    os.chdir(folder)
    try:
        if figures:
            _, files = analyze_into(name, "out", SETTINGS)
            texts = {k: files[k].read_bytes() for k in ("table.csv", "table.md")}
            summary = _summary(files["summary.json"])
        else:
            run = run_analysis(name, SETTINGS)
            texts = {
                "table.csv": table_csv(run.table).encode(),
                "table.md": table_markdown(run.table).encode(),
            }
            summary = json.loads(summary_json(run.summary()))
            summary.pop("analysis_time")
    finally:
        os.chdir(cwd)
    got = watcher.written
    assert got["table.csv"].read_bytes() == texts["table.csv"]
    assert got["table.md"].read_bytes() == texts["table.md"]
    assert _summary(got["summary.json"]) == summary
    assert got["sigma_tau"].stat().st_size > 0 and got["series"].stat().st_size > 0


def test_validation_messages(tmp_path):
    with pytest.raises(InputError, match="every must be a positive number"):
        Watcher(tmp_path / "a.csv", tmp_path / "out", every=0)
    with pytest.raises(InputError, match="stall must be a positive number"):
        Watcher(tmp_path / "a.csv", tmp_path / "out", stall=float("inf"))
    with pytest.raises(InputError, match="rows must be a positive number"):
        Watcher(tmp_path / "a.csv", tmp_path / "out", rows=0)
    with pytest.raises(InputError, match="unknown plot format"):
        Watcher(tmp_path / "a.csv", tmp_path / "out", plot_format="gif")


def test_outputs_after_each_update_equal_one_shot(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    clock = FakeClock()
    writer = ChunkWriter(tmp_path / "counter.csv", counter_bytes(2400), seed=4, hi=16000)
    watcher = Watcher(
        "counter.csv",
        "out",
        SETTINGS,
        every=90,
        rows=1200,
        stall=30,
        clock=clock,
        sleep=clock.sleep,
    )
    status = watcher.step()
    assert status.missing and status.waiting == "the log does not exist (yet)"
    analyses = 0
    while not writer.done:
        writer.write()
        status = watcher.step()
        assert not status.stalled
        if status.analyses > analyses:  # a new analysis was written: check it
            analyses = status.analyses
            _equals_one_shot(tmp_path, watcher)
            assert status.run is not None and status.waiting == ""
        clock.sleep(20)
    assert analyses >= 3
    # silence: the logger counts as stalled after 30 s without a new line
    clock.sleep(31)
    status = watcher.step()
    assert status.stalled and status.silent_for > 30
    # the final analysis covers every complete line
    status = watcher.finish()
    _equals_one_shot(tmp_path, watcher, figures=True)
    assert status.lines == counter_bytes(2400).count(b"\n")


def test_rotation_starts_over(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    clock = FakeClock()
    log = tmp_path / "counter.csv"
    log.write_bytes(counter_bytes(600, seed=1))
    watcher = Watcher("counter.csv", "out", SETTINGS, clock=clock, sleep=clock.sleep)
    assert watcher.step().analyses == 1
    _equals_one_shot(tmp_path, watcher)
    log.rename(tmp_path / "counter.csv.1")
    fresh = counter_bytes(500, seed=2)
    log.write_bytes(fresh[:-9])  # the new file's last line not finished yet
    status = watcher.step()
    assert status.analyses == 2 and any("rotated" in n for n in status.notes)
    assert watcher.growing.data() == fresh[: fresh[:-9].rfind(b"\n") + 1]
    _equals_one_shot(tmp_path, watcher)


def test_short_log_waits_with_the_reason(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    clock = FakeClock()
    (tmp_path / "counter.csv").write_bytes(b"time_utc,frequency_hz\n2026-03-04T22:00:00Z,1")
    watcher = Watcher("counter.csv", "out", SETTINGS, clock=clock, sleep=clock.sleep)
    status = watcher.step()
    assert status.run is None and "no data rows" in status.waiting
    assert not (tmp_path / "out" / "table.csv").exists()


def test_interrupt_writes_the_final_analysis(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    clock = FakeClock()
    writer = ChunkWriter(tmp_path / "counter.csv", counter_bytes(1800), seed=9, hi=12000)
    looks = []

    def sleep(seconds: float) -> None:
        clock.sleep(seconds)
        if writer.done:
            raise KeyboardInterrupt
        writer.write()

    watcher = Watcher(
        "counter.csv", "out", SETTINGS, every=3600, rows=10**6, clock=clock, sleep=sleep
    )
    status = watcher.run(poll=1.0, on_status=looks.append)
    assert status.lines == counter_bytes(1800).count(b"\n")
    assert status.analyses == 2  # the first, as soon as the log could be read, and the final
    _equals_one_shot(tmp_path, watcher, figures=True)
    assert looks[-1] is status or looks[-1] == status


def test_next_tau_says_when_the_next_octave_has_terms(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "counter.csv").write_bytes(counter_bytes(1000))
    watcher = Watcher("counter.csv", "out", SETTINGS)
    run = watcher.step().run
    nxt = next_tau(run)
    # OADEV's largest averaging factor is (N - 1) // 2 (common practice; the registry's
    # max_m): the octave grid has m = 256 at N = 1001 phase samples (1000 readings less
    # the 7 lost and the error, still on the grid), m = 512 needs N >= 1025
    assert nxt.statistic == "oadev" and nxt.tau == 512.0
    assert nxt.samples_needed == 1025 - run.measurement.n
    assert nxt.seconds == nxt.samples_needed * 1.0


def test_doubled_log_is_analysed_before_the_interval(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    clock = FakeClock()
    data = counter_bytes(1300)
    lines = data.splitlines(keepends=True)
    log = tmp_path / "counter.csv"
    log.write_bytes(b"".join(lines[:600]))
    watcher = Watcher("counter.csv", "out", SETTINGS, every=3600, clock=clock, sleep=clock.sleep)
    assert watcher.step().analyses == 1
    with open(log, "ab") as fh:
        fh.write(b"".join(lines[600:900]))
    assert watcher.step().analyses == 1  # half as many new lines: not yet
    with open(log, "ab") as fh:
        fh.write(b"".join(lines[900:1200]))
    assert watcher.step().analyses == 2  # doubled: the next octave of tau is there
    _equals_one_shot(tmp_path, watcher)
