"""Broken and awkward logs through the command line, as a practitioner meets them.

Exit codes (common practice for command lines, written down in cli/common.py):
0 success, 1 input or analysis error (one ``error:`` line, no traceback).
Every log here is invented, generated in the test.
"""

from __future__ import annotations

import signal
from pathlib import Path

import numpy as np
import pytest
import typer
from typer.testing import CliRunner

from stability.outputs import Interrupted
from stability_cli.common import guarded
from stability_cli.main import app

runner = CliRunner()


def _stamps(n: int) -> list[str]:
    t = np.datetime64("2026-01-01T00:00:00", "s") + np.arange(n).astype("timedelta64[s]")
    return np.datetime_as_string(t, unit="s").tolist()


def _write(path: Path, header: str, times: list[str], values: list[str]) -> Path:
    rows = [f"{t},{v}" for t, v in zip(times, values, strict=True)]
    path.write_text(header + "\n" + "\n".join(rows) + "\n")
    return path


def _one_error_line(result) -> str:
    assert result.exit_code == 1, result.output
    assert "Traceback" not in result.output, result.output
    errors = [ln for ln in result.output.splitlines() if ln.startswith("error: ")]
    assert len(errors) == 1, result.output
    return errors[0]


def test_given_nominal_far_from_readings_is_an_error(tmp_path):
    # A 5 MHz counter log read with --nominal 10MHz would be a fractional offset of -0.5.
    rng = np.random.default_rng(11)
    f = 5e6 * (1 + 1e-11 * rng.standard_normal(200))
    log = _write(tmp_path / "c5.csv", "time,frequency_hz", _stamps(200), [f"{v:.7f}" for v in f])
    result = runner.invoke(app, ["analyze", str(log), "--nominal", "10MHz", "--out", str(tmp_path)])
    line = _one_error_line(result)
    assert "c5.csv" in line and "--nominal 5MHz" in line, line
    ok = runner.invoke(
        app, ["analyze", str(log), "--nominal", "5MHz", "--out", str(tmp_path / "o")]
    )
    assert ok.exit_code == 0, ok.output
    assert "nominal 5 MHz" in ok.output


def test_pps_readings_near_zero_and_one_second_are_unwrapped(tmp_path):
    # 1 PPS time-interval readings jittering around coincidence: a reading just below
    # zero is written as just below 1 s, and one is exactly 1.000000000 s (common practice
    # for a 0..1 s time-interval counter range).
    rng = np.random.default_rng(5)
    x = np.mod(1e-9 * rng.standard_normal(400), 1.0)
    text = [f"{v * 1e9:.3f}" for v in x]
    text[10] = "1000000000.000"
    log = _write(tmp_path / "pps.csv", "time,TI (ns)", _stamps(400), text)
    result = runner.invoke(app, ["inspect", str(log)])
    assert result.exit_code == 0, result.output
    assert "wrap-around(s) of one period" in result.output
    out = tmp_path / "out"
    result = runner.invoke(app, ["analyze", str(log), "--stats", "oadev", "--out", str(out)])
    assert result.exit_code == 0, result.output
    table = np.genfromtxt(out / "table.csv", delimiter=",", names=True, dtype=None)
    # unwrapped white phase noise of 1 ns over 1 s: sigma_y(1 s) ~ sqrt(3) ns, never ~1 s
    # (NIST SP 1065, AVAR of white PM: 3 sigma_x^2 / tau^2)
    assert table["deviation"][0] < 1e-8


def test_constant_log_is_an_error_not_a_pass(tmp_path):
    # A stuck counter: every reading the same. A zero deviation must not reach a verdict.
    log = _write(tmp_path / "stuck.csv", "time,frequency_hz", _stamps(300), ["10000000.000"] * 300)
    for args in (
        ["analyze", str(log), "--out", str(tmp_path / "a")],
        ["timeline", str(log), "--window", "60s", "--out", str(tmp_path / "t")],
    ):
        line = _one_error_line(runner.invoke(app, args))
        assert "stuck.csv" in line and "same fractional frequency" in line, line
    assert not (tmp_path / "a" / "summary.json").exists()


def test_warnings_are_one_line_each(tmp_path):
    # Two readings: too few points for the power-law model, which the tool warns about.
    log = _write(
        tmp_path / "short.csv",
        "time,frequency_hz",
        _stamps(2),
        ["10000000.0001", "10000000.0003"],
    )
    result = runner.invoke(app, ["analyze", str(log), "--out", str(tmp_path / "o")])
    assert result.exit_code == 0, result.output
    warned = [ln for ln in result.output.splitlines() if ln.startswith("warning: ")]
    assert warned, result.output
    assert ".py:" not in result.output and "qualify_table(" not in result.output


def test_timeline_takes_wrap(tmp_path):
    # A phase log in seconds that wraps at a 0.5 s period, given with --wrap.
    rng = np.random.default_rng(9)
    x = np.mod(0.4999999 + 1e-9 * np.arange(600) + 1e-10 * rng.standard_normal(600), 0.5)
    log = _write(tmp_path / "w.csv", "time,phase_s", _stamps(600), [f"{v:.12f}" for v in x])
    out = tmp_path / "tl"
    args = ["timeline", str(log), "--window", "120s", "--wrap", "0.5s", "--out", str(out)]
    result = runner.invoke(app, args)
    assert result.exit_code == 0, result.output
    assert (out / "timeline.csv").is_file()
    devs = np.genfromtxt(out / "timeline.csv", delimiter=",", names=True, dtype=None)["deviation"]
    # white PM of 0.1 ns: sigma_y(1 s) = sqrt(3) * 1e-10 (NIST SP 1065), far from a 0.5 s jump
    assert np.nanmax(devs) < 1e-8


def test_kind_that_contradicts_the_written_unit_is_refused(tmp_path):
    # A column headed in Hz read as phase would give plausible-looking nonsense
    # (common practice: the unit written in the log wins over a guess).
    path = tmp_path / "counter.csv"
    rows = "\n".join(f"{k},{10e6 + 1e-3 * (k % 7)}" for k in range(50))
    path.write_text("time_s,frequency_hz\n" + rows + "\n")
    result = runner.invoke(
        app, ["analyze", str(path), "--kind", "phase", "--out", str(tmp_path / "o")]
    )
    assert result.exit_code == 1, result.output
    assert "contradicts the unit" in result.output


def test_a_signal_that_breaks_a_library_import_is_a_stop_not_a_defect(monkeypatch, capsys):
    # SIGTERM landing while an extension module initialises comes out of the import as
    # "ImportError: initialization failed" (seen with a record stopped mid-run); the
    # handler must still say "stopped", exit 128 + 15, and not ask for a bug report
    monkeypatch.setattr(Interrupted, "received", None)
    with pytest.raises(typer.Exit) as defect, guarded("log.csv", debug=False):
        raise ImportError("initialization failed")
    assert defect.value.exit_code == 1
    assert "internal error" in capsys.readouterr().err
    monkeypatch.setattr(Interrupted, "received", int(signal.SIGTERM))
    with pytest.raises(typer.Exit) as stopped, guarded("log.csv", debug=False):
        raise ImportError("initialization failed")
    assert stopped.value.exit_code == 128 + signal.SIGTERM
    err = capsys.readouterr().err
    assert err.strip() == "error: stopped by SIGTERM; no partial output was left"
