"""The time grid of a log: sample interval, missing samples, duplicates, wrap-arounds.

The sample interval tau0 is the median spacing of the time stamps (robust to a
few gaps and glitches). Each step between consecutive stamps is rounded to a
whole number k of tau0: k > 1 means k - 1 missing samples (inserted as NaN gaps),
k = 0 a duplicated or crowded stamp (the first one is kept), and a step off a
whole multiple by more than 10% of tau0 is reported. A time-interval counter
measuring a 1 PPS signal reads modulo its period (1 s), and carrier phase reads
modulo one cycle: a jump of one period (within 10%) is unwrapped.

References
----------
1. W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065 (2008),
   section 5.14 (gaps) and 5.13 (phase wrap and data preprocessing).
2. ITU-T G.810 (1996), section 4 (time interval error sampled at tau0).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import InputError

__all__ = ["Grid", "build_grid", "unwrap"]


@dataclass
class Grid:
    """Where each kept row lands on the uniform grid.

    Attributes
    ----------
    keep
        Boolean mask over the input rows (False for dropped duplicates).
    position
        Grid index of each kept row.
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
        (row index, offset in seconds) pairs.
    """

    keep: np.ndarray
    position: np.ndarray
    size: int
    tau0: float
    median_spacing: float
    gaps: list[tuple[int, int]]
    duplicates: np.ndarray
    off_grid: tuple[np.ndarray, np.ndarray]


#: A grid may hold at most this many missing samples per sample read, and this
#: many in all, before a time stamp is taken for a mistake rather than a pause.
_MAX_GAP_RATIO = 10
_MAX_GAP_SAMPLES = 10_000_000


def _check_grid_size(
    steps: np.ndarray,
    step: float,
    lines: np.ndarray,
    kept_idx: np.ndarray,
    path: str,
    column: str,
) -> None:
    """Refuse a grid made mostly of inserted gaps (a wrong date, a counter reset).

    A single stamp off by years (a typing slip, a GPS week rollover) would
    otherwise ask for hundreds of millions of missing samples.
    """
    rows = kept_idx.size
    missing = int((steps - 1).sum())
    if missing <= _MAX_GAP_SAMPLES or missing <= _MAX_GAP_RATIO * rows:
        return
    worst = int(np.argmax(steps))
    raise InputError(
        f"the time stamps jump forward by {steps[worst] * step:.6g} s "
        f"({int(steps[worst]) - 1} missing samples of {step:g} s) between two rows, "
        f"more than {_MAX_GAP_RATIO} times the {rows} samples read",
        path=path,
        line=int(lines[kept_idx[worst + 1]]),
        column=column,
        hint="check that stamp (a wrong date?), or split the log at the pause",
    )


def build_grid(
    seconds: np.ndarray, lines: np.ndarray, tau0: float | None, path: str, column: str
) -> Grid:
    """Place time stamps (seconds since the first) on a uniform grid.

    Raises
    ------
    InputError
        A stamp earlier than the one before it; fewer than two distinct stamps.
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
    positive = dt[dt > 0]
    if positive.size == 0:
        raise InputError(
            "all time stamps are equal: the sample interval cannot be found",
            path=path,
            column=column,
            hint="pass --tau0",
        )
    median = float(np.median(positive))
    step = tau0 if tau0 is not None else median
    if bool((np.abs(dt - step) <= 0.1 * step).all()):
        # The common case, a log on a clean grid: nothing to insert, drop or report.
        n = seconds.size
        empty = np.zeros(0, dtype=np.int64)
        return Grid(
            keep=np.ones(n, dtype=bool),
            position=np.arange(n, dtype=np.int64),
            size=n,
            tau0=float(step),
            median_spacing=median,
            gaps=[],
            duplicates=empty,
            off_grid=(empty, np.zeros(0)),
        )
    # crowded or duplicated stamps: closer than half a step to the last kept stamp.
    # Greedy keep-first without a loop: a stamp is dropped when its distance to the
    # previous stamp is below half a step (runs of duplicates collapse to the first).
    close = np.concatenate(([False], dt < 0.5 * step))
    keep = ~close
    kept_t = seconds[keep]
    kdt = np.diff(kept_t)
    k = np.rint(kdt / step).astype(np.int64)
    k = np.maximum(k, 1)
    offset = kdt - k * step
    flagged = np.abs(offset) > 0.1 * step
    # a displaced stamp shows twice (off on the way in, back on the way out): report it once
    back_step = np.zeros_like(flagged)
    back_step[1:] = flagged[1:] & flagged[:-1] & (np.abs(offset[1:] + offset[:-1]) <= 0.1 * step)
    off = np.flatnonzero(flagged & ~back_step)
    position = np.empty(kept_t.size, dtype=np.int64)
    position[0] = 0
    np.cumsum(k, out=position[1:])
    kept_idx = np.flatnonzero(keep)
    _check_grid_size(k, step, lines, kept_idx, path, column)
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
    )


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
