"""The results table as CSV (for machines), Markdown and plain text (for people).

One row per (statistic, tau) with the columns of :data:`stability.table.COLUMNS`,
in that order. The CSV keeps every digit: floats are written with Python's
shortest round-trip representation [1]_ (so reading them back gives the same
binary64 value [2]_), empty cells mark NaN and unidentified noise.
:func:`read_table_csv` reads such a file back into a :class:`pandas.DataFrame`
with the same columns and types as :meth:`StabilityTable.to_frame`.

The Markdown and terminal tables are rounded for reading: deviations to four
significant digits, tau in engineering form (SI prefixes below a second), the
confidence interval as ``[low, high]``; statistics in seconds (TDEV, MTIE, TIE
rms) are shown with a time unit. The noise labels are those of IEEE 1139 [3]_
and NIST SP 1065 [4]_ (WPM, FPM, WFM, FFM, RWFM).

References
----------
.. [1] D. M. Gay, *Correctly rounded binary-decimal and decimal-binary conversions*,
   AT&T Bell Laboratories Numerical Analysis Manuscript 90-10 (1990); the
   algorithm behind Python's float ``repr``.
.. [2] IEEE Std 754-2019, *Floating-Point Arithmetic*, section 5.12.2: 17 significant
   decimal digits recover a binary64 value.
.. [3] IEEE Std 1139-2008, *Definitions of Physical Quantities for Fundamental
   Frequency and Time Metrology - Random Instabilities*.
.. [4] W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065 (2008).
"""

from __future__ import annotations

import csv
import io
import math
import os
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from ..deviations.registry import get_statistic
from ..errors import InputError
from ..table import COLUMNS, StabilityTable

__all__ = [
    "table_csv",
    "table_markdown",
    "people_rows",
    "BIAS_NOTE",
    "terminal_table",
    "read_table_csv",
    "format_tau",
    "format_value",
    "statistic_unit",
]

_FLOAT_COLUMNS = ("tau_s", "deviation", "ci_low", "ci_high", "edf", "raw_deviation", "bias_factor")
_INT_COLUMNS = ("m", "n_terms")
_TEXT_COLUMNS = ("statistic", "noise", "noise_method")
_PREFIXES = ((1.0, ""), (1e-3, "m"), (1e-6, "µ"), (1e-9, "n"), (1e-12, "p"), (1e-15, "f"))


def _validate_table(table: Any) -> StabilityTable:
    if not isinstance(table, StabilityTable):
        raise InputError(
            f"table must be a stability.StabilityTable, got {type(table).__name__}",
            hint="build one with stability.analyze",
        )
    return table


def statistic_unit(name: str) -> str:
    """``"s"`` for statistics in seconds (TDEV, MTIE, ...), ``""`` for fractional frequency."""
    try:
        return get_statistic(name).unit
    except InputError:
        return ""


def _cell(value: Any) -> str:
    """One CSV cell: full-precision float repr, empty for NaN / missing."""
    if value is None or value is pd.NA:
        return ""
    if isinstance(value, (float, np.floating)):
        number = float(value)
        return repr(number) if math.isfinite(number) else ""
    if isinstance(value, (int, np.integer)):
        return str(int(value))
    return str(value)


def table_csv(table: StabilityTable) -> str:
    """The results table as CSV text: the DESIGN columns, full precision, ``\\n`` line ends."""
    _validate_table(table)
    frame = table.to_frame()
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(COLUMNS)
    columns = [frame[name].tolist() for name in COLUMNS]
    for row in zip(*columns, strict=True):
        writer.writerow([_cell(v) for v in row])
    return buffer.getvalue()


def _number(text: str, source: Path, row: int, name: str) -> float:
    if text == "":
        return math.nan
    try:
        return float(text)
    except ValueError:
        raise InputError(
            f"cannot read {text!r} as a number", path=str(source), line=row + 2, column=name
        ) from None


def read_table_csv(path: str | os.PathLike[str]) -> pd.DataFrame:
    """Read a results-table CSV written by :func:`table_csv` back into a DataFrame.

    The columns and dtypes match :meth:`StabilityTable.to_frame`: floats
    (NaN where empty), int64 ``m`` and ``n_terms``, nullable Int64 ``alpha``
    and text columns with empty strings where nothing was identified.

    Raises
    ------
    InputError
        When the file is missing, or its header is not the results-table header,
        or a cell cannot be read as the number its column holds.
    """
    source = Path(path)
    if not source.is_file():
        raise InputError("no such file", path=str(source), hint="check the path")
    with open(source, encoding="utf-8", newline="") as handle:
        header = next(csv.reader(handle), [])
    if tuple(header) != COLUMNS:
        raise InputError(
            f"not a results table: the header is {','.join(header)!r}",
            path=str(source),
            line=1,
            hint=f"expected the columns {','.join(COLUMNS)}",
        )
    try:
        raw = pd.read_csv(source, dtype=str, keep_default_na=False, na_filter=False)
    except (ValueError, pd.errors.ParserError) as exc:
        raise InputError(f"cannot read the results table: {exc}", path=str(source)) from None
    out: dict[str, Any] = {}
    for name in COLUMNS:
        cells = [str(v) for v in raw[name].tolist()]
        if name in _TEXT_COLUMNS:
            out[name] = cells
            continue
        # float() on the text itself: the exact round trip of the written repr.
        numbers = np.array([_number(v, source, row, name) for row, v in enumerate(cells)])
        if name in _FLOAT_COLUMNS:
            out[name] = numbers.astype(float)
        elif name in _INT_COLUMNS:
            missing = np.isnan(numbers)
            if missing.any():
                row = int(np.flatnonzero(missing)[0])
                raise InputError("empty cell", path=str(source), line=row + 2, column=name)
            out[name] = numbers.astype(np.int64)
        else:  # alpha: nullable integer
            out[name] = pd.array(
                [None if math.isnan(v) else round(v) for v in numbers], dtype="Int64"
            )
    return pd.DataFrame(out, columns=list(COLUMNS))


# ---------------------------------------------------------------------- formatting for people
def format_tau(seconds: float) -> str:
    """Tau in engineering form: ``1 s``, ``100 ms``, ``1024 s``, ``1.311 s``, ``1.049e6 s``.

    Whole seconds are written whole; other taus with four significant digits.
    """
    if not math.isfinite(seconds):
        return "n/a"
    s = abs(seconds)
    if s >= 1e6:
        exponent = int(math.floor(math.log10(s)))
        return f"{seconds / 10**exponent:.4g}e{exponent} s"
    if s >= 1.0 or s == 0.0:
        whole = abs(s - round(s)) <= 1e-9 * s
        return f"{seconds:.0f} s" if whole else f"{seconds:.4g} s"
    for factor, prefix in _PREFIXES[1:]:
        if s >= factor * (1 - 1e-12) or factor == _PREFIXES[-1][0]:
            return f"{seconds / factor:.4g} {prefix}s"
    return f"{seconds:.4g} s"  # pragma: no cover - loop always returns


def format_value(value: float, unit: str = "") -> str:
    """Four significant digits; with a time unit, an SI prefix (``1.234 ns``)."""
    if value is None or not math.isfinite(value):
        return ""
    if unit != "s":
        return f"{value:.4g}"
    s = abs(value)
    if s == 0.0:
        return "0 s"
    if s >= 1.0:
        return f"{value:.4g} s"
    for factor, prefix in _PREFIXES[1:]:
        if s >= factor * (1 - 1e-12) or factor == _PREFIXES[-1][0]:
            return f"{value / factor:.4g} {prefix}s"
    return f"{value:.4g} s"  # pragma: no cover


def _interval(low: float, high: float, unit: str) -> str:
    if not (math.isfinite(low) and math.isfinite(high)):
        return ""
    return f"[{format_value(low, unit)}, {format_value(high, unit)}]"


def _edf(value: float) -> str:
    if not math.isfinite(value):
        return ""
    return f"{value:.4g}" if value < 1000 else f"{value:.0f}"


def _people_rows(table: StabilityTable) -> tuple[list[str], list[list[str]]]:
    level = 100.0 * float(table.confidence)
    header = [
        "statistic",
        "tau",
        "deviation",
        f"{level:.3g} % interval",
        "edf",
        "noise",
        "terms",
    ]
    rows: list[list[str]] = []
    for result in table:
        unit = statistic_unit(result.statistic)
        for i in range(len(result)):
            noise = result.noise[i]
            method = result.noise_method[i]
            if noise and method:
                noise = f"{noise} ({method})"
            factor = float(result.bias_factor[i])
            rows.append(
                [
                    result.statistic,
                    format_tau(float(result.tau[i])),
                    format_value(float(result.deviation[i]), unit),
                    _interval(float(result.ci_low[i]), float(result.ci_high[i]), unit),
                    _edf(float(result.edf[i])),
                    noise,
                    str(int(result.n_terms[i])),
                    "" if factor == 1.0 or not math.isfinite(factor) else f"x{factor:.4f}",
                ]
            )
    return header, rows


#: Said under a table that holds bias-corrected rows.
BIAS_NOTE = (
    "bias-corrected: deviation = raw estimate x the bias factor (raw values in table.csv, "
    "column raw_deviation); --bias-correction off reports the raw estimates"
)


def _corrected(rows: list[list[str]]) -> bool:
    return any(row[7] for row in rows)


def people_rows(table: StabilityTable) -> tuple[list[str], list[list[str]]]:
    """The header and rows of ``table.md``: rounded for people, with units.

    A ``bias factor`` column is added only when some row carries a bias
    correction. The Markdown table and a notebook's display both show these.
    """
    _validate_table(table)
    header, rows = _people_rows(table)
    if _corrected(rows):
        return [*header, "bias factor"], rows
    return header, [row[:7] for row in rows]


def table_markdown(table: StabilityTable) -> str:
    """The results table as a GitHub-flavoured Markdown table, rounded for people."""
    header, rows = people_rows(table)
    corrected = len(header) == 8
    numeric = {1, 2, 3, 4, 6, 7}
    lines = [
        "| " + " | ".join(header) + " |",
        "|" + "|".join("---:" if j in numeric else ":---" for j in range(len(header))) + "|",
    ]
    for row in rows:
        lines.append("| " + " | ".join(cell.replace("|", "\\|") for cell in row) + " |")
    if corrected:
        lines += ["", f"Rows with a bias factor are {BIAS_NOTE}."]
    return "\n".join(lines) + "\n"


def terminal_table(table: StabilityTable, *, columns: int | None = None) -> str:
    """The results table as aligned plain text for a terminal.

    Columns: statistic, tau, deviation, interval, noise (plus EDF and terms when
    ``columns`` is None or wide enough, 100 characters or more).
    """
    _validate_table(table)
    header, rows = _people_rows(table)
    corrected = _corrected(rows)
    for row in rows:
        row[2] += " *" if row[7] else ("  " if corrected else "")
    keep = [0, 1, 2, 3, 5]
    if columns is None or columns >= 100:
        keep = [0, 1, 2, 3, 4, 5, 6]
    header = [header[j] for j in keep]
    rows = [[row[j] for j in keep] for row in rows]
    widths = [max([len(header[j])] + [len(r[j]) for r in rows]) for j in range(len(header))]
    left = {0, header.index("noise")}
    sep = "  "

    def line(cells: list[str]) -> str:
        parts = [
            cells[j].ljust(widths[j]) if j in left else cells[j].rjust(widths[j])
            for j in range(len(cells))
        ]
        return sep.join(parts).rstrip()

    out = [line(header), sep.join("-" * w for w in widths)]
    previous = None
    for row in rows:
        if previous is not None and row[0] != previous:
            out.append("")
        out.append(line(row))
        previous = row[0]
    if corrected:
        out += ["", f"* {BIAS_NOTE}"]
    return "\n".join(out) + "\n"
