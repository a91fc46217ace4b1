"""``stability inspect`` through typer's CliRunner and one real subprocess run."""

from __future__ import annotations

import json
import subprocess

from typer.testing import CliRunner

from stability_cli.main import app

runner = CliRunner()


def _log(tmp_path):
    p = tmp_path / "counter.csv"
    # invented 10 MHz counter log with one instrument error and one missing second
    rows = [f"2024-01-01T00:00:{i:02d}Z,{10e6 + i * 1e-4:.5f}" for i in (0, 1, 2, 4, 5, 6)]
    rows[2] = "2024-01-01T00:00:02Z,ERR"
    p.write_text("time,Frequency [Hz]\n" + "\n".join(rows) + "\n")
    return p


def test_inspect_text(tmp_path):
    result = runner.invoke(app, ["inspect", str(_log(tmp_path))])
    assert result.exit_code == 0, result.output
    assert "nominal 10 MHz" in result.output
    assert "line 4 'ERR'" in result.output
    assert "gaps inserted: 1" in result.output


def test_inspect_json_with_hints(tmp_path):
    result = runner.invoke(
        app, ["inspect", str(_log(tmp_path)), "--json", "--nominal", "10MHz", "--tau0", "1s"]
    )
    assert result.exit_code == 0, result.output
    data = json.loads(result.output)
    assert data["nominal"] == 1e7 and data["nominal_source"] == "given"
    assert data["bad_value_count"] == 1 and data["gap_samples"] == 1


def test_inspect_errors_are_one_line(tmp_path):
    result = runner.invoke(app, ["inspect", str(tmp_path / "missing.csv")])
    assert result.exit_code == 1, result.output
    assert "file not found" in result.output and "Traceback" not in result.output
    result = runner.invoke(app, ["inspect", str(_log(tmp_path)), "--strict"])
    assert result.exit_code == 1, result.output
    assert "counter.csv:4" in result.output


def test_inspect_help_has_example():
    result = runner.invoke(app, ["inspect", "--help"])
    assert result.exit_code == 0, result.output
    assert "stability inspect counter.csv" in result.output and "--wrap" in result.output


def test_inspect_subprocess(tmp_path, stability_command):
    proc = subprocess.run(
        [*stability_command, "inspect", str(_log(tmp_path)), "--json"],
        capture_output=True,
        text=True,
        timeout=120,
        check=False,
    )
    assert proc.returncode == 0, proc.stderr
    assert json.loads(proc.stdout)["kind"] == "frequency"
