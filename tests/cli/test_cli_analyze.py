"""``stability analyze`` through typer's CliRunner and one real subprocess run.

Exit codes (common practice for command lines, written down in cli/common.py):
0 success, 1 input or analysis error (one ``error:`` line, no traceback),
2 usage error (one ``error:`` line too): a value the command line alone shows
to be wrong.
"""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from typer.testing import CliRunner

from stability.summary import SUMMARY_FIELDS
from stability.table import COLUMNS
from stability_cli.main import app

runner = CliRunner()

COMMANDS = (
    "analyze",
    "inspect",
    "overlay",
    "simulate",
    "demo",
    "record",
)


@pytest.fixture(scope="module")
def log(tmp_path_factory) -> Path:
    """An invented 10 MHz counter log: 600 s of white FM around a small offset."""
    folder = tmp_path_factory.mktemp("analyze")
    rng = np.random.default_rng(7)
    y = 1e-9 + 1e-11 * rng.standard_normal(600)
    stamps = np.datetime64("2026-01-01T00:00:00", "s") + np.arange(600).astype("timedelta64[s]")
    rows = np.char.add(
        np.char.add(np.datetime_as_string(stamps, unit="s"), "Z,"),
        np.char.mod("%.6f", 10e6 * (1 + y)),
    )
    path = folder / "counter.csv"
    path.write_text("time,frequency_hz\n" + "\n".join(rows.tolist()) + "\n")
    return path


def _invoke(args: list[str]):
    return runner.invoke(app, args)


def _one_error_line(result, code: int = 1) -> str:
    assert result.exit_code == code, result.output
    assert "Traceback" not in result.output, result.output
    lines = [ln for ln in result.output.splitlines() if ln.strip()]
    errors = [ln for ln in lines if ln.startswith("error: ")]
    assert len(errors) == 1, result.output
    return errors[0]


def test_writes_every_output(log, tmp_path):
    out = tmp_path / "out"
    result = _invoke(["analyze", str(log), "--out", str(out)])
    assert result.exit_code == 0, result.output
    for name in ("table.csv", "table.md", "summary.json", "sigma_tau.png", "series.png"):
        assert (out / name).is_file() and (out / name).stat().st_size > 0, name
    header = (out / "table.csv").read_text().splitlines()[0]
    assert header == ",".join(COLUMNS)  # DESIGN "The results table"
    assert "oadev" in result.output and "mdev" in result.output
    assert "wrote 5 files" in result.output
    assert (out / "sigma_tau.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"  # PNG signature


def test_svg_plots(log, tmp_path):
    out = tmp_path / "svg"
    result = _invoke(["analyze", str(log), "--out", str(out), "--plot-format", "svg"])
    assert result.exit_code == 0, result.output
    assert (out / "sigma_tau.svg").read_text().lstrip().startswith("<?xml")
    assert (out / "series.svg").is_file()


def test_json_is_strict_and_complete(log, tmp_path):
    result = _invoke(["analyze", str(log), "--out", str(tmp_path / "j"), "--json"])
    assert result.exit_code == 0, result.output

    def no_constants(name):
        raise ValueError(f"non-strict JSON constant {name}")

    data = json.loads(result.stdout, parse_constant=no_constants)
    for name in (
        "tool",
        "analysis_time",
        "input",
        "preparation",
        "settings",
        "settings_hash",
        "offset_drift",
        "power_law_model",
        "statistics",
        "table",
    ):
        assert name in data, name
    assert set(SUMMARY_FIELDS) <= set(data)
    assert data["tool"]["name"] == "stability"
    assert len(data["input"]["sha256"]) == 64
    assert {row["statistic"] for row in data["table"]} == {"oadev", "mdev"}
    assert set(data["table"][0]) == set(COLUMNS)
    # the written summary is the printed one
    written = json.loads((tmp_path / "j" / "summary.json").read_text())
    assert written["settings_hash"] == data["settings_hash"]


def test_settings_hash_follows_settings(log, tmp_path):
    def hash_of(*extra):
        result = _invoke(["analyze", str(log), "--out", str(tmp_path / "h"), "--json", *extra])
        assert result.exit_code == 0, result.output
        return json.loads(result.stdout)["settings_hash"]

    first = hash_of()
    assert hash_of() == first
    assert hash_of("--confidence", "0.95") != first


def test_bad_inputs_exit_1_with_one_line(log, tmp_path):
    empty = tmp_path / "empty.csv"
    empty.write_text("")
    header_only = tmp_path / "header.csv"
    header_only.write_text("time,frequency_hz\n")
    single = tmp_path / "single.csv"
    single.write_text("time,frequency_hz\n2026-01-01T00:00:00Z,10000000.001\n")
    junk = tmp_path / "junk.bin"
    junk.write_bytes(bytes(np.random.default_rng(3).integers(0, 256, 4096, dtype=np.uint8)))
    cases = {
        "missing file": [str(tmp_path / "missing.csv")],
        "folder": [str(tmp_path)],
        "empty file": [str(empty)],
        "header only": [str(header_only)],
        "single row": [str(single)],
        "binary junk": [str(junk)],
        "tau not multiple": [str(log), "--taus", "1.5"],
    }
    for what, args in cases.items():
        result = _invoke(["analyze", *args, "--out", str(tmp_path / "o")])
        line = _one_error_line(result)
        assert len(line) < 400, (what, line)
    # values of the wrong form are usage errors: one line too, exit code 2
    usage = {
        "unknown statistic": [str(log), "--stats", "oadev,nosuchdev"],
        "bad taus": [str(log), "--taus", "1,ten"],
        "bad outliers": [str(log), "--outliers", "many"],
        "bad drift": [str(log), "--drift", "cubic"],
        "bad plot format": [str(log), "--plot-format", "gif"],
    }
    for what, args in usage.items():
        result = _invoke(["analyze", *args, "--out", str(tmp_path / "o")])
        line = _one_error_line(result, code=2)
        assert len(line) < 400, (what, line)
    # the message names the problem
    result = _invoke(["analyze", str(log), "--stats", "nosuchdev", "--out", str(tmp_path / "o")])
    assert "nosuchdev" in _one_error_line(result, code=2)
    result = _invoke(["analyze", str(tmp_path / "missing.csv")])
    assert "missing.csv" in _one_error_line(result)


def test_usage_errors_exit_2(log):
    result = _invoke(["analyze", str(log), "--no-such-option"])
    assert result.exit_code == 2, result.output
    result = _invoke(["analyze"])
    assert result.exit_code == 2, result.output
    result = _invoke(["analyze", str(log), "--confidence", "high"])
    assert result.exit_code == 2, result.output
    # a level outside (0, 1) is a usage error that names the option
    result = _invoke(["analyze", str(log), "--confidence", "1.5"])
    assert result.exit_code == 2, result.output
    assert "--confidence" in result.output and "strictly between 0 and 1" in result.output


def test_debug_shows_traceback(tmp_path):
    result = _invoke(["analyze", str(tmp_path / "missing.csv"), "--debug"])
    assert result.exit_code == 1
    assert "Traceback" in result.output
    assert "error: " in result.output


def test_version():
    import stability

    result = _invoke(["--version"])
    assert result.exit_code == 0, result.output
    assert result.output.strip() == f"stability {stability.__version__}"


@pytest.mark.parametrize("command", COMMANDS)
def test_help_has_an_example(command):
    result = _invoke([command, "--help"])
    assert result.exit_code == 0, result.output
    assert "Example:" in result.output
    assert f"stability {command}" in result.output


def _installed_command() -> list[str]:
    script = Path(sys.executable).parent / "stability"
    if script.is_file():
        return [str(script)]
    return [sys.executable, "-c", "from stability_cli.main import app; app()"]


def test_subprocess_run(log, tmp_path):
    out = tmp_path / "sub"
    done = subprocess.run(
        [*_installed_command(), "analyze", str(log), "--out", str(out), "--stats", "oadev"],
        capture_output=True,
        text=True,
        timeout=120,
    )
    assert done.returncode == 0, done.stderr
    assert "oadev" in done.stdout
    assert (out / "table.csv").is_file()


def test_diffusion_drift_is_removed_and_reported(tmp_path):
    # Invented log: a square-root frequency settling (NIST SP 1065 diffusion model)
    # plus white FM, 10 s readings over 2 days, no time stamps.
    n = 2 * 8640
    t = (np.arange(n) + 0.5) * 10.0 / 86400.0
    y = 2e-10 * np.sqrt(t + 0.1) + np.random.default_rng(12).normal(0.0, 1e-12, n)
    log = tmp_path / "settling.txt"
    log.write_text("".join(f"{v:.9e}\n" for v in y))
    out = tmp_path / "o"
    args = ["analyze", str(log), "--kind", "fractional", "--tau0", "10s", "--drift", "diffusion"]
    result = _invoke([*args, "--stats", "oadev", "--out", str(out), "--json"])
    assert result.exit_code == 0, result.output
    summary = json.loads((out / "summary.json").read_text())
    removed = summary["preparation"]["removed_drift"]
    assert removed["model"] == "diffusion"
    assert removed["coefficients"]["b_per_sqrt_day"] == pytest.approx(2e-10, rel=0.05)
