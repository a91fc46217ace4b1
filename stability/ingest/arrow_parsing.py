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

from ..measurement import index_dtype
from . import values as vals
from .columns import ColumnPlan
from .memory import estimated_rows
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

    pyarrow's streaming reader parses the file block by block (read-ahead on a
    second thread); each block's columns are copied straight into the final
    int64 stamps and float64 readings, so neither a table nor the text is ever
    held whole. Call only when :func:`arrow_layout_problem` returns "".
    """
    import pyarrow as pa

    total = len(src.buffer) if src.buffer is not None else src.size
    if on_progress is not None:
        on_progress(0, total)
    out = _Columns(estimated_rows(src, d), plan)
    try:
        reader = _open(src, d, plan, out.invalid_rows)
        try:
            for batch in reader:  # loop over blocks of text, a quarter megabyte each
                if out.invalid_rows or not out.add(batch):
                    return None
                if on_progress is not None:
                    on_progress(int(total * out.n / max(out.capacity, out.n)), total)
        finally:
            reader.close()
    except (pa.ArrowInvalid, pa.ArrowNotImplementedError, pa.ArrowTypeError, OSError, ValueError):
        return None  # a row that does not parse: the pandas engine reads and reports it
    if out.invalid_rows or out.n == 0:
        return None
    if on_progress is not None:
        on_progress(total, total)
    return out.parsed(d.first_data_line)


#: Text parsed per block by the streaming reader. Its read-ahead holds a few dozen
#: blocks: at 256 KiB they stay near 20 MB (1 MiB blocks held about 60 MB), and the
#: cost per block is still negligible (measured with tests/benchmarks/bench_ingest.py).
_BLOCK_BYTES = 1 << 18


def _open(src: RawSource, d: Dialect, plan: ColumnPlan, invalid_rows: list[int]) -> Any:
    """pyarrow's streaming CSV reader over the time and value columns, types declared."""
    import pyarrow as pa
    import pyarrow.csv as pcsv

    fmt = plan.time_fmt
    names = [f"c{i}" for i in range(d.ncols)]
    types: dict[str, Any] = {names[plan.value_col]: pa.float64()}
    if fmt is not None and fmt.style == "datetime":
        t = names[plan.time_cols[0]]
        types[t] = pa.timestamp("ns", tz="UTC") if fmt.aware else pa.timestamp("ns")
    # numeric stamps: int64 when every value is an integer, else float64, as pandas infers

    def invalid(row: Any) -> str:
        invalid_rows.append(row.number)
        return "skip"

    wanted = sorted(set(plan.time_cols[:1] if fmt is not None else []) | {plan.value_col})
    return pcsv.open_csv(
        src.handle(),
        read_options=pcsv.ReadOptions(
            column_names=names,
            skip_rows=d.first_data_line - 1,
            encoding="utf8",
            block_size=_BLOCK_BYTES,
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
        # the C library's allocator: blocks freed as they are read are given back,
        # where pyarrow's default pool keeps its arenas (about 20 MB more at the peak)
        memory_pool=pa.system_memory_pool(),
    )


class _Columns:
    """The final arrays of a log's rows, filled block by block.

    Sized from the estimated rows, grown (rarely) when the estimate falls short,
    and trimmed in place at the end.
    """

    def __init__(self, rows: int, plan: ColumnPlan) -> None:
        self.capacity = max(1024, int(rows * 1.02) + 1024)
        self.values = np.empty(self.capacity, dtype=np.float64)
        self.bad = np.empty(self.capacity, dtype=bool)
        self.fmt = plan.time_fmt
        self.time_name = f"c{plan.time_cols[0]}" if self.fmt is not None else None
        self.value_name = f"c{plan.value_col}"
        self.ticks: np.ndarray | None = None  # its dtype is known from the first block
        self.invalid_rows: list[int] = []
        self.n = 0

    def _grow(self, need: int) -> None:
        self.capacity = max(need, int(self.capacity * 1.5))
        for a in (self.values, self.bad, self.ticks):
            if a is not None:
                a.resize(self.capacity, refcheck=False)

    def add(self, batch: Any) -> bool:
        """Copy one block in; False when it holds an empty field or stamps of another type."""
        k = batch.num_rows
        if self.n + k > self.capacity:
            self._grow(self.n + k)
        lo, hi = self.n, self.n + k
        if self.time_name is not None and not self._add_ticks(batch.column(self.time_name), lo):
            return False
        vcol = batch.column(self.value_name)
        if vcol.null_count:
            return False  # an empty field (or a blank line): reported by the pandas engine
        v = vcol.to_numpy(zero_copy_only=True)
        values, bad = self.values[lo:hi], self.bad[lo:hi]
        np.isfinite(v, out=bad)
        np.logical_not(bad, out=bad)
        with np.errstate(invalid="ignore"):
            bad |= np.abs(v) >= vals.SENTINEL
        values[:] = v
        if bad.any():
            values[bad] = np.nan
        self.n = hi
        return True

    def _add_ticks(self, tcol: Any, lo: int) -> bool:
        import pyarrow as pa

        if tcol.null_count:
            return False
        if pa.types.is_timestamp(tcol.type):
            t = tcol.view(pa.int64()).to_numpy(zero_copy_only=True)
        elif pa.types.is_signed_integer(tcol.type):
            t = tcol.to_numpy(zero_copy_only=True).astype(np.int64, copy=False)
        elif pa.types.is_floating(tcol.type):
            t = tcol.to_numpy(zero_copy_only=True).astype(np.float64, copy=False)
            if not np.isfinite(t).all():
                return False
        else:
            return False
        if self.ticks is None:
            self.ticks = np.empty(self.capacity, dtype=t.dtype)
        elif self.ticks.dtype != t.dtype:
            return False  # stamps typed otherwise in this block: the pandas engine decides
        self.ticks[lo : lo + t.size] = t
        return True

    def parsed(self, first_line: int) -> ParsedRows:
        """The rows read, the arrays trimmed to their length in place."""
        n = self.n
        for a in (self.values, self.bad, self.ticks):
            if a is not None:
                a.resize(n, refcheck=False)
        return ParsedRows(
            lines=np.arange(first_line, first_line + n, dtype=index_dtype(first_line + n)),
            values=self.values,
            bad=self.bad,
            ticks=self.ticks,
            tick_ok=np.ones(n, dtype=bool) if self.ticks is not None else None,
            texts=None,
            units=None,
            skipped=[],
        )
