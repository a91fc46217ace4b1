"""Time stamps in logs: recognise the format from a sample, then parse whole columns.

Formats recognised: ISO 8601 date-times with ``T`` or a space, optional fractional
seconds and optional zone (``Z`` or ``+hh:mm``); ``dd.mm.yyyy hh:mm:ss``;
``yyyy/mm/dd hh:mm:ss``; a date and a time of day in two columns; Unix epoch
seconds, milliseconds, microseconds or nanoseconds (told apart by magnitude);
Modified Julian Date (MJD, days); elapsed seconds. Whole columns are parsed by
pandas with one explicit format, never row by row in Python.

References
----------
1. ISO 8601-1:2019, *Date and time: representations for information interchange*.
2. IEEE Std 1003.1 (POSIX), *Seconds Since the Epoch*, section 4.16.
3. IAU / USNO convention: MJD = JD - 2400000.5, MJD 40587 = 1970-01-01 (common practice).
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from datetime import UTC, datetime

import numpy as np
import pandas as pd

__all__ = [
    "TimeFormat",
    "detect_time_format",
    "parse_times",
    "is_time_name",
    "header_time_unit",
    "says_seconds",
    "is_counter",
    "MJD_UNIX_EPOCH",
]

#: MJD of 1970-01-01 (common practice).
MJD_UNIX_EPOCH = 40587.0

_ISO = re.compile(
    r"^\d{4}-\d{2}-\d{2}[T ]\d{2}:\d{2}(?::\d{2}(?:\.\d+)?)?\s*(Z|[+-]\d{2}:?\d{2})?$"
)
_DOTTED = re.compile(r"^\d{2}\.\d{2}\.\d{4} \d{2}:\d{2}:\d{2}(\.\d+)?$")
_SLASHED = re.compile(r"^\d{4}/\d{2}/\d{2} \d{2}:\d{2}:\d{2}(\.\d+)?$")
_DATE_ONLY = re.compile(r"^(\d{4}-\d{2}-\d{2}|\d{2}\.\d{2}\.\d{4}|\d{4}/\d{2}/\d{2})$")
_TIME_OF_DAY = re.compile(r"^\d{2}:\d{2}:\d{2}(\.\d+)?(Z|[+-]\d{2}:?\d{2})?$")
_NUMBER = re.compile(r"^[-+]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?$")
_TIME_NAME = re.compile(
    r"^(time|timestamp|times|date|datetime|date_?time|utc|tai|gps.?time|mjd|epoch|"
    r"elapsed|t|sec|seconds|clock|when|unix.*|posix.*|zeit\w*|uhrzeit|datum\w*|"
    r"messzeit|laufzeit)(\b|_|\s|\[|\(|/|$)",
    re.I,
)
#: Seconds per unit of an elapsed-time header (``elapsed_ms``, ``time [s]``, ``t (us)``).
_HEADER_TIME_UNITS = {
    "s": 1.0, "sec": 1.0, "secs": 1.0, "second": 1.0, "seconds": 1.0, "sek": 1.0,
    "ms": 1e-3, "msec": 1e-3, "millisec": 1e-3, "millisecond": 1e-3, "milliseconds": 1e-3,
    "us": 1e-6, "µs": 1e-6, "μs": 1e-6, "usec": 1e-6, "microsecond": 1e-6,
    "microseconds": 1e-6, "ns": 1e-9, "nsec": 1e-9, "nanosecond": 1e-9, "nanoseconds": 1e-9,
    "min": 60.0, "minute": 60.0, "minutes": 60.0, "h": 3600.0, "hour": 3600.0,
    "hours": 3600.0,
}  # fmt: skip
_UNIT_WORDS = {1.0: "seconds", 1e-3: "milliseconds", 1e-6: "microseconds",
               1e-9: "nanoseconds", 60.0: "minutes", 3600.0: "hours"}  # fmt: skip
_INTEGER = re.compile(r"^[-+]?\d+$")


@dataclass
class TimeFormat:
    """How a time column is written.

    Attributes
    ----------
    style
        ``"datetime"``, ``"epoch"``, ``"mjd"`` or ``"elapsed"``.
    pattern
        pandas format string for ``datetime`` (``"ISO8601"`` or a strftime pattern).
    scale
        Seconds per unit for numeric styles (epoch ms -> 1e-3, MJD -> 86400).
    aware
        True when the stamps carry a zone (or are epoch numbers, which are UTC).
    description
        Plain words for the report.
    """

    style: str
    pattern: str | None = None
    scale: float = 1.0
    aware: bool = False
    description: str = ""


#: Words that make a time-like header name a measured quantity (``time_interval_s``,
#: ``Zeitfehler``), not the time axis.
_QUANTITY_WORDS = re.compile(
    r"(interval|error|offset|diff|phase|tie|deviation|delay|fehler|abweichung)", re.I
)


def is_time_name(name: str) -> bool:
    """True for a header name that announces a time column (not ``time interval``)."""
    text = name.strip()
    return bool(_TIME_NAME.match(text)) and not _QUANTITY_WORDS.search(text)


def header_time_unit(name: str) -> float | None:
    """Seconds per unit named in a time header (``elapsed_ms`` -> 1e-3), or None.

    A unit in brackets wins (``time [s]``); otherwise the last unit word of the
    name (``elapsed_ms``, ``t_us``, ``Zeit s``). Only a time name can carry one:
    ``TI (ns)`` is a value column, not a time axis.
    """
    if not is_time_name(name):
        return None
    bracket = re.search(r"[\[(]\s*([^\])]+?)\s*[\])]", name)
    if bracket:
        found = _HEADER_TIME_UNITS.get(bracket.group(1).strip().lower())
        if found is not None:
            return found
    words = re.findall(r"[a-zµμ]+", name.lower())
    for w in words[1:][::-1]:
        if w in _HEADER_TIME_UNITS:
            return _HEADER_TIME_UNITS[w]
    if words and words[0] in ("sec", "secs", "seconds", "elapsed"):
        return 1.0
    return None


def says_seconds(name: str) -> bool:
    """True when a header names elapsed time (a unit, or a word such as ``time``, ``elapsed``)."""
    return is_time_name(name) and not re.match(r"^(date|datum)", name.strip(), re.I)


def is_counter(values: list[str]) -> bool:
    """True for a column of integers that rise by exactly 1 per row (a row number).

    A few skipped numbers (rows missing from the log) are allowed; a step of
    zero or backward is not.
    """
    vals = [v.strip() for v in values if v.strip()]
    if len(vals) < 3 or not all(_INTEGER.match(v) and len(v) <= 18 for v in vals):
        return False  # 18 digits and a sign always fit in int64
    steps = np.diff(np.array([int(v) for v in vals], dtype=np.int64))
    return bool(np.all(steps >= 1) and np.count_nonzero(steps == 1) >= 0.9 * steps.size)


def detect_time_format(values: list[str], name: str = "") -> TimeFormat | None:
    """Recognise the time-stamp format of a column from sample strings, or None."""
    vals = [v.strip() for v in values if v.strip()]
    if not vals:
        return None

    def share(rx: re.Pattern[str]) -> float:
        return sum(bool(rx.match(v)) for v in vals) / len(vals)

    if share(_ISO) >= 0.8:
        aware = any(_ISO.match(v) and _ISO.match(v).group(1) for v in vals)
        return TimeFormat("datetime", "ISO8601", aware=aware, description="ISO 8601 date-time")
    for rx, date_fmt, text in (
        (_DOTTED, "%d.%m.%Y %H:%M:%S", "dd.mm.yyyy hh:mm:ss"),
        (_SLASHED, "%Y/%m/%d %H:%M:%S", "yyyy/mm/dd hh:mm:ss"),
    ):
        if share(rx) >= 0.8:
            frac = any(rx.match(v) and rx.match(v).group(1) for v in vals)
            fmt = date_fmt + (".%f" if frac else "")
            return TimeFormat("datetime", fmt, description=text)
    if share(_NUMBER) < 0.8:
        return None
    nums = np.array([float(v) for v in vals if _NUMBER.match(v)])
    if "mjd" in name.lower():
        return TimeFormat("mjd", scale=86400.0, aware=True, description="Modified Julian Date")
    increasing = nums.size < 2 or bool(np.all(np.diff(nums) >= 0))
    if not increasing and not is_time_name(name):
        return None
    unit = header_time_unit(name)
    big = float(np.median(np.abs(nums)))
    has_frac = bool(np.any(nums != np.round(nums)))
    for low, high, scale, text in (
        (1e8, 1e10, 1.0, "Unix epoch seconds"),
        (1e11, 1e13, 1e-3, "Unix epoch milliseconds"),
        (1e14, 1e16, 1e-6, "Unix epoch microseconds"),
        (1e17, 1e19, 1e-9, "Unix epoch nanoseconds"),
    ):
        # a unit in the header must agree with the unit the magnitude implies
        if low <= big < high and unit in (None, scale):
            return TimeFormat("epoch", scale=scale, aware=True, description=text)
    if unit is not None:
        words = _UNIT_WORDS.get(unit, f"units of {unit:g} s")
        return TimeFormat("elapsed", scale=unit, description=f"elapsed {words} (unit in header)")
    if 40000 <= big <= 80000 and has_frac and float(np.max(np.diff(nums), initial=0)) < 1:
        return TimeFormat("mjd", scale=86400.0, aware=True, description="Modified Julian Date")
    return TimeFormat("elapsed", scale=1.0, description="elapsed seconds")


def parse_times(column: pd.Series, fmt: TimeFormat) -> tuple[np.ndarray, np.ndarray]:
    """Parse one chunk of a time column.

    Returns
    -------
    ticks, ok
        For ``datetime`` style: int64 nanoseconds since 1970 (naive stamps as if
        UTC); for numeric styles: float64 in the column's own unit. ``ok`` marks
        rows that parsed.
    """
    if fmt.style == "datetime":
        text = column if column.dtype.kind in "OT" else column.astype(str)
        stamps = pd.to_datetime(text, format=fmt.pattern, errors="coerce", utc=fmt.aware)
        retry = stamps.isna().to_numpy() & text.notna().to_numpy()
        if retry.any():  # only the few stamps written with surrounding spaces or quotes
            again = text[retry].astype(str).str.strip().str.strip('"')
            stamps[retry] = pd.to_datetime(
                again, format=fmt.pattern, errors="coerce", utc=fmt.aware
            )
        if fmt.aware:
            stamps = stamps.dt.tz_convert("UTC").dt.tz_localize(None)
        # pandas parses years 1..9999; outside the int64 nanosecond range (1677-2262)
        # the conversion below would wrap around silently, so such stamps do not parse
        outside = (stamps < pd.Timestamp.min) | (stamps > pd.Timestamp.max)
        if outside.any():
            stamps = stamps.mask(outside)
        arr = stamps.to_numpy(dtype="datetime64[ns]")
        ok = ~np.isnat(arr)
        return arr.view(np.int64), ok
    if column.dtype.kind in "iuf":
        if column.dtype.kind in "iu":
            vals = column.to_numpy(dtype=np.int64)
            return vals, np.ones(vals.size, dtype=bool)
        vals = column.to_numpy(dtype=np.float64)
    else:
        vals = pd.to_numeric(column.astype(str).str.strip(), errors="coerce").to_numpy(
            dtype=np.float64
        )
    return vals, np.isfinite(vals)


#: Rows converted at a time where a whole-length temporary would otherwise be made.
_BLOCK = 1 << 18


def to_seconds(
    ticks: np.ndarray, fmt: TimeFormat, first: int
) -> tuple[np.ndarray, datetime | None]:
    """Seconds since the first good stamp (``ticks[first]``) and that stamp as a datetime."""
    t0 = ticks[first]
    if fmt.style == "datetime":
        rel = np.empty(ticks.size, dtype=np.float64)
        for lo in range(0, ticks.size, _BLOCK):  # blocks: no int64 array of the log's length
            rel[lo : lo + _BLOCK] = ticks[lo : lo + _BLOCK] - t0
        rel *= 1e-9  # in place: one array of the log's length fewer
        start = pd.Timestamp(int(t0), unit="ns").to_pydatetime(warn=False)
        if fmt.aware:
            start = start.replace(tzinfo=UTC)
        return rel, start
    if ticks.dtype.kind in "iu":
        rel = (ticks - t0).astype(np.float64) * fmt.scale
    else:
        rel = (ticks.astype(np.float64) - float(t0)) * fmt.scale
    start = None
    if fmt.style == "epoch":
        start = datetime.fromtimestamp(float(t0) * fmt.scale, tz=UTC)
    elif fmt.style == "mjd":
        start = datetime.fromtimestamp((float(t0) - MJD_UNIX_EPOCH) * 86400.0, tz=UTC)
    return rel, start


def combine_date_time(date: pd.Series, time: pd.Series) -> pd.Series:
    """Join a date column and a time-of-day column into one stamp string column."""
    return date.astype(str).str.strip() + " " + time.astype(str).str.strip()


def is_date_only(values: list[str]) -> bool:
    vals = [v.strip() for v in values if v.strip()]
    return bool(vals) and sum(bool(_DATE_ONLY.match(v)) for v in vals) >= 0.8 * len(vals)


def is_time_of_day(values: list[str]) -> bool:
    vals = [v.strip() for v in values if v.strip()]
    return bool(vals) and sum(bool(_TIME_OF_DAY.match(v)) for v in vals) >= 0.8 * len(vals)


__all__ += ["to_seconds", "combine_date_time", "is_date_only", "is_time_of_day"]
