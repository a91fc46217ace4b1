"""Total deviation (TOTDEV).

The phase record is extended at both ends by odd reflection, so that every
tau up to half the record uses N - 2 second differences; this improves the
confidence at long tau over the overlapping Allan deviation.

References
----------
1. D. A. Howe, "The total deviation approach to long-term characterization of
   frequency stability", IEEE Trans. UFFC 47 (2000) 1102-1110.
2. W. J. Riley, NIST SP 1065 (2008), section 5.2.11, eq. 25:
   x*_{1-j} = 2x_1 - x_{1+j},  x*_{N+j} = 2x_N - x_{N-j},
   TOTVAR = sum_{i=2}^{N-1} (x*_{i-m} - 2x*_i + x*_{i+m})^2 / (2 tau^2 (N - 2)).
"""

from __future__ import annotations

import math

import numpy as np

from ._kernels import comb_sum_squares, is_unbroken

__all__ = ["totdev"]


def _edge_terms(x: np.ndarray, seg: np.ndarray | None, m: int) -> np.ndarray:
    """The second differences that reach past either end (0-based i with i-m < 0 or i+m > N-1)."""
    n = x.size
    last = n - 1
    # Left: i = 1 .. m-1, x*_{i-m} = 2 x_0 - x_{m-i}.
    i = np.arange(1, min(m, n - 1))
    left = (2.0 * x[0] - x[m - i]) - 2.0 * x[i] + x[i + m]
    if seg is not None:
        left[seg[0] != seg[i + m]] = np.nan
    # Right: i = N-m .. N-2, x*_{i+m} = 2 x_{N-1} - x_{2(N-1)-i-m}.
    j = np.arange(max(n - m, 1), n - 1)
    right = x[j - m] - 2.0 * x[j] + (2.0 * x[last] - x[2 * last - j - m])
    if seg is not None:
        right[seg[j - m] != seg[last]] = np.nan
    return np.concatenate((left, right))


def totdev(x: np.ndarray, tau0: float, m: int, seg: np.ndarray | None = None) -> tuple[float, int]:
    """Total deviation (Howe 2000; SP 1065 eq. 25), for 1 <= m <= (N-1)/2."""
    n = x.size
    tau = m * tau0
    if n < 3 or 2 * m > n - 1:
        return math.nan, 0
    core = n - 2 * m  # 0-based i = m .. n-1-m, inside the record
    edges = _edge_terms(x, seg, m)
    if is_unbroken(x, seg):
        total = comb_sum_squares(x, (0, m, 2 * m), (1.0, -2.0, 1.0), core)
        total += float(np.dot(edges, edges))
        used = n - 2
    else:
        terms = x[2 * m:] - 2.0 * x[m:-m] + x[: n - 2 * m]
        if seg is not None:
            terms[seg[: n - 2 * m] != seg[2 * m:]] = np.nan
        terms = np.concatenate((terms, edges))
        good = terms[~np.isnan(terms)]
        total, used = float(np.dot(good, good)), int(good.size)
    if used == 0:
        return math.nan, 0
    return math.sqrt(total / (2.0 * tau * tau * used)), used
