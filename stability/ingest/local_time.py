"""Local time stamps: read them in a named zone, or refuse a daylight-saving jump.

A PC program often writes its clock's local time without a zone. Across a
daylight-saving change such stamps jump forward by an hour (an hour that never
happened) or step back by an hour (an hour written twice). Read as UTC, the
forward jump becomes 3600 missing samples and the backward step a "time goes
backward" error.

With ``timezone=ZONE`` (an IANA name such as ``Europe/Berlin``) stamps without
a zone are read as local time in that zone and converted to UTC; the hour
written twice is resolved by row order (rows before the backward step are
daylight-saving time, rows after it standard time). Without it, a one-hour
step of the stamps at a plausible daylight-saving change is an
:class:`~stability.errors.InputError` that names ``--timezone``.

The rule for "plausible": the step is one hour plus or minus one tau0 (within
half a tau0), and the local time before it falls on a Sunday between 00:00 and
04:00. Every daylight-saving rule in use changes clocks on a Sunday night
(EU: last Sunday of March and October, 01:00 UTC; USA and Canada: second Sunday
of March and first Sunday of November, 02:00 local; Australia and New Zealand:
first Sunday of April and October, last Sunday of September; common practice).

References
----------
1. IANA Time Zone Database (tz database), https://www.iana.org/time-zones.
2. Directive 2000/84/EC of the European Parliament on summer-time arrangements.
3. Energy Policy Act of 2005, section 110 (USA daylight-saving dates).
"""

from __future__ import annotations

from datetime import datetime, timedelta
from zoneinfo import ZoneInfo, ZoneInfoNotFoundError

import numpy as np
import pandas as pd

from ..errors import InputError

__all__ = ["check_zone", "localize", "daylight_saving_step"]

_HOUR = 3600.0


def check_zone(name: str) -> str:
    """The zone name, once it is known to the time-zone database.

    Raises
    ------
    InputError
        Not a known IANA zone name.
    """
    text = str(name).strip()
    try:
        ZoneInfo(text)
    except (ZoneInfoNotFoundError, ValueError, TypeError):
        raise InputError(
            f"unknown time zone {name!r}",
            hint="pass --timezone with an IANA name such as Europe/Berlin, America/New_York or UTC",
        ) from None
    return text


def localize(ticks: np.ndarray, lines: np.ndarray, zone: str, path: str, column: str) -> np.ndarray:
    """Naive local stamps (int64 ns as if UTC) read in ``zone``, as int64 ns UTC.

    The hour written twice at the end of daylight-saving time is resolved by
    row order: within each run of such rows, rows before the first backward
    step of the stamps are daylight-saving time, the rest standard time.

    Raises
    ------
    InputError
        A stamp names a local time that does not exist in the zone (the hour
        skipped when clocks go forward): the zone is not the clock's.
    """
    idx = pd.DatetimeIndex(ticks.view("datetime64[ns]"))
    n = ticks.size
    summer = idx.tz_localize(zone, ambiguous=np.ones(n, dtype=bool), nonexistent="NaT")
    winter = idx.tz_localize(zone, ambiguous=np.zeros(n, dtype=bool), nonexistent="NaT")
    missing = np.flatnonzero(summer.isna())
    if missing.size:
        i = int(missing[0])
        raise InputError(
            f"local time {idx[i]} does not exist in {zone} (clocks jump forward over it)",
            path=path,
            line=int(lines[i]),
            column=column,
            hint="check --timezone: the stamps are not local time of that zone",
        )
    a = summer.asi8
    b = winter.asi8
    twice = a != b
    if not twice.any():
        return a
    back = np.concatenate(([0], (np.diff(ticks) < 0).astype(np.int64)))
    passed = np.cumsum(back)
    starts = np.flatnonzero(twice & ~np.concatenate(([False], twice[:-1])))
    is_start = np.zeros(n, dtype=bool)
    is_start[starts] = True
    run = np.cumsum(is_start) - 1  # index of the run of twice-written rows each row is in
    first_pass = passed == passed[starts][np.maximum(run, 0)]
    return np.where(twice & ~first_pass, b, a)


def daylight_saving_step(
    seconds: np.ndarray, start: datetime, tau0: float | None
) -> tuple[int, float] | None:
    """The first one-hour step of naive stamps at a plausible daylight-saving change.

    Parameters
    ----------
    seconds
        Stamps in seconds since the first one.
    start
        The first stamp (naive local time).
    tau0
        The sample interval if given, else None (the median spacing is used).

    Returns
    -------
    (row, jump) or None
        The row after the step and the jump in seconds (+3600 or -3600).
    """
    dt = np.diff(seconds)
    if not np.any(np.abs(np.abs(dt) - _HOUR) < _HOUR / 2):
        return None  # the usual case: no step near an hour
    positive = dt[dt > 0]
    step = tau0 if tau0 is not None else float(np.median(positive)) if positive.size else 0.0
    if not 0 < step < _HOUR / 2:
        return None
    near = np.flatnonzero(
        (np.abs(dt - _HOUR - step) <= 0.5 * step) | (np.abs(dt + _HOUR - step) <= 0.5 * step)
    )
    for i in near[:100]:  # only the few one-hour steps
        before = start + timedelta(seconds=float(seconds[i]))
        if before.weekday() == 6 and before.hour < 4:
            return int(i) + 1, (_HOUR if dt[i] > 0 else -_HOUR)
    return None
