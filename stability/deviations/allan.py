"""Allan deviation and its overlapping and modified forms, and the time deviation.

All estimators work from phase ``x`` (seconds) at averaging factor ``m``
(tau = m * tau0) and return ``(deviation, n_terms)``.

References
----------
1. W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065 (2008),
   sections 5.2.2 (ADEV, eq. 7), 5.2.4 (overlapping ADEV, eq. 11), 5.2.5
   (MDEV, eq. 14) and 5.2.6 (TDEV, eq. 15).
2. D. W. Allan, J. A. Barnes, "A modified Allan variance with increased
   oscillator characterization ability", Proc. 35th Frequency Control
   Symposium (1981).
3. ITU-T Recommendation G.810 (1996), appendix II (TDEV).
"""

from __future__ import annotations

import math

import numpy as np

from ._kernels import (
    BLOCK,
    comb_sum_squares,
    dot,
    gappy_sum_squares,
    gappy_window_sums_squares,
    is_unbroken,
)

__all__ = ["adev", "oadev", "mdev", "tdev"]

_D2 = (1.0, -2.0, 1.0)


def _finish(total: float, n: int, scale: float) -> tuple[float, int]:
    if n <= 0:
        return math.nan, 0
    return math.sqrt(total / (scale * n)), n


def oadev(
    x: np.ndarray, tau0: float, m: int, seg: np.ndarray | None = None, *, drift: float = 0.0
) -> tuple[float, int]:
    """Overlapping Allan deviation (SP 1065 eq. 11).

    AVAR = sum_{i=1}^{N-2m} (x_{i+2m} - 2x_{i+m} + x_i)^2 / (2 tau^2 (N - 2m)).

    ``drift`` is a linear frequency drift (1/s) taken out of the data: the
    estimate of the phase x - drift t^2 / 2, whose terms are those of x less
    drift tau^2 (the second difference of drift t^2 / 2 at step tau), formed
    term by term without a detrended copy of the phase.
    """
    tau = m * tau0
    count = x.size - 2 * m
    offsets = (0, m, 2 * m)
    if count <= 0:
        return math.nan, 0
    shift = drift * tau * tau
    if is_unbroken(x, seg):
        total = comb_sum_squares(x, offsets, _D2, count, shift=shift)
        return _finish(total, count, 2 * tau * tau)
    total, used = gappy_sum_squares(x, seg, offsets, _D2, count, shift=shift)
    return _finish(total, used, 2 * tau * tau)


def adev(x: np.ndarray, tau0: float, m: int, seg: np.ndarray | None = None) -> tuple[float, int]:
    """Non-overlapping Allan deviation (SP 1065 eq. 7): OADEV of the phase decimated by m."""
    xs = x[::m]
    ss = None if seg is None else seg[::m]
    dev, n = oadev(xs, tau0 * m, 1, ss)
    return dev, n


def mdev(
    x: np.ndarray, tau0: float, m: int, seg: np.ndarray | None = None, *, drift: float = 0.0
) -> tuple[float, int]:
    """Modified Allan deviation (SP 1065 eq. 14).

    MVAR = sum_{j=1}^{N-3m+1} [sum_{i=j}^{j+m-1} (x_{i+2m} - 2x_{i+m} + x_i)]^2
           / (2 m^2 tau^2 (N - 3m + 1)).

    The inner sum moves by one third difference per step, so each tau costs
    O(N): v_{j+1} = v_j + (x_{j+3m} - 3x_{j+2m} + 3x_{j+m} - x_j).
    ``drift`` is taken out as in :func:`oadev`: each of the m second differences
    of a window loses drift tau^2 (the third differences are unchanged).
    """
    tau = m * tau0
    count = x.size - 3 * m + 1
    if count <= 0:
        return math.nan, 0
    scale = 2.0 * m * m * tau * tau
    shift = drift * tau * tau
    if not is_unbroken(x, seg):
        total, n = gappy_window_sums_squares(
            x, seg, (0, m, 2 * m), _D2, x.size - 2 * m, m, shift=shift
        )
        return _finish(total, n, scale)
    v0 = float(np.sum(x[2 * m : 3 * m]) - 2.0 * np.sum(x[m : 2 * m]) + np.sum(x[:m]))
    v0 -= m * shift
    total = v0 * v0
    rest = count - 1
    if rest > 0:
        size = min(BLOCK, rest)
        buf = np.empty(size)
        tmp = np.empty(size)
        carry = v0
        for lo in range(0, rest, size):
            hi = min(lo + size, rest)
            b = buf[: hi - lo]
            t = tmp[: hi - lo]
            # d3 = (x_{j+3m} - x_j) - 3 (x_{j+2m} - x_{j+m})
            np.subtract(x[lo + 3 * m : hi + 3 * m], x[lo:hi], out=b)
            np.subtract(x[lo + 2 * m : hi + 2 * m], x[lo + m : hi + m], out=t)
            t *= -3.0
            b += t
            np.cumsum(b, out=b)
            b += carry
            carry = float(b[-1])
            total += dot(b, b)
    return _finish(total, count, scale)


def tdev(x: np.ndarray, tau0: float, m: int, seg: np.ndarray | None = None) -> tuple[float, int]:
    """Time deviation, TDEV = tau * MDEV / sqrt(3) (ITU-T G.810; SP 1065 eq. 15)."""
    dev, n = mdev(x, tau0, m, seg)
    return m * tau0 * dev / math.sqrt(3.0), n
