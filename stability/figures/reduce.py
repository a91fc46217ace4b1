"""Drawing long records light: min/max envelopes and merged gap spans.

Records longer than a few thousand samples are drawn through the minimum and
maximum of each pixel column, in time order (:func:`envelope`), so that every
excursion stays visible while the figure stays light [1]_; many short gaps
are shaded as at most a given number of spans (:func:`gap_runs`). The phase drawn
from frequency (:func:`joined_phase`) and its residual from a line
(:func:`without_line`) are built in place, so a long record is not copied.

References
----------
.. [1] S. Steinarsson, *Downsampling Time Series for Visual Representation*,
   MSc thesis, University of Iceland (2013), section 3 (min-max per bucket).
"""

from __future__ import annotations

import math

import numpy as np

__all__ = ["envelope", "gap_runs", "runs", "joined_phase", "without_line"]


#: Bytes of a group of buckets masked at once by :func:`envelope`.
_ROWS_BYTES = 1 << 22


def envelope(values: np.ndarray, columns: int) -> tuple[np.ndarray, np.ndarray]:
    """Indices and values of a min/max decimation of ``values`` into ``columns`` buckets.

    Each bucket of consecutive samples contributes its minimum and its maximum,
    in the order they occur, followed by a NaN break when the bucket or the
    next one holds a missing sample, so the drawn line never bridges a gap.
    The result is a subsequence of the data (plus NaN breaks): every drawn
    point is a real sample, and every bucket's full range is drawn [1]_.

    Returns
    -------
    index, value
        Float sample indices (NaN at breaks) and values, ready for plotting.
    """
    values = np.asarray(values, dtype=float)
    n = values.size
    columns = max(1, int(columns))
    block = max(1, math.ceil(n / columns))
    n_blocks = math.ceil(n / block)
    has_missing = bool(np.isnan(values).any())
    whole = n // block  # full buckets, read as a view; a short last one is filled up with
    # NaN, or with its last sample when none is missing (argmin and argmax take the first
    # of equal values: a real sample)
    parts = [_extremes(values[: whole * block].reshape(whole, block), has_missing)]
    if whole < n_blocks:
        last = np.full((1, block), np.nan if has_missing else values[-1])
        last[0, : n - whole * block] = values[whole * block :]
        parts.append(_extremes(last, has_missing))
    any_missing, all_missing, i_min, i_max = (np.concatenate(a) for a in zip(*parts, strict=True))
    if has_missing:
        any_missing[-1] = np.isnan(values[(n_blocks - 1) * block :]).any()
    rows = np.arange(n_blocks)
    first = np.minimum(i_min, i_max)
    second = np.maximum(i_min, i_max)
    base = rows * block
    idx = np.empty((n_blocks, 3))
    val = np.empty((n_blocks, 3))
    idx[:, 0] = base + first
    idx[:, 1] = base + second
    val[:, 0] = values[base + first]
    val[:, 1] = values[base + second]
    brk = any_missing | np.concatenate([any_missing[1:], [False]])
    idx[:, 2] = np.where(brk, np.nan, idx[:, 1])
    val[:, 2] = np.where(brk, np.nan, val[:, 1])
    val[all_missing, :2] = np.nan
    return idx.ravel(), val.ravel()


def _extremes(
    blocks: np.ndarray, has_missing: bool
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Per bucket (row): any missing, all missing, position of the minimum and the maximum.

    Missing samples are never chosen; buckets are masked in groups, so the masked
    copies stay small.
    """
    count = blocks.shape[0]
    if not has_missing:
        none = np.zeros(count, dtype=bool)
        return none, none, np.argmin(blocks, axis=1), np.argmax(blocks, axis=1)
    any_missing, all_missing = np.empty(count, bool), np.empty(count, bool)
    i_min, i_max = np.empty(count, np.int64), np.empty(count, np.int64)
    rows_at_once = max(1, _ROWS_BYTES // (8 * max(1, blocks.shape[1])))
    for lo in range(0, count, rows_at_once):  # loop over groups of buckets
        part = blocks[lo : lo + rows_at_once]
        missing = np.isnan(part)
        hi = lo + part.shape[0]
        any_missing[lo:hi], all_missing[lo:hi] = missing.any(axis=1), missing.all(axis=1)
        i_min[lo:hi] = np.argmin(np.where(missing, np.inf, part), axis=1)
        i_max[lo:hi] = np.argmax(np.where(missing, -np.inf, part), axis=1)
    return any_missing, all_missing, i_min, i_max


def gap_runs(mask: np.ndarray, max_runs: int) -> np.ndarray:
    """(k, 2) array of [start, stop) sample ranges where ``mask`` is true.

    More than ``max_runs`` runs are merged per bucket of samples, so that a
    record with many short gaps is shaded with at most about that many spans.
    """
    if not mask.any():
        return np.empty((0, 2), dtype=np.int64)
    found = runs(mask)
    if len(found) > max_runs:
        block = math.ceil(mask.size / max_runs)
        n_blocks = math.ceil(mask.size / block)
        padded = np.zeros(n_blocks * block, dtype=bool)
        padded[: mask.size] = mask
        found = np.minimum(runs(padded.reshape(n_blocks, block).any(axis=1)) * block, mask.size)
    return found


def runs(mask: np.ndarray) -> np.ndarray:
    """(k, 2) array of [start, stop) index ranges where ``mask`` is true."""
    edges = np.diff(np.concatenate([[0], mask.astype(np.int8), [0]]))
    return np.column_stack([np.flatnonzero(edges == 1), np.flatnonzero(edges == -1)])


def joined_phase(
    y: np.ndarray, tau0: float, missing: np.ndarray, centre: float | None = None
) -> np.ndarray:
    """Phase integrated from frequency less ``centre`` (default its mean), from zero.

    A missing frequency sample adds nothing, so the record joins up across
    segment breaks (phase steps and outliers cut out); phase samples that are
    themselves missing stay missing.
    """
    good = np.isfinite(y)
    whole = bool(good.all())
    if centre is None:
        centre = float(np.mean(y if whole else y[good])) if good.any() else 0.0
    # x[1:] = cumsum(where(good, y - centre, 0) * tau0), built in place
    x = np.empty(y.size + 1)
    x[0] = 0.0
    steps = np.subtract(y, centre, out=x[1:])
    if not whole:
        steps[~good] = 0.0
    steps *= tau0
    np.cumsum(steps, out=steps)
    x[missing] = np.nan
    return x


def without_line(phase: np.ndarray) -> tuple[np.ndarray, float]:
    """Phase minus its least-squares line, and the line's slope (the frequency offset part).

    ``phase`` (a temporary of the caller) is overwritten with the result.
    """
    k = np.arange(phase.size, dtype=float)
    good = np.isfinite(phase)
    whole = bool(good.all())
    if int(np.count_nonzero(good)) < 2:
        return phase - np.nanmean(phase), 0.0
    kk, xx = (k, phase) if whole else (k[good], phase[good])
    del good
    k_mean, x_mean = kk.mean(), xx.mean()
    dk = np.subtract(kk, k_mean, out=kk if whole else None)  # every k used: k itself centred
    centred = xx - x_mean
    # einsum, not np.dot: 1-D dot goes to a threaded BLAS (see deviations._kernels.dot)
    slope = float(np.einsum("i,i->", dk, centred) / np.einsum("i,i->", dk, dk))
    del centred, kk, xx
    line = dk if whole else np.subtract(k, k_mean)  # k - mean(k), as centred above
    del k
    line *= slope
    line += x_mean  # x_mean + slope * (k - mean(k)), in place
    return np.subtract(phase, line, out=phase), slope
