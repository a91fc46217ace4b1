"""Parse the rows of a log: time stamps and values of the chosen columns, in chunks.

pandas' C parser reads the file in chunks of a million rows. Fixed-width
date-time stamps are read straight from the bytes when every line allows it
(:mod:`stability.ingest.fixed_stamps`); pandas then reads the value column only,
and any doubt (a line without a stamp, rows that do not pair one to one with the
stamps) sends the whole file to the general path, which gives the same result.
Values with many significant digits are kept as decimal text and differenced
from the first reading exactly (NIST SP 1065, section 5.2).

References
----------
1. W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065 (2008),
   section 5.2 (subtract a constant before differencing large phase values).
2. RFC 4180, *Common Format and MIME Type for CSV Files*.
"""

from __future__ import annotations

import codecs
import math
import re
import warnings
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
import pandas as pd

from ..errors import InputError
from ..measurement import index_dtype
from . import fixed_stamps as fs
from . import timestamps as ts
from . import values as vals
from .columns import ColumnPlan
from .sniff import Dialect, RawSource, _field_kind

__all__ = [
    "STAMP_PATHS",
    "ParsedRows",
    "needs_decimal_text",
    "parse_rows",
    "fixed_stamp_ticks",
    "shift_lines",
    "apply_unit_suffixes",
    "decimal_deltas",
    "decimal_text_parts",
]

#: How date-time stamps are parsed: ``"auto"`` reads fixed-width stamps from the
#: bytes when every line allows it; ``"general"`` always lets pandas parse them.
STAMP_PATHS = ("auto", "general")
_CHUNK_ROWS = 1_000_000
_PARSE_ERRORS = (
    ValueError,
    TypeError,
    UnicodeError,
    OSError,
    pd.errors.ParserError,
    pd.errors.EmptyDataError,
    OverflowError,
    MemoryError,
)


@dataclass
class ParsedRows:
    """Every row the parser returned, in file order.

    Attributes
    ----------
    lines
        File line number of each row (int64).
    values
        The reading in the written unit, NaN where unreadable.
    bad
        True where the value is unreadable (error string, sentinel, empty field).
    ticks, tick_ok
        Time stamp ticks (int64) and whether each parsed; None without a time column.
    texts
        The value as written (object array) when read as decimal text, else None.
    units
        The unit suffix of each value when values carry one, else None.
    skipped
        Lines the parser skipped without returning a row.
    decimals
        The value texts split into integer digits (:func:`decimal_text_parts`)
        when found while parsing, else None (found from ``texts`` when needed).
    """

    lines: np.ndarray
    values: np.ndarray
    bad: np.ndarray
    ticks: np.ndarray | None
    tick_ok: np.ndarray | None
    texts: np.ndarray | None
    units: np.ndarray | None
    skipped: list[int]
    decimals: vals.DecimalParts | None = None


def needs_decimal_text(sample: list[str], d: Dialect, vk: vals.ValueKind) -> bool:
    """Whether the values carry more digits than float64 keeps to the last one."""
    digits = max(
        (vals.significant_digits(s) for s in sample if _field_kind(s, d.decimal) == "num"),
        default=0,
    )
    # decimal text when float64 rounding (2.2e-16) exceeds ~1e-3 of the last written digit
    return digits >= 14 or (vk.kind in ("phase", "carrier") and digits >= 10)


def parse_rows(
    src: RawSource,
    d: Dialect,
    plan: ColumnPlan,
    *,
    exact: bool,
    suffix: bool,
    stamps: str = "auto",
    on_progress: Callable[[int, int], None] | None = None,
) -> ParsedRows:
    """Parse the time and value columns of every data row.

    Parameters
    ----------
    exact
        Keep the value text for exact decimal differences.
    suffix
        Values carry a unit suffix (``10.000000012 MHz``).
    stamps
        One of :data:`STAMP_PATHS`.
    on_progress
        Called with (bytes parsed, bytes in all) as parsing advances; the bytes
        parsed are estimated from the lines parsed, and equal the total at the
        end. They start again from zero when the fixed-stamp path gives way to
        the general one.
    """
    if stamps not in STAMP_PATHS:
        raise ValueError(f"stamps must be one of {', '.join(STAMP_PATHS)}, got {stamps!r}")
    as_text = set(plan.time_cols) if plan.time_fmt and plan.time_fmt.style == "datetime" else set()
    if exact or suffix:
        as_text.add(plan.value_col)
    progress = None if on_progress is None else _ByteProgress(src, d, on_progress)

    def parse(ticks: np.ndarray | None) -> ParsedRows | None:
        return _parse_chunks(
            src, d, plan, as_text, exact=exact, suffix=suffix, progress=progress, stamps=ticks
        )

    parsed = None
    ticks = fixed_stamp_ticks(src, d, plan) if stamps == "auto" else None
    if ticks is not None:
        parsed = parse(ticks)
        del ticks
    if parsed is None:  # the general path: pandas parses the time column(s) as text
        parsed = parse(None)
    if progress is not None:
        progress.finished()
    return parsed


class _ByteProgress:
    """Reports (bytes parsed, bytes in all), estimated from the last line parsed."""

    def __init__(self, src: RawSource, d: Dialect, callback: Callable[[int, int], None]) -> None:
        self.callback = callback
        self.total = len(src.buffer) if src.buffer is not None else src.size
        body = src.sample[d.first_data_line - 1 :] or src.sample
        size = sum(len(s.encode("utf-8", errors="replace")) + 1 for s in body)
        self.per_line = size / max(1, len(body))
        callback(0, self.total)

    def at_line(self, line: int) -> None:
        self.callback(min(self.total, int(line * self.per_line)), self.total)

    def finished(self) -> None:
        self.callback(self.total, self.total)


def fixed_stamp_ticks(src: RawSource, d: Dialect, plan: ColumnPlan) -> np.ndarray | None:
    """Int64 ns stamps of every data line read from the bytes, or None for the general path.

    Taken only when it is exact: date-time stamps in the leading column(s), an
    encoding in which every ASCII byte stands for itself, no quoting, and every
    line from the first data line to the end of the file starting with a stamp of
    the same fixed-width layout with valid fields (:mod:`stability.ingest.fixed_stamps`).
    """
    fmt = plan.time_fmt
    if fmt is None or fmt.style != "datetime" or d.quoted:
        return None
    if plan.time_cols not in ([0], [0, 1]) or plan.value_col in plan.time_cols:
        return None
    if src.buffer is None and src.pandas_encoding not in ("utf-8", "utf-8-sig", "latin-1"):
        return None
    try:
        raw = src.all_bytes()
    except OSError:
        return None
    buf = np.frombuffer(raw, dtype=np.uint8)
    skip = len(codecs.BOM_UTF8) if src.buffer is None and raw.startswith(codecs.BOM_UTF8) else 0
    starts = fs.line_starts(buf, d.first_data_line, skip=skip)
    if starts is None:
        return None
    head = raw[int(starts[0]) : int(starts[0]) + 256].split(b"\n", 1)[0].rstrip(b"\r")
    tpl = fs.template_from_line(
        head.decode("latin-1"),
        fmt,
        two_columns=len(plan.time_cols) == 2,
        delimiter=d.delimiter,
    )
    if tpl is None:
        return None
    return fs.parse_fixed_stamps(buf, starts, tpl)


def _read_chunks(
    src: RawSource, d: Dialect, plan: ColumnPlan, as_text: set[int], with_time: bool
) -> pd.io.parsers.TextFileReader:
    usecols = sorted((set(plan.time_cols) if with_time else set()) | {plan.value_col})
    dtype = {c: str for c in usecols if c in as_text}
    return pd.read_csv(
        src.handle(),
        sep=r"\s+" if d.delimiter == " " else d.delimiter,
        decimal=d.decimal,
        header=None,
        names=list(range(d.ncols)),
        usecols=usecols,
        skiprows=d.first_data_line - 1,
        skip_blank_lines=False,
        quoting=3,
        index_col=False,
        dtype=dtype or None,
        encoding=src.pandas_encoding,
        chunksize=_CHUNK_ROWS,
        engine="c",
        on_bad_lines="warn",
    )


def _parse_chunks(
    src: RawSource,
    d: Dialect,
    plan: ColumnPlan,
    as_text: set[int],
    *,
    exact: bool,
    suffix: bool,
    progress: _ByteProgress | None,
    stamps: np.ndarray | None,
) -> ParsedRows | None:
    """Parse the log in chunks; with ``stamps``, pandas reads the value column only.

    With ``stamps`` (ticks read from the bytes for every data line) the result is
    None, asking for the general path, when the rows do not pair one to one with
    the stamps or anything fails.
    """
    fast = stamps is not None
    parts = _Parts(d, plan, exact=exact, suffix=suffix, stamps=stamps)
    try:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            with _read_chunks(src, d, plan, as_text, with_time=not fast) as reader:
                for chunk in reader:
                    parts.add(chunk)
                    if progress is not None:
                        progress.at_line(parts.last_line)
    except InputError:
        if fast:
            return None
        raise
    except _PARSE_ERRORS as exc:
        if fast:
            return None
        raise InputError(
            f"cannot parse the log: {str(exc).splitlines()[0] if str(exc) else type(exc).__name__}",
            path=src.path,
            hint="check the delimiter and columns with 'stability inspect'",
        ) from None
    skipped = [int(m.group(1)) for w in caught for m in re.finditer(r"line (\d+)", str(w.message))]
    if fast and (skipped or parts.done != stamps.size):
        return None
    return parts.joined(skipped, src.path)


class _Parts:
    """The arrays parsed from each chunk, joined into :class:`ParsedRows` at the end."""

    def __init__(
        self,
        d: Dialect,
        plan: ColumnPlan,
        *,
        exact: bool,
        suffix: bool,
        stamps: np.ndarray | None,
    ) -> None:
        self.d, self.plan, self.exact, self.suffix, self.stamps = d, plan, exact, suffix, stamps
        self.lines: list[np.ndarray] = []
        self.ticks: list[np.ndarray] = []
        self.tick_ok: list[np.ndarray] = []
        self.values: list[np.ndarray] = []
        self.bad: list[np.ndarray] = []
        self.texts: list[np.ndarray] = []
        self.units: list[np.ndarray] = []
        self.done = 0  # rows parsed
        self.last_line = 0  # file line of the last row parsed (lines skipped not counted)

    def add(self, chunk: pd.DataFrame) -> None:
        n = len(chunk)
        first = int(chunk.index[0]) + self.d.first_data_line if n else 0
        self.lines.append(np.arange(first, first + n, dtype=index_dtype(first + n)))
        self.last_line = max(self.last_line, first + n - 1)
        if self.stamps is None and self.plan.time_fmt is not None:
            t, ok = ts.parse_times(_time_text(chunk, self.plan), self.plan.time_fmt)
            self.ticks.append(t)
            self.tick_ok.append(ok)
        self.done += n
        column = chunk[self.plan.value_col]
        v, bad, text, fac = vals.parse_numbers(column, self.d.decimal, self.suffix)
        self.values.append(v)
        self.bad.append(bad)
        if self.exact:
            written = column.astype(str) if text is None else text
            self.texts.append(np.asarray(written, dtype=object))
        if fac is not None:
            self.units.append(fac)

    def joined(self, skipped: list[int], path: str) -> ParsedRows:
        if not self.lines:
            raise InputError(
                "no data rows below the header",
                path=path,
                hint="give a log with at least two data rows",
            )
        lines = np.concatenate(self.lines)
        # lines skipped by the parser (too many fields) shift the numbering of the rows after them
        if skipped:
            lines = shift_lines(lines, np.sort(np.asarray(skipped, dtype=np.int64)))
        ticks = tick_ok = None
        if self.stamps is not None:  # every row has its stamp (checked by the caller)
            ticks, tick_ok = self.stamps, np.ones(self.stamps.size, dtype=bool)
        elif self.plan.time_fmt is not None:
            ticks, tick_ok = np.concatenate(self.ticks), np.concatenate(self.tick_ok)
        return ParsedRows(
            lines=lines,
            values=np.concatenate(self.values),
            bad=np.concatenate(self.bad),
            ticks=ticks,
            tick_ok=tick_ok,
            texts=np.concatenate(self.texts) if self.exact else None,
            units=np.concatenate(self.units) if self.units else None,
            skipped=skipped,
        )


def _time_text(chunk: pd.DataFrame, plan: ColumnPlan) -> pd.Series:
    if len(plan.time_cols) == 2:
        return ts.combine_date_time(chunk[plan.time_cols[0]], chunk[plan.time_cols[1]])
    return chunk[plan.time_cols[0]]


def shift_lines(lines: np.ndarray, skipped: np.ndarray) -> np.ndarray:
    """Row line numbers when the parser dropped ``skipped`` lines (sorted) without a row."""
    # the row that would sit on line L moves down by the skipped lines at or before it
    out = lines.copy()
    for s in skipped:  # loop over the few skipped lines, not over samples
        out = np.where(out >= s, out + 1, out)
    return out


def apply_unit_suffixes(
    values: np.ndarray, bad: np.ndarray, units: np.ndarray, scale: float
) -> tuple[np.ndarray, np.ndarray]:
    """Values in the column's unit (``scale``) when rows carry unit suffixes of their own.

    A row whose suffix is not a unit of values becomes unreadable.
    """
    factor_map = {u: (vals.kind_from_unit(u) or (None, math.nan))[1] for u in set(units)}
    factor_map[""] = scale
    row_scale = (
        np.array([factor_map[u] for u in units], dtype=np.float64)
        if len(factor_map) > 2
        else np.full(values.size, scale)
    )
    values = values * (row_scale / scale)
    return values, bad | ~np.isfinite(values)


def decimal_text_parts(texts: np.ndarray, decimal: str) -> vals.DecimalParts:
    """The value texts split into integer digits, row by row (:func:`vals.decimal_parts`)."""
    if decimal == ",":
        texts = np.char.replace(texts.astype(str), ",", ".").astype(object)
    return vals.decimal_parts(texts)


def decimal_deltas(
    texts: np.ndarray,
    values: np.ndarray,
    bad: np.ndarray,
    decimal: str,
    parts: vals.DecimalParts | None = None,
) -> tuple[str, np.ndarray] | None:
    """(first reading as text, readings minus it) exact to the last written digit.

    Rows the decimal parser cannot take keep the float64 difference; unreadable
    rows are NaN. None when the text is not plain decimal numbers. ``parts``
    are the texts' digits when already split (:func:`decimal_text_parts`).
    """
    if decimal == ",":
        texts = np.char.replace(texts.astype(str), ",", ".").astype(object)
    res = vals.exact_delta(texts, ~bad, parts)
    if res is None:
        return None
    ref_text, delta, ok_exact = res
    approx = values - float(values[np.argmax(~bad)])
    delta = np.where(ok_exact, delta, approx)
    delta[bad] = np.nan
    return ref_text, delta
