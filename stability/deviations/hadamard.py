"""Hadamard deviation, non-overlapping and overlapping.

Third differences of phase remove a linear frequency drift, which makes the
Hadamard variance the statistic of choice for oscillators with drift.

References
----------
1. W. J. Riley, NIST SP 1065 (2008), sections 5.2.8 (HDEV, eq. 17 in phase
   form) and 5.2.9 (overlapping HDEV, eq. 19):
   HVAR = sum_{i=1}^{N-3m} (x_{i+3m} - 3x_{i+2m} + 3x_{i+m} - x_i)^2 / (6 tau^2 (N - 3m)).
2. S. T. Hutsell, "Relating the Hadamard variance to MCS Kalman filter clock
   estimation", Proc. 27th PTTI Meeting (1995).
"""

from __future__ import annotations

import math

import numpy as np

from ._kernels import comb_sum_squares, gappy_sum_squares, is_unbroken

__all__ = ["hdev", "ohdev"]

_D3 = (1.0, -3.0, 3.0, -1.0)


def ohdev(x: np.ndarray, tau0: float, m: int, seg: np.ndarray | None = None) -> tuple[float, int]:
    """Overlapping Hadamard deviation (SP 1065 eq. 19)."""
    tau = m * tau0
    count = x.size - 3 * m
    if count <= 0:
        return math.nan, 0
    offsets = (3 * m, 2 * m, m, 0)
    if is_unbroken(x, seg):
        total, n = comb_sum_squares(x, offsets, _D3, count), count
    else:
        total, n = gappy_sum_squares(x, seg, offsets, _D3, count)
    if n == 0:
        return math.nan, 0
    return math.sqrt(total / (6.0 * tau * tau * n)), n


def hdev(x: np.ndarray, tau0: float, m: int, seg: np.ndarray | None = None) -> tuple[float, int]:
    """Non-overlapping Hadamard deviation: OHDEV of the phase decimated by m."""
    return ohdev(x[::m], tau0 * m, 1, None if seg is None else seg[::m])
