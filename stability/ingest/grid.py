"""The time grid of a log: sample interval, missing samples, duplicates, wrap-arounds.

The sample interval tau0 is the median spacing of the time stamps (robust to a
few gaps and glitches), or, where the stamps are too coarse for the median to be
the interval, the mean step to the resolution of the stamps
(:func:`stamp_interval`). Each step between consecutive stamps is rounded to a
whole number k of tau0: k > 1 means k - 1 missing samples (inserted as NaN gaps),
k = 0 two rows in one slot (a duplicate: the first one is kept). A stamp within
the stamp tolerance (a third of tau0 unless given) of its slot is jitter of the
stamping clock: snapped to the slot and counted; one beyond it is reported as
off the grid. A PC that stamps a reading late by more than half tau0 leaves an
empty slot before it and crowds the next row: within the tolerance the pair is
put back in consecutive slots. A time-interval counter
measuring a 1 PPS signal reads modulo its period (1 s), and carrier phase reads
modulo one cycle: a jump of one period (within 10%) is unwrapped.

References
----------
1. W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065 (2008),
   section 5.14 (gaps) and 5.13 (phase wrap and data preprocessing).
2. ITU-T G.810 (1996), section 4 (time interval error sampled at tau0).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from ..units import format_duration
from .limits import BYTES_PER_ROW, UNUSUAL_OPTION, available_bytes, usual_interval

__all__ = ["Grid", "build_grid", "unwrap", "stamp_interval", "DEFAULT_STAMP_TOLERANCE"]


@dataclass
class Grid:
    """Where each kept row lands on the uniform grid.

    Attributes
    ----------
    keep
        Boolean mask over the input rows (False for dropped duplicates).
    position
        Grid index of each kept row, or None when every row has a slot of its own,
        in order (row i in slot i: nothing inserted or dropped).
    size
        Length of the grid.
    tau0
        Sample interval used.
    median_spacing
        Median spacing of the stamps in seconds.
    gaps
        (row index before the gap, missing samples) pairs.
    duplicates
        Row indices dropped as duplicated or crowded stamps.
    off_grid
        (row indices, offsets in seconds) of stamps beyond the tolerance.
    jitter
        (row indices, offsets in seconds) of stamps within the tolerance (snapped).
    ambiguous
        Rows displaced by more than half a step next to an empty slot, beyond the
        tolerance: read as a duplicate and a gap.
    """

    keep: np.ndarray
    position: np.ndarray | None
    size: int
    tau0: float
    median_spacing: float
    gaps: list[tuple[int, int]]
    duplicates: np.ndarray
    off_grid: tuple[np.ndarray, np.ndarray]
    jitter: tuple[np.ndarray, np.ndarray] = (np.zeros(0, np.int64), np.zeros(0))
    ambiguous: int = 0

    @property
    def placed(self) -> int:
        """How many rows are placed on the grid."""
        return self.size if self.position is None else int(self.position.size)


#: A grid may hold at most this many missing samples per sample read (beyond a
#: small allowance, :data:`_GAP_ALLOWANCE`) before a time stamp is taken for a
#: mistake rather than a pause; ``allow_unusual`` lifts it, the memory budget stays.
_MAX_GAP_RATIO = 100
_GAP_ALLOWANCE = 10_000


def _check_grid_size(
    steps: np.ndarray,
    step: float,
    lines: np.ndarray,
    kept_idx: np.ndarray,
    path: str,
    column: str,
    given: bool,
    allow_unusual: bool,
) -> None:
    """Refuse a grid made mostly of inserted gaps (a wrong date, a counter reset).

    ``steps`` are the rounded steps between kept rows in units of ``step``, as
    floats: checked before any conversion to integers, so a jump of 1e25 s is a
    clear message, not an overflow. A single stamp off by years (a typing slip,
    a GPS week rollover) would otherwise ask for hundreds of millions of missing
    samples; a grid beyond the memory available is refused in any case.
    """
    rows = kept_idx.size
    with np.errstate(over="ignore", invalid="ignore"):
        missing = float(np.sum(np.maximum(steps - 1.0, 0.0)))
    free = available_bytes()
    size = rows + missing
    beyond_memory = not math.isfinite(size) or (free is not None and size * BYTES_PER_ROW > free)
    mostly_gap = missing > _MAX_GAP_RATIO * rows and missing > _GAP_ALLOWANCE
    if not (beyond_memory or (mostly_gap and not allow_unusual)):
        return
    worst = int(np.argmax(np.where(np.isfinite(steps), steps, np.inf)))
    if given and missing > _MAX_GAP_RATIO * rows and float(np.median(steps)) > 2.0:
        raise InputError(
            f"tau0 {step:g} s as given is far shorter than the spacing of the time stamps "
            f"(typically {float(np.median(steps)) * step:.6g} s): the grid would hold "
            f"{missing:.3g} missing samples for {rows} readings",
            path=path,
            column=column,
            hint="pass the interval between rows as --tau0, or leave it out to take the "
            "spacing of the stamps",
        )
    what = (
        f"the time stamps jump forward by {steps[worst] * step:.6g} s "
        f"({steps[worst] - 1:.6g} missing samples of {step:g} s) between two rows; "
        f"the grid would hold {missing:.3g} missing samples for {rows} readings read"
    )
    if beyond_memory:
        what += ", more than the memory available"
        hint = "check that stamp (a wrong date?), or split the log at the pause"
    else:
        what += f", more than {_MAX_GAP_RATIO} times as many"
        hint = (
            "check that stamp (a wrong date?), or split the log at the pause; pass "
            f"{UNUSUAL_OPTION} to read it with the gap"
        )
    raise InputError(
        what, path=path, line=int(lines[kept_idx[worst + 1]]), column=column, hint=hint
    )


#: Default stamp tolerance: a stamp within this fraction of tau0 of its slot is jitter.
DEFAULT_STAMP_TOLERANCE = 1.0 / 3.0
#: Offsets below this fraction of tau0 are the rounding of written stamps, not jitter.
_JITTER_FLOOR = 1e-3


def _repair_displaced(k: np.ndarray, dt: np.ndarray, step: float, tol: float) -> int:
    """Put back stamps displaced by more than half a step but within the tolerance (in place).

    A stamp written late by more than half a step leaves an empty slot before
    it and crowds the next row into its slot: the steps round to (2, 0). One
    written early gives (0, 2). When the displacement is within the tolerance
    and the two rows belong in consecutive slots, the steps become (1, 1).
    Returns how many such pairs were left because the displacement exceeds the
    tolerance.
    """
    if k.size < 2:
        return 0
    late = (k[:-1] >= 2) & (k[1:] == 0)
    early = (k[:-1] == 0) & (k[1:] >= 2)
    if not (late.any() or early.any()):
        return 0
    late_by = dt[:-1] - (k[:-1] - 1) * step  # how far past its slot the late stamp is
    early_by = step - dt[:-1]  # how far before its slot the early stamp is
    fix_late = np.flatnonzero(late & (late_by <= tol))
    fix_early = np.flatnonzero(early & (early_by <= tol))
    k[fix_late] -= 1
    k[fix_late + 1] = 1
    k[fix_early] = 1
    k[fix_early + 1] -= 1
    return int(late.sum() + early.sum() - fix_late.size - fix_early.size)


def build_grid(
    seconds: np.ndarray,
    lines: np.ndarray,
    tau0: float | None,
    path: str,
    column: str,
    tolerance: float = DEFAULT_STAMP_TOLERANCE,
    allow_unusual: bool = False,
) -> Grid:
    """Place time stamps (seconds since the first) on a uniform grid.

    Each row goes to the slot its step from the previous kept row rounds to, so
    slow drift of the stamping clock never accumulates. A stamp within
    ``tolerance * tau0`` of its slot is jitter (snapped, counted); beyond it the
    row is reported as off the grid. Two rows in one slot are duplicates (the
    first is kept).

    Raises
    ------
    InputError
        A stamp earlier than the one before it; fewer than two distinct stamps;
        stamps spaced by less than 1 ns or more than a day (unless
        ``allow_unusual``); a grid mostly made of gaps (unless ``allow_unusual``)
        or beyond the memory available; a given ``tau0`` so much longer than the
        spacing of the stamps that most rows would share a slot.
    """
    dt = np.diff(seconds)
    back = np.flatnonzero(dt < 0)
    if back.size:
        i = int(back[0]) + 1
        raise InputError(
            f"time goes backward by {-dt[back[0]]:.6g} s",
            path=path,
            line=int(lines[i]),
            column=column,
            hint="sort the log by time or remove the out-of-order rows",
        )
    low, high = (float(dt.min()), float(dt.max())) if dt.size else (0.0, 0.0)
    positive = dt if low > 0 else dt[dt > 0]
    if positive.size == 0:
        raise InputError(
            "all time stamps are equal: the sample interval cannot be found",
            path=path,
            column=column,
            hint="pass --tau0",
        )
    median = _median(positive)
    if tau0 is None and not allow_unusual and not usual_interval(median):
        raise _unusual_spacing(median, positive, dt, lines, path, column)
    step = tau0 if tau0 is not None else stamp_interval(median, dt)
    tol = tolerance * step
    n = seconds.size
    # |dt - step| < step / 2 for every step when it holds for the extremes (the
    # rounded difference never reverses the order of two steps)
    if abs(low - step) < 0.5 * step and abs(high - step) < 0.5 * step:
        # The common case, every step rounds to one slot: nothing to insert or drop.
        offset = np.subtract(dt, step, out=dt)  # dt is not needed again
        del dt, positive
        jitter, off = _displaced(offset, step, tol)
        return Grid(
            keep=np.ones(n, dtype=bool),
            position=None,
            size=n,
            tau0=float(step),
            median_spacing=median,
            gaps=[],
            duplicates=np.zeros(0, dtype=np.int64),
            off_grid=(off + 1, offset[off]),
            jitter=(jitter + 1, offset[jitter]),
        )
    with np.errstate(over="ignore", invalid="ignore"):
        slots = np.rint(dt / step)  # float: checked before any integer conversion
    _check_grid_size(
        slots, step, lines, np.arange(n), path, column, tau0 is not None, allow_unusual
    )
    k = slots.astype(np.int64)
    ambiguous = _repair_displaced(k, dt, step, tol)
    # two rows in one slot: a row whose step rounds to zero is a duplicate (runs
    # of duplicates collapse to the first)
    close = np.concatenate(([False], k == 0))
    keep = ~close
    kept_idx = np.flatnonzero(keep)
    if tau0 is not None and close.sum() > n // 2:
        raise InputError(
            f"tau0 {format_duration(tau0)} as given is longer than the spacing of the time "
            f"stamps (median {format_duration(median)}): {int(close.sum())} of {n} rows "
            "would share a slot with the row before and be dropped",
            path=path,
            column=column,
            hint="pass the interval between rows as --tau0, or leave it out to take the "
            "spacing of the stamps; --average N averages N samples",
        )
    if close.any():
        kept_t = seconds[keep]
        kdt = np.diff(kept_t)
        k = np.maximum(np.rint(kdt / step).astype(np.int64), 0)
        _repair_displaced(k, kdt, step, tol)
        k = np.maximum(k, 1)
    else:
        kdt = dt
    offset = kdt - k * step
    jitter, off = _displaced(offset, step, tol)
    position = np.empty(kept_idx.size, dtype=np.int64)
    position[0] = 0
    np.cumsum(k, out=position[1:])
    gap_at = np.flatnonzero(k > 1)
    gaps = [(int(kept_idx[g]), int(k[g] - 1)) for g in gap_at[:1000]]
    if gap_at.size > 1000:
        gaps.append((-1, int((k[gap_at[1000:]] - 1).sum())))
    return Grid(
        keep=keep,
        position=position,
        size=int(position[-1]) + 1,
        tau0=float(step),
        median_spacing=median,
        gaps=gaps,
        duplicates=np.flatnonzero(close),
        off_grid=(kept_idx[off + 1], offset[off]),
        jitter=(kept_idx[jitter + 1], offset[jitter]),
        ambiguous=ambiguous,
    )


def stamp_interval(median: float, dt: np.ndarray) -> float:
    """The sample interval the stamps tell, to the resolution they are written with.

    A median spacing written with at most six significant digits (1 s, 0.1 s,
    1.000512 s) is the interval, cleared of binary rounding (0.1000000000000014
    is 0.1): a slow PC clock with millisecond stamps still gives its 1 s. But
    the median of coarse stamps is one rounded step, not the interval: stamps
    written with 8 decimals of a day (0.864 ms) one second apart are 0.99965 s
    or 1.00051 s apart. Then the mean over the steps of one slot averages the
    rounding out, and is snapped to the value with the fewest significant digits
    within its uncertainty (the spread of the steps over the square root of
    their number), so such stamps give 1 s.
    """
    clean = float(f"{median:.6g}")
    if abs(clean - median) <= 1e-12 * median:
        return clean
    one = dt[np.abs(dt - median) < 0.5 * median]
    if one.size < 2:
        return median
    mean = float(one.mean())
    spread = float(one.max() - one.min())
    tolerance = max(spread / math.sqrt(one.size), 4 * np.finfo(float).eps * mean)
    for digits in range(1, 16):
        rounded = float(f"{mean:.{digits}g}")
        if abs(rounded - mean) <= tolerance:
            return rounded
    return mean


def _unusual_spacing(
    median: float,
    positive: np.ndarray,
    dt: np.ndarray,
    lines: np.ndarray,
    path: str,
    column: str,
) -> InputError:
    """The error for stamps spaced by less than 1 ns or more than one day."""
    side = "less than 1 ns" if median < 1.0 else "more than one day"
    first = int(np.flatnonzero(dt == positive[0])[0]) + 1 if positive.size else 1
    return InputError(
        f"the time stamps lie {format_duration(median)} apart (median spacing), {side}: "
        "outside the usual sample intervals of a log (1 ns to 1 day)",
        path=path,
        line=int(lines[first]),
        column=column,
        hint="check the unit of the time column (a header such as 'elapsed_ms' names it), "
        f"or pass {UNUSUAL_OPTION} if the spacing is right",
    )


def _median(values: np.ndarray) -> float:
    """``np.median(values)`` of finite values, without sorting a copy when it can.

    Stamps a fixed interval apart give steps of a few distinct values (the
    rounding of the seconds). The median of a sample of the steps is taken as a
    candidate and confirmed by counting: when both middle ranks of the sorted
    steps hold exactly that value, it is the median (the mean of two equal
    middle values is that value). Otherwise the full median is computed.
    """
    n = values.size
    if n > 1 << 16:
        guess = np.median(values[:: n // (1 << 14)])
        below = int(np.count_nonzero(values < guess))
        equal = int(np.count_nonzero(values == guess))
        middle = ((n - 1) // 2, n // 2)  # the middle rank(s), 0-based
        if all(below <= r < below + equal for r in middle):
            return float(guess)
    return float(np.median(values))


def _displaced(offset: np.ndarray, step: float, tol: float) -> tuple[np.ndarray, np.ndarray]:
    """Steps whose stamp is off its slot: (within the tolerance, beyond it).

    A displaced stamp shows twice (off on the way in, back on the way out); it
    is counted once, at the row that is off.
    """
    if not offset.size or max(-float(offset.min()), float(offset.max())) <= _JITTER_FLOOR * step:
        empty = np.zeros(0, dtype=np.int64)
        return empty, empty  # nothing flagged: no array of the log's length
    size = np.abs(offset)
    flagged = size > _JITTER_FLOOR * step
    if not flagged.any():
        empty = np.zeros(0, dtype=np.int64)
        return empty, empty
    back_step = np.zeros_like(flagged)
    back_step[1:] = (
        flagged[1:] & flagged[:-1] & (np.abs(offset[1:] + offset[:-1]) <= _JITTER_FLOOR * step)
    )
    shown = flagged & ~back_step
    return np.flatnonzero(shown & (size <= tol)), np.flatnonzero(shown & (size > tol))


def unwrap(values: np.ndarray, period: float) -> tuple[np.ndarray, np.ndarray]:
    """Remove jumps of one period (within 10%) between consecutive finite readings.

    Returns the unwrapped values and the indices of the readings after each jump.
    """
    finite = np.flatnonzero(np.isfinite(values))
    if finite.size < 2:
        return values, np.empty(0, dtype=np.int64)
    d = np.diff(values[finite])
    wrap = np.abs(np.abs(d) - period) <= 0.1 * period
    if not wrap.any():
        return values, np.empty(0, dtype=np.int64)
    correction = np.zeros(finite.size)
    correction[1:] = np.cumsum(np.where(wrap, -np.sign(d) * period, 0.0))
    out = values.copy()
    out[finite] = values[finite] + correction
    return out, finite[1:][wrap]
