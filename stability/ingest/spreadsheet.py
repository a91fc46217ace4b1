"""Spreadsheet workbooks: recognise them by content, turn one sheet into log text.

An Office Open XML workbook (``.xlsx``) is a zip archive holding
``[Content_Types].xml`` and ``xl/workbook.xml``, whatever its file name. The
chosen sheet is read with :func:`pandas.read_excel` (engine openpyxl, an
optional dependency: the ``spreadsheet`` extra) and turned into tab-separated
text, one line per sheet row, so that the same sniffing, column, unit and kind
detection as for text logs applies; line numbers in messages are sheet rows.
Cells become text the way a person would type them: date-times in ISO 8601,
numbers with every digit float64 holds (``repr``), integers without a point.

Other workbooks are refused with one line that says what the file is and how to
export it: a legacy Excel ``.xls`` (an OLE2 compound file, magic bytes
D0 CF 11 E0 A1 B1 1A E1) and an OpenDocument spreadsheet (``.ods``, a zip whose
``mimetype`` member names ``application/vnd.oasis.opendocument.spreadsheet``).

References
----------
1. ECMA-376, *Office Open XML File Formats*, Part 2: Open Packaging Conventions
   (``[Content_Types].xml``) and Part 1, section 12.3.23 (the workbook part).
2. Microsoft, *[MS-CFB]: Compound File Binary File Format*, section 2.2 (header signature).
3. OASIS, *Open Document Format for Office Applications (OpenDocument) v1.2*,
   Part 3, section 3.3 (the ``mimetype`` member).
"""

from __future__ import annotations

import math
import zipfile
import zlib
from datetime import date, datetime, time
from typing import Any

import pandas as pd

from ..errors import InputError

__all__ = ["OLE2_MAGIC", "workbook_kind", "refuse_workbook", "sheet_text"]

#: First bytes of an OLE2 compound file (legacy .xls, .doc).
OLE2_MAGIC = b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1"
_ODS = b"application/vnd.oasis.opendocument.spreadsheet"


def workbook_kind(path: str, head: bytes) -> str | None:
    """``"xlsx"``, ``"ods"`` or ``"xls"`` when the file is a workbook, else None."""
    if head.startswith(OLE2_MAGIC):
        return "xls"
    if not head.startswith(b"PK\x03\x04"):
        return None
    try:
        with zipfile.ZipFile(path) as zf:
            names = set(zf.namelist())
            if "[Content_Types].xml" in names and "xl/workbook.xml" in names:
                return "xlsx"
            if "mimetype" in names and zf.read("mimetype").strip().startswith(_ODS):
                return "ods"
    except (zipfile.BadZipFile, OSError, KeyError, ValueError, EOFError, RuntimeError):
        return None  # not a readable workbook: read as any other file (and refused there)
    except (NotImplementedError, zlib.error):
        return None
    return None


def refuse_workbook(kind: str, path: str) -> None:
    """Raise the one-line message for a workbook that cannot be read."""
    what = {
        "xls": "a legacy Excel workbook (.xls, an OLE2 compound file)",
        "ods": "an OpenDocument spreadsheet (.ods)",
    }[kind]
    raise InputError(
        f"the file is {what}, which is not read directly",
        path=path,
        hint="open it and save the sheet as CSV or as an .xlsx workbook",
    )


def _cell(value: Any) -> str:
    """One cell as a person would type it."""
    if value is None:
        return ""
    if isinstance(value, float):
        if math.isnan(value):
            return ""
        if value.is_integer() and abs(value) < 1e15:
            return str(int(value))
        return repr(value)
    if isinstance(value, pd.Timestamp | datetime):
        return pd.Timestamp(value).isoformat()
    if isinstance(value, date | time):
        return value.isoformat()
    text = str(value)
    return " ".join(text.split()) if any(c in text for c in "\t\r\n") else text.strip()


def _pick(names: list[str], sheet: int | str | None, path: str) -> str:
    listing = ", ".join(f"{i + 1}={n!r}" for i, n in enumerate(names))
    if sheet is None:
        return names[0]
    if isinstance(sheet, int) or str(sheet).strip().isdigit():
        k = int(sheet)
        if 1 <= k <= len(names):
            return names[k - 1]
        raise InputError(
            f"sheet {sheet} does not exist: the workbook has {len(names)} sheet(s)",
            path=path,
            hint=f"pass --sheet with one of {listing}",
        )
    for n in names:
        if n.strip().lower() == str(sheet).strip().lower():
            return n
    raise InputError(
        f"no sheet named {sheet!r}", path=path, hint=f"pass --sheet with one of {listing}"
    )


def sheet_text(path: str, sheet: int | str | None) -> tuple[str, str, list[str]]:
    """The chosen sheet of an .xlsx workbook as tab-separated text.

    Returns
    -------
    text, name, names
        The text (one line per sheet row), the sheet's name, and the names of
        every sheet in the workbook.

    Raises
    ------
    InputError
        openpyxl is not installed; the sheet does not exist or is empty; the
        workbook is damaged.
    """
    try:
        import openpyxl  # noqa: F401  (pandas' engine for .xlsx)
    except ImportError:
        raise InputError(
            "reading an .xlsx workbook needs openpyxl, which is not installed",
            path=path,
            hint="install the spreadsheet extra: pip install 'oscillator-stability[spreadsheet]'"
            ", or save the sheet as CSV",
        ) from None
    try:
        with pd.ExcelFile(path, engine="openpyxl") as book:
            names = [str(n) for n in book.sheet_names]
            name = _pick(names, sheet, path)
            frame = pd.read_excel(book, sheet_name=name, header=None, dtype=object)
    except InputError:
        raise
    except MemoryError:
        raise
    except Exception as exc:  # openpyxl and its XML parser raise many kinds on a damaged book
        raise InputError(
            f"damaged .xlsx workbook: {type(exc).__name__}: {exc}",
            path=path,
            hint="open it and save it again",
        ) from None
    rows = [[_cell(v) for v in row] for row in frame.itertuples(index=False, name=None)]
    if not any(any(c for c in row) for row in rows):
        listing = ", ".join(f"{i + 1}={n!r}" for i, n in enumerate(names))
        raise InputError(
            f"sheet {name!r} is empty", path=path, hint=f"pass --sheet with one of {listing}"
        )
    lines = []
    for row in rows:
        filled = sum(1 for c in row if c)
        # a line of text above the data (a note, a setting) is one cell, not a short row
        lines.append(next(c for c in row if c) if filled == 1 and not row[-1] else "\t".join(row))
    return "\n".join(lines) + "\n", name, names
