"""A calibration record judged against a time-error mask alone (record --mask, no --spec).

The log is the invented timing demo (datasets/demo/make_timing_demo.py): a GNSS
timing receiver's 1 PPS against a reference, with its sawtooth reports. The
bundled mask limits are recalled from the ITU-T Recommendations (from memory);
these tests check what the record holds and how it is written, not the limits:
every verdict, margin and metric in the record is compared with
:func:`stability.timing.analyze_time_error` run on the same log here.
"""

from __future__ import annotations

import importlib.util
import json
from pathlib import Path

import pypdf
import pytest

from stability import read_log
from stability.errors import InputError
from stability.files import settings_hash
from stability.history import open_history
from stability.reports import record as record_mod
from stability.reports.record import (
    MASK_RECORD_CAUTION,
    RECORD_NAMES,
    build_record,
    write_record,
)
from stability.run import run_analysis
from stability.spec import load_info
from stability.timing import analyze_time_error, read_sawtooth
from stability.workflow import output_names, record_into

DEMO = Path(__file__).resolve().parents[1] / "datasets" / "demo"
INFO = DEMO / "timing-info-example.toml"
MASK = "g8272-prtc-a"
READ = {"column": "pps_te_ns"}
SAWTOOTH = {"sawtooth": "qerr_ns"}


def _timing_log(path: Path, hours: float = 1.0) -> Path:
    spec = importlib.util.spec_from_file_location("make_timing_demo", DEMO / "make_timing_demo.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    path.write_text(module.timing_log(hours))
    return path


@pytest.fixture(scope="module")
def made(tmp_path_factory):
    root = tmp_path_factory.mktemp("mask-record")
    log = _timing_log(root / "pps.csv")
    outcome = record_into(log, root / "out", None, INFO, mask=MASK, timing_options=SAWTOOTH, **READ)
    record = json.loads(outcome.files["record.json"].read_text(encoding="utf-8"))
    pages = [p.extract_text() for p in pypdf.PdfReader(outcome.files["record.pdf"]).pages]
    # the same analysis, made here apart from the record
    meas = read_log(log, **READ)
    saw = read_sawtooth(log, "qerr_ns", READ, meas)
    expected = analyze_time_error(meas, mask=MASK, sawtooth=saw, sawtooth_column="qerr_ns")
    return {"root": root, "log": log, "outcome": outcome, "json": record, "pages": pages,
            "expected": expected}  # fmt: skip


def test_the_whole_set_is_written(made):
    outcome = made["outcome"]
    names, _ = output_names("png")
    assert {p.name for p in (made["root"] / "out").iterdir()} == {*RECORD_NAMES, *names}
    assert outcome.judgement is None and outcome.spec_path is None
    assert outcome.judgements == ("time_error_mask",)
    assert outcome.verdict == str(made["expected"].judgement.verdict)


def test_json_holds_the_mask_verdict_margins_and_metrics(made):
    data, expected = made["json"], made["expected"]
    assert data["judgements"] == ["time_error_mask"]
    assert data["overall_verdict_of"] == "time_error_mask"
    assert data["specification"] is None
    assert data["limits"] == [] and data["checks"] == []
    assert data["overall_verdict"] == str(expected.judgement.verdict)
    section = data["time_error_mask"]
    assert section["mask"] == MASK and section["verdict"] == data["overall_verdict"]
    for name in ("mtie", "tdev"):
        least = expected.judgement.least_margin(name)
        stored = section["judgement"]["by_statistic"][name]["least_margin"]
        assert stored["margin"] == pytest.approx(least.margin, rel=1e-12)
        assert stored["tau_s"] == pytest.approx(least.tau, rel=1e-12)
    assert section["metrics"]["max_abs_te_s"] == pytest.approx(
        expected.metrics.max_abs_te, rel=1e-12
    )
    assert "from memory" in section["judgement"]["mask"]["recalled"]
    # the Allan-family analysis is there, without limits or verdicts
    assert {r["statistic"] for r in data["results"]} == {"oadev", "mdev"}
    assert all(r["limit"] is None and r["verdict"] is None for r in data["results"])
    assert data["confidence"] == pytest.approx(0.683)
    # the time-error settings are part of the settings and their hash
    te = data["settings"]["time_error"]
    assert te["mask"] == MASK and te["sawtooth"] == "qerr_ns" and te["remove_offset"] is False
    assert data["settings_hash"] == settings_hash(data["settings"])
    assert data["caution"] == MASK_RECORD_CAUTION
    assert data["identification"]["device"]["id"] == "NX-GTR-2231"
    assert set(data["signatures"]) == {"measured_by", "checked_by", "date"}
    assert data["record_number"].endswith(data["input"]["sha256"][:8])


def _flat(text: str) -> str:
    return " ".join(text.split())


def test_pdf_says_what_it_judges_and_holds_the_time_error_pages(made):
    pages, data, expected = made["pages"], made["json"], made["expected"]
    first = _flat(pages[0])
    assert first.startswith("Time-error calibration record")
    assert f"record {data['record_number']}" in first
    assert data["overall_verdict"].upper() in first
    assert "This record contains one judgement: the time error of the log as read against the " \
        f"mask {MASK}" in first  # fmt: skip
    assert "No specification was given" in first
    for words in ("Time-error mask", "NX-GTR-2231", "Northmoor Exchange timing room", "Caution",
                  "not read from them", "measured by", "checked by"):  # fmt: skip
        assert words in first, words
    assert "Specification" not in first and "Limits" not in first
    # the mask's pages come right after page 1: verdicts, margins, metrics, the figures
    second = _flat(pages[1])
    assert "Time error against a mask" in second and "Time-error metrics" in second
    for name in ("mtie", "tdev"):
        least = expected.judgement.least_margin(name)
        assert f"least margin {least.margin:.3g}" in second
    assert "MTIE, offset kept" in second and "TDEV (s)" in second  # the masked figure
    assert any("Time interval error" in p and "TIE (ns)" in p for p in pages)
    assert any(p.startswith("Results") or "\nResults" in p for p in pages)
    total = len(pages)
    for k, text in enumerate(pages, start=1):
        assert _flat(text).count(f"page {k} of {total}") == 1


def test_neither_a_spec_nor_a_mask_is_refused_before_anything(made, tmp_path):
    folder = tmp_path / "none"
    with pytest.raises(InputError, match="neither was given"):
        record_into(made["log"], folder, None, INFO, **READ)
    assert not folder.exists()
    run = made["outcome"].run
    info = load_info(INFO)
    with pytest.raises(InputError, match="neither was given"):
        build_record(run, None, info)
    with pytest.raises(InputError, match="neither was given"):
        write_record(run, None, info, tmp_path / "lib")
    assert not (tmp_path / "lib").exists()
    unjudged = analyze_time_error(run.source)  # no mask: nothing to judge
    with pytest.raises(InputError, match="neither was given"):
        build_record(run, None, info, unjudged)


def test_library_record_of_a_mask_alone(made, tmp_path):
    run = run_analysis(made["log"], **READ)
    timing = analyze_time_error(run.source, mask=MASK)
    paths = write_record(run, None, load_info(INFO), tmp_path / "lib", timing=timing)
    data = json.loads(paths["record.json"].read_text())
    assert data["judgements"] == ["time_error_mask"]
    assert data["settings"]["time_error"]["sawtooth"] is None
    assert data["overall_verdict"] == str(timing.judgement.verdict)


def test_force_interruption_and_input_protection(made, tmp_path, monkeypatch):
    log, folder = made["log"], tmp_path / "again"
    record_into(log, folder, None, INFO, mask=MASK, **READ)
    before = {p.name: p.read_bytes() for p in folder.iterdir()}
    with pytest.raises(InputError, match="--force"):
        record_into(log, folder, None, INFO, mask=MASK, **READ)
    assert {p.name: p.read_bytes() for p in folder.iterdir()} == before

    def broken(pages, handle, record):
        raise OSError("disk full")

    monkeypatch.setattr(record_mod, "_save_pdf", broken)
    with pytest.raises(OSError, match="disk full"):
        record_into(log, folder, None, INFO, mask="g8272-prtc-b", force=True, **READ)
    assert {p.name: p.read_bytes() for p in folder.iterdir()} == before  # nothing changed
    monkeypatch.undo()
    # a mask file is an input: an output over it is refused
    own = tmp_path / "guarded"
    own.mkdir()
    mask_file = own / "table.md"
    mask_file.write_text(
        'name = "house"\n[[curve]]\nstatistic = "tdev"\nunit = "ns"\n'
        "segment = [ { from = 1, to = 1000, limit = 20 } ]\n"
    )
    with pytest.raises(InputError, match="input"):
        record_into(log, own, None, INFO, mask=str(mask_file), **READ)
    assert [p.name for p in own.iterdir()] == ["table.md"]


def test_history_stores_the_mask_verdict(made, tmp_path):
    log, history = made["log"], tmp_path / "history.sqlite"
    first = record_into(log, tmp_path / "a", None, INFO, mask=MASK, history=history, **READ)
    assert first.history is not None and not first.history.replaced
    with open_history(history) as store:
        (row,) = store.records("NX-GTR-2231")
        assert row.overall_verdict == first.verdict
        assert row.spec_statistic is None
        assert store.checks(row.number) == []
        _, text, pdf = store.record(row.number)
    assert text == first.files["record.json"].read_text(encoding="utf-8")
    assert pdf == first.files["record.pdf"].read_bytes()
    # the same log and settings again: refused unless --force, which replaces it
    with pytest.raises(InputError, match="already"):
        record_into(log, tmp_path / "b", None, INFO, mask=MASK, history=history, **READ)
    assert not (tmp_path / "b").exists()
    again = record_into(
        log, tmp_path / "b", None, INFO, mask=MASK, history=history, force=True, **READ
    )
    assert again.history.replaced
    # another mask is another judgement: its own record
    other = record_into(
        log, tmp_path / "c", None, INFO, mask="g8272-prtc-b", history=history, **READ
    )
    assert other.history.number != again.history.number
    with open_history(history) as store:
        assert len(store.records("NX-GTR-2231")) == 2


def test_the_outcome_displays_what_it_judged(made):
    outcome = made["outcome"]
    html = outcome._repr_html_()
    assert "time error mask" in html and MASK in html and "specification<" not in html
    text = repr_text(outcome)
    assert "judgements: time error mask" in text and f"overall verdict: {outcome.verdict}" in text
    assert "least margin" in text


def repr_text(result) -> str:
    class Printer:
        out = ""

        def text(self, value):
            self.out += value

    printer = Printer()
    result._repr_pretty_(printer, False)
    return printer.out


def test_the_mask_enters_the_settings_by_its_limits_not_its_place(made, tmp_path):
    from stability.reports.record_timing import time_error_settings

    text = (
        'name = "house"\n[[curve]]\nstatistic = "tdev"\nunit = "ns"\n'
        "segment = [ { from = 1, to = 1000, limit = 20 } ]\n"
    )
    here, there, tighter = tmp_path / "a.toml", tmp_path / "b.toml", tmp_path / "c.toml"
    here.write_text(text)
    there.write_text(text)
    tighter.write_text(text.replace("limit = 20", "limit = 10"))
    meas = made["outcome"].run.source
    hashes = [
        time_error_settings(analyze_time_error(meas, mask=str(p)))["mask_limits_hash"]
        for p in (here, there, tighter)
    ]
    assert hashes[0] == hashes[1] != hashes[2]


def test_a_record_with_both_says_it_holds_two_judgements(made, tmp_path):
    run = made["outcome"].run
    spec = tmp_path / "spec.toml"
    spec.write_text('statistic = "oadev"\n[[limit]]\ntau_s = 1\nmax = 1e-7\n')
    outcome = record_into(made["log"], tmp_path / "both", spec, INFO, mask=MASK, **READ)
    data = json.loads(outcome.files["record.json"].read_text())
    assert data["judgements"] == ["specification", "time_error_mask"]
    assert data["overall_verdict_of"] == "specification"
    assert data["overall_verdict"] == str(outcome.judgement.overall)
    assert outcome.judgements == ("specification", "time_error_mask")
    first = _flat(pypdf.PdfReader(outcome.files["record.pdf"]).pages[0].extract_text())
    assert first.startswith("Frequency stability calibration record")
    assert "This record contains two judgements: oadev against the specification" in first
    assert f"against the mask {MASK} (verdict {outcome.timing.judgement.verdict}, on its own " \
        "page)" in first  # fmt: skip
    assert run.source.provenance.sha256 == data["input"]["sha256"]
