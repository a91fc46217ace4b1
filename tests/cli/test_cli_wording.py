"""What the summary says agrees with itself, with summary.json and with the figures.

The summary block counts readings (the log's values) apart from the phase points
they span, counts gaps one way (missing readings in the log) in the text, the series
figure's legend and summary.json, names the column read, writes frequencies with
their unit prefix, and tells the drift removed from the linear drift estimate. The
wordings are pinned here. The logs are invented.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
from typer.testing import CliRunner

from stability.dynamic import DynamicResult
from stability.figures import column_text, default_title, run_series_figure
from stability.ingest import read_log
from stability.reports.tables import format_tau
from stability.run import run_analysis
from stability_cli.main import app
from stability_cli.timeline_cmd import timeline_summary

runner = CliRunner()


@pytest.fixture(scope="module")
def logs(tmp_path_factory) -> dict[str, Path]:
    folder = tmp_path_factory.mktemp("wording")
    rng = np.random.default_rng(11)
    # invented: a 5 MHz counter log without a header, 3000 readings of white FM
    y = 1e-11 * rng.standard_normal(3000)
    (folder / "counter.txt").write_text("".join(f"{5e6 * (1 + v):.6f}\n" for v in y))
    # invented: three channels of fractional frequency with an elapsed-time column
    table = np.column_stack([np.arange(400), 1e-11 * rng.standard_normal((400, 3))])
    lines = ["t,ch1,ch2,ch3"] + [",".join(f"{v:.6e}" for v in row) for row in table]
    (folder / "three.csv").write_text("\n".join(lines) + "\n")
    # invented: a 1 PPS time-interval log, 1 ns white phase, five readings missing
    x = 1e-9 * rng.standard_normal(2000) + 2e-12 * np.arange(2000)
    cells = [f"{i},{v:.13f}" for i, v in enumerate(x)]
    for i in (100, 700, 701, 1500, 1900):
        cells[i] = f"{i},ERROR"
    (folder / "pps.csv").write_text("time_s,time_interval_s\n" + "\n".join(cells) + "\n")
    return {p.stem: p for p in folder.iterdir()}


def _analyze(args: list[str]):
    result = runner.invoke(app, ["analyze", *args])
    assert result.exit_code == 0, result.output
    return result.output


def test_summary_block_says_what_it_counts(logs, tmp_path):
    out = _analyze([str(logs["counter"]), "--tau0", "1s", "--out", str(tmp_path / "a")])
    assert "readings    3000 (3001 phase points)  tau0 1 s  span 50 min" in out
    assert "column      column 1\n" in out  # not "column 'of values'" or "column column 1"
    assert "kind        frequency (Hz), nominal 5 MHz" in out  # not "5e+06 Hz"
    assert "gaps        0 missing readings in the log" in out
    assert "drift       none removed" in out
    assert "(linear drift estimate; uncertainty from the noise model)" in out
    assert "e+06" not in out
    drift = _analyze(
        [str(logs["counter"]), "--tau0", "1s", "--drift", "linear", "--out", str(tmp_path / "b")]
    )
    assert "drift       removed (linear model)" in drift


def test_channels_of_one_log_are_told_apart(logs, tmp_path):
    titles, columns = set(), set()
    for channel in ("ch1", "ch3"):
        out = _analyze(
            [str(logs["three"]), "--kind", "fractional", "--column", channel,
             "--out", str(tmp_path / channel)]
        )  # fmt: skip
        line = next(ln for ln in out.splitlines() if ln.startswith("column"))
        columns.add(line)
        measurement = read_log(logs["three"], kind="fractional", column=channel)
        titles.add(default_title(measurement, "stability"))
    assert columns == {"column      column 2 (ch1)", "column      column 4 (ch3)"}
    assert titles == {"three.csv \u00b7 column 2 (ch1)", "three.csv \u00b7 column 4 (ch3)"}


def test_gaps_are_counted_one_way_in_text_figure_and_json(logs, tmp_path):
    folder = tmp_path / "pps"
    out = _analyze([str(logs["pps"]), "--tau0", "1s", "--out", str(folder)])
    assert "gaps        5 missing readings in the log" in out
    assert "readings    2000 (2000 phase points)" in out  # a phase log: one point a reading
    summary = json.loads((folder / "summary.json").read_text())
    assert summary["input"]["gaps"] == 5
    assert summary["input"]["readings"] == 2000 and summary["input"]["n"] == 2000
    run = run_analysis(logs["pps"], tau0="1s")
    drawn = run_series_figure(run)
    assert drawn.missing == 5
    legend = [t.get_text() for t in drawn.axes[0].get_legend().get_texts()]
    assert "gaps (5 missing readings)" in legend
    assert drawn.time_error is not None  # a time-interval log gets its time-error panel
    tie_legend = [t.get_text() for t in drawn.axes[1].get_legend().get_texts()]
    assert any(
        t.startswith("TIE, frequency offset ") and t.endswith(" removed") for t in tie_legend
    )


def test_summary_json_holds_each_block_once(logs, tmp_path):
    folder = tmp_path / "json"
    _analyze([str(logs["three"]), "--kind", "fractional", "--column", "ch2", "--out", str(folder)])
    inp = json.loads((folder / "summary.json").read_text())["input"]
    assert inp["report"] is None  # the reader's report is "details", not repeated
    assert inp["details"]["value_column"] == "ch2"
    assert inp["dialect"] == {
        "container": "plain", "encoding": "utf-8", "line_endings": "LF", "delimiter": "comma",
        "decimal_mark": ".", "comment_prefix": None, "header_line": 1,
    }  # fmt: skip
    assert column_text(read_log(logs["three"], kind="fractional", column="ch2")) == (
        "column 3 (ch2)"
    )


def test_taus_and_spreads_are_written_plainly():
    # 2^18 samples of 5 us (an octave grid from f_h = 100 kHz): four significant digits
    assert format_tau(5e-6 * 2**18) == "1.311 s"
    assert format_tau(16384.0) == "16384 s"
    tau = np.array([1.0])
    dev = np.array([[1.0e-11], [1.0004e-11]])  # invented: two windows 0.04 % apart
    result = DynamicResult(
        statistic="oadev", tau=tau, m=np.array([1]), time_s=np.array([100.0, 200.0]),
        time=None, deviation=dev, ci_low=dev * 0.9, ci_high=dev * 1.1,
        edf=np.full((2, 1), 50.0), n_terms=np.full((2, 1), 99), alpha=np.zeros((2, 1)),
        confidence=0.683,
        window_points=200, step_points=100,
    )  # fmt: skip
    text = "\n".join(timeline_summary(result))
    assert "max/min" not in text
    assert "(max 0.04 % above min)" in text


def test_noise_labels_option(logs, tmp_path):
    out = tmp_path / "labels"
    args = [str(logs["three"]), "--kind", "fractional", "--column", "ch1", "--out", str(out)]
    _analyze([*args, "--stats", "oadev,mdev,hdev,totdev", "--noise-labels", "all"])
    _analyze([*args, "--noise-labels", "none"])
    bad = runner.invoke(app, ["analyze", *args, "--noise-labels", "oadevv"])
    assert bad.exit_code == 2
    assert "--noise-labels" in bad.output and "oadevv" in bad.output
