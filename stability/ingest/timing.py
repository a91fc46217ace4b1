"""Checks of the time axis before it is used: intervals, stamp range and record span.

Time stamps and a given sample interval are checked against the bounds of
:mod:`stability.ingest.limits` before any grid is built, in floating point, so
that no integer conversion can overflow and no result is computed from a wrong
unit or a slip in a date:

* a given ``tau0`` must be a duration the arithmetic can carry (1e-30 s to
  1e30 s: the estimators square tau) and, unless ``allow_unusual``, lie within
  1 ns .. 1 day;
* epoch and MJD stamps must name an instant between the years 1677 and 2262 (the
  range of a 64-bit count of nanoseconds since 1970, in which the stamps are
  held and printed);
* the record may span at most a century unless ``allow_unusual``, and never more
  than a 64-bit count of nanoseconds holds (about 292 years).

Every refusal is one :class:`~stability.errors.InputError` naming the file, the
line and the time column, and the option that accepts the value.

References
----------
1. IEEE Std 1003.1 (POSIX), *Seconds Since the Epoch*, section 4.16.
2. IAU / USNO convention: MJD = JD - 2400000.5, MJD 40587 = 1970-01-01 (common practice).
3. pandas documentation, *Timestamp limitations* (1677-09-21 to 2262-04-11 at
   nanosecond resolution).
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd

from ..errors import InputError
from ..measurement import TAU0_RANGE
from .limits import SPAN_MAX, TAU0_MIN, UNUSUAL_OPTION, usual_interval
from .timestamps import MJD_UNIX_EPOCH, TimeFormat

__all__ = [
    "TAU0_HARD_MIN",
    "TAU0_HARD_MAX",
    "NOMINAL_RANGE",
    "check_interval",
    "check_nominal",
    "check_stamps",
    "check_span",
]

#: The sample intervals the arithmetic carries at all (tau squared stays a normal float).
TAU0_HARD_MIN, TAU0_HARD_MAX = TAU0_RANGE
#: Seconds since 1970 of the first and last instant a 64-bit nanosecond count holds.
_FIRST_S = pd.Timestamp.min.value / 1e9
_LAST_S = pd.Timestamp.max.value / 1e9
#: The longest span of nanosecond stamps whose differences fit in 64 bits, seconds.
_NS_SPAN_S = (2**63 - 1) / 1e9
_YEAR_S = 365.25 * 86400.0


def check_interval(seconds: float, what: str, allow_unusual: bool, written: object = None) -> None:
    """Refuse a sample interval beyond the usual bounds (or beyond what can be computed).

    ``what`` names the setting (``"tau0"``); ``written`` is the value as the
    user wrote it, for the message.
    """
    shown = repr(written) if isinstance(written, str) else f"{seconds:g} s"
    if not (TAU0_HARD_MIN <= seconds <= TAU0_HARD_MAX):
        raise InputError(
            f"{what} {shown} is beyond the sample intervals that can be computed with "
            f"({TAU0_HARD_MIN:g} s to {TAU0_HARD_MAX:g} s)",
            hint="check the number and its unit, e.g. 1s or 100ms",
        )
    if allow_unusual or usual_interval(seconds):
        return
    side = "shorter than 1 ns" if seconds < TAU0_MIN else "longer than one day"
    raise InputError(
        f"{what} {shown} is {side}, outside the usual sample intervals of a log (1 ns to 1 day)",
        hint=f"check the unit (e.g. 1s, 100ms); pass {UNUSUAL_OPTION} if it is right",
    )


#: Nominal frequencies read without ``allow_unusual``, Hz: from a microhertz to ten
#: petahertz (optical clocks run near 1e15 Hz; a pulse per day is 1.2e-5 Hz).
NOMINAL_RANGE = (1e-6, 1e16)


def check_nominal(hz: float, allow_unusual: bool, written: object = None) -> None:
    """Refuse a nominal frequency outside :data:`NOMINAL_RANGE` (unless ``allow_unusual``)."""
    low, high = NOMINAL_RANGE
    if allow_unusual or low <= hz <= high:
        return
    shown = repr(written) if isinstance(written, str) else f"{hz:g} Hz"
    raise InputError(
        f"nominal {shown} lies outside the frequencies of oscillators and clocks "
        f"({low:g} Hz to {high:g} Hz)",
        hint=f"check the number and its unit, e.g. 10MHz; pass {UNUSUAL_OPTION} if it is right",
    )


def _year(seconds_since_1970: float) -> str:
    """Plain words for when an instant lies: a year, or how far it is from 1970."""
    years = seconds_since_1970 / _YEAR_S
    if not math.isfinite(years):
        return "an instant beyond any calendar"
    if abs(years) > 10_000:
        return f"an instant {abs(years):.3g} years {'after' if years > 0 else 'before'} 1970"
    return f"the year {1970 + years:.0f}"


def _rough_seconds(ticks: np.ndarray, fmt: TimeFormat) -> np.ndarray:
    """The stamps as float seconds (since 1970, or since the column's zero for elapsed time).

    Rounded to float64 (a quarter of a microsecond today): enough to check
    ranges, never used for the grid.
    """
    with np.errstate(over="ignore", invalid="ignore"):
        if fmt.style == "datetime":
            return ticks.astype(np.float64) * 1e-9
        offset = MJD_UNIX_EPOCH if fmt.style == "mjd" else 0.0
        return (ticks.astype(np.float64) - offset) * fmt.scale


def _extremes_within(ticks: np.ndarray, fmt: TimeFormat) -> bool:
    """Whether the earliest and latest stamps already show every stamp passes.

    The conversion to rough seconds never reverses the order of two stamps, so
    the extremes of the seconds are the seconds of the extreme stamps: when
    those lie in the readable years and within a century of each other, so do
    all. No array of the log's length is made.
    """
    if fmt.style != "datetime" and not fmt.scale > 0:
        return False
    ends = _rough_seconds(np.array([ticks.min(), ticks.max()], dtype=ticks.dtype), fmt)
    first, last = float(ends[0]), float(ends[1])
    if not (math.isfinite(first) and math.isfinite(last)) or last - first > SPAN_MAX:
        return False
    return fmt.style not in ("epoch", "mjd") or (_FIRST_S <= first and last <= _LAST_S)


def check_stamps(
    ticks: np.ndarray,
    fmt: TimeFormat,
    lines: np.ndarray,
    path: str,
    column: str,
    allow_unusual: bool = False,
) -> None:
    """Refuse stamps that cannot be held or that span more than a record may.

    ``ticks`` are the parsed stamps of the data rows in the column's own unit
    (see :func:`stability.ingest.timestamps.parse_times`). Epoch and MJD stamps
    must lie in the years 1677 to 2262 (date-time stamps outside them do not
    parse); the span is checked by :func:`check_span`.
    """
    if ticks.size == 0:
        return
    if _extremes_within(ticks, fmt):
        return
    seconds = _rough_seconds(ticks, fmt)
    if fmt.style in ("epoch", "mjd"):
        outside = ~((seconds >= _FIRST_S) & (seconds <= _LAST_S))
        if outside.any():
            i = int(np.argmax(outside))
            raise InputError(
                f"the time stamp {float(ticks[i]):.15g} ({fmt.description}) names "
                f"{_year(float(seconds[i]))}, outside the years 1677 to 2262 that time "
                "stamps can be read in",
                path=path,
                line=int(lines[i]),
                column=column,
                hint="check the time column and its unit, or pass --time-column none with "
                "--tau0 to read the rows in sequence",
            )
    check_span(seconds, lines, path, column, allow_unusual)


def check_span(
    seconds: np.ndarray, lines: np.ndarray, path: str, column: str, allow_unusual: bool
) -> None:
    """Refuse stamps whose record spans more than a century (or more than can be held).

    ``seconds`` are the stamps in seconds from any origin. The line named is the
    one after the longest forward jump.
    """
    if seconds.size < 2:
        return
    with np.errstate(over="ignore", invalid="ignore"):
        span = float(np.max(seconds)) - float(np.min(seconds))
        steps = np.diff(seconds)
    finite = math.isfinite(span)
    if finite and span <= SPAN_MAX:
        return
    if finite and allow_unusual and span <= _NS_SPAN_S:
        return
    steps = np.where(np.isfinite(steps), steps, np.inf)
    worst = int(np.argmax(steps))
    size = f"{span / _YEAR_S:.3g} years" if finite else "beyond any number of years"
    hint = "check that stamp (a wrong date or unit?), or split the log"
    if finite and span <= _NS_SPAN_S:
        hint += f"; pass {UNUSUAL_OPTION} if the record is right"
    raise InputError(
        f"the time stamps span {size}, more than the century a log may span "
        f"(a step of {steps[worst]:.6g} s to this line)",
        path=path,
        line=int(lines[worst + 1]),
        column=column,
        hint=hint,
    )
