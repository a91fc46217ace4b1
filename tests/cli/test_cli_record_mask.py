"""``stability record LOG --mask NAME --info INFO.toml``: a time-error record, no specification.

The log is the invented timing demo (datasets/demo/make_timing_demo.py). The
bundled mask limits are recalled from the ITU-T Recommendations (from
memory); these tests check the command line and the files, not the limits.
"""

from __future__ import annotations

import importlib.util
import json
from pathlib import Path

import pytest
from pypdf import PdfReader
from typer.testing import CliRunner

from stability.reports.record import RECORD_NAMES
from stability.workflow import output_names
from stability_cli.main import app

runner = CliRunner()
DEMO = Path(__file__).resolve().parents[2] / "datasets" / "demo"
INFO = str(DEMO / "timing-info-example.toml")


@pytest.fixture(scope="module")
def pps(tmp_path_factory) -> Path:
    spec = importlib.util.spec_from_file_location("make_timing_demo", DEMO / "make_timing_demo.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    path = tmp_path_factory.mktemp("timing") / "pps.csv"
    path.write_text(module.timing_log(1.0))
    return path


def _args(pps: Path, out: Path, *extra: str) -> list[str]:
    return ["record", str(pps), "--column", "pps_te_ns", "--info", INFO, "--out", str(out),
            *extra]  # fmt: skip


def test_record_against_a_mask_alone(pps, tmp_path, monkeypatch):
    monkeypatch.delenv("STABILITY_HISTORY", raising=False)
    out = tmp_path / "rec"
    done = runner.invoke(app, _args(pps, out, "--mask", "g8272-prtc-a", "--sawtooth", "qerr_ns"))
    assert done.exit_code == 0, done.output
    lines = done.output.splitlines()
    assert lines[0] == (
        "device NX-GTR-2231: the time error of the log as read against a mask (no specification)"
    )
    assert "  verdict: pass" in lines and "overall verdict: pass (the mask's)" in lines
    assert any(line.startswith("    TDEV: pass") and "least margin" in line for line in lines)
    names, _ = output_names("png")
    assert {p.name for p in out.iterdir()} == {*RECORD_NAMES, *names}
    record = json.loads((out / "record.json").read_text())
    assert record["judgements"] == ["time_error_mask"] and record["specification"] is None
    assert record["overall_verdict"] == record["time_error_mask"]["verdict"] == "pass"
    assert record["settings"]["time_error"]["sawtooth"] == "qerr_ns"
    first = " ".join(PdfReader(out / "record.pdf").pages[0].extract_text().split())
    assert first.startswith("Time-error calibration record")
    assert "This record contains one judgement" in first and "measured by" in first
    # --json prints the record itself; an existing record needs --force
    again = runner.invoke(app, [*_args(pps, out, "--mask", "g8272-prtc-a"), "--json"])
    assert again.exit_code == 1 and again.output.count("\n") == 1, again.output
    assert "--force" in again.output
    forced = runner.invoke(app, [*_args(pps, out, "--mask", "g8272-prtc-b"), "--json", "--force"])
    assert forced.exit_code == 0, forced.output
    assert json.loads(forced.output)["time_error_mask"]["mask"] == "g8272-prtc-b"


def test_neither_spec_nor_mask_is_a_usage_error(pps, tmp_path):
    out = tmp_path / "none"
    done = runner.invoke(app, _args(pps, out))
    assert done.exit_code == 2, done.output
    assert done.output == (
        "error: a record needs --spec FILE, --mask NAME|FILE or both: what it is judged against\n"
    )
    assert not out.exists()


def test_history_stores_the_mask_verdict(pps, tmp_path, monkeypatch):
    monkeypatch.delenv("STABILITY_HISTORY", raising=False)
    history = str(tmp_path / "history.sqlite")
    args = [*_args(pps, tmp_path / "a", "--mask", "g8272-prtc-a"), "--history", history]
    done = runner.invoke(app, args)
    assert done.exit_code == 0, done.output
    assert "stored as record 1 of NX-GTR-2231 in the calibration history" in done.output
    shown = runner.invoke(app, ["history", "show", "--record", "1", "--history", history])
    assert shown.exit_code == 0, shown.output
    assert (
        "verdict fail (of the time-error mask g8272-prtc-a; no specification)"  # sawtooth left in
        in shown.output.splitlines()[0]
    )
    twice = runner.invoke(
        app, [*_args(pps, tmp_path / "b", "--mask", "g8272-prtc-a"), "--history", history]
    )
    assert twice.exit_code == 1 and twice.output.count("\n") == 1, twice.output
    assert not (tmp_path / "b").exists()
    # the history named by the environment works the same way
    monkeypatch.setenv("STABILITY_HISTORY", history)
    other = runner.invoke(app, _args(pps, tmp_path / "c", "--mask", "g8272-prtc-b"))
    assert other.exit_code == 0, other.output
    assert "stored as record 2 of NX-GTR-2231" in other.output
