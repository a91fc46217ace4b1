"""Parabolic deviation (PDEV), the deviation that goes with least-squares frequency estimates.

PVAR is the variance of the difference of two successive frequency estimates
each obtained by a least-squares fit of the phase over m samples (the
estimate of an Omega counter); as a wavelet variance it rejects white phase
noise like MVAR with better confidence.

Evaluation: the inner weighted sum is a correlation of d_t = x_t - x_{t+m}
with the parabolic weights ((m - 1)/2 - k), done by overlap-add FFT, so each
tau costs O(N log m).

References
----------
1. F. Vernotte, M. Lenczner, P.-Y. Bourgeois, E. Rubiola, "The parabolic
   variance (PVAR): a wavelet variance based on the least-square fit",
   IEEE Trans. UFFC 63 (2016) 611-623, arXiv:1506.00687.
2. E. Rubiola, "On the measurement of frequency and of its sample variance
   with high-resolution counters", Rev. Sci. Instrum. 76, 054703 (2005).

Conventions (as in allantools 2024.6):
PVAR(m tau0) = 72 / (M m^4 tau^2) sum_{i=0}^{M-1}
[sum_{k=0}^{m-1} ((m-1)/2 - k)(x_{i+k} - x_{i+k+m})]^2 with M = N - 2m; the
parabolic weights vanish at m = 1, where PDEV is taken as the Allan deviation
(a least-squares fit over one interval is the plain frequency estimate).
"""

from __future__ import annotations

import math

import numpy as np

from ._kernels import dot, is_unbroken
from .allan import oadev

__all__ = ["pdev"]


def _scipy_signal():
    """scipy.signal, imported on first use (its import costs about a second)."""
    from scipy import signal

    return signal


def pdev(x: np.ndarray, tau0: float, m: int, seg: np.ndarray | None = None) -> tuple[float, int]:
    """Parabolic deviation (Vernotte et al. 2016) at tau = m tau0, 1 <= m <= (N - 1)/2."""
    n = x.size
    if m < 1 or n - 2 * m < 1:
        return math.nan, 0
    if m == 1:
        return oadev(x, tau0, 1, seg)
    count = n - 2 * m
    tau = m * tau0
    d = x[: n - m] - x[m:]  # d_t = x_t - x_{t+m}
    weights = (m - 1) / 2.0 - np.arange(m)
    if is_unbroken(x, seg):
        inner = _scipy_signal().oaconvolve(d, weights[::-1], mode="valid")[:count]
        total, used = dot(inner, inner), count
    else:
        # Term i touches x_i .. x_{i+2m-1}: usable when all are finite and in one segment.
        bad = ~np.isfinite(x)
        cbad = np.concatenate(([0], np.cumsum(bad)))
        ok = (cbad[2 * m : 2 * m + count] - cbad[:count]) == 0
        if seg is not None:
            ok &= seg[:count] == seg[2 * m - 1 : 2 * m - 1 + count]
        inner = _scipy_signal().oaconvolve(
            np.where(np.isfinite(d), d, 0.0), weights[::-1], mode="valid"
        )[:count]
        good = inner[ok]
        total, used = dot(good, good), int(good.size)
    if used == 0:
        return math.nan, 0
    return math.sqrt(72.0 * total / (used * m**4 * tau * tau)), used
