"""``stability simulate``: the written log, its levels read back by ``analyze``, and errors."""

from __future__ import annotations

import json

import numpy as np
import pytest
from typer.testing import CliRunner

from stability.ingest import inspect_log, read_log
from stability_cli.main import app
from stability_cli.simulate_cmd import parse_start

runner = CliRunner()


def _ok(args):
    result = runner.invoke(app, args)
    assert result.exit_code == 0, result.output
    return result


def _error(args, code: int = 1) -> str:
    result = runner.invoke(app, args)
    assert result.exit_code == code, result.output
    assert "Traceback" not in result.output
    lines = [ln for ln in result.output.splitlines() if ln.startswith("error: ")]
    assert len(lines) == 1, result.output
    return lines[0]


def test_validation_messages(tmp_path):
    # every one is a usage error (exit 2): the command line alone shows it
    out = str(tmp_path / "x.csv")

    def usage(args):
        return _error(args, code=2)

    assert "no noise level" in usage(["simulate", out])
    assert "--absolute needs --nominal" in usage(["simulate", out, "--wfm", "1e-11", "--absolute"])
    assert "only used with --absolute" in usage(
        ["simulate", out, "--wfm", "1e-11", "--nominal", "10MHz"]
    )
    assert "--output" in usage(["simulate", out, "--wfm", "1e-11", "--output", "cycles"])
    assert "--start" in usage(["simulate", out, "--wfm", "1e-11", "--start", "yesterday"])
    assert "--n" in usage(["simulate", out, "--wfm", "1e-11", "--n", "1"])
    assert "--wfm" in usage(["simulate", out, "--wfm", "-1e-11"])
    assert "--tau0" in usage(["simulate", out, "--wfm", "1e-11", "--tau0", "0s"])
    assert "--absolute writes frequency" in usage(
        ["simulate", out, "--wfm", "1e-11", "--absolute", "--nominal", "10MHz", "--output", "phase"]
    )
    assert not (tmp_path / "x.csv").exists()


def test_wfm_level_is_read_back_by_analyze(tmp_path):
    """A pure white-FM log at 1e-11 at 10 s: analyze finds that level and calls it WFM.

    For white FM the Allan deviation is sqrt(h0 / (2 tau)) (NIST SP 1065),
    so the requested 1e-11 at --at 10 s is the true value at tau = 10 s. The check
    uses a 99 % interval: a 68 % interval leaves the true value outside one time in
    three by construction (common practice), which would make the check depend on
    the seed rather than on the code.
    """
    log = tmp_path / "wfm.csv"
    _ok(["simulate", str(log), "--n", "8192", "--wfm", "1e-11", "--at", "10s", "--seed", "3"])
    result = _ok(
        [
            "analyze",
            str(log),
            "--stats",
            "oadev",
            "--taus",
            "1,10,100",
            "--confidence",
            "0.99",
            "--json",
            "--out",
            str(tmp_path / "out"),
        ]
    )
    rows = {row["tau_s"]: row for row in json.loads(result.stdout)["table"]}
    at = rows[10.0]
    assert at["ci_low"] <= 1e-11 <= at["ci_high"], at
    assert at["noise"] == "WFM"
    assert {row["noise"] for row in rows.values()} == {"WFM"}


def test_file_layout_and_reader(tmp_path):
    log = tmp_path / "a.csv"
    result = _ok(
        [
            "simulate",
            str(log),
            "--n",
            "50",
            "--tau0",
            "100ms",
            "--wpm",
            "1e-11",
            "--rwfm",
            "1e-13",
            "--start",
            "2026-05-01T12:00:00+02:00",
            "--seed",
            "9",
        ]
    )
    assert "wrote" in result.output
    lines = log.read_text().splitlines()
    preamble = [ln for ln in lines if ln.startswith("#")]
    assert preamble and lines[: len(preamble)] == preamble
    text = "\n".join(preamble)
    assert "seed 9" in text and "WPM 1e-11" in text and "RWFM 1e-13" in text
    assert "stability" in text
    assert lines[len(preamble)] == "time,fractional_frequency"
    body = lines[len(preamble) + 1 :]
    assert len(body) == 50
    # the start is turned into UTC; stamps step by tau0
    assert body[0].startswith("2026-05-01T10:00:00.000Z,")
    assert body[1].startswith("2026-05-01T10:00:00.100Z,")
    m = read_log(log)
    assert m.kind == "frequency" and m.tau0 == pytest.approx(0.1)


def test_phase_and_absolute_outputs(tmp_path):
    phase = tmp_path / "phase.csv"
    _ok(["simulate", str(phase), "--n", "100", "--wfm", "1e-12", "--output", "phase"])
    assert "time,phase_s" in phase.read_text()
    assert inspect_log(phase).kind == "phase"

    absolute = tmp_path / "abs.csv"
    _ok(
        [
            "simulate",
            str(absolute),
            "--n",
            "100",
            "--wfm",
            "1e-11",
            "--offset",
            "2e-9",
            "--absolute",
            "--nominal",
            "10MHz",
        ]
    )
    assert "time,frequency_hz" in absolute.read_text()
    report = inspect_log(absolute)
    assert report.kind == "frequency" and report.nominal == 10e6
    y = read_log(absolute).frequency()
    # the offset of 2e-9 is kept through Hz and back (1e-11 noise, 100 samples)
    assert np.nanmean(y) == pytest.approx(2e-9, abs=5e-12)


def test_refuses_to_overwrite_and_is_reproducible(tmp_path):
    log = tmp_path / "w.csv"
    args = ["simulate", str(log), "--n", "64", "--wfm", "1e-11", "--seed", "5"]
    _ok(args)
    first = log.read_bytes()
    assert "--force" in _error(args)
    assert log.read_bytes() == first
    _ok([*args, "--force"])
    assert log.read_bytes() == first  # same seed, same file
    _ok([*args[:-1], "6", "--force"])
    assert log.read_bytes() != first
    assert not list(tmp_path.glob(".*.part"))  # no temporary file left behind


def test_parse_start():
    assert parse_start("2026-01-01T00:00:00Z").isoformat() == "2026-01-01T00:00:00+00:00"
    assert parse_start("2026-01-01T01:00:00").isoformat() == "2026-01-01T01:00:00+00:00"


def test_a_gz_name_gets_a_gzip_file_that_analyze_reads(tmp_path):
    import gzip

    log = tmp_path / "w.csv.gz"
    _ok(["simulate", str(log), "--n", "256", "--wfm", "1e-11", "--seed", "5"])
    text = gzip.decompress(log.read_bytes()).decode("utf-8")  # a real gzip stream
    assert text.splitlines()[0].startswith("# simulated power-law noise")
    first = log.read_bytes()
    _ok(["simulate", str(log), "--n", "256", "--wfm", "1e-11", "--seed", "5", "--force"])
    assert log.read_bytes() == first  # reproducible byte for byte (no time in the header)
    out = _ok(["analyze", str(log), "--stats", "oadev", "--out", str(tmp_path / "o")])
    assert "oadev" in out.output and (tmp_path / "o" / "table.csv").exists()
