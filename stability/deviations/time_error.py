"""Time-error statistics: maximum time interval error (MTIE) and TIE rms.

MTIE at observation interval n*tau0 is the largest peak-to-peak phase
excursion inside any window of n + 1 consecutive samples. Window extremes come
from a sparse table of power-of-two window maxima and minima (Bregni's
doubling, ref. 2): a window of L samples is covered by two windows of 2**k
samples, k = floor(log2 L), that overlap, so the window starting at i spans
max(M_k[i], M_k[i + L - 2**k]) - min(...). Windows are taken in ascending
order; only the current level M_k is kept and is raised to the next level in
place. Each observation interval costs O(N) whatever its size.

Measured choice (``tests/benchmarks/bench_time_error.py``; 10**6 points, 109
log-spaced windows, one core): the in-place sparse table takes 3.7 ns per
sample per window with a peak of 2.07 times the input's memory (the two
levels, maxima and minima, plus cache-sized blocks), where
``scipy.ndimage.maximum_filter1d``/``minimum_filter1d`` (van Herk/Gil-Werman)
take 58 ns per sample per window and 3.0 times the input: the table's
extremes are shared by every window of one octave, the filters start again
for each window.

References
----------
1. ITU-T Recommendation G.810 (1996), definitions 4.5.13 (TIE) and
   appendix II.5 (MTIE).
2. S. Bregni, "Fast algorithms for TVAR and MTIE computation in
   characterization of network synchronization performance", Proc. IEEE ICC
   (1998); S. Bregni, *Synchronization of Digital Telecommunications
   Networks*, Wiley (2002), chapter 5.
3. W. J. Riley, NIST SP 1065 (2008), section 5.2.15 (MTIE) and 5.2.16 (TIE rms).
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from typing import NamedTuple

import numpy as np

from ._kernels import dot

__all__ = ["mtie", "tie_rms", "mtie_many", "mtie_windows", "MtieWindow"]

#: Samples per block of the in-place raise and of a window's query: cache-sized
#: pieces, so no step allocates an array of the data's length.
_BLOCK = 1 << 14


class MtieWindow(NamedTuple):
    """MTIE at one observation interval and where the worst window lies."""

    value: float  # seconds; NaN when no window avoids a gap
    windows: int  # windows used (those touching no gap)
    start: int  # index of the first sample of the worst window (-1: none)


class _WindowExtremes:
    """Maxima and minima over sliding windows of 2**level samples, raised in place.

    Holds two arrays of the input's length (the peak memory of a sweep);
    ``hi[i]``/``lo[i]`` are the extremes of ``x[i : i + 2**level]`` for
    ``i < n - 2**level + 1``.
    """

    def __init__(self, x: np.ndarray) -> None:
        self.n = x.size
        self.hi = np.array(x, dtype=np.float64, copy=True)
        self.lo = np.array(x, dtype=np.float64, copy=True)
        self.level = 0

    def raise_to(self, k: int) -> None:
        hi, lo = self.hi, self.lo
        while self.level < k:
            h = 1 << self.level
            valid = self.n - 2 * h + 1
            # forward in blocks: block [s, e) reads [s + h, e + h), not yet raised
            for s in range(0, valid, _BLOCK):
                e = min(s + _BLOCK, valid)
                np.maximum(hi[s:e], hi[s + h : e + h], out=hi[s:e])
                np.minimum(lo[s:e], lo[s + h : e + h], out=lo[s:e])
            self.level += 1


def _sweep_one(
    table: _WindowExtremes,
    length: int,
    seg: np.ndarray | None,
    gappy: bool,
    buffers: tuple[np.ndarray, np.ndarray],
) -> MtieWindow:
    k = length.bit_length() - 1
    table.raise_to(k)
    hi, lo = table.hi, table.lo
    count = table.n - length + 1
    shift = length - (1 << k)
    best, best_block, used = -math.inf, -1, 0
    b1, b2 = buffers
    for s in range(0, count, _BLOCK):
        e = min(s + _BLOCK, count)
        w = e - s
        span = np.maximum(hi[s:e], hi[s + shift : e + shift], out=b1[:w])
        np.subtract(span, np.minimum(lo[s:e], lo[s + shift : e + shift], out=b2[:w]), out=span)
        if gappy:
            bad = np.isnan(span)
            if seg is not None:
                bad |= seg[s:e] != seg[s + length - 1 : e + length - 1]
            span[bad] = -math.inf
            used += w - int(np.count_nonzero(bad))
        else:
            used += w
        top = float(span.max())
        if top > best:
            best, best_block = top, s
    if used == 0 or best_block < 0:
        return MtieWindow(math.nan, 0, -1)
    # locate the worst window inside its block only, in the same buffers
    s, e = best_block, min(best_block + _BLOCK, count)
    span = np.maximum(hi[s:e], hi[s + shift : e + shift], out=b1[: e - s])
    np.subtract(span, np.minimum(lo[s:e], lo[s + shift : e + shift], out=b2[: e - s]), out=span)
    if gappy:
        bad = np.isnan(span)
        if seg is not None:
            bad |= seg[best_block:e] != seg[best_block + length - 1 : e + length - 1]
        span[bad] = -math.inf
    return MtieWindow(best, used, best_block + int(np.argmax(span)))


def mtie_windows(
    x: np.ndarray, ms: Iterable[int], seg: np.ndarray | None = None
) -> list[MtieWindow]:
    """MTIE and the worst window for each observation interval m*tau0 (any order of m).

    Windows touching a NaN sample or spanning a segment change (a frequency gap)
    are left out; ``windows`` counts those used. One sweep in ascending m.
    """
    x = np.asarray(x, dtype=np.float64)
    ms = [int(m) for m in ms]
    out = [MtieWindow(math.nan, 0, -1)] * len(ms)
    valid = [i for i, m in enumerate(ms) if 1 <= m < x.size]
    if not valid:
        return out
    gappy = seg is not None or bool(np.isnan(x).any())
    table = _WindowExtremes(x)
    buffers = (np.empty(min(_BLOCK, x.size)), np.empty(min(_BLOCK, x.size)))
    for i in sorted(valid, key=lambda j: ms[j]):
        out[i] = _sweep_one(table, ms[i] + 1, seg, gappy, buffers)
    return out


def mtie_many(
    x: np.ndarray, tau0: float, ms: Iterable[int], seg: np.ndarray | None = None
) -> list[tuple[float, int]]:
    """MTIE for several observation intervals m*tau0 at once: (seconds, windows) each."""
    return [(w.value, w.windows) for w in mtie_windows(x, ms, seg)]


def mtie(x: np.ndarray, tau0: float, m: int, seg: np.ndarray | None = None) -> tuple[float, int]:
    """MTIE at interval m*tau0 (windows of m + 1 samples); returns (seconds, windows)."""
    return mtie_many(x, tau0, [m], seg)[0]


def tie_rms(x: np.ndarray, tau0: float, m: int, seg: np.ndarray | None = None) -> tuple[float, int]:
    """TIE rms: sqrt(mean((x_{i+m} - x_i)^2)) over the differences that avoid gaps."""
    if m < 1 or m >= x.size:
        return math.nan, 0
    d = x[m:] - x[:-m]
    if seg is not None:
        d[seg[m:] != seg[:-m]] = np.nan
    good = d[~np.isnan(d)]
    if good.size == 0:
        return math.nan, 0
    return math.sqrt(dot(good, good) / good.size), int(good.size)
