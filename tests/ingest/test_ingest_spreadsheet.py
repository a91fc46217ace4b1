"""Spreadsheet workbooks: .xlsx read by content through pandas, others refused in one line.

The workbooks are invented, written with openpyxl as a lab PC's logging
program or a technician would: a line of settings above the header, German or
English headers with units, date-time cells, 10 s and 0.1 s intervals.
"""

from __future__ import annotations

import sys
import zipfile
from datetime import datetime, timedelta

import numpy as np
import pytest

from stability import InputError
from stability.ingest import inspect_log, read_log

T0 = datetime(2026, 2, 16, 10, 0, 0)
N = 90
HZ = 10e6 + np.round(np.random.default_rng(5).normal(0.0, 1e-3, N), 4)  # invented readings


def _book(path, sheets):
    """Write a workbook: ``sheets`` maps a sheet name to its rows (lists of cells)."""
    openpyxl = pytest.importorskip("openpyxl")  # the spreadsheet extra
    wb = openpyxl.Workbook()
    wb.remove(wb.active)
    for name, rows in sheets.items():
        ws = wb.create_sheet(name)
        for row in rows:
            ws.append(row)
    wb.save(path)
    return path


def _german_rows(step=10.0):
    rows = [["Torzeit: 10 s"], ["Nr.", "Zeitstempel", "Frequenz [Hz]"]]
    rows += [[i + 1, T0 + timedelta(seconds=step * i), float(HZ[i])] for i in range(N)]
    return rows


def _english_rows(step=0.1):
    rows = [["Sample", "Time", "Frequency (Hz)"]]
    rows += [[i, T0 + timedelta(seconds=step * i), float(HZ[i])] for i in range(N)]
    return rows


@pytest.mark.parametrize("name", ["messung.xlsx", "messung.csv", "messung"])
def test_xlsx_read_by_content_whatever_its_name(tmp_path, name):
    p = _book(tmp_path / name, {"Messung": _german_rows()})
    m = read_log(p)
    assert m.tau0 == 10.0 and m.n == N + 1
    np.testing.assert_allclose(m.frequency(), (HZ - 10e6) / 10e6, rtol=1e-9, atol=1e-18)
    rep = inspect_log(p)
    assert rep.container == "xlsx" and rep.member == "Messung"
    assert rep.columns[0].role == "row number" and rep.time_column == "Zeitstempel"
    text = rep.to_text()
    assert "container xlsx (sheet 'Messung')" in text
    assert f"tau0 10 s from column 'Zeitstempel' (median spacing of {N} stamps)" in text
    assert "preamble line 1 says gate 10 s: agrees" in text


def test_xlsx_sheet_by_name_or_number(tmp_path):
    p = _book(
        tmp_path / "book.xlsx",
        {"Notes": [["written by hand"]], "Fast": _english_rows(0.1), "Slow": _german_rows(10)},
    )
    # the first sheet holds no data rows: said so, with the option that fixes it
    with pytest.raises(InputError, match="no data rows"):
        read_log(p)
    fast = read_log(p, sheet="fast")
    assert fast.tau0 == pytest.approx(0.1, abs=1e-9) and fast.n == N + 1
    slow = read_log(p, sheet=3)
    assert slow.tau0 == 10.0 and slow.n == N + 1
    assert any("3 sheets" in n and "--sheet" in n for n in slow.notes)
    with pytest.raises(InputError, match=r"no sheet named 'Raw'.*--sheet with one of 1='Notes'"):
        read_log(p, sheet="Raw")
    with pytest.raises(InputError, match="sheet 4 does not exist"):
        read_log(p, sheet="4")


def test_empty_sheet_and_sheet_on_a_text_log(tmp_path):
    p = _book(tmp_path / "e.xlsx", {"Leer": [], "Daten": _english_rows(1.0)})
    with pytest.raises(InputError, match=r"sheet 'Leer' is empty.*--sheet"):
        read_log(p)
    assert read_log(p, sheet=2).tau0 == 1.0
    csv = tmp_path / "plain.csv"
    csv.write_text("time,y\n0,1e-12\n1,2e-12\n")
    with pytest.raises(InputError, match="--sheet applies to a spreadsheet workbook"):
        read_log(csv, sheet=1)


def test_without_openpyxl_one_line_names_the_extra(tmp_path, monkeypatch):
    p = _book(tmp_path / "m.xlsx", {"Messung": _german_rows()})
    monkeypatch.setitem(sys.modules, "openpyxl", None)
    with pytest.raises(InputError, match=r"needs openpyxl.*oscillator-stability\[spreadsheet\]"):
        read_log(p)


def test_legacy_xls_and_ods_are_refused_with_how_to_export(tmp_path):
    xls = tmp_path / "old.xls"
    xls.write_bytes(b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1" + bytes(504))
    with pytest.raises(InputError, match=r"legacy Excel workbook.*save the sheet as CSV or as"):
        read_log(xls)
    ods = tmp_path / "calc.csv"  # renamed
    with zipfile.ZipFile(ods, "w") as zf:
        zf.writestr("mimetype", "application/vnd.oasis.opendocument.spreadsheet")
        zf.writestr("content.xml", "<office:document-content/>")
    with pytest.raises(InputError, match=r"OpenDocument spreadsheet \(.ods\).*CSV or as an .xlsx"):
        read_log(ods)


def test_a_zip_of_several_logs_is_still_a_zip(tmp_path):
    p = tmp_path / "logs.zip"
    with zipfile.ZipFile(p, "w") as zf:
        zf.writestr("a.csv", "time,y\n0,1\n")
        zf.writestr("b.csv", "time,y\n0,1\n")
    with pytest.raises(InputError, match="zip archive holds 2 files"):
        read_log(p)
