"""Bad rows of a log: junk lines, unreadable values, and strict mode.

A long log often holds a few lines that are not readings: blank lines and
comments (skipped silently), lines of other text where a time stamp should be
(junk: skipped and reported with their line numbers), and readings the
instrument could not make (an error string, an overflow or not-a-number
sentinel such as the SCPI 9.91e37, an empty field). Unreadable readings become
gaps, reported line by line; a column that is mostly unreadable is an error, and
in strict mode the first bad line of the file is.

References
----------
1. W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065 (2008),
   section 5.14 (gaps are recorded, not silently removed).
2. SCPI Consortium, *Standard Commands for Programmable Instruments*, 1999, vol. 1,
   section 7.2.1.5 (not-a-number 9.91E37; common practice for counters).
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, replace

import numpy as np

from ..errors import InputError
from . import values as vals
from .columns import ColumnPlan
from .parsing import ParsedRows, apply_unit_suffixes
from .report import LIST_LIMIT, LogReport
from .sniff import Dialect, RawSource, split_fields

__all__ = ["LineTexts", "DataRows", "data_rows"]


class LineTexts:
    """Raw text of chosen lines, found through a vectorised newline index."""

    def __init__(self, src: RawSource) -> None:
        self.src = src
        self._buf: bytes | None = None
        self._starts: np.ndarray | None = None

    def get(self, numbers: np.ndarray) -> list[str]:
        """The text of each line number (1-based), at most 200 characters; "" past the end."""
        if self._buf is None:
            self._buf = self.src.all_bytes()
            nl = np.flatnonzero(np.frombuffer(self._buf, dtype=np.uint8) == 10)
            self._starts = np.concatenate(([0], nl + 1, [len(self._buf) + 1]))
        starts = self._starts
        enc = "latin-1" if self.src.pandas_encoding == "latin-1" else "utf-8"
        out = []
        for n in np.asarray(numbers, dtype=np.int64):  # only the few reported lines
            if n < 1 or n >= starts.size:
                out.append("")
                continue
            raw = self._buf[starts[n - 1] : max(starts[n - 1], starts[n] - 1)]
            text = raw.decode(enc, errors="replace").rstrip("\r").lstrip("\ufeff")
            out.append(text[:200])
        return out


@dataclass
class DataRows:
    """The data rows of a log in file order (blank, comment and junk lines left out).

    Attributes
    ----------
    lines
        File line number of each row.
    values
        Readings in the column's unit, NaN where unreadable.
    bad
        True where the reading is unreadable.
    ticks
        Time stamp ticks, or None without a time column.
    texts
        The readings as written, when read as decimal text, else None.
    delta, ref_text
        Readings minus the first one, exact from the decimal text, and the first
        reading as written; None when not read as decimal text.
    decimals
        The texts split into integer digits when found while parsing, else None.
    """

    lines: np.ndarray
    values: np.ndarray
    bad: np.ndarray
    ticks: np.ndarray | None = None
    texts: np.ndarray | None = None
    delta: np.ndarray | None = None
    ref_text: str | None = None
    decimals: vals.DecimalParts | None = None

    def take(self, keep: np.ndarray) -> DataRows:
        """The rows selected by a boolean mask or an index array."""

        def pick(a: np.ndarray | None) -> np.ndarray | None:
            return None if a is None else a[keep]

        return replace(
            self,
            lines=self.lines[keep],
            values=self.values[keep],
            bad=self.bad[keep],
            ticks=pick(self.ticks),
            texts=pick(self.texts),
            delta=pick(self.delta),
            decimals=None if self.decimals is None else self.decimals.take(keep),
        )


def data_rows(
    src: RawSource,
    d: Dialect,
    plan: ColumnPlan,
    scale: float,
    parsed: ParsedRows,
    strict: bool,
    rep: LogReport,
) -> tuple[DataRows, int]:
    """The data rows of a parsed log, and the count of rows and junk lines in it.

    Junk lines and unreadable values go to the report; in strict mode the first
    bad line is an error.

    Raises
    ------
    InputError
        Strict mode and a bad line; fewer than two readable rows; more than half
        of the values unreadable.
    """
    fetch = LineTexts(src)
    keep = _classify_rows(parsed, d, plan.time_fmt is not None, fetch, rep)
    total_rows = int(keep.sum()) + rep.junk_line_count
    values, bad = parsed.values, parsed.bad
    if parsed.units is not None:
        values, bad = apply_unit_suffixes(values, bad, parsed.units, scale)
    bad_rows = np.flatnonzero(bad & keep)
    column = plan.display[plan.value_col]
    if plan.time_fmt is not None:
        _check_stamps_read(int(keep.sum()), plan, rep, src.path)
    if strict:
        _refuse_first_bad_line(parsed, bad_rows, fetch, rep, src.path, column)
    _report_bad_values(parsed.lines, bad_rows, d, plan.value_col, fetch, rep)
    rep.rows_read = _check_readable(int(keep.sum()), int(bad_rows.size), src.path, column)
    rows = DataRows(parsed.lines, values, bad, parsed.ticks, parsed.texts, decimals=parsed.decimals)
    return (rows if keep.all() else rows.take(np.flatnonzero(keep))), total_rows


def _classify_rows(
    parsed: ParsedRows, d: Dialect, timed: bool, fetch: LineTexts, rep: LogReport
) -> np.ndarray:
    """Mask of the data rows; junk lines (and lines the parser skipped) go to the report.

    With time stamps a row whose stamp does not parse is not a data row: blank
    and comment lines are counted, other lines reported as junk. Without time
    stamps every non-blank row is a sample, and an unreadable one a gap.
    """
    rep.blank_or_comment_lines = 0
    keep = np.ones(parsed.values.size, dtype=bool)
    candidates = np.flatnonzero(~parsed.tick_ok if timed else parsed.bad)
    if candidates.size:
        texts = fetch.get(parsed.lines[candidates])
        blank = np.array([_blank_or_comment(t, d) for t in texts], dtype=bool)
        rep.blank_or_comment_lines = int(blank.sum())
        if timed:
            junk = zip(candidates[~blank], np.asarray(texts, dtype=object)[~blank], strict=True)
            for idx, t in junk:
                rep.add_junk(int(parsed.lines[idx]), t)
            keep = parsed.tick_ok
        else:
            keep[candidates[blank]] = False
    for ln in parsed.skipped:
        rep.add_junk(ln, fetch.get(np.array([ln]))[0])
    return keep


def _refuse_first_bad_line(
    parsed: ParsedRows,
    bad_rows: np.ndarray,
    fetch: LineTexts,
    rep: LogReport,
    path: str,
    column: str,
) -> None:
    """Strict mode: the first bad line in file order (junk, skipped or unreadable) is an error."""
    firsts = [e["line"] for e in rep.junk_lines[:1]]
    if parsed.skipped:
        firsts.append(min(parsed.skipped))
    if bad_rows.size:
        firsts.append(int(parsed.lines[bad_rows[0]]))
    if not firsts:
        return
    first = min(firsts)
    text = fetch.get(np.array([first]))[0]
    raise InputError(
        f"unreadable row {text!r}",
        path=path,
        line=first,
        column=column,
        hint="fix the row, or drop --strict to turn unreadable rows into gaps",
    )


def _report_bad_values(
    lines: np.ndarray,
    bad_rows: np.ndarray,
    d: Dialect,
    value_col: int,
    fetch: LineTexts,
    rep: LogReport,
) -> None:
    """Each unreadable value with its line, its text and why it cannot be read."""
    if not bad_rows.size:
        return
    shown = bad_rows[:LIST_LIMIT]
    for r, t in zip(shown, fetch.get(lines[shown]), strict=True):
        field_text = _field_of(t, d, value_col)
        rep.add_bad_value(int(lines[r]), field_text, _why_bad(field_text))
    rep.bad_value_count = int(bad_rows.size)


#: Whole years a date-time stamp can be read in (a 64-bit count of nanoseconds since
#: 1970 reaches from 1677-09-21 to 2262-04-11).
_READABLE_YEARS = (1678, 2262)


def _check_stamps_read(stamped: int, plan: ColumnPlan, rep: LogReport, path: str) -> None:
    """Blame the time column when most rows are lost because their stamps do not parse.

    A row whose stamp does not parse is not a data row; when that leaves fewer
    than two rows, or fewer rows than were lost, the time column is the cause
    (a date outside the readable years, a changed format), not the values.
    """
    lost = rep.junk_line_count
    if not rep.junk_lines or (stamped >= 2 and lost <= stamped):
        return
    first = rep.junk_lines[0]
    why = ""
    years = [int(y) for y in re.findall(r"(?<!\d)(\d{4})(?!\d)", first["text"])]
    low, high = _READABLE_YEARS
    if any(not low <= y <= high for y in years):
        why = (
            ", a date outside the years 1677 to 2262 that time stamps can be read in "
            "(1677-09-21 to 2262-04-11)"
        )
    fmt = plan.time_fmt.description if plan.time_fmt is not None else "a time stamp"
    raise InputError(
        f"{lost} row(s) have a time stamp that does not read as {fmt} ({stamped} do), "
        f"this one first: {first['text']!r}{why}",
        path=path,
        line=int(first["line"]),
        column=" + ".join(plan.display[c] for c in plan.time_cols),
        hint="check the time column (--time-column), or pass --time-column none with --tau0 "
        "to read the rows in sequence",
    )


def _check_readable(data_rows: int, bad: int, path: str, column: str) -> int:
    """The count of data rows, once at least two and at least half of them are readable."""
    if data_rows - bad < 2:
        raise InputError(
            f"fewer than two readable data rows ({data_rows - bad})",
            path=path,
            column=column,
            hint="a stability analysis needs at least two samples",
        )
    if bad > 0.5 * data_rows:
        raise InputError(
            f"{bad} of {data_rows} values are unreadable",
            path=path,
            column=column,
            hint="check the column with --column, or the dialect with 'stability inspect'",
        )
    return data_rows


def _blank_or_comment(text: str, d: Dialect) -> bool:
    s = text.strip()
    if not s:
        return True
    if any(s.startswith(p) for p in ("#", "//", "%")):
        return True
    if s.startswith(";") and d.delimiter != ";":
        return True
    if s.startswith(";") and d.delimiter == ";":
        return not any(ch.isdigit() for ch in s[:3])
    return all(not f for f in split_fields(s, d.delimiter))


def _field_of(text: str, d: Dialect, col: int) -> str:
    fields = split_fields(text, d.delimiter)
    return fields[col] if col < len(fields) else ""


def _why_bad(text: str) -> str:
    if not text:
        return "empty field"
    try:
        v = float(text.replace(",", "."))
    except ValueError:
        return "not a number"
    if math.isnan(v):
        return "not a number"
    if abs(v) >= vals.SENTINEL:
        return "instrument overflow or not-a-number sentinel"
    return "unreadable"
