"""Time-error statistics: maximum time interval error (MTIE) and TIE rms.

MTIE at observation interval n*tau0 is the largest peak-to-peak phase
excursion inside any window of n + 1 consecutive samples. Window extremes come
from a sparse table of power-of-two window maxima and minima, raised one level
at a time: a window of L samples is covered by two windows of 2**k samples,
k = floor(log2 L), that overlap. Each observation interval costs O(N), and
memory stays at a few arrays of the input's size.

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

import numpy as np

from ._kernels import dot

__all__ = ["mtie", "tie_rms", "mtie_many"]


class _WindowExtremes:
    """Maxima and minima over sliding windows of any length, raised by doubling."""

    def __init__(self, x: np.ndarray, seg: np.ndarray | None) -> None:
        self.x = x
        self.level = 0  # windows of 2**level samples
        self.hi = x
        self.lo = x
        self.seg = seg

    def _raise_to(self, k: int) -> None:
        while self.level < k:
            h = 1 << self.level
            self.hi = np.maximum(self.hi[:-h], self.hi[h:])
            self.lo = np.minimum(self.lo[:-h], self.lo[h:])
            self.level += 1

    def spans(self, length: int) -> np.ndarray:
        """Peak-to-peak over every window of ``length`` samples; NaN where a gap is touched."""
        k = length.bit_length() - 1
        self._raise_to(k)
        count = self.x.size - length + 1
        shift = length - (1 << k)
        hi = np.maximum(self.hi[:count], self.hi[shift : shift + count])
        lo = np.minimum(self.lo[:count], self.lo[shift : shift + count])
        out = hi - lo
        if self.seg is not None:
            out[self.seg[:count] != self.seg[length - 1 : length - 1 + count]] = np.nan
        return out


def mtie_many(
    x: np.ndarray, tau0: float, ms: Iterable[int], seg: np.ndarray | None = None
) -> list[tuple[float, int]]:
    """MTIE for several observation intervals m*tau0 at once (ascending m is cheapest)."""
    ms = list(ms)
    order = sorted(range(len(ms)), key=lambda k: ms[k])
    table = _WindowExtremes(np.asarray(x, dtype=np.float64), seg)
    out: list[tuple[float, int]] = [(math.nan, 0)] * len(ms)
    for k in order:
        m = ms[k]
        if m < 1 or m + 1 > x.size:
            continue
        spans = table.spans(m + 1)
        good = spans[~np.isnan(spans)]
        out[k] = (float(good.max()), int(good.size)) if good.size else (math.nan, 0)
    return out


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
