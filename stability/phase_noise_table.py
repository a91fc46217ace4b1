"""Reading a phase-noise table: offset frequency (Hz) and L(f) (dBc/Hz), one pair a line.

Used by :mod:`stability.phase_noise` to convert a measured single-sideband
phase-noise curve into time-domain stability (IEEE Std 1139-2008, L(f) = S_phi(f)/2).
"""

from __future__ import annotations

import math
import os
import re
from typing import Any

import numpy as np

from .errors import InputError
from .files import special_file

__all__ = ["read_phase_noise_table", "validate_table", "positive"]

#: Bytes a phase-noise table may hold (a few hundred rows of two numbers).
_MAX_TABLE_BYTES = 16 * 1024 * 1024
_SPLIT = re.compile(r"[,;\t ]+")


def _decode_table(data: bytes) -> str:
    """Text of a table file: UTF-16 with a BOM, UTF-8 with or without one, else Latin-1."""
    if data.startswith((b"\xff\xfe", b"\xfe\xff")):
        return data.decode("utf-16")
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError:
        return data.decode("latin-1")


_COMMENT = ("#", "%", ";", "//", "!")


def read_phase_noise_table(path: str | os.PathLike[str]) -> tuple[np.ndarray, np.ndarray]:
    """Read a phase-noise table: offset frequency (Hz) and L(f) (dBc/Hz).

    The file holds two numeric columns separated by commas, semicolons, tabs
    or spaces. Blank lines and lines starting with ``#``, ``%``, ``;``,
    ``//`` or ``!`` are skipped; the first other line may be a header.

    Parameters
    ----------
    path
        The table file.

    Returns
    -------
    offsets, L
        Float64 arrays: offsets strictly increasing and positive, L finite.

    Raises
    ------
    InputError
        When the file cannot be read, a row is not two numbers, the offsets
        do not increase, or fewer than two rows remain.
    """
    name = os.fspath(path)
    special = special_file(name)
    if special is not None:
        raise InputError(f"the phase-noise table is {special}", path=name)
    try:
        with open(name, "rb") as handle:
            data = handle.read(_MAX_TABLE_BYTES + 1)
        if len(data) > _MAX_TABLE_BYTES:
            raise InputError(
                f"the phase-noise table holds more than {_MAX_TABLE_BYTES:,} bytes, far more "
                "than a table of offsets and levels needs",
                path=name,
                hint="check that this is the right file",
            )
        text = _decode_table(data)
    except FileNotFoundError:
        raise InputError("phase-noise table not found", path=name) from None
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError(
            f"cannot read the phase-noise table: {exc.__class__.__name__}",
            path=name,
            hint="pass a UTF-8 text file with two columns: offset in Hz and L(f) in dBc/Hz",
        ) from None
    offsets: list[float] = []
    levels: list[float] = []
    rows: list[int] = []
    seen_data = False
    for number, raw in enumerate(text.splitlines(), start=1):
        line = raw.strip()
        if not line or line.startswith(_COMMENT):
            continue
        if ";" in line or "\t" in line:
            # A semicolon or tab delimiter leaves the comma free as a decimal mark.
            fields = [f.strip().replace(",", ".") for f in re.split(r"[;\t]+", line)]
            fields = [f for f in fields if f]
        else:
            fields = [f for f in _SPLIT.split(line) if f]
        values = []
        bad_column = None
        for col, item in enumerate(fields[:2], start=1):
            try:
                values.append(float(item))
            except ValueError:
                bad_column = col
                break
        if bad_column is not None:
            if not seen_data and not offsets:
                seen_data = True  # a header line, once, before any data
                continue
            raise InputError(
                f"not a number: {fields[bad_column - 1]!r}",
                path=name,
                line=number,
                column=bad_column,
                hint="every data row needs two numbers: offset in Hz and L(f) in dBc/Hz",
            )
        seen_data = True
        if len(fields) != 2:
            raise InputError(
                f"expected two columns, found {len(fields)}",
                path=name,
                line=number,
                hint="keep only the offset (Hz) and L(f) (dBc/Hz) columns",
            )
        if not all(math.isfinite(v) for v in values):
            raise InputError(
                "offset and L(f) must be finite numbers",
                path=name,
                line=number,
            )
        offsets.append(values[0])
        levels.append(values[1])
        rows.append(number)
    if len(offsets) < 2:
        raise InputError(
            f"the phase-noise table has {len(offsets)} data row(s); at least 2 are needed",
            path=name,
            hint="give L(f) at two or more offset frequencies",
        )
    f = np.asarray(offsets, dtype=np.float64)
    level = np.asarray(levels, dtype=np.float64)
    if (level > 0).any():
        k = int(np.flatnonzero(level > 0)[0])
        raise InputError(
            f"L(f) of {level[k]:g} dBc/Hz is above the carrier",
            path=name,
            line=rows[k],
            column=2,
            hint="L(f) is negative dBc/Hz where it is meaningful; check the sign, "
            "or drop the rows closest to the carrier",
        )
    if f[0] <= 0:
        raise InputError(
            f"offset frequencies must be positive, got {f[0]:g} Hz",
            path=name,
            line=rows[0],
            column=1,
        )
    steps = np.diff(f)
    if (steps <= 0).any():
        k = int(np.flatnonzero(steps <= 0)[0]) + 1
        raise InputError(
            f"offset frequencies must increase strictly: {f[k]:g} Hz follows {f[k - 1]:g} Hz",
            path=name,
            line=rows[k],
            column=1,
            hint="sort the table by offset and drop repeated rows",
        )
    return f, level


def validate_table(offsets: Any, levels: Any) -> tuple[np.ndarray, np.ndarray]:
    try:
        f = np.asarray(offsets, dtype=np.float64)
        level = np.asarray(levels, dtype=np.float64)
    except (TypeError, ValueError):
        raise InputError("offsets_hz and L_dbc_hz must be arrays of numbers") from None
    if f.ndim != 1 or level.ndim != 1 or f.size != level.size:
        raise InputError(
            f"offsets_hz and L_dbc_hz must be 1-D of equal length, got shapes "
            f"{f.shape} and {level.shape}"
        )
    if f.size < 2:
        raise InputError(f"the phase-noise table needs at least 2 rows, got {f.size}")
    if not (np.isfinite(f).all() and np.isfinite(level).all()):
        raise InputError("offsets_hz and L_dbc_hz must be finite (no NaN or inf)")
    if f[0] <= 0 or (np.diff(f) <= 0).any():
        raise InputError(
            "offsets_hz must be positive and strictly increasing",
            hint="sort the table by offset and drop repeated rows",
        )
    return f, level


def positive(value: Any, name: str, unit: str) -> float:
    try:
        out = float(value)
    except (TypeError, ValueError):
        raise InputError(f"{name} must be a positive number in {unit}, got {value!r}") from None
    if not math.isfinite(out) or out <= 0:
        raise InputError(f"{name} must be a positive, finite number in {unit}, got {value!r}")
    return out
