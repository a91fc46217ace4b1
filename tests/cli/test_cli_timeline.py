"""``stability timeline`` through typer's CliRunner: a noise-level step located in time."""

from __future__ import annotations

import json
import math
from datetime import UTC, datetime, timedelta

import numpy as np
import pandas as pd
import pytest
from typer.testing import CliRunner

from stability_cli.main import app

runner = CliRunner()

N = 2400
STEP_AT = 1200  # sample where the noise level quadruples
START = datetime(2024, 3, 1, 6, 0, 0, tzinfo=UTC)
LOW, HIGH = 1e-11, 4e-11


@pytest.fixture(scope="module")
def step_log(tmp_path_factory):
    # invented log: white FM of 1e-11 that becomes 4e-11 at 06:20:00, 1 s samples
    rng = np.random.default_rng(21)
    y = LOW * rng.standard_normal(N)
    y[STEP_AT:] *= HIGH / LOW
    path = tmp_path_factory.mktemp("timeline") / "warmup.csv"
    stamps = [(START + timedelta(seconds=i)).isoformat() for i in range(N)]
    path.write_text(
        "time,fractional frequency\n"
        + "\n".join(f"{t},{v:.10e}" for t, v in zip(stamps, y, strict=True))
        + "\n"
    )
    return path


def test_noise_step_shows_in_the_right_window(step_log, tmp_path):
    out = tmp_path / "out"
    result = runner.invoke(
        app,
        [
            "timeline",
            str(step_log),
            "--window",
            "5min",
            "--step",
            "30s",
            "--taus",
            "1,2,4",
            "--outliers",
            "off",
            "--out",
            str(out),
        ],
    )
    assert result.exit_code == 0, result.output
    assert (out / "timeline.png").stat().st_size > 10_000
    frame = pd.read_csv(out / "timeline.csv")
    assert list(frame.columns) == [
        "time_s", "time", "tau_s", "m", "n_terms", "deviation", "ci_low", "ci_high", "edf",
    ]  # fmt: skip
    at1 = frame[frame["tau_s"] == 1.0].reset_index(drop=True)
    window = 300.0
    assert len(at1) == (N - 300) // 30 + 1
    # The deviation at tau0 crosses the geometric mean of the two levels within one window
    # of the step (Galleani & Tavella 2009 show level steps on the dynamic Allan deviation);
    # for white FM, ADEV(tau0) is the level itself (NIST SP 1065 section 5.2.2).
    threshold = math.sqrt(LOW * HIGH)
    crossing = at1["time_s"][int(np.argmax(at1["deviation"] > threshold))]
    assert abs(crossing - STEP_AT) <= window
    assert (at1["deviation"][at1["time_s"] < STEP_AT - window] < threshold).all()
    assert (at1["deviation"][at1["time_s"] > STEP_AT + window] > threshold).all()
    # window centres carry clock time from the log's time stamps
    first = pd.Timestamp(at1["time"][0])
    assert first == pd.Timestamp(START) + pd.Timedelta(seconds=at1["time_s"][0])
    # the printed summary puts the smallest level before the step and the largest after
    lines = result.output.splitlines()
    low_line = next(line for line in lines if " min " in line)
    high_line = next(line for line in lines if " max " in line)
    assert "2024-03-01 06:1" in low_line or "2024-03-01 06:0" in low_line
    assert "2024-03-01 06:2" in high_line or "2024-03-01 06:3" in high_line
    assert f"windows     {len(at1)} of 5 min, every 30 s" in result.output


def test_window_longer_than_the_record_is_one_line(step_log, tmp_path):
    result = runner.invoke(
        app, ["timeline", str(step_log), "--window", "4h", "--out", str(tmp_path)]
    )
    assert result.exit_code == 1, result.output
    assert "longer than the record" in result.output
    assert len(result.output.strip().splitlines()) == 1, result.output
    # exit 2: a value of the wrong form; exit 1: what a sliding window cannot compute
    for args, message, code in (
        (["--window", "5min", "--stats", "oadev,mdev"], "one statistic", 2),
        (["--window", "5min", "--stats", "totdev"], "not available in a sliding window", 1),
        (["--window", "soon"], "cannot read --window", 2),
    ):
        result = runner.invoke(app, ["timeline", str(step_log), *args, "--out", str(tmp_path)])
        assert result.exit_code == code, result.output
        assert message in result.output, result.output
        assert "Traceback" not in result.output


def test_json_summary(step_log, tmp_path):
    result = runner.invoke(
        app,
        [
            "timeline",
            str(step_log),
            "--window",
            "10min",
            "--taus",
            "1",
            "--noise",
            "record",
            "--json",
            "--out",
            str(tmp_path),
        ],
    )
    assert result.exit_code == 0, result.output
    document = json.loads(result.output)
    # default step is a quarter of the window
    assert document["settings"]["window_s"] == 600.0 and document["settings"]["step_s"] == 150.0
    assert document["input"]["sha256"] and len(document["input"]["sha256"]) == 64


def test_help_has_example():
    result = runner.invoke(app, ["timeline", "--help"], env={"COLUMNS": "200"})
    assert result.exit_code == 0, result.output
    assert "stability timeline counter.csv --nominal 10MHz --window 4h" in result.output
