"""Containers, encodings, line endings and dialects round-trip to the values written."""

from __future__ import annotations

import bz2
import gzip
import lzma
import zipfile

import numpy as np
import pytest

from stability import InputError
from stability.ingest import inspect_log, read_log

# Invented fixture: fractional frequency readings on a 1 s grid.
Y = np.array([1.5e-12, -2.25e-12, 3.0e-12, 0.5e-12, -1.0e-12, 2.0e-12])


def _text(delim: str = ",", decimal: str = ".", header: bool = True) -> str:
    rows = ["t" + delim + "y"] if header else []
    for i, y in enumerate(Y):
        v = f"{y:.6e}"
        if decimal == ",":
            v = v.replace(".", ",")
        rows.append(f"{i}{delim}{v}")
    return "\n".join(rows) + "\n"


def _check(m) -> None:
    # exact round trip of the written values (fixture values, common practice)
    np.testing.assert_allclose(m.frequency(), Y, rtol=1e-12, atol=0)
    assert m.tau0 == 1.0


@pytest.mark.parametrize(
    ("opener", "name"),
    [(gzip.compress, "gzip"), (bz2.compress, "bz2"), (lzma.compress, "xz")],
)
def test_compressed_by_magic_bytes(tmp_path, opener, name):
    p = tmp_path / "log.txt"  # the extension says nothing about the container
    p.write_bytes(opener(_text().encode()))
    m = read_log(p)
    _check(m)
    assert inspect_log(p).container == name


def test_single_member_zip(tmp_path):
    p = tmp_path / "log.dat"
    with zipfile.ZipFile(p, "w") as zf:
        zf.writestr("inner.csv", _text())
    _check(read_log(p))
    rep = inspect_log(p)
    assert (rep.container, rep.member) == ("zip", "inner.csv")


def test_zip_with_two_members_is_an_error(tmp_path):
    p = tmp_path / "two.zip"
    with zipfile.ZipFile(p, "w") as zf:
        zf.writestr("a.csv", _text())
        zf.writestr("b.csv", _text())
    with pytest.raises(InputError, match="exactly one"):
        read_log(p)


@pytest.mark.parametrize(
    ("encoding", "expected"),
    [
        ("utf-8", "utf-8"),
        ("utf-8-sig", "utf-8-sig"),
        ("utf-16-le", "utf-16-le"),
        ("utf-16-be", "utf-16-be"),
        ("latin-1", "latin-1"),
    ],
)
def test_encodings(tmp_path, encoding, expected):
    text = "# Labor: Raum \u00b5-Welle \u00e4\n" + _text()
    data = text.encode(encoding)
    if encoding.startswith("utf-16"):
        bom = b"\xff\xfe" if encoding.endswith("le") else b"\xfe\xff"
        data = bom + data
    p = tmp_path / "enc.csv"
    p.write_bytes(data)
    _check(read_log(p))
    assert inspect_log(p).encoding == expected


@pytest.mark.parametrize(("eol", "name"), [("\n", "LF"), ("\r\n", "CRLF"), ("\r", "CR")])
def test_line_endings(tmp_path, eol, name):
    p = tmp_path / "eol.csv"
    p.write_bytes(_text().replace("\n", eol).encode())
    m = read_log(p)
    _check(m)
    assert inspect_log(p).line_endings == name
    assert list(m.lines) == [2, 3, 4, 5, 6, 7]


@pytest.mark.parametrize(
    ("delim", "decimal", "name"),
    [
        (",", ".", "comma"),
        (";", ".", "semicolon"),
        ("\t", ".", "tab"),
        ("   ", ".", "spaces"),
        ("|", ".", "pipe"),
        (";", ",", "semicolon"),
        ("\t", ",", "tab"),
    ],
)
def test_delimiters_and_decimal_marks(tmp_path, delim, decimal, name):
    p = tmp_path / "d.txt"
    p.write_text(_text(delim, decimal))
    _check(read_log(p))
    rep = inspect_log(p)
    assert (rep.delimiter, rep.decimal_mark) == (name, decimal)


@pytest.mark.parametrize("prefix", ["#", ";", "%", "//"])
def test_comment_lines_and_preamble(tmp_path, prefix):
    body = _text(";" if prefix == ";" else ",").splitlines()
    lines = [
        f"{prefix} written by a counter",
        "Frequency counter log, channel A",
        "Operator: someone",
        body[0],
        body[1],
        body[2],
        f"{prefix} a comment in the middle",
        "",
        *body[3:],
    ]
    p = tmp_path / "c.csv"
    p.write_text("\n".join(lines) + "\n")
    m = read_log(p)
    _check(m)
    rep = inspect_log(p)
    assert rep.comment_prefix == prefix
    assert rep.header == ["t", "y"] and rep.header_line == 4
    assert [e["line"] for e in rep.preamble] == [2, 3]
    assert rep.blank_or_comment_lines == 2
    assert rep.junk_line_count == 0
    assert list(m.lines) == [5, 6, 9, 10, 11, 12]


def test_semicolon_delimiter_with_empty_first_field_is_data(tmp_path):
    # a line starting with ';' is a data row when it splits like one
    p = tmp_path / "s.csv"
    p.write_text("a;t;y\n" + "".join(f";{i};{y:.6e}\n" for i, y in enumerate(Y)))
    _check(read_log(p, time_column="t", column="y"))


def test_trailing_delimiters_and_no_header(tmp_path):
    p = tmp_path / "trail.csv"
    p.write_text("".join(f"{i},{y:.6e},\n" for i, y in enumerate(Y)))
    # a first column 0, 1, 2 ... without a header counts rows: the interval must be given
    with pytest.raises(InputError, match="--tau0"):
        read_log(p, kind="fractional")
    m = read_log(p, kind="fractional", tau0="1s")
    _check(m)
    rep = inspect_log(p, kind="fractional", tau0="1s")
    assert rep.header == [] and rep.columns[0].role == "row number"


def test_single_column_needs_tau0(tmp_path):
    p = tmp_path / "one.txt"
    p.write_text("".join(f"{y:.6e}\n" for y in Y))
    with pytest.raises(InputError, match="--kind"):
        read_log(p, tau0="1s")
    with pytest.raises(InputError, match="--tau0"):
        read_log(p, kind="fractional")
    m = read_log(p, kind="fractional", tau0="1s")
    _check(m)
    assert "given" in m.provenance.details["tau0_source"]
