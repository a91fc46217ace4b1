"""``stability phase-noise`` through typer's CliRunner: conversion, files, --compare, errors."""

from __future__ import annotations

import csv
import math
from datetime import UTC, datetime, timedelta

import numpy as np
import pytest
from typer.testing import CliRunner

from stability.phase_noise import model_to_phase_noise
from stability_cli.main import app
from stability_cli.phase_noise_cmd import default_taus

runner = CliRunner()

NU0 = 10e6
H0 = 1e-22


def _table(path, offsets, level):
    rows = "\n".join(f"{float(f)!r},{float(v)!r}" for f, v in zip(offsets, level, strict=True))
    path.write_text("# invented table\noffset_hz,L_dbc_hz\n" + rows + "\n")
    return path


@pytest.fixture
def wfm_table(tmp_path):
    # a pure white-FM table: L(f) = nu0^2 h0 / (2 f^2) (IEEE Std 1139), 10 rows per decade
    f = np.logspace(-3, 3, 61)
    return _table(tmp_path / "wfm.csv", f, model_to_phase_noise({0: H0}, NU0, f))


def _rows(path):
    with open(path, newline="") as handle:
        return list(csv.DictReader(handle))


def test_default_taus_span_the_table():
    # tau from 1/(2 f_h) up to 1/(2 f_min): the documented default grid
    octave = default_taus("octave", 100.0, 0.1)
    assert octave[0] == 0.005 and octave[-1] <= 5.0 < 2 * octave[-1]
    np.testing.assert_allclose(octave[1:] / octave[:-1], 2.0)
    decade = default_taus("decade", 100.0, 0.1)
    np.testing.assert_allclose(decade, [0.005, 0.01, 0.02, 0.05, 0.1, 0.2, 0.5, 1, 2, 5])
    assert default_taus("octave", 1.0, 10.0).tolist() == [0.5]


def test_white_fm_table_converts_to_h0_over_2tau(wfm_table, tmp_path):
    out = tmp_path / "out"
    result = runner.invoke(
        app,
        [
            "phase-noise",
            str(wfm_table),
            "--nominal",
            "10MHz",
            "--fh",
            "1kHz",
            "--taus",
            "1,10,100",
            "--stats",
            "adev,mdev",
            "--out",
            str(out),
        ],
    )
    assert result.exit_code == 0, result.output
    for name in ("phase_noise_sigma.csv", "phase_noise_sigma.md", "phase_noise.png"):
        assert (out / name).stat().st_size > 100, name
    rows = _rows(out / "phase_noise_sigma.csv")
    assert list(rows[0]) == ["statistic", "tau_s", "deviation"]
    adev = {float(r["tau_s"]): float(r["deviation"]) for r in rows if r["statistic"] == "adev"}
    mdev = {float(r["tau_s"]): float(r["deviation"]) for r in rows if r["statistic"] == "mdev"}
    for tau in (1.0, 10.0, 100.0):
        # WFM: AVAR = h0 / (2 tau) (NIST SP 1065; NIST TN 1337)
        assert math.isclose(adev[tau] ** 2, H0 / (2.0 * tau), rel_tol=1e-3)
        # WFM: MVAR = h0 / (4 tau) (NIST SP 1065; from memory)
        assert math.isclose(mdev[tau] ** 2, H0 / (4.0 * tau), rel_tol=1e-3)
    markdown = (out / "phase_noise_sigma.md").read_text()
    assert "SHA-256" in markdown and "f_h: 1000 Hz" in markdown
    assert "ADEV" in result.output and "1 s" in result.output


def test_default_grid_and_bandwidth(wfm_table, tmp_path):
    result = runner.invoke(
        app,
        [
            "phase-noise",
            str(wfm_table),
            "--nominal",
            "10MHz",
            "--stats",
            "adev",
            "--out",
            str(tmp_path),
        ],
    )
    assert result.exit_code == 0, result.output
    taus = sorted({float(r["tau_s"]) for r in _rows(tmp_path / "phase_noise_sigma.csv")})
    # default f_h is the table's highest offset, 1 kHz: taus from 1/(2 f_h) = 0.5 ms by octaves
    # up to 1/(2 f_min) = 500 s
    assert taus[0] == 0.0005 and taus[-1] <= 500.0 < 2 * taus[-1]
    assert "the table's highest offset" in (tmp_path / "phase_noise_sigma.md").read_text()


def test_compare_with_a_simulated_log(wfm_table, tmp_path):
    # invented log: white FM with h0 = 2 tau0 sigma^2 = H0 (NIST SP 1065 section 5.2.2)
    rng = np.random.default_rng(4)
    y = math.sqrt(H0 / 2.0) * rng.standard_normal(1024)
    start = datetime(2024, 2, 1, tzinfo=UTC)
    log = tmp_path / "counter.csv"
    log.write_text(
        "time,fractional frequency\n"
        + "\n".join(
            f"{(start + timedelta(seconds=i)).isoformat()},{v:.10e}" for i, v in enumerate(y)
        )
        + "\n"
    )
    out = tmp_path / "out"
    result = runner.invoke(
        app,
        [
            "phase-noise",
            str(wfm_table),
            "--nominal",
            "10MHz",
            "--taus",
            "1,2,4,8,16",
            "--compare",
            str(log),
            "--out",
            str(out),
        ],
    )
    assert result.exit_code == 0, result.output
    assert "measured: counter.csv" in result.output
    markdown = (out / "phase_noise_sigma.md").read_text()
    assert "compared with: counter.csv" in markdown and "h0 = " in markdown
    # the measured ADEV at 1 s and the converted one agree within the scatter of 1024
    # samples (chi-squared with about 1000 degrees of freedom: a few per cent)
    measured = [line.split() for line in result.output.splitlines() if line.startswith("adev ")]
    assert measured and measured[0][1:3] == ["1", "s"]
    converted = {
        float(r["tau_s"]): float(r["deviation"])
        for r in _rows(out / "phase_noise_sigma.csv")
        if r["statistic"] == "adev"
    }
    assert abs(float(measured[0][3]) / converted[1.0] - 1.0) < 0.1


# exit 1: the table, or what the conversion can do; exit 2: a value of the wrong form
@pytest.mark.parametrize(
    ("text", "extra", "message", "code"),
    [
        ("1,-100\n10,abc\n", [], "bad.csv:2 column 2: not a number", 1),
        ("1,-100\n", [], "at least 2 are needed", 1),
        ("1,-100\n10,-110\n", ["--fh", "0.5Hz"], "not above the table's first offset", 1),
        ("1,-100\n10,-110\n", ["--taus", "all"], "needs a sample interval", 1),
        ("1,-100\n10,-110\n", ["--stats", "mtie"], "no frequency-domain conversion", 1),
        ("1,-100\n10,-110\n", ["--nominal", "fast"], "cannot read", 2),
    ],
)
def test_bad_tables_and_options_give_one_line(tmp_path, text, extra, message, code):
    table = tmp_path / "bad.csv"
    table.write_text(text)
    args = ["phase-noise", str(table), "--nominal", "10MHz", "--out", str(tmp_path / "o"), *extra]
    result = runner.invoke(app, args)
    assert result.exit_code == code, result.output
    assert message in result.output, result.output
    assert "Traceback" not in result.output
    assert len(result.output.strip().splitlines()) == 1, result.output


def test_help_has_example():
    result = runner.invoke(app, ["phase-noise", "--help"], env={"COLUMNS": "200"})
    assert result.exit_code == 0, result.output
    assert "stability phase-noise ocxo_pn.csv --nominal 10MHz" in result.output
