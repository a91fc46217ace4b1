"""``stability watch``: the command line, and the live panel rendered through rich's test console.

Exit codes as written down in cli/common.py (0 success, 1 input error, 2 usage
error). The panel is drawn by ``stability_cli.watch_panel.panel`` into a
``rich.console.Console(record=True)`` writing to a string.
"""

from __future__ import annotations

import hashlib
import io
import json
import signal
import subprocess
import sys
from pathlib import Path

import pytest
from rich.console import Console
from typer.testing import CliRunner

from stability.live.watch import Watcher
from stability.settings import RunSettings
from stability_cli.main import app
from stability_cli.watch_panel import PlainReport, key_rows, panel

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "live"))
from live_logs import counter_bytes  # noqa: E402

runner = CliRunner()


class FakeClock:
    def __init__(self) -> None:
        self.t = 50.0

    def __call__(self) -> float:
        return self.t


@pytest.fixture()
def log(tmp_path, monkeypatch) -> Path:
    monkeypatch.chdir(tmp_path)
    path = tmp_path / "counter.csv"
    path.write_bytes(counter_bytes(1200))
    return path


def _render(renderable, width: int = 130) -> Console:
    console = Console(record=True, file=io.StringIO(), width=width, color_system="truecolor")
    console.print(renderable)
    return console


def test_panel_shows_the_state_of_the_run(log):
    clock = FakeClock()
    watcher = Watcher(log.name, "out", RunSettings.from_options(stats="oadev,mdev"), clock=clock)
    status = watcher.step()
    text = _render(panel(status)).export_text()
    assert "watching counter.csv" in text
    # 1200 one-second slots; 7 readings lost in the outage and one error string are gaps
    assert "readings   1200 (tau0 1 s)" in text and "gaps       8 missing" in text
    assert "span" in text and "last line" in text and "next tau" in text
    assert "oadev" in text and "mdev" in text and "WFM" in text
    rows = key_rows(status.run)
    assert [r[1] for r in rows if r[0] == "oadev"] == [1.0, 8.0, 128.0]
    for _name, _tau, dev, lo, hi, _noise, terms in rows:
        assert lo <= dev <= hi and terms > 0
    # silent longer than --stall: the line turns red and says so
    clock.t += watcher.stall + 5
    stalled = watcher.status()
    console = _render(panel(stalled))
    assert "the logger has stalled" in console.export_text(clear=False)
    html = console.export_html(inline_styles=True)
    line = next(ln for ln in html.splitlines() if "the logger has stalled" in ln)
    assert "color: #800000" in line or "color: #ff0000" in line  # red


def test_plain_report_says_each_event_once(log):
    clock = FakeClock()
    watcher = Watcher(log.name, "out", clock=clock)
    report = PlainReport()
    first = report.lines(watcher.step())
    assert len(first) == 1 and "analysis 1: 1200 readings over 20 min, 8 gaps" in first[0]
    assert report.lines(watcher.step()) == []
    clock.t += 1000
    stalled = report.lines(watcher.step())
    assert len(stalled) == 1 and "no new line for" in stalled[0]
    assert report.lines(watcher.step()) == []


def test_watch_command_writes_the_analysis_and_exits_0(log):
    result = runner.invoke(
        app, ["watch", log.name, "--duration", "1s", "--poll", "0.2s", "--stats", "oadev"]
    )
    assert result.exit_code == 0, result.output
    assert "analysis 1: 1200 readings over 20 min, 8 gaps" in result.output
    assert "wrote 1 analysis into" in result.output
    table = (log.parent / "counter.csv-stability" / "table.csv").read_text()
    assert table.startswith("statistic,tau_s,")
    result = runner.invoke(
        app, ["watch", log.name, "--duration", "1s", "--poll", "0.2s", "--json", "--out", "j"]
    )
    assert result.exit_code == 0, result.output
    assert json.loads(result.output)["input"]["path"] == "counter.csv"


@pytest.mark.parametrize(
    "args, what",
    [
        (["--every", "0s"], "--every"),
        (["--stall", "soon"], "--stall"),
        (["--rows", "0"], "--rows"),
        (["--poll", "-1s"], "--poll"),
    ],
)
def test_usage_errors(log, args, what):
    result = runner.invoke(app, ["watch", log.name, *args])
    assert result.exit_code == 2, result.output
    assert what in result.output


def test_a_log_that_cannot_grow_is_an_error(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    import gzip

    (tmp_path / "old.csv.gz").write_bytes(gzip.compress(counter_bytes(100)))
    result = runner.invoke(app, ["watch", "old.csv.gz", "--duration", "1s", "--poll", "0.2s"])
    assert result.exit_code == 1, result.output
    assert "error: " in result.output and "cannot be followed" in result.output


def test_ctrl_c_writes_a_final_analysis_and_exits_0(log):
    # a real process and a real SIGINT, as a user at a terminal would stop it
    whole = counter_bytes(1500)
    log.write_bytes(whole[: whole.index(b"\n", len(whole) // 2) + 1])
    proc = subprocess.Popen(
        [sys.executable, "-m", "stability", "watch", log.name, "--poll", "0.2s", "--every", "1h"],
        cwd=log.parent,
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
    )
    try:
        first = proc.stdout.readline()  # the first analysis, once the log could be read
        assert "analysis 1:" in first, first + proc.stderr.read()
        log.write_bytes(whole)  # the logger writes on (appends the rest)
        proc.send_signal(signal.SIGINT)
        out, err = proc.communicate(timeout=120)
    finally:
        proc.kill()
    assert proc.returncode == 0, err
    assert "wrote 2 analyses into" in out and err == ""
    summary = json.loads((log.parent / "counter.csv-stability" / "summary.json").read_text())
    assert summary["input"]["sha256"] == hashlib.sha256(whole).hexdigest()


def test_panel_before_the_first_analysis_says_why(tmp_path):
    watcher = Watcher(tmp_path / "later.csv", tmp_path / "out", clock=FakeClock())
    text = _render(panel(watcher.step())).export_text()
    assert "lines      0" in text and "last line  no line yet" in text
    assert "waiting    the log does not exist (yet)" in text
    assert "0 analyses written into" in text
