"""``stability time-error`` and ``stability masks`` from the command line.

The logs are the invented timing demo (datasets/demo/make_timing_demo.py): a
GNSS timing receiver's 1 PPS against a reference, with its sawtooth reports.
The bundled mask limits are recalled from the ITU-T Recommendations (from
memory); these tests check the command line, not the limits.
"""

from __future__ import annotations

import gzip
import importlib.util
import json
from pathlib import Path

import pytest
from typer.testing import CliRunner

from stability_cli.main import app

runner = CliRunner()
ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "datasets" / "demo"


def _maker():
    spec = importlib.util.spec_from_file_location("make_timing_demo", DEMO / "make_timing_demo.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


@pytest.fixture(scope="module")
def pps(tmp_path_factory) -> Path:
    path = tmp_path_factory.mktemp("timing") / "pps.csv"
    path.write_text(_maker().timing_log(1.0))
    return path


def test_masks_lists_and_shows(tmp_path):
    listed = runner.invoke(app, ["masks"])
    assert listed.exit_code == 0, listed.output
    assert "g8272-prtc-a" in listed.output and "recalled" in listed.output
    shown = runner.invoke(app, ["masks", "g811-prc"])
    assert shown.exit_code == 0, shown.output
    assert "0.025 + 0.000275 tau us" in shown.output and "from memory" in shown.output
    as_json = runner.invoke(app, ["masks", "g8272-prtc-b", "--json"])
    assert json.loads(as_json.output)["max_abs_te_s"] == pytest.approx(40e-9)
    own = tmp_path / "house.toml"
    own.write_text(
        'name = "house"\n[[curve]]\nstatistic = "tdev"\nunit = "ns"\n'
        "segment = [ { from = 1, to = 1000, limit = 2 } ]\n"
    )
    mine = runner.invoke(app, ["masks", str(own)])
    assert mine.exit_code == 0 and "2 ns" in mine.output, mine.output
    bad = runner.invoke(app, ["masks", "g999"])
    assert bad.exit_code == 1 and bad.output.count("\n") == 1
    assert bad.output.startswith("error: no bundled mask")


def test_time_error_with_sawtooth_and_mask(pps, tmp_path):
    out = tmp_path / "out"
    args = ["time-error", str(pps), "--column", "pps_te_ns", "--out", str(out)]
    done = runner.invoke(app, [*args, "--sawtooth", "qerr_ns", "--mask", "g8272-prtc-a"])
    assert done.exit_code == 0, done.output
    assert "sawtooth correction (qerr_ns): TDEV at 1 s" in done.output
    assert "verdict: pass" in done.output and "caution:" in done.output
    names = {p.name for p in out.iterdir()}
    assert names == {
        "time_error.csv",
        "time_error.md",
        "time_error.json",
        "tie.png",
        "mtie_tdev.png",
    }
    data = json.loads((out / "time_error.json").read_text())
    te = data["time_error"]
    assert te["judgement"]["verdict"] == "pass" and te["offset_removed"] is False
    assert te["sawtooth"]["tdev_ratio"] < 0.5
    assert data["settings"]["mask"] == "g8272-prtc-a" and data["input"]["sha256"]
    raw = runner.invoke(app, [*args, "--mask", "g8272-prtc-a", "--remove-offset", "--json"])
    assert raw.exit_code == 0, raw.output
    data = json.loads(raw.output)["time_error"]
    assert data["judgement"]["by_statistic"]["tdev"]["verdict"] == "fail"  # sawtooth left in
    assert data["offset_removed"] is True and "removed" in data["offset"]["what"]


@pytest.mark.parametrize(
    ("extra", "code", "words"),
    [
        (["--sawtooth-sign", "maybe"], 2, "--sawtooth-sign must be subtract or add"),
        (["--sawtooth-row", "later"], 2, "--sawtooth-row must be next or same"),
        (["--cte-window", "soon"], 2, "--cte-window"),
        (["--mask", "g999"], 1, "no bundled mask"),
        (["--sawtooth", "nothing"], 1, "nothing"),
        (["--taus", "all"], 0, ""),
    ],
)
def test_time_error_errors_are_one_line(pps, tmp_path, extra, code, words):
    args = ["time-error", str(pps), "--column", "pps_te_ns", "--out", str(tmp_path / "o")]
    if extra[:2] == ["--taus", "all"]:
        short = tmp_path / "short.csv"
        short.write_text("\n".join(pps.read_text().splitlines()[:301]) + "\n")
        args[1] = str(short)
    done = runner.invoke(app, [*args, *extra])
    assert done.exit_code == code, done.output
    if code:
        assert done.output.count("\n") == 1 and words in done.output, done.output


def test_worked_example_of_the_readme(tmp_path, monkeypatch):
    # the commands of the README section "Timing and synchronisation", as written there
    log = tmp_path / "gnss-timing-receiver-pps.csv.gz"
    log.write_bytes((DEMO / log.name).read_bytes())
    assert gzip.decompress(log.read_bytes()).startswith(b"timestamp,pps_te_ns,qerr_ns")
    monkeypatch.chdir(tmp_path)
    common = ["time-error", log.name, "--column", "pps_te_ns", "--mask", "g8272-prtc-a"]
    before = runner.invoke(app, [*common, "--out", "raw"])
    assert before.exit_code == 0, before.output
    assert "verdict: fail" in before.output
    assert "TDEV: fail" in before.output
    after = runner.invoke(app, [*common, "--sawtooth", "qerr_ns", "--out", "corrected"])
    assert after.exit_code == 0, after.output
    assert "verdict: pass" in after.output
    assert "TDEV at 1 s 4.135 ns -> 1.256 ns" in after.output
    assert "max|TE|             48.31 ns" in after.output
    tighter = runner.invoke(
        app, [*common[:-1], "g8272-prtc-b", "--sawtooth", "qerr_ns", "--out", "b"]
    )
    assert "verdict: fail" in tighter.output and "max|TE|: fail" in tighter.output
