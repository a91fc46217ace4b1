"""Auxiliary columns of a log: temperature, pressure, humidity, supply voltage.

A log often carries, beside the counter's readings, what the lab's sensors saw at
the same moment. A column is taken as auxiliary when its header names one of the
quantities below (``temperature_C``, ``Temp (K)``, ``pressure_hPa``, ``RH_%``,
``supply_V`` ...) or when it is named with ``--aux NAME=COLUMN``. Such columns are
never chosen as the value column by default.

:func:`read_auxiliary` reads them after :func:`~stability.ingest.read_log`, from
the same file and dialect, and places each value beside the reading of the same
line (``Measurement.lines``): a reading whose line has no auxiliary value, or a
gap the reader inserted, gets NaN. Units are converted to SI at this edge
(hPa, mbar and kPa to Pa, mV to V); temperatures stay in the scale read (a
coefficient per degree Celsius is the same per kelvin).
"""

from __future__ import annotations

import re
from typing import Any

import numpy as np
import pandas as pd

from ..errors import InputError
from ..measurement import Auxiliary, Measurement
from .sniff import open_source, sniff_dialect, split_fields

__all__ = ["AUX_QUANTITIES", "aux_quantity_of", "read_auxiliary", "parse_aux_spec"]

#: Quantity -> (words that name it in a header, SI unit of its coefficient).
AUX_QUANTITIES: dict[str, tuple[tuple[str, ...], str]] = {
    "temperature": (("temperature", "temp"), "K"),
    "pressure": (("pressure", "press", "baro"), "Pa"),
    "humidity": (("humidity", "rh", "hum"), "%"),
    "voltage": (("voltage", "volt", "supply", "vcc", "vdd"), "V"),
}

#: Unit written in a header -> (unit kept, factor to it).
_UNITS = {
    "c": ("degC", 1.0),
    "degc": ("degC", 1.0),
    "°c": ("degC", 1.0),
    "k": ("K", 1.0),
    "pa": ("Pa", 1.0),
    "hpa": ("Pa", 100.0),
    "mbar": ("Pa", 100.0),
    "kpa": ("Pa", 1000.0),
    "%": ("%", 1.0),
    "pct": ("%", 1.0),
    "v": ("V", 1.0),
    "mv": ("V", 1e-3),
}
_WORDS = re.compile(r"[a-z°%]+")


def aux_quantity_of(name: str) -> tuple[str, str, float] | None:
    """(quantity, unit, factor to the unit) named by a header, or None.

    ``temperature_C`` -> ("temperature", "degC", 1); ``pressure_hPa`` ->
    ("pressure", "Pa", 100). The first word must name the quantity.
    """
    words = _WORDS.findall(str(name).strip().lower())
    if not words:
        return None
    for quantity, (names, si) in AUX_QUANTITIES.items():
        if words[0] in names:
            unit, factor = si, 1.0
            for w in words[1:]:
                if w in _UNITS:
                    unit, factor = _UNITS[w]
                    break
            if quantity == "temperature" and unit not in ("K", "degC"):
                unit = "degC"
            return quantity, unit, factor
    return None


def parse_aux_spec(spec: Any) -> dict[str, str | int | None]:
    """``temperature`` or ``temperature=3`` / ``temperature=T_room`` (comma list) -> mapping.

    The value is the column (1-based number or header name), None to find it by
    its header.
    """
    if spec is None:
        return {}
    items = spec if isinstance(spec, list | tuple) else str(spec).split(",")
    out: dict[str, str | int | None] = {}
    for item in items:
        text = str(item).strip()
        if not text:
            continue
        name, _, column = text.partition("=")
        name = name.strip().lower()
        if not re.fullmatch(r"[a-z][a-z0-9_]*", name):
            raise InputError(
                f"auxiliary name must be a word such as temperature, got {name!r}",
                hint="write --aux temperature or --aux temperature=COLUMN",
            )
        col = column.strip()
        out[name] = None if not col else (int(col) if col.isdigit() else col)
    return out


def _header_columns(header: list[str], ncols: int) -> list[str]:
    return [header[i] if i < len(header) else f"column {i + 1}" for i in range(ncols)]


def _find(
    names: list[str], wanted: dict[str, str | int | None], value_col: str | None, path: str
) -> dict[str, tuple[int, str, float]]:
    """quantity -> (0-based column, unit, factor) for the wanted or recognised columns."""
    found: dict[str, tuple[int, str, float]] = {}
    for i, n in enumerate(names):
        q = aux_quantity_of(n)
        if q and q[0] not in found and n != value_col:
            found[q[0]] = (i, q[1], q[2])
    out: dict[str, tuple[int, str, float]] = {}
    for quantity, column in wanted.items():
        if column is None:
            if quantity not in found:
                raise InputError(
                    f"no column of {quantity} found among {', '.join(names)}",
                    path=path,
                    hint=f"name it with --aux {quantity}=COLUMN",
                )
            out[quantity] = found[quantity]
            continue
        idx = column - 1 if isinstance(column, int) else None
        if idx is None:
            matches = [i for i, n in enumerate(names) if n.strip().lower() == column.lower()]
            idx = matches[0] if matches else None
        if idx is None or not 0 <= idx < len(names):
            raise InputError(
                f"auxiliary column {column!r} for {quantity} is not in the log "
                f"(columns: {', '.join(names)})",
                path=path,
            )
        q = aux_quantity_of(names[idx])
        si = AUX_QUANTITIES.get(quantity, ((), ""))[1]
        out[quantity] = (idx, q[1], q[2]) if q and q[0] == quantity else (idx, si, 1.0)
    if not wanted:
        out = found
    return out


def _column_text(path: str, sheet: Any, cols: list[int]) -> tuple[list[np.ndarray], int]:
    """The text of the columns, row k from line first_data_line + k, and that line."""
    src = open_source(path, sheet=sheet)
    d = sniff_dialect(src)
    frame = pd.read_csv(
        src.handle(),
        sep=r"\s+" if d.delimiter == " " else d.delimiter,
        header=None,
        names=list(range(d.ncols)),
        usecols=cols,
        skiprows=d.first_data_line - 1,
        skip_blank_lines=False,
        quoting=3,
        index_col=False,
        dtype=str,
        encoding=src.pandas_encoding,
        engine="c",
        on_bad_lines="skip",
    )
    text = src.all_bytes().decode(src.pandas_encoding if src.buffer is None else "utf-8")
    lines = text.splitlines()[d.first_data_line - 1 :]
    while lines and not lines[-1].strip():
        lines.pop()
    if len(frame) == len(lines):
        return [frame[c].to_numpy(dtype=object) for c in cols], d.first_data_line
    # a row pandas skipped shifts the rows: split every line instead (slower, exact)
    fields = [split_fields(ln, d.delimiter) for ln in lines]
    return [
        np.array([f[c] if c < len(f) else "" for f in fields], dtype=object) for c in cols
    ], d.first_data_line


def _numbers(text: np.ndarray, decimal: str) -> np.ndarray:
    series = pd.Series(text, dtype="string").str.strip().str.strip('"')
    if decimal == ",":
        series = series.str.replace(",", ".", regex=False)
    return pd.to_numeric(series, errors="coerce").to_numpy(dtype=float, na_value=np.nan)


def read_auxiliary(measurement: Measurement, aux: Any = None) -> Measurement:
    """The measurement with its auxiliary columns attached (``measurement.auxiliary``).

    Parameters
    ----------
    measurement
        As returned by :func:`stability.read_log` (its provenance names the file
        and its ``lines`` the source line of every reading).
    aux
        ``None`` (every column whose header names a quantity), or names with
        optional columns: ``"temperature"``, ``"temperature=3,voltage=Vsupply"``.
    """
    if not isinstance(measurement, Measurement):
        raise InputError(
            f"measurement must be a stability.Measurement, got {type(measurement).__name__}"
        )
    wanted = parse_aux_spec(aux)
    have = measurement.auxiliary or {}
    if wanted and all(q in have for q in wanted):
        return measurement  # attached already (read before, or made in memory)
    details = measurement.provenance.details or {}
    path = measurement.provenance.path
    if path is None or measurement.lines is None or "header" not in details:
        if not wanted:
            return measurement
        raise InputError(
            "auxiliary columns can be read only from a log file read by stability.read_log"
        )
    header = [str(h) for h in details.get("header") or []]
    ncols = max(len(header), len(details.get("columns") or []))
    names = _header_columns(header, ncols)
    found = _find(names, wanted, details.get("value_column"), path)
    if not found:
        return measurement
    quantities = list(found)
    texts, first_line = _column_text(path, details.get("member"), [found[q][0] for q in quantities])
    lines = np.asarray(measurement.lines, dtype=np.int64)
    rows = lines - first_line
    out: dict[str, Auxiliary] = dict(measurement.auxiliary or {})
    notes = list(measurement.notes)
    for q, text in zip(quantities, texts, strict=True):
        col, unit, factor = found[q]
        values = _numbers(text, details.get("decimal_mark", ".")) * factor
        ok = (lines > 0) & (rows >= 0) & (rows < values.size)
        aligned = np.full(lines.size, np.nan)
        aligned[ok] = values[rows[ok]]
        out[q] = Auxiliary(values=aligned, unit=unit, column=names[col])
        missing = int(np.isnan(aligned).sum())
        notes.append(
            f"Auxiliary column {names[col]!r} read as {q} in {unit}"
            + (f" ({missing} reading(s) without a value)" if missing else "")
            + "."
        )
    return measurement.replace(auxiliary=out, notes=notes)
