"""Theo1, its bias-removed form TheoBR and the hybrid ThêoH.

Theo1 is a two-sample variance built from every pair of phase differences
symmetric about the centre of a window of m + 1 samples (m even); it reaches
tau = 0.75 m tau0 up to three quarters of the record and has many more degrees
of freedom than the Allan variance at long tau. TheoBR removes its bias
relative to the Allan variance with a ratio measured on the data themselves,
and ThêoH uses the Allan variance at short tau and TheoBR at long tau.

Evaluation: for each tau the sums over delta (m/2 values) run in blocks of
a few thousand delta values at once with the window sums as 2-D arrays; no
Python loop touches single samples.

References
----------
1. D. A. Howe, T. K. Peppler, "Very long-term frequency stability: estimation
   using a special-purpose statistic", Proc. 2003 IEEE IFCS, 233-238.
2. D. A. Howe, T. N. Tasset, "Theo1: characterization of very long-term
   frequency stability", Proc. 18th EFTF (2004).
3. D. A. Howe, J. A. Taylor, T. N. Tasset, "ThêoH bias-removal method",
   Proc. 2006 IEEE IFCS (TheoBR and ThêoH).
4. J. A. Taylor, D. A. Howe, "Fast TheoBR: a method for long data set
   stability analysis", IEEE Trans. UFFC 57 (2010) 2091-2094.
5. W. J. Riley, NIST SP 1065 (2008), sections 5.2.12-5.2.14 (eq. 30: Theo1,
   eq. 31: TheoBR, eq. 32: ThêoH):
   Theo1(m tau0, N) = 1/(0.75 (N - m)(m tau0)^2) sum_{i=1}^{N-m}
   sum_{d=0}^{m/2-1} [(x_i - x_{i-d+m/2}) + (x_{i+m} - x_{i+d+m/2})]^2 / (m/2 - d),
   TheoBR = [1/(n+1) sum_{i=0}^{n} AVAR(m = 9 + 3i) / Theo1(m = 12 + 4i)] Theo1,
   n = floor(0.1 N / 3 - 3); ThêoH = AVAR for tau <= 10 % of the record,
   TheoBR beyond.
"""

from __future__ import annotations

import hashlib
import math

import numpy as np
from numpy.lib.stride_tricks import sliding_window_view

from ..errors import AnalysisError
from ._kernels import dot, is_unbroken
from .allan import oadev

__all__ = ["theo1", "theobr", "theoh", "theo1_variance", "theobr_ratio", "theoh_uses_allan"]

#: Elements per 2-D block of the delta sums.
_BLOCK = 1 << 17


def theo1_variance(
    x: np.ndarray, tau0: float, m: int, seg: np.ndarray | None = None
) -> tuple[float, int]:
    """Theo1 variance at tau = 0.75 m tau0 (m even, 2 <= m <= N - 1).

    Returns (variance, terms used), the terms being the (i, delta) pairs of
    the double sum. Terms that touch a NaN sample or span a frequency gap are
    dropped and each delta sum is normalised by the terms it kept.
    """
    n = x.size
    if m < 2 or m % 2 or m > n - 1:
        return math.nan, 0
    h = m // 2
    count = n - m
    tau_m = m * tau0
    unbroken = is_unbroken(x, seg)
    ends = x[:count] + x[m:]
    if not unbroken and seg is not None:
        ends = np.where(seg[:count] == seg[m:], ends, np.nan)
    win = sliding_window_view(x, count)
    rows = max(1, _BLOCK // count)
    total = 0.0
    used = 0
    for lo in range(0, h, rows):  # loop over blocks of delta
        d = np.arange(lo, min(h, lo + rows))
        diff = win[h - d] + win[h + d]
        np.subtract(ends, diff, out=diff)
        weight = 1.0 / (h - d)
        if unbroken:
            sq = np.einsum("ij,ij->i", diff, diff)
            total += dot(sq, weight)
            used += count * d.size
        else:
            good = ~np.isnan(diff)
            kept = good.sum(axis=1)
            if (kept == 0).any():
                return math.nan, 0
            diff[~good] = 0.0
            sq = np.einsum("ij,ij->i", diff, diff)
            total += dot(sq / kept, weight) * count
            used += int(kept.sum())
    return total / (0.75 * count * tau_m * tau_m), used


def theo1(x: np.ndarray, tau0: float, m: int, seg: np.ndarray | None = None) -> tuple[float, int]:
    """Theo1 deviation (Howe & Tasset 2004; SP 1065 eq. 30) at tau = 0.75 m tau0, m even."""
    var, used = theo1_variance(x, tau0, m, seg)
    if used == 0 or not var >= 0.0:
        return math.nan, 0
    return math.sqrt(var), used


_RATIO_CACHE: dict[str, float] = {}


def _fingerprint(x: np.ndarray, seg: np.ndarray | None) -> str:
    digest = hashlib.blake2b(np.ascontiguousarray(x).view(np.uint8), digest_size=16)
    if seg is not None:
        digest.update(np.ascontiguousarray(seg).view(np.uint8))
    return digest.hexdigest()


#: Largest record for TheoBR and ThêoH: the bias ratio needs Theo1 at about N/30
#: averaging factors up to N/7, each O(N m), so the cost grows as N^3 (about half a
#: minute at this size on a small machine).
THEOBR_MAX_POINTS = 20_000


def theobr_ratio(x: np.ndarray, seg: np.ndarray | None = None) -> float:
    """The bias-removal ratio of TheoBR (SP 1065 eq. 31; Howe, Taylor & Tasset 2006).

    mean over i = 0 .. n of AVAR(m = 9 + 3i) / Theo1(m = 12 + 4i), with
    n = floor(0.1 N / 3 - 3) and both statistics at tau = (9 + 3i) tau0; the
    ratio does not depend on tau0. NaN when the record is too short (N < 90)
    or no ratio is usable. The last result is cached per record.
    """
    n_pts = x.size
    top = math.floor(0.1 * n_pts / 3.0 - 3.0)
    if top < 0:
        return math.nan
    if n_pts > THEOBR_MAX_POINTS:
        raise AnalysisError(
            f"TheoBR's bias ratio costs time growing as N^3; {n_pts} samples would take "
            f"hours (the limit is {THEOBR_MAX_POINTS})",
            hint="average the data first (--average N), or use theo1, which is bias-corrected",
        )
    key = _fingerprint(x, seg)
    if key in _RATIO_CACHE:
        return _RATIO_CACHE[key]
    ratios = []
    for i in range(top + 1):  # loop over averaging factors
        avar_dev, n_a = oadev(x, 1.0, 9 + 3 * i, seg)
        theo_var, n_t = theo1_variance(x, 1.0, 12 + 4 * i, seg)
        if n_a and n_t and theo_var > 0.0:
            ratios.append(avar_dev * avar_dev / theo_var)
    ratio = float(np.mean(ratios)) if ratios else math.nan
    if len(_RATIO_CACHE) > 8:
        _RATIO_CACHE.clear()
    _RATIO_CACHE[key] = ratio
    return ratio


def theobr(x: np.ndarray, tau0: float, m: int, seg: np.ndarray | None = None) -> tuple[float, int]:
    """Bias-removed Theo1 deviation (SP 1065 eq. 31) at tau = 0.75 m tau0, m even.

    Needs at least 90 phase samples (n = floor(0.1 N / 3 - 3) >= 0).
    """
    var, used = theo1_variance(x, tau0, m, seg)
    if used == 0:
        return math.nan, 0
    ratio = theobr_ratio(x, seg)
    if not math.isfinite(ratio):
        return math.nan, 0
    return math.sqrt(ratio * var), used


def theoh_uses_allan(n_points: int, tau0: float, m: int) -> bool:
    """Whether ThêoH at tau = 0.75 m tau0 is the Allan deviation (else TheoBR).

    The Allan part covers tau up to 10 % of the record length T = (N - 1) tau0
    (SP 1065 eq. 32) where 0.75 m is a whole averaging factor.
    """
    return m % 4 == 0 and 0.75 * m <= 0.1 * (n_points - 1)


def theoh(x: np.ndarray, tau0: float, m: int, seg: np.ndarray | None = None) -> tuple[float, int]:
    """Hybrid ThêoH deviation (Howe, Taylor & Tasset 2006; SP 1065 eq. 32), tau = 0.75 m tau0.

    The overlapping Allan deviation at averaging factor 0.75 m where tau is at
    most 10 % of the record (and 0.75 m is whole), TheoBR at m beyond.
    """
    if m < 2 or m % 2 or m > x.size - 1:
        return math.nan, 0
    if theoh_uses_allan(x.size, tau0, m):
        return oadev(x, tau0, 3 * m // 4, seg)
    return theobr(x, tau0, m, seg)
