"""Exact moments of stability variances written as quadratic forms of the phase.

Every variance estimator of the Allan, Hadamard, total and Theo families is a
quadratic form of the phase samples, v = x' Q x. For Gaussian phase with
covariance C,

    E[v] = tr(Q C),  Var[v] = 2 tr((Q C)^2),  edf = 2 E[v]^2 / Var[v] = tr(QC)^2 / tr((QC)^2).

The noise is the discrete power-law model of Kasdin and Walter (1992), the one
``stability.simulate`` generates: x = H w with w white (unit variance) and H the
lower-triangular Toeplitz matrix of the filter h_0 = 1, h_k = h_{k-1} (beta/2 + k - 1)/k,
beta = 2 - alpha for phase. So C = H H' and the moments below are exact for the
simulator's noise (tau0 = 1, unit white-noise variance).

Numerics: every form here is blind to a constant and a linear trend of the phase,
so Q = D2' Q2 D2 with D2 the second difference, and for alpha <= 0 the moments are
computed from Q2 = S' Q S (S the double running sum) and the covariance of the second
differences, whose filter (1 - z)^2 h decays for every alpha >= -2. That keeps the
digits that the growing phase of WFM, FFM and RWFM would otherwise cancel. For
alpha >= 1 the phase is stationary and H' Q H is taken directly (the detour through
second differences loses digits there at large N).

The operators are built directly from the definitions (NIST SP 1065 eqs. 10-30) and
checked against the project's estimators in tests/test_quadform.py.

References
----------
1. N. J. Kasdin, T. Walter, "Discrete simulation of power law noise", Proc. IEEE
   Frequency Control Symposium (1992).
2. W. J. Riley, NIST SP 1065 (2008), sections 5.2 (estimators).
"""

from __future__ import annotations

import numpy as np
from scipy import sparse

__all__ = [
    "kw_filter",
    "phase_covariance",
    "moments",
    "q_oavar",
    "q_avar",
    "q_mvar",
    "q_ohvar",
    "q_hvar",
    "q_totvar",
    "q_mtot",
    "q_htot",
    "q_theo1",
    "q_pvar",
    "Q_BUILDERS",
]


def kw_filter(beta: float, n: int) -> np.ndarray:
    """Kasdin-Walter filter h_0 .. h_{n-1} for S ~ f^-beta."""
    h = np.empty(n)
    h[0] = 1.0
    k = np.arange(1, n, dtype=float)
    h[1:] = np.cumprod((beta / 2.0 + k - 1.0) / k)
    return h


def _lower_toeplitz(h: np.ndarray, rows: int, cols: int, shift: int = 0) -> np.ndarray:
    """T[i, j] = h[i + shift - j] where 0 <= i + shift - j < len(h), else 0."""
    i = np.arange(rows)[:, None]
    j = np.arange(cols)[None, :]
    k = i + shift - j
    ok = (k >= 0) & (k < h.size)
    return np.where(ok, h[np.clip(k, 0, h.size - 1)], 0.0)


def phase_covariance(alpha: int, n: int) -> np.ndarray:
    """Covariance C = H H' of n phase samples of the discrete model (unit white noise)."""
    h = kw_filter(2.0 - alpha, n)
    big_h = _lower_toeplitz(h, n, n)
    return big_h @ big_h.T


def _second_difference_filter(alpha: int, n: int) -> np.ndarray:
    """Rows of D2 H: (D2 x)_i = x_{i+2} - 2 x_{i+1} + x_i = sum_j g_{i+2-j} w_j."""
    g = kw_filter(2.0 - alpha - 4.0, n)  # (1 - z)^2 (1 - z)^(-beta/2)
    return _lower_toeplitz(g, n - 2, n, shift=2)


def _double_sum_form(q: np.ndarray) -> np.ndarray:
    """Q2 = S' Q S, S the (n x n-2) map from second differences to phase with x0 = x1 = 0."""
    n = q.shape[0]
    # x_k = sum_{j < k-1} (k - 1 - j) d_j: S[k, j] = max(k - 1 - j, 0).
    k = np.arange(n)[:, None]
    j = np.arange(n - 2)[None, :]
    s = np.maximum(k - 1 - j, 0).astype(float)
    return s.T @ q @ s


def _noise_form(q: np.ndarray, alpha: int, q2: np.ndarray | None = None) -> np.ndarray:
    """H' Q H (symmetrised), the form in the white noise w, for phase noise of type alpha.

    For alpha >= 1 the phase is stationary and H bounded: directly. For alpha <= 0
    through the second differences (Q2 = S' Q S, pass it to reuse it), whose filter
    decays; the direct route would cancel the digits of the growing phase, and this one
    loses them for the rough noises alpha >= 1 at large N (10 % of the EDF of
    alpha = 4 at N = 2048).
    """
    n = q.shape[0]
    if alpha >= 1:
        h = _lower_toeplitz(kw_filter(2.0 - alpha, n), n, n)
        m = h.T @ q @ h
    else:
        if q2 is None:
            q2 = _double_sum_form(np.asarray(q, dtype=float))
        g = _second_difference_filter(alpha, n)
        m = g.T @ q2 @ g  # H' Q H, with H' Q H = (D2 H)' Q2 (D2 H)
    return 0.5 * (m + m.T)


def moments(q: np.ndarray, alpha: int) -> tuple[float, float, float]:
    """(E[v], Var[v], edf) of v = x' Q x for discrete power-law phase noise of type alpha.

    Q must be blind to constant and linear phase (true of every estimator here).
    """
    m = _noise_form(np.asarray(q, dtype=float), alpha)
    mean = float(np.trace(m))
    sq = float(np.sum(m * m))
    return mean, 2.0 * sq, mean * mean / sq


def _gram(rows: sparse.spmatrix, weights: np.ndarray | float = 1.0) -> np.ndarray:
    """A' W A as a dense matrix."""
    w = np.broadcast_to(np.asarray(weights, dtype=float), (rows.shape[0],))
    return np.asarray((rows.T @ sparse.diags(w) @ rows).todense())


def _comb_rows(n: int, starts: np.ndarray, offsets, coefs) -> sparse.csr_matrix:
    """Rows r: sum_k coefs[k] x[starts[r] + offsets[k]]."""
    r = np.repeat(np.arange(starts.size), len(offsets))
    c = (starts[:, None] + np.asarray(offsets)[None, :]).ravel()
    v = np.tile(np.asarray(coefs, dtype=float), starts.size)
    return sparse.csr_matrix((v, (r, c)), shape=(starts.size, n))


def q_oavar(n: int, m: int) -> np.ndarray:
    """OAVAR (SP 1065 eq. 11), tau0 = 1."""
    count = n - 2 * m
    rows = _comb_rows(n, np.arange(count), (0, m, 2 * m), (1, -2, 1))
    return _gram(rows) / (2.0 * m * m * count)


def q_avar(n: int, m: int) -> np.ndarray:
    """Non-overlapped AVAR (SP 1065 eq. 7): second differences of the phase decimated by m."""
    count = (n - 1) // m - 1
    rows = _comb_rows(n, m * np.arange(count), (0, m, 2 * m), (1, -2, 1))
    return _gram(rows) / (2.0 * m * m * count)


def q_mvar(n: int, m: int) -> np.ndarray:
    """MVAR (SP 1065 eq. 14)."""
    count = n - 3 * m + 1
    offsets = np.arange(3 * m)
    coefs = np.concatenate((np.ones(m), np.full(m, -2.0), np.ones(m)))
    rows = _comb_rows(n, np.arange(count), offsets, coefs)
    return _gram(rows) / (2.0 * m**4 * count)


def q_ohvar(n: int, m: int) -> np.ndarray:
    """Overlapping HVAR (SP 1065 eq. 19)."""
    count = n - 3 * m
    rows = _comb_rows(n, np.arange(count), (0, m, 2 * m, 3 * m), (-1, 3, -3, 1))
    return _gram(rows) / (6.0 * m * m * count)


def q_hvar(n: int, m: int) -> np.ndarray:
    """Non-overlapped HVAR (SP 1065 eq. 18)."""
    count = (n - 1) // m - 2
    rows = _comb_rows(n, m * np.arange(count), (0, m, 2 * m, 3 * m), (-1, 3, -3, 1))
    return _gram(rows) / (6.0 * m * m * count)


def q_totvar(n: int, m: int) -> np.ndarray:
    """TOTVAR (SP 1065 eq. 25) with the odd reflection x*_{1-j} = 2x_1 - x_{1+j} at both ends."""
    ext = np.zeros((n + 2 * m, n))  # x*_{i}, i = -m .. n-1+m, as rows over x
    ext[m : m + n] = np.eye(n)
    for j in range(1, m + 1):
        ext[m - j, 0] += 2.0
        ext[m - j, j] -= 1.0
        ext[m + n - 1 + j, n - 1] += 2.0
        ext[m + n - 1 + j, n - 1 - j] -= 1.0
    i = np.arange(1, n - 1) + m
    a = ext[i - m] - 2.0 * ext[i] + ext[i + m]
    return a.T @ a / (2.0 * m * m * (n - 2))


def _reflected_window(m: int) -> np.ndarray:
    """The 6m x 3m map from one 3m-sample subsequence to its 6m m-average second differences.

    Half-average slope removed, even reflection to 9m samples (SP 1065 eq. 26).
    """
    w = 3 * m
    k1, k2 = w // 2, (w + 1) // 2
    slope = np.zeros(w)
    slope[k2:] += 1.0 / (w - k2)
    slope[:k1] -= 1.0 / k1
    slope /= k2
    detrend = np.eye(w) - np.outer(np.arange(w), slope)
    reflect = np.vstack((np.eye(w)[::-1], np.eye(w), np.eye(w)[::-1]))
    ext = reflect @ detrend  # 9m x 3m
    csum = np.vstack((np.zeros((1, w)), np.cumsum(ext, axis=0)))
    j = np.arange(6 * m)

    def avg(a: np.ndarray) -> np.ndarray:
        return (csum[a + m] - csum[a]) / m

    return avg(j) - 2.0 * avg(j + m) + avg(j + 2 * m)


def _window_sum(n: int, m: int) -> tuple[np.ndarray, int]:
    """sum over subsequences s of (1/(6m)) z_s' z_s, as an n x n form; and the count."""
    b = _reflected_window(m)
    k = b.T @ b / (6.0 * m)
    w = 3 * m
    count = n - w + 1
    q = np.zeros((n, n))
    for s in range(count):  # one block per subsequence (test helper, n of a few hundred)
        q[s : s + w, s : s + w] += k
    return q, count


def q_mtot(n: int, m: int) -> np.ndarray:
    """MTOT variance (SP 1065 eq. 26), before any bias correction."""
    q, count = _window_sum(n, m)
    return q / (2.0 * m * m * count)


def q_htot(n: int, m: int) -> np.ndarray:
    """HTOT variance (SP 1065 eq. 29) on y = diff(x), m >= 2, before any bias correction."""
    qy, count = _window_sum(n - 1, m)
    d = np.diff(np.eye(n), axis=0)  # y = D x
    return d.T @ qy @ d / (6.0 * count)


def q_theo1(n: int, m: int) -> np.ndarray:
    """Theo1 variance (SP 1065 eq. 30), m even, tau = 0.75 m."""
    h = m // 2
    count = n - m
    q = np.zeros((n, n))
    i = np.arange(count)
    for d in range(h):
        rows = _comb_rows(n, i, (0, h - d, m, h + d), (1, -1, 1, -1))
        q += _gram(rows) / (h - d)
    return q / (0.75 * count * m * m)


def q_pvar(n: int, m: int) -> np.ndarray:
    """PVAR (Vernotte et al. 2016, arXiv:1506.00687; form from memory), tau0 = 1.

    PVAR = 72 / (M m^4 tau^2) sum_i [sum_{k<m} ((m-1)/2 - k)(x_{i+k} - x_{i+k+m})]^2,
    M = N - 2m. Its weights vanish at m = 1, where the project (as allantools) takes
    the Allan variance.
    """
    if m == 1:
        return q_oavar(n, 1)
    count = n - 2 * m
    w = (m - 1) / 2.0 - np.arange(m)
    rows = _comb_rows(n, np.arange(count), np.arange(2 * m), np.concatenate((w, -w)))
    return _gram(rows) * 72.0 / (count * m**4 * m * m)


#: statistic -> Q builder (variance with tau0 = 1, before any bias correction).
Q_BUILDERS = {
    "adev": q_avar,
    "oadev": q_oavar,
    "mdev": q_mvar,
    "hdev": q_hvar,
    "ohdev": q_ohvar,
    "totdev": q_totvar,
    "mtot": q_mtot,
    "htot": q_htot,
    "theo1": q_theo1,
    "pdev": q_pvar,
}
