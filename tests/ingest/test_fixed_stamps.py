"""Fixed-width date-time stamps read from the bytes: same instants, same reading as pandas.

Every log here is read twice, once with the fast path and once with the general
path (pandas ``read_csv`` + ``to_datetime``, chosen with the reader's private
``stamps="general"``), and the two
results are compared field by field: measurement, line numbers, notes,
provenance and the whole reading report.
"""

from __future__ import annotations

import dataclasses
import gzip
import math
from datetime import UTC, datetime, timedelta

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from stability import InputError
from stability.ingest import fixed_stamps as fs
from stability.ingest import inspect_log, parsing, read_log, validate_read_args
from stability.ingest.readers import _read
from stability.ingest.timestamps import TimeFormat

T0 = datetime(2024, 2, 28, 23, 59, 55, 125000)
ISO = TimeFormat("datetime", "ISO8601", aware=False)
ISO_Z = TimeFormat("datetime", "ISO8601", aware=True)


# ---------------------------------------------------------------------------- helpers
def _values(n: int, seed: int = 3) -> list[str]:
    rng = np.random.default_rng(seed)  # invented readings, fractional frequency
    return [f"{v:.6e}" for v in rng.normal(0.0, 1e-11, n)]


def _stamps(fmt: str, n: int, step: float = 1.0, start: datetime = T0) -> list[str]:
    return [(start + timedelta(seconds=step * i)).strftime(fmt) for i in range(n)]


def _write(
    path,
    lines: list[str],
    *,
    header: str | None = "time,y",
    newline: str = "\n",
    end: str = "\n",
    encoding: str = "utf-8",
    compress: bool = False,
) -> str:
    text = newline.join(([header] if header is not None else []) + lines) + end
    data = text.encode(encoding)
    if compress:
        data = gzip.compress(data, mtime=0)
    path.write_bytes(data)
    return str(path)


def _same(a, b, where: str = "") -> None:
    """Recursive equality that treats NaN as equal to NaN and compares arrays exactly."""
    if isinstance(a, np.ndarray) or isinstance(b, np.ndarray):
        assert isinstance(a, np.ndarray) and isinstance(b, np.ndarray), where
        assert a.dtype == b.dtype and a.shape == b.shape, where
        assert np.array_equal(a, b, equal_nan=a.dtype.kind == "f"), where
    elif dataclasses.is_dataclass(a) and not isinstance(a, type):
        assert type(a) is type(b), where
        for f in dataclasses.fields(a):
            _same(getattr(a, f.name), getattr(b, f.name), f"{where}.{f.name}")
    elif isinstance(a, dict):
        assert isinstance(b, dict) and a.keys() == b.keys(), where
        for k in a:
            _same(a[k], b[k], f"{where}[{k!r}]")
    elif isinstance(a, (list, tuple)):
        assert type(a) is type(b) and len(a) == len(b), where
        for i, (x, y) in enumerate(zip(a, b, strict=True)):
            _same(x, y, f"{where}[{i}]")
    elif isinstance(a, float) and isinstance(b, float) and math.isnan(a):
        assert math.isnan(b), where
    else:
        assert type(a) is type(b) and a == b, f"{where}: {a!r} != {b!r}"


def _read_with(path, stamps: str, **kwargs):
    """(measurement, report) of ``path`` read with the given stamp path."""
    return _read(path, validate_read_args(**kwargs), stamps=stamps)


def _read_both(monkeypatch, path, **kwargs) -> bool:
    """Read ``path`` with and without the fast path; assert equal; return whether it was used."""
    kwargs = {"engine": "pandas", **kwargs}  # the stamp paths of the pandas engine
    calls = []  # (given stamps from the bytes, gave rows) of each parse
    real = parsing._parse_chunks

    def spy(*args, **kw):
        out = real(*args, **kw)
        calls.append((kw["stamps"] is not None, out is not None))
        return out

    monkeypatch.setattr(parsing, "_parse_chunks", spy)
    m_fast = read_log(path, **kwargs)
    fast_used = calls[0] == (True, True)
    r_fast = inspect_log(path, **kwargs)
    before = len(calls)
    m_slow, r_slow = _read_with(path, "general", **kwargs)
    assert calls[before:] == [(False, True)]  # one parse, without the stamps from the bytes
    _same(m_fast, m_slow, "measurement")
    _same(r_fast.to_dict(), r_slow.to_dict(), "report")
    return fast_used


# ---------------------------------------------------------------------------- parser
@pytest.mark.parametrize(
    ("text", "fmt"),
    [
        ("2024-02-29T12:34:56Z,", ISO_Z),
        ("2024-02-29 12:34:56.123456789,", ISO),
        ("1999-12-31T23:59:59.5+05:30,", ISO_Z),
        ("2261-12-31T23:00:00-0800,", ISO_Z),
        ("1678-01-01T00:00,", ISO),
        ("2000-03-01T00:00:00.000-00:00,", ISO_Z),
        ("29.02.2000 01:02:03,", TimeFormat("datetime", "%d.%m.%Y %H:%M:%S")),
        ("31.12.2016 23:59:60.25,", TimeFormat("datetime", "%d.%m.%Y %H:%M:%S.%f")),
        ("2100/02/28 23:59:61,", TimeFormat("datetime", "%Y/%m/%d %H:%M:%S")),
    ],
)
def test_parser_matches_pandas(text, fmt):
    # cross-check: pandas 3.1 to_datetime with the reader's format (the general path);
    # this includes the roll-over of seconds 60 and 61 in strptime-style formats
    buf = np.frombuffer(text.encode(), dtype=np.uint8)
    tpl = fs.template_from_line(text, fmt, two_columns=False, delimiter=",")
    assert tpl is not None
    got = fs.parse_fixed_stamps(buf, np.array([0]), tpl)
    want = pd.to_datetime(pd.Series([text[:-1]]), format=fmt.pattern, utc=fmt.aware)
    if fmt.aware:
        want = want.dt.tz_convert("UTC").dt.tz_localize(None)
    assert got is not None
    assert int(got[0]) == int(want.to_numpy(dtype="datetime64[ns]").view(np.int64)[0])


def test_days_from_civil_against_python_calendar():
    # Python's datetime uses the proleptic Gregorian calendar (common practice):
    # every day from 1678 to 2261 by steps of 97 days, plus every 28 Feb / 1 Mar
    first, last = datetime(1678, 1, 1), datetime(2261, 12, 31)
    days = np.arange(0, (last - first).days + 1, 97)
    dates = [first + timedelta(days=int(d)) for d in days]
    for y in range(1678, 2262, 1):
        dates += [datetime(y, 2, 28), datetime(y, 3, 1)]
    y = np.array([d.year for d in dates])
    m = np.array([d.month for d in dates])
    dd = np.array([d.day for d in dates])
    epoch = datetime(1970, 1, 1)  # IEEE Std 1003.1: day 0 of the epoch
    want = np.array([(d - epoch).days for d in dates])
    np.testing.assert_array_equal(fs._days_from_civil(y, m, dd), want)


@pytest.mark.parametrize(
    "line",
    [
        "2023-02-29T00:00:00Z,1",  # 29 February of a common year
        "1900-02-29T00:00:00Z,1",  # century not divisible by 400 (common practice)
        "2024-04-31T00:00:00Z,1",
        "2024-13-01T00:00:00Z,1",
        "2024-00-10T00:00:00Z,1",
        "2024-01-00T00:00:00Z,1",
        "2024-01-01T24:00:00Z,1",
        "2024-01-01T23:60:00Z,1",
        "2016-12-31T23:59:60Z,1",  # ISO 8601 stamps: pandas refuses second 60
        "2024-01-01T00:00:00+24:00,1",
        "2024-01-01T00:00:00+05:60,1",
        "1600-01-01T00:00:00Z,1",  # outside int64 nanoseconds with margin
        "2024-01-01T0a:00:00Z,1",
        "2024-01-01X00:00:00Z,1",
    ],
)
def test_parser_refuses_what_pandas_refuses(line):
    first = "2024-01-01T00:00:00Z,1"
    data = (first + "\n" + line + "\n").encode()
    buf = np.frombuffer(data, dtype=np.uint8)
    tpl = fs.template_from_line(first, ISO_Z, two_columns=False, delimiter=",")
    starts = fs.line_starts(buf, 1)
    assert starts.tolist() == [0, len(first) + 1]
    assert fs.parse_fixed_stamps(buf, starts, tpl) is None
    # and pandas 3.1 (the general path) gives no time for it either, or the template differs
    stamp = line.split(",")[0]
    parsed = pd.to_datetime(pd.Series([stamp]), format="ISO8601", utc=True, errors="coerce")
    assert parsed.isna().all() or stamp[10] != "T" or stamp.startswith("1600")


def test_line_starts_edges():
    buf = np.frombuffer(b"h\r\na\r\nb\r\n", dtype=np.uint8)
    assert fs.line_starts(buf, 2).tolist() == [3, 6]  # the final newline opens no line
    buf = np.frombuffer(b"h\na\nb", dtype=np.uint8)
    assert fs.line_starts(buf, 2).tolist() == [2, 4]  # a last line without newline counts
    buf = np.frombuffer(b"h\na\rb\n", dtype=np.uint8)
    assert fs.line_starts(buf, 2) is None  # a lone CR ends a line for the CSV parser
    buf = np.frombuffer(b"\xef\xbb\xbfa\nb\n", dtype=np.uint8)
    assert fs.line_starts(buf, 1, skip=3).tolist() == [3, 5]
    assert fs.line_starts(np.frombuffer(b"h\n", dtype=np.uint8), 2) is None


def test_line_starts_across_scan_blocks(monkeypatch):
    # CR and LF of one line ending fall in different scan blocks
    monkeypatch.setattr(fs, "_SCAN_BYTES", 4)
    data = b"abc\r\nde\r\nfghij\r\nk"
    buf = np.frombuffer(data, dtype=np.uint8)
    want = [0] + [i + 1 for i, b in enumerate(data) if b == 10]
    assert fs.line_starts(buf, 1).tolist() == want
    assert fs.line_starts(np.frombuffer(data + b"\r", dtype=np.uint8), 1) is None


def test_template_refuses_other_layouts():
    def tpl(line, fmt=ISO):
        return fs.template_from_line(line, fmt, two_columns=False, delimiter=",")

    assert tpl("2024-01-01T00:00:00Z,1") is None  # a zone, but the format is naive
    assert tpl(" 2024-01-01T00:00:00,1") is None
    assert tpl('"2024-01-01T00:00:00",1') is None
    assert tpl("2024-01-01T00:00:00.1234567890,1") is None  # more than 9 digits
    assert tpl("2024-01-01T00:00:00 ,1") is None
    assert tpl("1700000000,1", TimeFormat("epoch", scale=1.0, aware=True)) is None


def test_many_pieces_and_padded_tail(monkeypatch):
    # blocks of 3 lines, and a last line too short for whole 8-byte words
    monkeypatch.setattr(fs, "PIECE_LINES", 3)
    stamps = _stamps("%Y-%m-%dT%H:%M:%S.%f", 11, step=0.25)
    text = "\n".join(f"{s},{i}" for i, s in enumerate(stamps))  # no final newline
    buf = np.frombuffer(text.encode(), dtype=np.uint8)
    tpl = fs.template_from_line(text, ISO, two_columns=False, delimiter=",")
    got = fs.parse_fixed_stamps(buf, fs.line_starts(buf, 1), tpl)
    # cross-check: pandas 3.1 to_datetime
    want = pd.to_datetime(pd.Series(stamps), format="ISO8601").to_numpy("datetime64[ns]")
    np.testing.assert_array_equal(got, want.view(np.int64))


# ---------------------------------------------------------------------------- reader
STYLES = [
    # (strftime pattern of the stamps, fast path expected)
    ("%Y-%m-%dT%H:%M:%SZ", True),
    ("%Y-%m-%dT%H:%M:%S.%f", True),
    ("%Y-%m-%d %H:%M:%S.%f+02:00", True),
    ("%Y-%m-%dT%H:%M:%S-0530", True),
    ("%Y-%m-%dT%H:%MZ", True),
    ("%d.%m.%Y %H:%M:%S", True),
    ("%d.%m.%Y %H:%M:%S.%f", True),
    ("%Y/%m/%d %H:%M:%S", True),
]


@pytest.mark.parametrize(("fmt", "fast"), STYLES)
@pytest.mark.parametrize("newline", ["\n", "\r\n"])
def test_styles_same_as_general_path(tmp_path, monkeypatch, fmt, fast, newline):
    n = 40
    step = 60.0 if "%S" not in fmt else 1.0
    stamps = _stamps(fmt, n, step=step)
    lines = [f"{s},{v}" for s, v in zip(stamps, _values(n), strict=True)]
    p = _write(tmp_path / "s.csv", lines, newline=newline)
    assert _read_both(monkeypatch, p) is fast


@pytest.mark.parametrize("chunk", [7, 1_000_000])
def test_chunks_and_compression(tmp_path, monkeypatch, chunk):
    monkeypatch.setattr(parsing, "_CHUNK_ROWS", chunk)
    n = 50
    lines = [
        f"{s},{v}" for s, v in zip(_stamps("%Y-%m-%dT%H:%M:%S.%fZ", n), _values(n), strict=True)
    ]
    p = _write(tmp_path / "c.csv.gz", lines, compress=True)
    assert _read_both(monkeypatch, p)


def test_two_columns_semicolon_and_decimal_comma(tmp_path, monkeypatch):
    n = 30
    dates = _stamps("%d.%m.%Y;%H:%M:%S", n)
    vals = [v.replace(".", ",") for v in _values(n)]
    lines = [f"{d};{v}" for d, v in zip(dates, vals, strict=True)]
    p = _write(tmp_path / "two.csv", lines, header="Datum;Zeit;y", newline="\r\n")
    assert _read_both(monkeypatch, p, kind="fractional")


def test_two_columns_white_space(tmp_path, monkeypatch):
    n = 30
    stamps = _stamps("%Y-%m-%d  %H:%M:%S.%f", n)
    lines = [f"{s}   {v}" for s, v in zip(stamps, _values(n), strict=True)]
    p = _write(tmp_path / "two.txt", lines, header=None)
    assert _read_both(monkeypatch, p, kind="fractional")


def test_sentinels_errors_and_gap(tmp_path, monkeypatch):
    n = 40
    stamps = _stamps("%Y-%m-%dT%H:%M:%SZ", n)
    del stamps[20:23]  # a gap of three samples in the time stamps
    vals = _values(len(stamps))
    vals[5], vals[9], vals[30] = "9.9E37", "ERR", ""
    lines = [f"{s},{v}" for s, v in zip(stamps, vals, strict=True)]
    p = _write(tmp_path / "e.csv", lines)
    assert _read_both(monkeypatch, p)
    rep = inspect_log(p)
    assert rep.bad_value_count == 3 and rep.gap_samples == 3


def test_frequency_with_exact_decimals(tmp_path, monkeypatch):
    # 15 significant digits: values are kept as decimal text
    n = 30
    rng = np.random.default_rng(5)
    vals = [f"{1e7 + x:.7f}" for x in rng.normal(0.0, 1e-3, n)]
    lines = [f"{s},{v}" for s, v in zip(_stamps("%Y-%m-%dT%H:%M:%SZ", n), vals, strict=True)]
    p = _write(tmp_path / "f.csv", lines, header="time,frequency [Hz]")
    assert _read_both(monkeypatch, p)


def test_leap_day_and_zone_changes(tmp_path, monkeypatch):
    n = 30
    stamps = _stamps("%Y-%m-%dT%H:%M:%S+01:00", n, step=3600.0)  # crosses 2024-02-29
    stamps[20:] = [
        (T0 + timedelta(hours=i + 1)).strftime("%Y-%m-%dT%H:%M:%S+02:00") for i in range(20, n)
    ]
    lines = [f"{s},{v}" for s, v in zip(stamps, _values(n), strict=True)]
    p = _write(tmp_path / "z.csv", lines)
    assert _read_both(monkeypatch, p)
    assert read_log(p).start == (T0 - timedelta(hours=1)).replace(microsecond=0, tzinfo=UTC)


@pytest.mark.parametrize(
    "case",
    [
        "junk",
        "invalid_date",
        "leap_second_iso",
        "blank_line",
        "trailing_blank",
        "quoted",
        "short_last_line",
        "lone_cr",
        "wider_stamp",
        "comment",
        "ancient_year",
    ],
)
def test_falls_back_with_same_result(tmp_path, monkeypatch, case):
    n = 30
    stamps = _stamps("%Y-%m-%dT%H:%M:%SZ", n, start=datetime(2023, 2, 28, 23, 59, 50))
    lines = [f"{s},{v}" for s, v in zip(stamps, _values(n), strict=True)]
    end = "\n"
    if case == "junk":
        lines.insert(12, "instrument restarted")
    elif case == "invalid_date":
        lines[15] = "2023-02-29T00:00:05Z," + _values(1)[0]
    elif case == "leap_second_iso":
        lines[15] = "2023-02-28T23:59:60Z," + _values(1)[0]
    elif case == "blank_line":
        lines.insert(8, "")
    elif case == "trailing_blank":
        end = "\n\n"
    elif case == "quoted":
        lines = [f'"{s}",{v}' for s, v in zip(stamps, _values(n), strict=True)]
    elif case == "short_last_line":
        lines.append("2023-03-01T00:00:20Z")
        end = ""
    elif case == "lone_cr":
        lines[10] = lines[10] + "\r" + "2023-03-01T00:00:00Z,0"
    elif case == "wider_stamp":
        lines[10] = lines[10].replace("Z,", ".5Z,")
    elif case == "comment":
        lines.insert(5, "# counter re-armed")
    elif case == "ancient_year":  # parses in pandas, but lies outside int64 nanoseconds
        lines[15] = "0023-02-28T23:59:59Z," + _values(1)[0]
    p = _write(tmp_path / "j.csv", lines, end=end)
    assert _read_both(monkeypatch, p) is False
    if case in ("junk", "invalid_date", "leap_second_iso", "ancient_year"):
        assert inspect_log(p).junk_line_count == 1


@pytest.mark.parametrize(
    ("encoding", "header"), [("utf-8-sig", "time,y"), ("latin-1", "temps,écart")]
)
def test_encodings(tmp_path, monkeypatch, encoding, header):
    n = 20
    lines = [f"{s},{v}" for s, v in zip(_stamps("%Y-%m-%dT%H:%M:%SZ", n), _values(n), strict=True)]
    p = _write(tmp_path / "enc.csv", lines, header=header, encoding=encoding)
    assert _read_both(monkeypatch, p, time_column=1, kind="fractional")


def test_utf16_takes_the_buffer(tmp_path, monkeypatch):
    # UTF-16 logs are re-encoded to UTF-8 by the sniffer, so the bytes path applies
    n = 20
    lines = [f"{s},{v}" for s, v in zip(_stamps("%Y-%m-%dT%H:%M:%SZ", n), _values(n), strict=True)]
    p = tmp_path / "u16.csv"
    p.write_bytes(("time,y\n" + "\n".join(lines) + "\n").encode("utf-16"))
    assert _read_both(monkeypatch, str(p))


def test_strict_error_is_the_same(tmp_path, monkeypatch):
    n = 20
    vals = _values(n)
    vals[7] = "ERR"
    lines = [f"{s},{v}" for s, v in zip(_stamps("%Y-%m-%dT%H:%M:%SZ", n), vals, strict=True)]
    p = _write(tmp_path / "strict.csv", lines)
    messages = []
    for stamps in ("auto", "general"):
        with pytest.raises(InputError) as info:
            _read_with(p, stamps, strict=True)
        messages.append(str(info.value))
    assert messages[0] == messages[1]
    assert ":9" in messages[0]  # line 9: header + 7 rows before it


_BASE = [
    f"{s},{v}"
    for s, v in zip(
        _stamps("%Y-%m-%dT%H:%M:%S.%fZ", 24, start=datetime(2024, 2, 28, 23, 59, 50)),
        _values(24),
        strict=True,
    )
]


def _outcome(path, stamps: str):
    try:
        m, _ = _read_with(path, stamps, kind="fractional")
    except InputError as exc:
        return str(exc)
    return m


@settings(max_examples=25, deadline=None)
@given(
    row=st.integers(0, len(_BASE) - 1),
    col=st.integers(0, 34),
    char=st.sampled_from(list('0123456789 9:-.TZ+,;x"\r')),
)
def test_any_one_byte_change_reads_the_same(tmp_path_factory, row, col, char):
    # one character of one line changed anywhere: the fast path or its fallback must
    # read the log exactly as the general path does (or fail with the same message)
    lines = list(_BASE)
    line = lines[row]
    lines[row] = line[:col] + char + line[col + 1 :] if col < len(line) else line + char
    p = _write(tmp_path_factory.mktemp("fuzz") / "f.csv", lines)
    fast = _outcome(p, "auto")
    slow = _outcome(p, "general")
    assert type(fast) is type(slow)
    if isinstance(fast, str):
        assert fast == slow
    else:
        _same(fast, slow, "measurement")
