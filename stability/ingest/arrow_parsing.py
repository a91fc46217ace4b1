"""The pyarrow engine: parse a clean log of a common layout with pyarrow's threaded CSV reader.

``pyarrow.csv.read_csv`` parses a file on every core, and reads ISO 8601 stamps
and decimal numbers straight into int64 nanoseconds and float64. The engine
takes the common layouts only: one delimiter character, no quoting, values
without unit suffixes or digits beyond float64, and a time column of ISO 8601
stamps or numbers (or none). It takes a file only when every row parses: a
line that is not a data row, an unreadable value, a blank line or a row of
another width make it give way (None) to the pandas engine, which reads every
file and reports each bad line. On the files it takes it gives the same rows
as the pandas engine (tested), so the Measurement and the report are the same.

References
----------
1. Apache Arrow, *pyarrow.csv.read_csv* (multi-threaded CSV reader; ISO 8601
   timestamp parsing), Apache Arrow documentation, version 14 and later.
2. RFC 4180, *Common Format and MIME Type for CSV Files*.
"""

from __future__ import annotations

import importlib.util
from collections.abc import Callable
from typing import Any

import numpy as np

from . import values as vals
from .columns import ColumnPlan
from .parsing import ParsedRows
from .sniff import Dialect, RawSource

__all__ = ["ENGINES", "have_pyarrow", "arrow_layout_problem", "arrow_rows"]

#: Reading engines: ``auto`` takes pyarrow when it is installed and the log suits it.
ENGINES = ("auto", "pandas", "pyarrow")


def have_pyarrow() -> bool:
    """Whether pyarrow can be imported (without importing it)."""
    return importlib.util.find_spec("pyarrow") is not None


def arrow_layout_problem(src: RawSource, d: Dialect, plan: ColumnPlan, special: bool) -> str:
    """Why the pyarrow engine cannot take this log's layout ("" when it can).

    ``special`` is True when values are read as decimal text or carry unit suffixes.
    """
    fmt = plan.time_fmt
    if not have_pyarrow():
        return "pyarrow is not installed (pip install 'oscillator-stability[fast]')"
    if d.delimiter == " ":
        return "columns are separated by runs of spaces"
    if d.quoted:
        return "fields are quoted"
    if special:
        return "values carry unit suffixes or more digits than float64 keeps"
    if fmt is not None and fmt.style == "datetime" and fmt.pattern != "ISO8601":
        return f"time stamps are written {fmt.description}, not ISO 8601"
    if len(plan.time_cols) > 1:
        return "date and time of day are in two columns"
    if src.buffer is None and src.pandas_encoding not in ("utf-8", "utf-8-sig"):
        return f"the text is {src.encoding}"
    return ""


def arrow_rows(
    src: RawSource,
    d: Dialect,
    plan: ColumnPlan,
    on_progress: Callable[[int, int], None] | None = None,
) -> ParsedRows | None:
    """Every data row parsed by pyarrow, or None when any row does not parse cleanly.

    Call only when :func:`arrow_layout_problem` returns "".
    """
    import pyarrow as pa
    import pyarrow.csv as pcsv

    fmt = plan.time_fmt
    total = len(src.buffer) if src.buffer is not None else src.size
    if on_progress is not None:
        on_progress(0, total)
    wanted = sorted(set(plan.time_cols) | {plan.value_col})
    names = [f"c{i}" for i in range(d.ncols)]
    types: dict[str, Any] = {names[plan.value_col]: pa.float64()}
    if fmt is not None:
        t = names[plan.time_cols[0]]
        if fmt.style == "datetime":
            types[t] = pa.timestamp("ns", tz="UTC") if fmt.aware else pa.timestamp("ns")
        # numbers: int64 when every value is an integer, else float64, as pandas infers
    bad_rows = []

    def invalid(row: Any) -> str:
        bad_rows.append(row.number)
        return "skip"

    try:
        table = pcsv.read_csv(
            src.handle(),
            read_options=pcsv.ReadOptions(
                column_names=names,
                skip_rows=d.first_data_line - 1,
                encoding="utf8",
                block_size=1 << 24,
            ),
            parse_options=pcsv.ParseOptions(
                delimiter=d.delimiter,
                quote_char=False,
                ignore_empty_lines=False,
                invalid_row_handler=invalid,
            ),
            convert_options=pcsv.ConvertOptions(
                column_types=types,
                include_columns=[names[c] for c in wanted],
                decimal_point=d.decimal,
                strings_can_be_null=False,
                quoted_strings_can_be_null=False,
                timestamp_parsers=[pcsv.ISO8601],
            ),
        )
    except (pa.ArrowInvalid, pa.ArrowNotImplementedError, pa.ArrowTypeError, OSError, ValueError):
        return None  # a row that does not parse: the pandas engine reads and reports it
    if bad_rows or table.num_rows == 0:
        return None
    value_col = table.column(names[plan.value_col])
    if value_col.null_count:
        return None  # an empty field (or a blank line): reported by the pandas engine
    values = value_col.to_numpy()
    ticks = tick_ok = None
    if fmt is not None:
        tcol = table.column(names[plan.time_cols[0]])
        if tcol.null_count:
            return None
        if fmt.style == "datetime":
            ticks = tcol.cast(pa.int64()).to_numpy()
        elif pa.types.is_integer(tcol.type) or pa.types.is_floating(tcol.type):
            ticks = tcol.to_numpy()
            if ticks.dtype.kind == "u" or not np.isfinite(ticks).all():
                return None
            ticks = ticks.astype(np.int64 if ticks.dtype.kind == "i" else np.float64, copy=False)
        else:
            return None
        tick_ok = np.ones(ticks.size, dtype=bool)
    del table
    with np.errstate(invalid="ignore"):
        bad = ~np.isfinite(values) | (np.abs(values) >= vals.SENTINEL)
    if bad.any():
        values = np.where(bad, np.nan, values)
    elif not values.flags.writeable:
        values = values.copy()
    n = values.size
    if on_progress is not None:
        on_progress(total, total)
    return ParsedRows(
        lines=np.arange(d.first_data_line, d.first_data_line + n, dtype=np.int64),
        values=values,
        bad=bad,
        ticks=ticks,
        tick_ok=tick_ok,
        texts=None,
        units=None,
        skipped=[],
    )
