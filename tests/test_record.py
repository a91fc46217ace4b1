"""The calibration record: record.json content and round trip, record.pdf pages and text.

One record is built in a module-scoped fixture (rendering is the slow part) and
checked from several angles. The log is invented: white FM at 1e-11 with one
glitch, written as time + fractional frequency.

References
----------
1. ISO/IEC 17025:2017, 7.8 (reporting); RFC 8259 (strict JSON).
2. W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065 (2008), section 10.
"""

from __future__ import annotations

import json
import re
from datetime import UTC

import numpy as np
import pypdf
import pytest

from stability.errors import InputError
from stability.files import sha256_file
from stability.reports import record as record_mod
from stability.reports.record import CAUTION, build_record, write_record
from stability.reports.tables import format_tau
from stability.run import run_analysis
from stability.spec import judge, load_info, load_spec

SPEC = """statistic = "oadev"
confidence = 0.95
[[limit]]
tau_s = 1
max = 2e-11
[[limit]]
tau_s = 100
max = 1e-13
"""

INFO = """procedure = "TF-07"
[device]
id = "OCXO-7781"
description = "invented test oscillator"
[reference]
id = "REF-1"
statistic = "oadev"
stability = [[1, 5e-12], [1000, 5e-12]]
[lab]
name = "test lab"
"""


def write_log(path, n=1500, seed=3):
    y = 2e-10 + 1e-11 * np.random.default_rng(seed).standard_normal(n)
    y[700] = 8e-9  # one glitch for the outlier screening
    t = np.arange(n)
    np.savetxt(
        path,
        np.column_stack([t, y]),
        delimiter=",",
        header="time_s,y",
        comments="",
        fmt=["%d", "%.6e"],
    )
    return path


@pytest.fixture(scope="module")
def made(tmp_path_factory):
    root = tmp_path_factory.mktemp("record")
    log = write_log(root / "log.csv")
    (root / "spec.toml").write_text(SPEC)
    (root / "info.toml").write_text(INFO)
    spec, info = load_spec(root / "spec.toml"), load_info(root / "info.toml")
    run = run_analysis(log, kind="fractional", stats="oadev,mdev", confidence=0.95)
    judgement = judge(run.table, spec, reference=info.reference)
    out = root / "out"
    paths = write_record(run, judgement, info, out)
    reader = pypdf.PdfReader(paths["record.pdf"])
    pages = [p.extract_text() for p in reader.pages]
    data = json.loads(paths["record.json"].read_text())
    return {
        "root": root,
        "log": log,
        "run": run,
        "judgement": judgement,
        "info": info,
        "out": out,
        "paths": paths,
        "pages": pages,
        "json": data,
    }


def test_pdf_pages_and_text(made):
    pages, data = made["pages"], made["json"]
    # identification, plot, one table page (well under 48 rows), data over time
    assert len(pages) == 4
    for k, text in enumerate(pages, start=1):
        assert f"page {k} of 4" in text
        assert data["input"]["sha256"] in text  # full SHA-256 in every footer
        assert data["settings_hash"] in text
    assert data["input"]["sha256"] == sha256_file(made["log"])
    first = pages[0]
    assert "OCXO-7781" in first and "REF-1" in first and "test lab" in first
    assert data["overall_verdict"].upper() in first
    assert "ISO/IEC 17025" in first and "systematic effects" in first
    assert "line 702" in first  # the glitch (row 700 after the header) removed
    table_text = pages[2]
    for row in data["results"]:
        assert format_tau(row["tau_s"]) in table_text
    for check in made["judgement"].checks:
        if check.verdict != "not measured":
            assert check.verdict in table_text or not check.listed


def test_json_matches_pdf(made):
    data, first = made["json"], made["pages"][0]
    assert data["schema_version"] == "1"
    listed = made["judgement"].listed
    assert [c["tau_s"] for c in data["limits"]] == [c.tau_s for c in listed]
    assert [c["verdict"] for c in data["limits"]] == [c.verdict for c in listed]
    for c in data["limits"]:
        assert f"{format_tau(c['tau_s'])}: {c['verdict']}" in first
    # the limit at 100 s (1e-13) sits far below white FM at 1e-11 / 10: a clear fail
    assert data["limits"][1]["verdict"] == "fail" and data["overall_verdict"] == "fail"
    verdict_rows = [r for r in data["results"] if r["verdict"] is not None]
    assert {r["tau_s"] for r in verdict_rows} <= {c["tau_s"] for c in data["checks"]}
    for row in verdict_rows:
        assert row["verdict"] in made["pages"][2]
    assert data["caution"] == CAUTION
    outliers = data["measurement"]["outliers_removed"]
    assert [(o["index"], o["line"]) for o in outliers] == [(700, 702)]
    assert data["identification"]["device"]["id"] == "OCXO-7781"


def test_json_strict_and_round_trip(made):
    text = made["paths"]["record.json"].read_text()

    def no_constants(name):
        raise AssertionError(f"non-strict JSON constant {name}")

    data = json.loads(text, parse_constant=no_constants)
    again = build_record(made["run"], made["judgement"], made["info"])
    assert data == again


def test_reference_flags(made):
    data = made["json"]
    # reference 5e-12 flat against white FM 1e-11 tau^-1/2: limited everywhere (5e-12 > 1e-11/3)
    oadev = [r for r in data["results"] if r["statistic"] == "oadev"]
    assert all(r["reference_limited"] for r in oadev)
    for r in oadev:
        # independent noises add in variance (NIST SP 1065 section 5.13; common practice)
        want = np.sqrt(max(0.0, r["deviation"] ** 2 - r["reference"] ** 2))
        assert r["device_only"] == pytest.approx(want, rel=1e-12, abs=0.0)
        assert r["device_only"] <= r["deviation"]
    assert data["reference_limited_taus"]


def test_never_overwritten_without_force(made):
    paths = made["paths"]
    before = paths["record.pdf"].read_bytes()
    with pytest.raises(InputError, match="--force"):
        write_record(made["run"], made["judgement"], made["info"], made["out"])
    assert paths["record.pdf"].read_bytes() == before


def _one_page(run, judgement, record):
    from matplotlib.figure import Figure

    fig = Figure(figsize=(8.27, 11.69))
    fig.text(0.1, 0.5, record["identification"]["device"]["id"])
    return [fig]


def test_interrupted_write_leaves_nothing_or_the_old_file(made, tmp_path, monkeypatch):
    monkeypatch.setattr(record_mod, "record_pages", _one_page)

    def broken(pages, handle, record):
        handle.write(b"%PDF-1.4 partial")
        raise RuntimeError("interrupted")

    monkeypatch.setattr(record_mod, "_save_pdf", broken)
    fresh = tmp_path / "fresh"
    with pytest.raises(RuntimeError):
        write_record(made["run"], made["judgement"], made["info"], fresh)
    assert not fresh.exists()  # the folder made for the failed run goes again, with no file left
    old = tmp_path / "old"
    old.mkdir()
    (old / "record.pdf").write_bytes(b"previous record")
    with pytest.raises(RuntimeError):
        write_record(made["run"], made["judgement"], made["info"], old, force=True)
    assert (old / "record.pdf").read_bytes() == b"previous record"
    assert sorted(p.name for p in old.iterdir()) == ["record.pdf"]


def test_long_tables_paginate(made):
    record = dict(made["json"])
    record["results"] = made["json"]["results"] * 6
    pages = record_mod._table_pages(record)
    assert len(pages) == -(-len(record["results"]) // record_mod._ROWS_PER_PAGE)
    assert len(pages) > 1


# ---------------------------------------------------------------------- the PDF as a document
_SUPERSCRIPT = str.maketrans("⁰¹²³⁴⁵⁶⁷⁸⁹⁻", "0123456789-")


def _numbers(text: str) -> list[float]:
    """Every number written as d.ddd×10ⁿ (superscript exponent) in a page's text."""
    found = re.findall(r"(-?\d+(?:\.\d+)?)×10([⁰¹²³⁴⁵⁶⁷⁸⁹⁻]+)", text)
    return [float(m) * 10.0 ** int(e.translate(_SUPERSCRIPT)) for m, e in found]


def _embedded(font) -> bool:
    """Whether a PDF font object carries its own TrueType program (Type 42 via pdf.fonttype)."""
    font = font.get_object()
    if "/DescendantFonts" in font:
        return all(_embedded(f) for f in font["/DescendantFonts"])
    descriptor = font.get("/FontDescriptor")
    return descriptor is not None and "/FontFile2" in descriptor.get_object()


def test_pdf_is_text_and_vectors_with_one_footer_per_page(made):
    reader = pypdf.PdfReader(made["paths"]["record.pdf"])
    total = len(reader.pages)
    number = made["json"]["record_number"]
    for k, page in enumerate(reader.pages, start=1):
        text = page.extract_text()
        assert len(text) > 200  # extractable text on every page
        assert text.count("input SHA-256") == 1 and text.count(f"page {k} of {total}") == 1
        assert text.count("page ") == 1  # no second footer from a figure drawn on the page
        assert f"record {number}" in text
        for image in page.images:  # figures are drawn as vectors: no picture but a logo
            width, height = image.image.size
            assert width <= 64 and height <= 64, (k, image.name, width, height)
        fonts = page["/Resources"]["/Font"]
        assert fonts and all(_embedded(fonts[name]) for name in fonts), k
    day = made["run"].analysis_time.astimezone(UTC).strftime("%Y%m%d")
    assert number == f"{day}-{made['json']['input']['sha256'][:8]}"


def test_every_listed_limit_shows_its_numbers(made):
    first = made["pages"][0]
    shown = np.array(_numbers(first))
    listed = made["judgement"].listed
    # the limit at 100 s lies between measured taus (64 s, 128 s): judged on interpolated numbers
    assert any(c.interpolated for c in listed)
    assert "(*)" in first and "interpolated" in first
    for check in listed:
        assert format_tau(check.tau_s) in first
        for value in (check.limit, check.deviation, check.ci_low, check.ci_high):
            assert np.isfinite(value)
            assert np.any(np.isclose(shown, value, rtol=6e-4, atol=0.0)), (check.tau_s, value)
    table = made["pages"][2]
    assert "edf" in table and "noise" in table
    # one number format per column: every deviation of the table as d.ddd×10ⁿ
    oadev = [r for r in made["json"]["results"] if r["statistic"] == "oadev"]
    values = np.array(_numbers(table))
    for row in oadev:
        assert np.any(np.isclose(values, row["deviation"], rtol=6e-4, atol=0.0))
    assert "e+0" not in table and "e-1" not in table  # no computer notation in the table


def test_caution_verdict_and_signature_fields_on_page_one(made, tmp_path):
    first = made["pages"][0]
    for words in ("Caution", "systematic effects", "measured by", "checked by", "date"):
        assert words in first
    assert first.index(
        "PASS" if made["json"]["overall_verdict"] == "pass" else "FAIL"
    ) < first.index("Device")
    signed = load_info_text(
        tmp_path,
        'record_number = "SR-7"\nmeasured_by = "J. Doe"\nchecked_by = "A. N. Other"\n'
        "date = 2026-03-04\n" + INFO,
    )
    paths = write_record(made["run"], made["judgement"], signed, tmp_path / "signed")
    text = pypdf.PdfReader(paths["record.pdf"]).pages[0].extract_text()
    for value in ("record SR-7", "J. Doe", "A. N. Other", "2026-03-04"):
        assert value in text
    data = json.loads(paths["record.json"].read_text())
    assert data["record_number"] == "SR-7"
    assert data["signatures"] == {
        "measured_by": "J. Doe", "checked_by": "A. N. Other", "date": "2026-03-04",
    }  # fmt: skip


def load_info_text(folder, text):
    """An information file written from ``text`` and read back."""
    path = folder / "info-signed.toml"
    path.write_text(text)
    return load_info(path)
