"""Tests of stability.reports: atomic files, hashes, the results table as text, the summary."""

from __future__ import annotations

import hashlib
import json
import math
import os
from dataclasses import replace
from datetime import UTC, datetime, timedelta, timezone
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

import stability
from stability.errors import InputError
from stability.files import (
    atomic_output,
    atomic_write_bytes,
    atomic_write_text,
    ensure_folder,
    jsonable,
    refuse_overwrite,
    settings_hash,
    sha256_file,
)
from stability.measurement import Provenance
from stability.reports import (
    SUMMARY_FIELDS,
    build_summary,
    read_table_csv,
    summary_json,
    table_csv,
    table_markdown,
    terminal_table,
)
from stability.reports.tables import format_tau, format_value
from stability.table import COLUMNS, StatisticResult


# ---------------------------------------------------------------------- fixtures
def _white_fm(n: int = 4096, seed: int = 20240601) -> np.ndarray:
    # Invented test data: seeded white frequency noise, 1e-11 per sample.
    return np.random.default_rng(seed).normal(0.0, 1e-11, n)


def _strip_qualification(table):
    """Empty the qualification columns, whatever analyze filled in (a raw-estimate table)."""
    results = {
        name: StatisticResult.build(r.statistic, r.tau, r.m, r.n_terms, r.raw_deviation)
        for name, r in table.results.items()
    }
    return replace(table, results=results, extras={})


@pytest.fixture
def table():
    meas = stability.Measurement.from_frequency(_white_fm(), 1.0)
    return _strip_qualification(stability.analyze(meas, stats="oadev,mdev,tdev"))


@pytest.fixture
def qualified(table):
    """The table with intervals, EDF and noise filled in BY HAND (invented test data).

    The numbers are not computed by the qualification layer: they only exercise
    the writers (some rows left empty on purpose).
    """
    results = {}
    for name, r in table.results.items():
        n = len(r)
        low, high = r.deviation * 0.9, r.deviation * 1.12
        edf = np.linspace(4000.0, 3.5, n)
        alpha = np.zeros(n)
        alpha[-1] = low[-1] = high[-1] = edf[-1] = np.nan
        results[name] = replace(
            r,
            ci_low=low,
            ci_high=high,
            edf=edf,
            alpha=alpha,
            noise=("WFM",) * (n - 1) + ("",),
            noise_method=("lag1 acf",) * (n - 1) + ("",),
        )
    return replace(table, results=results)


@pytest.fixture
def filed_table(tmp_path):
    """A table whose measurement carries file provenance and a start time."""
    log = tmp_path / "counter.log"
    log.write_text("invented log for provenance only\n")
    prov = Provenance(
        path=str(log),
        sha256=sha256_file(log),
        rows=4096,
        reader="delimited text",
        details={"dialect": {"delimiter": ",", "decimal": "."}, "value_column": "freq"},
    )
    y = _white_fm(2048)
    y[100:103] = np.nan
    meas = stability.Measurement.from_frequency(
        y,
        1.0,
        provenance=prov,
        start=datetime(2024, 5, 1, 12, 0, tzinfo=timezone(timedelta(hours=2))),
        nominal=10e6,
        notes=["3 unreadable rows became gaps"],
    )
    out = stability.analyze(meas, stats="oadev,mdev")
    out.extras["offset_drift"] = {"offset": 1.5e-11, "drift_per_day": np.float64(np.nan)}
    return out


# ---------------------------------------------------------------------- validation first
def test_every_validation_message(tmp_path, table):
    with pytest.raises(InputError, match="table must be a stability.StabilityTable"):
        table_csv("not a table")
    with pytest.raises(InputError, match="table must be a stability.StabilityTable"):
        table_markdown(None)
    with pytest.raises(InputError, match="table must be a stability.StabilityTable"):
        terminal_table(3)
    with pytest.raises(InputError, match="table must be a stability.StabilityTable"):
        build_summary({})
    with pytest.raises(InputError, match="preparation must be a mapping or None, got int"):
        build_summary(table, preparation=3)
    with pytest.raises(InputError, match="input_report must be a mapping or None, got list"):
        build_summary(table, input_report=[])
    with pytest.raises(InputError, match="analysis_time must be a datetime or None, got str"):
        build_summary(table, analysis_time="now")
    with pytest.raises(InputError, match="tool_version must be a str, got int"):
        build_summary(table, tool_version=1)
    with pytest.raises(InputError, match="summary must be a mapping, got list"):
        summary_json([1])
    with pytest.raises(InputError, match="settings must be a mapping, got list"):
        settings_hash([("a", 1)])
    with pytest.raises(InputError, match="mode must be one of w, wb, got 'a'"):
        with atomic_output(tmp_path / "x.txt", "a"):
            pass
    with pytest.raises(InputError, match="text must be a str, got bytes"):
        atomic_write_text(tmp_path / "x.txt", b"bytes")
    with pytest.raises(InputError, match="data must be bytes, got str"):
        atomic_write_bytes(tmp_path / "x.bin", "text")
    with pytest.raises(InputError, match="the output folder does not exist.*--out"):
        atomic_write_text(tmp_path / "missing" / "x.txt", "hello")
    with pytest.raises(InputError, match="is a folder, not a file"):
        atomic_write_text(tmp_path, "hello")
    with pytest.raises(InputError, match="path must be a file path"):
        atomic_write_text(3, "hello")
    with pytest.raises(InputError, match="no such file"):
        sha256_file(tmp_path / "absent.csv")
    with pytest.raises(InputError, match="no such file"):
        read_table_csv(tmp_path / "absent.csv")
    a_file = tmp_path / "plain.txt"
    a_file.write_text("x")
    with pytest.raises(InputError, match="exists and is not a folder"):
        ensure_folder(a_file)
    with pytest.raises(InputError, match=r"exists already.*pass --force to overwrite it"):
        refuse_overwrite(a_file, force=False)
    bad_header = tmp_path / "bad_header.csv"
    bad_header.write_text("tau,adev\n1,2\n")
    with pytest.raises(InputError, match=r"bad_header.csv:1: not a results table"):
        read_table_csv(bad_header)
    bad_cell = tmp_path / "bad_cell.csv"
    bad_cell.write_text(",".join(COLUMNS) + "\noadev,1.0,1,10,oops,,,,,,\n")
    with pytest.raises(InputError, match=r"bad_cell.csv:2 column deviation: cannot read 'oops'"):
        read_table_csv(bad_cell)
    empty_m = tmp_path / "empty_m.csv"
    empty_m.write_text(",".join(COLUMNS) + "\noadev,1.0,,10,1e-11,,,,,,\n")
    with pytest.raises(InputError, match=r"empty_m.csv:2 column m: empty cell"):
        read_table_csv(empty_m)


# ---------------------------------------------------------------------- files
def test_atomic_write_replaces_and_leaves_no_temp(tmp_path):
    target = tmp_path / "table.csv"
    atomic_write_text(target, "first\n")
    atomic_write_text(target, "second\n")
    assert target.read_text() == "second\n"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["table.csv"]
    # usual permissions (0666 less the umask), not the private 0600 of a temp file
    mask = os.umask(0o022)
    os.umask(mask)
    assert target.stat().st_mode & 0o777 == 0o666 & ~mask
    atomic_write_bytes(tmp_path / "blob.bin", b"\x00\x01\x02")
    assert (tmp_path / "blob.bin").read_bytes() == b"\x00\x01\x02"


def test_atomic_output_interrupted_keeps_old_file(tmp_path):
    target = tmp_path / "summary.json"
    target.write_text("old content\n")

    class Interrupted(RuntimeError):
        pass

    with pytest.raises(Interrupted):
        with atomic_output(target, "w") as handle:
            handle.write("half of the new cont")
            handle.flush()
            raise Interrupted("simulated failure midway")
    assert target.read_text() == "old content\n"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["summary.json"]
    # a fresh file interrupted midway does not appear at all
    fresh = tmp_path / "fresh.png"
    with pytest.raises(Interrupted):
        with atomic_output(fresh, "wb") as handle:
            handle.write(b"\x89PNG partial")
            raise Interrupted("simulated failure midway")
    assert not fresh.exists()
    assert sorted(p.name for p in tmp_path.iterdir()) == ["summary.json"]


def test_refuse_overwrite_and_ensure_folder(tmp_path):
    target = tmp_path / "record.pdf"
    refuse_overwrite(target, force=False)  # absent: nothing to refuse
    target.write_bytes(b"%PDF")
    refuse_overwrite(target, force=True)  # present, but forced
    with pytest.raises(InputError) as info:
        refuse_overwrite(target, force=False)
    assert info.value.hint == "pass --force to overwrite it"
    assert str(target) in str(info.value)
    folder = ensure_folder(tmp_path / "a" / "b")
    assert folder.is_dir()
    assert ensure_folder(folder) == folder  # existing folder is fine


def test_sha256_file_published_vector(tmp_path):
    source = tmp_path / "abc.txt"
    source.write_bytes(b"abc")
    # NIST FIPS 180-4 / "SHA-256 example" (CSRC example values): SHA-256("abc")
    assert sha256_file(source) == (
        "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
    )
    big = tmp_path / "big.bin"
    data = np.random.default_rng(1).bytes(3 * (1 << 20) + 17)  # spans several read chunks
    big.write_bytes(data)
    assert sha256_file(big) == hashlib.sha256(data).hexdigest()


def test_settings_hash_canonical():
    base = {"stats": ["oadev", "mdev"], "taus": "octave", "confidence": 0.683}
    same = {"confidence": 0.683, "taus": "octave", "stats": ("oadev", "mdev")}
    h = settings_hash(base)
    assert len(h) == 16 and all(c in "0123456789abcdef" for c in h)
    assert settings_hash(same) == h  # key order and tuple/list do not matter
    assert settings_hash({**base, "confidence": 0.95}) != h
    assert settings_hash({**base, "taus": "decade"}) != h
    assert settings_hash({**base, "drift": "linear"}) != h
    assert settings_hash({**base, "confidence": np.float64(0.683)}) == h


def test_jsonable_types():
    moment = datetime(2024, 1, 2, 3, 4, 5, tzinfo=timezone(timedelta(hours=1)))
    out = jsonable(
        {
            "a": np.float32(0.5),
            "b": np.int64(7),
            "c": np.array([1.0, np.nan, np.inf]),
            "d": moment,
            "e": Path("x/y.csv"),
            "f": {1, 2},
            "g": np.bool_(True),
            "h": pd.NA,
        }
    )
    assert out == {
        "a": 0.5,
        "b": 7,
        "c": [1.0, None, None],
        "d": "2024-01-02T02:04:05+00:00",
        "e": "x/y.csv",
        "f": [1, 2],
        "g": True,
        "h": None,
    }
    json.dumps(out, allow_nan=False)


# ---------------------------------------------------------------------- tables
def test_csv_columns_and_round_trip(tmp_path, qualified):
    text = table_csv(qualified)
    lines = text.splitlines()
    assert lines[0] == ",".join(COLUMNS)
    assert lines[0].split(",") == [
        "statistic", "tau_s", "m", "n_terms", "deviation", "ci_low", "ci_high",
        "edf", "alpha", "noise", "noise_method", "raw_deviation", "bias_factor",
    ]  # fmt: skip
    assert len(lines) == 1 + len(qualified)
    path = tmp_path / "table.csv"
    atomic_write_text(path, text)
    back = read_table_csv(path)
    expected = qualified.to_frame()
    assert list(back.columns) == list(COLUMNS)
    for name in ("tau_s", "deviation", "ci_low", "ci_high", "edf", "raw_deviation", "bias_factor"):
        # exact: the shortest repr reads back to the same binary64 (IEEE 754 5.12.2)
        np.testing.assert_array_equal(back[name].to_numpy(), expected[name].to_numpy())
    for name in ("m", "n_terms"):
        np.testing.assert_array_equal(back[name].to_numpy(), expected[name].to_numpy())
        assert back[name].dtype == np.int64
    assert back["alpha"].dtype == "Int64"
    assert back["alpha"].isna().tolist() == expected["alpha"].isna().tolist()
    assert back["alpha"].dropna().tolist() == expected["alpha"].dropna().tolist()
    for name in ("statistic", "noise", "noise_method"):
        assert back[name].tolist() == expected[name].tolist()
    # 15+ significant digits survive as text too
    first = float(lines[1].split(",")[4])
    assert math.isclose(first, float(expected["deviation"][0]), rel_tol=1e-15)


def test_csv_empty_cells_for_missing(table):
    text = table_csv(table)  # no qualification: intervals, edf, alpha, noise empty
    for line in text.splitlines()[1:]:
        cells = line.split(",")
        assert cells[5:11] == ["", "", "", "", "", ""]
        assert float(cells[11]) == float(cells[4]) and float(cells[12]) == 1.0  # raw, no bias
        assert "nan" not in line.lower()


def test_markdown_and_terminal_tables_hold_every_tau(qualified):
    md = table_markdown(qualified)
    term = terminal_table(qualified)
    md_lines = md.splitlines()
    assert md_lines[0].startswith("| statistic | tau | deviation | 68.3 % interval")
    assert len(md_lines) == 2 + len(qualified)
    for r in qualified:
        for tau in r.tau:
            cell = f"| {r.statistic} | {format_tau(float(tau))} |"
            assert cell in md
            assert format_tau(float(tau)) in term
        unit = "s" if r.statistic == "tdev" else ""
        dev = format_value(float(r.deviation[0]), unit)
        low = format_value(float(r.ci_low[0]), unit)
        high = format_value(float(r.ci_high[0]), unit)
        assert f"| {dev} | [{low}, {high}] |" in md
    # four significant digits (rounded for people)
    oadev1 = float(qualified["oadev"].deviation[0])
    assert f"{oadev1:.4g}" in md
    # time statistics get a time unit
    assert format_value(float(qualified["tdev"].deviation[0]), "s").endswith(" ps")
    # terminal: aligned columns (header and rows of equal structure)
    term_lines = term.splitlines()
    assert term_lines[0].split()[:3] == ["statistic", "tau", "deviation"]
    assert set(term_lines[1].replace(" ", "")) == {"-"}
    narrow = terminal_table(qualified, columns=80)
    assert "edf" not in narrow.splitlines()[0]


def test_format_tau_engineering_form():
    # common practice: SI prefixes below a second, plain seconds above
    assert format_tau(1.0) == "1 s"
    assert format_tau(0.1) == "100 ms"
    assert format_tau(2.5e-6) == "2.5 µs"
    assert format_tau(1024.0) == "1024 s"
    assert format_tau(65536.0) == "65536 s"
    assert format_tau(2.0**21) == "2.097e6 s"
    assert format_tau(float("nan")) == "n/a"
    assert format_value(1.23456e-9, "s") == "1.235 ns"
    assert format_value(1.23456e-12) == "1.235e-12"
    assert format_value(float("nan")) == ""


# ---------------------------------------------------------------------- summary
def _strict_loads(text: str):
    def refuse(name):
        raise ValueError(f"non-strict JSON constant {name}")

    return json.loads(text, parse_constant=refuse)


def test_summary_is_strict_and_complete(filed_table):
    moment = datetime(2024, 5, 2, 8, 30, tzinfo=UTC)
    summary = build_summary(
        filed_table,
        preparation={"outliers": {"threshold": 5.0, "removed": [12, 99]}, "drift": "none"},
        input_report={"bad_rows": [{"line": 17, "text": "ERR"}], "value": float("nan")},
        analysis_time=moment,
        tool_version="9.9.9",
    )
    text = summary_json(summary)
    data = _strict_loads(text)
    assert list(data) == list(SUMMARY_FIELDS)
    assert data["tool"] == {"name": "stability", "version": "9.9.9"}
    assert data["analysis_time"] == "2024-05-02T08:30:00+00:00"
    meas = filed_table.measurement
    inp = data["input"]
    assert inp["path"].endswith("counter.log")
    assert inp["sha256"] == meas.provenance.sha256 and len(inp["sha256"]) == 64
    assert inp["rows"] == 4096
    assert inp["reader"] == "delimited text"
    assert inp["dialect"] == {"delimiter": ",", "decimal": "."}
    assert inp["details"]["value_column"] == "freq"
    assert inp["report"] == {"bad_rows": [{"line": 17, "text": "ERR"}], "value": None}
    assert inp["kind"] == "frequency"
    assert inp["nominal_hz"] == 10e6
    assert inp["tau0_s"] == 1.0
    assert inp["start"] == "2024-05-01T10:00:00+00:00"  # 12:00 at UTC+2
    assert inp["span_s"] == meas.span
    assert inp["n"] == meas.n
    assert inp["gaps"] == 3
    assert inp["frequency_offset"] == meas.frequency_offset
    assert inp["notes"] == ["3 unreadable rows became gaps"]
    assert data["preparation"]["outliers"]["removed"] == [12, 99]
    assert data["settings"]["stats"] == ["oadev", "mdev"]
    assert data["settings_hash"] == settings_hash(filed_table.settings)
    assert data["offset_drift"] == {"offset": 1.5e-11, "drift_per_day": None}
    assert data["power_law_model"] is None or isinstance(data["power_law_model"], dict)
    assert data["power_law_model"] == jsonable(filed_table.extras.get("power_law_model"))
    assert data["statistics"]["oadev"]["title"] == "overlapping Allan deviation"
    assert data["statistics"]["mdev"]["bias_corrected"] is False
    assert data["statistics"]["oadev"]["taus"] == len(filed_table["oadev"])
    rows = data["table"]
    assert len(rows) == len(filed_table)
    assert all(list(row) == list(COLUMNS) for row in rows)
    frame = filed_table.to_frame()
    assert [row["deviation"] for row in rows] == frame["deviation"].tolist()
    for name in COLUMNS:
        cells = frame[name].tolist()
        for row, cell in zip(rows, cells, strict=True):
            missing = cell is pd.NA or cell == "" or (isinstance(cell, float) and np.isnan(cell))
            assert (row[name] is None) == missing, (name, cell, row[name])
            if not missing and isinstance(cell, float):
                assert row[name] == cell


def test_summary_settings_hash_follows_settings(table):
    moment = datetime(2024, 1, 1, tzinfo=UTC)
    first = build_summary(table, analysis_time=moment)
    again = build_summary(table, analysis_time=moment)
    assert first == again
    table.settings["confidence"] = 0.95
    changed = build_summary(table, analysis_time=moment)
    assert changed["settings_hash"] != first["settings_hash"]
    assert first["input"]["path"] is None and first["input"]["sha256"] is None
    _strict_loads(summary_json(changed))


def test_summary_qualified_rows(qualified):
    data = _strict_loads(summary_json(build_summary(qualified)))
    last = [row for row in data["table"] if row["statistic"] == "oadev"][-1]
    assert last["ci_low"] is None and last["alpha"] is None and last["noise"] is None
    first = data["table"][0]
    assert first["noise"] == "WFM" and first["alpha"] == 0 and first["edf"] == 4000.0
    # naive analysis times are local time, written in UTC
    naive = datetime(2024, 6, 1, 12, 0)
    stamp = build_summary(qualified, analysis_time=naive)["analysis_time"]
    assert datetime.fromisoformat(stamp) == naive.astimezone(UTC)
