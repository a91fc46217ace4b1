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

import pandas as pd
import pytest
from pypdf import PdfReader
from typer.testing import CliRunner

from stability.reports.timing import TIMING_COLUMNS
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
    table = pd.read_csv(out / "time_error.csv")
    assert list(table.columns) == list(TIMING_COLUMNS)
    mtie = table[table.statistic == "mtie"]
    assert (mtie.offset_removed == False).all()  # noqa: E712 - the CSV's own word
    assert table[table.statistic == "tdev"].offset_removed.isna().all()
    first = next(r for r in te["rows"] if r["statistic"] == "mtie")
    assert mtie.value_s.iloc[0] == first["value_s"]  # every digit kept
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


def _readme_commands() -> list[list[str]]:
    """The ``$ stability time-error ...`` lines of the README's worked example."""
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    lines = [ln[len("$ stability ") :] for ln in text.splitlines()]
    return [ln.split() for ln in lines if ln.startswith("time-error datasets/demo/")]


def test_worked_example_of_the_readme(tmp_path, monkeypatch):
    # the commands of the README section "A worked example", run as written there
    folder = tmp_path / "datasets" / "demo"
    folder.mkdir(parents=True)
    name = "gnss-timing-receiver-pps.csv.gz"
    (folder / name).write_bytes((DEMO / name).read_bytes())
    assert gzip.decompress((folder / name).read_bytes()).startswith(b"timestamp,pps_te_ns,qerr")
    monkeypatch.chdir(tmp_path)
    raw, corrected = _readme_commands()
    before = runner.invoke(app, raw)
    assert before.exit_code == 0, before.output
    assert "verdict: fail" in before.output
    assert "TDEV: fail (judged 1 s to 3548 s); least margin 1.38 at 1 s" in before.output
    after = runner.invoke(app, corrected)
    assert after.exit_code == 0, after.output
    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    for line in after.output.splitlines():
        if not line.startswith("caution"):  # the README shortens the caution
            assert line in readme, line
    tighter = [w if w != "g8272-prtc-a" else "g8272-prtc-b" for w in corrected]
    done = runner.invoke(app, [*tighter[:-1], "class-b"])
    assert "verdict: fail" in done.output and "max|TE|: fail (48.31 ns of 40 ns" in done.output


def test_record_with_a_mask(pps, tmp_path):
    out = tmp_path / "rec"
    args = [
        "record", str(pps), "--column", "pps_te_ns",
        "--spec", str(DEMO / "timing-spec-example.toml"),
        "--info", str(DEMO / "timing-info-example.toml"),
        "--out", str(out),
    ]  # fmt: skip
    done = runner.invoke(app, [*args, "--mask", "g8272-prtc-a", "--sawtooth", "qerr_ns"])
    assert done.exit_code == 0, done.output
    assert "time error of the log as read, against a mask:" in done.output
    assert "verdict: pass" in done.output
    record = json.loads((out / "record.json").read_text())
    section = record["time_error_mask"]
    assert section["mask"] == "g8272-prtc-a" and section["verdict"] == "pass"
    assert "from memory" in section["judgement"]["mask"]["recalled"]
    text = " ".join(page.extract_text() for page in PdfReader(out / "record.pdf").pages)
    assert "Time error against a mask" in text and "not read from them" in " ".join(text.split())
    alone = runner.invoke(app, [*args, "--sawtooth", "qerr_ns", "--force"])
    assert alone.exit_code == 2 and "--sawtooth applies to" in alone.output


def test_demo_judges_the_timing_log_when_it_is_there(tmp_path):
    spec = importlib.util.spec_from_file_location("make_demo", DEMO / "make_demo.py")
    maker = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(maker)
    data = tmp_path / "data"
    maker.make_demo(data, hours=0.5)
    _maker().make_timing_demo(data, hours=1.0)
    done = runner.invoke(app, ["demo", "--data", str(data), "--out", str(tmp_path / "out")])
    assert done.exit_code == 0, done.output
    assert "GNSS timing receiver 1 PPS against PRTC-A" in done.output
    assert "mask g8272-prtc-a" in done.output and "sawtooth correction (qerr_ns)" in done.output
    timing = tmp_path / "out" / "timing"
    assert (timing / "tie.png").is_file() and (timing / "mtie_tdev.png").is_file()
    assert str(timing / "time_error.md") in done.output
