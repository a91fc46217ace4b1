"""``stability spectrum`` and the causes options of ``analyze`` and ``record``.

The logs are invented in the test: white FM (stability.simulate) around 10 MHz,
with a bench temperature column and, where said, a periodic frequency modulation
or a temperature effect through a thermal lag.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
from typer.testing import CliRunner

from stability.environment import lagged
from stability.simulate import power_law
from stability_cli.main import app

runner = CliRunner()


@pytest.fixture(scope="module")
def lab_log(tmp_path_factory) -> Path:
    """4096 s of white FM, a 300 s periodic modulation and a temperature effect."""
    n = 4096
    rng = np.random.default_rng(11)
    t = np.arange(n, dtype=float)
    temp = 21.0 + 0.3 * np.sin(2 * np.pi * t / 1000.0) + rng.normal(0, 0.005, n)
    y = 1e-9 + power_law(0, n, h=2e-24, seed=9) + 5e-12 * np.sin(2 * np.pi * t / 300.0)
    y = y - 1e-11 * lagged(temp, 1.0, 60.0)
    stamps = np.datetime64("2026-06-01T00:00:00", "s") + np.arange(n).astype("timedelta64[s]")
    rows = [
        f"{s}Z,{10e6 * (1 + v):.7f},{c:.3f}"
        for s, v, c in zip(np.datetime_as_string(stamps), y, temp, strict=True)
    ]
    path = tmp_path_factory.mktemp("causes") / "bench.csv"
    path.write_text("timestamp,frequency_hz,temperature_C\n" + "\n".join(rows) + "\n")
    return path


def test_spectrum_command(lab_log, tmp_path):
    out = tmp_path / "spec"
    result = runner.invoke(app, ["spectrum", str(lab_log), "--out", str(out), "--segments", "8"])
    assert result.exit_code == 0, result.output
    for name in ("spectrum.csv", "spectrum.png", "summary.json"):
        assert (out / name).is_file(), name
    assert "Welch, Hann window, 8 segments" in result.output
    assert "periodic    periodic component, period 3" in result.output
    assert "noise model h_alpha" in result.output
    header = (out / "spectrum.csv").read_text().splitlines()[0]
    assert header == "f_hz,s_y_per_hz,s_y_low,s_y_high,s_x_s2_per_hz,L_dbc_hz"
    data = json.loads((out / "summary.json").read_text())
    assert data["causes"]["periodic"]["spectrum"]["window"] == "hann"
    found = data["causes"]["periodic"]["lines"][0]
    resolution = data["causes"]["periodic"]["spectrum"]["resolution_hz"]
    assert abs(1 / found["period_s"] - 1 / 300) < resolution / 3


def test_analyze_notes_the_periodic_component_and_regresses(lab_log, tmp_path):
    out = tmp_path / "an"
    args = ["analyze", str(lab_log), "--out", str(out), "--stats", "oadev"]
    result = runner.invoke(app, [*args, "--regress", "temperature", "--lag-range", "0,10min"])
    assert result.exit_code == 0, result.output
    assert "noted       periodic component, period" in result.output
    assert "noted       temperature sensitivity" in result.output and "not removed" in result.output
    assert (out / "environment.png").is_file()
    data = json.loads((out / "summary.json").read_text())
    sens = data["causes"]["sensitivity"]
    assert sens["coefficient_per_unit"] == pytest.approx(-1e-11, abs=4 * sens["uncertainty"])
    assert sens["lag_range_s"] == [0.0, 600.0]
    removed = runner.invoke(
        app, [*args, "--out", str(tmp_path / "rm"), "--regress", "temperature", "--remove-effect"]
    )
    assert removed.exit_code == 0, removed.output
    assert "removed before the statistics" in removed.output


def test_counter_type_and_dead_time(lab_log, tmp_path):
    args = ["analyze", str(lab_log), "--out", str(tmp_path / "dt"), "--stats", "oadev,mdev"]
    result = runner.invoke(app, [*args, "--counter", "lambda", "--dead-time", "20ms"])
    assert result.exit_code == 0, result.output
    assert "warning: a lambda-type (averaging) counter" in result.output
    assert "counter dead time 0.02 s" in result.output
    assert "Not corrected for dead time (Barnes' B2 is for the Allan variance): mdev" in (
        result.output
    )
    data = json.loads((tmp_path / "dt" / "summary.json").read_text())
    assert data["causes"]["counter"] == "lambda"
    assert data["causes"]["dead_time"]["ratio_T_over_tau"] == pytest.approx(1 / 0.98)


@pytest.mark.parametrize(
    ("extra", "words"),
    [
        (["--counter", "delta"], "counter must be one of pi, lambda, omega"),
        (["--dead-time-ratio", "0.5"], "--dead-time-ratio takes a number r = T/tau >= 1"),
        (["--lag-range", "1h"], "--lag-range takes LOW,HIGH durations"),
        (["--false-alarm", "2"], "--false-alarm takes a probability"),
        (["--remove-effect"], "removing an environmental effect needs the quantity"),
        (["--dead-time", "1s", "--dead-time-ratio", "2"], "not both"),
    ],
)
def test_usage_errors(lab_log, tmp_path, extra, words):
    result = runner.invoke(app, ["analyze", str(lab_log), "--out", str(tmp_path / "x"), *extra])
    assert result.exit_code == 2, result.output
    assert words in result.output
    assert "Traceback" not in result.output


def test_regress_on_a_missing_column_is_one_error_line(lab_log, tmp_path):
    result = runner.invoke(
        app, ["analyze", str(lab_log), "--out", str(tmp_path / "x"), "--regress", "pressure"]
    )
    assert result.exit_code == 1, result.output
    errors = [ln for ln in result.output.splitlines() if ln.startswith("error: ")]
    assert len(errors) == 1 and "no column of pressure" in errors[0]
    assert not (tmp_path / "x").exists()


SPEC = """statistic = "oadev"
confidence = 0.95
[[limit]]
tau_s = 1
max = 1e-9
[[limit]]
tau_s = 64
max = 1e-9
"""
INFO = """[device]
id = "OCXO-CAUSES-1"
"""


def test_record_states_counter_and_dead_time(lab_log, tmp_path):
    (tmp_path / "spec.toml").write_text(SPEC)
    (tmp_path / "info.toml").write_text(INFO)
    args = [
        "record",
        str(lab_log),
        "--spec",
        str(tmp_path / "spec.toml"),
        "--info",
        str(tmp_path / "info.toml"),
        "--out",
        str(tmp_path / "rec"),
        "--counter",
        "pi",
        "--dead-time",
        "10ms",
    ]
    result = runner.invoke(app, args)
    assert result.exit_code == 0, result.output
    record = json.loads((tmp_path / "rec" / "record.json").read_text())
    assert record["measurement"]["counter_type"] == "pi"
    assert record["measurement"]["dead_time_s"] == pytest.approx(0.01)
    assert record["measurement"]["dead_time_corrected"] == ["oadev"]
    from pypdf import PdfReader  # noqa: PLC0415

    text = " ".join(p.extract_text() for p in PdfReader(tmp_path / "rec" / "record.pdf").pages)
    assert "counter dead time" in text and "Barnes" in text
