"""``stability capture`` through typer's CliRunner, against the simulated counter on 127.0.0.1.

Exit codes as written down in cli/common.py (0 success, 1 input error, 2 usage error).
"""

from __future__ import annotations

import sys
from pathlib import Path

import pytest
from typer.testing import CliRunner

from stability.ingest import read_log
from stability_cli.main import app

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "live"))
from counter_server import IDENTITY, CounterServer  # noqa: E402

runner = CliRunner()


def test_capture_then_analyze(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    config = tmp_path / "counter.toml"
    config.write_text(
        '[instrument]\naddress = "127.0.0.1"\nport = 1\nsetup = ["*CLS", "CONF:FREQ"]\n'
        'query = "MEAS:FREQ?"\ninterval = "50ms"\ntimeout = "2s"\n'
    )
    with CounterServer(drop_at={4}) as server:
        args = ["capture", "night.csv", "--config", str(config), "--port", str(server.port)]
        result = runner.invoke(app, [*args, "--count", "12"])
        assert result.exit_code == 0, result.output
        assert "connection lost (the instrument closed the connection)" in result.output
        assert "wrote 12 readings (0 error answers as gaps, 1 outage)" in result.output
        # never overwritten: a second run is refused, the log unchanged
        before = (tmp_path / "night.csv").read_bytes()
        again = runner.invoke(app, [*args, "--count", "2"])
        assert again.exit_code == 1, again.output
        assert "capture never overwrites a log" in again.output
        assert (tmp_path / "night.csv").read_bytes() == before
        resumed = runner.invoke(app, [*args, "--count", "3", "--append"])
        assert resumed.exit_code == 0, resumed.output
    text = (tmp_path / "night.csv").read_text()
    assert f"# instrument: {IDENTITY}" in text and "# setup: CONF:FREQ" in text
    readings = [ln.split(",", 1)[1] for ln in text.splitlines() if ln[:1].isdigit() and "," in ln]
    assert readings == server.sent and len(readings) == 15
    assert read_log(tmp_path / "night.csv").provenance.details["kind"] == "frequency"
    out = runner.invoke(app, ["analyze", "night.csv", "--stats", "oadev"])
    assert out.exit_code == 0, out.output


@pytest.mark.parametrize(
    "args, what",
    [
        (["--address", "10.0.0.1", "--port", "5025", "--query", "READ?\x07"], "control"),
        (["--address", "10.0.0.1", "--port", "5025", "--query", "*RST"], "not a query"),
        (["--address", "10.0.0.1;rm", "--port", "5025", "--query", "READ?"], "host name"),
        (["--address", "10.0.0.1", "--query", "READ?"], "no instrument"),
        (
            ["--address", "10.0.0.1", "--port", "5025", "--query", "READ?", "--interval", "x"],
            "--interval",
        ),
        (
            ["--address", "10.0.0.1", "--port", "5025", "--query", "READ?", "--count", "0"],
            "--count",
        ),
    ],
)
def test_usage_errors(tmp_path, monkeypatch, args, what):
    monkeypatch.chdir(tmp_path)
    result = runner.invoke(app, ["capture", "x.csv", *args])
    assert result.exit_code == 2, result.output
    assert what in result.output
    assert not (tmp_path / "x.csv").exists()


def test_unreachable_instrument_is_one_error_line(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    with CounterServer() as server:
        port = server.port
    result = runner.invoke(
        app,
        ["capture", "x.csv", "--address", "127.0.0.1", "--port", str(port), "--query", "READ?"],
    )
    assert result.exit_code == 1, result.output
    assert result.output.startswith("error: cannot reach the instrument at 127.0.0.1")
    assert not (tmp_path / "x.csv").exists()
