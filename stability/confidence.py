"""Equivalent degrees of freedom, chi-squared confidence intervals and bias corrections.

A stability variance estimate s^2 of a power-law noise process is treated as
chi-squared distributed, ``nu * s^2 / sigma^2 ~ chi2(nu)``, with an *equivalent
degrees of freedom* (EDF) ``nu`` that depends on the statistic, the noise type
alpha (exponent of S_y(f)), the averaging factor m and the record length N
(number of phase samples). This module holds the EDF models and the bias
factors of the total and Theo families; the statistics registry says which
model and which bias rule each statistic uses.

EDF models
----------
* Allan, modified Allan, time, Hadamard variances and their overlapping forms:
  the general algorithm of Greenhall and Riley [1]_ (:func:`greenhall_edf`).
  The sum is taken over the correlations of the differenced, filtered phase;
  beyond ``Jmax = 100`` terms the paper's asymptotic forms (its tables 1-3) are
  used. The case structure follows the paper; the tables and the half-weighted
  end term of its eq. (10) agree with the independent implementation in
  allantools, against which the tests check this code to 1e-6. At m = 1 every one
  of these is the mean square of the N - d sampled d-th phase differences and the
  exact EDF of the sampled power law is used instead
  (:func:`~stability.confidence_models.increment_edf`): the paper's F = m filter
  models phase averaged over tau0 and gives 17 to 24 % more degrees of freedom than
  sampled WFM, FFM and RWFM noise has (a simulation test decides this).
* Total variance: the empirical ``edf = b T/tau - c`` of Howe [3]_, NIST SP 1065
  [2]_ (from memory), for WFM, FFM and RWFM; at m = 1, where TOTDEV is OADEV, the
  OADEV EDF. For WPM and FPM the reflected ends share their end samples and cost
  degrees of freedom at long tau (far below OAVAR's): models fitted to the exact
  moments (:func:`~stability.confidence_models.totvar_edf_pm`).
* Modified total and time total variances: at m = 1, where MTOT^2 = MVAR/2, MVAR's
  EDF; for m >= 2 a model fitted to the exact EDF of the estimator
  (:func:`~stability.confidence_models.mtot_edf`, within 4.5 % for N = 128 .. 2048).
  The handbook's ``b T/tau - c`` [2]_ (from memory) was 19 to 27 % high at m = 64,
  N = 512 and twice the exact EDF for WPM at m = 2.
* Hadamard total variance: at m = 1, where HTOT is OHDEV, OHDEV's EDF; for m >= 2 the
  same fitted model (HTOT is MTOT's form on the frequency,
  :func:`~stability.confidence_models.htot_edf`, within 5 % for WFM .. RWFM and 10 to
  15 % for WPM and FPM). The overlapping
  Hadamard EDF used before is a lower bound, 2 to 3 times too low at long tau.
* Theo1, TheoBR, ThêoH: Howe's Theo1 EDF formulas with r = 0.75 m [4]_ (from
  memory, see the project's reference notes). For FPM no formula is at hand: the
  smaller of the WPM and WFM values (its neighbours) is used.
* Parabolic variance: the modified Allan EDF (Greenhall, d = 2, F = 1, S = m).
  This is a fallback recalled, not read, from Vernotte et al. [5]_, who report
  PVAR confidence close to that of MVAR (from memory). The exact EDF of PVAR for
  sampled power-law noise is 1.2 to 2 times this one (N = 512, m = 2 .. N/4), so the
  intervals are wider than nominal.
* MTIE and TIE rms are not chi-squared distributed: no EDF (the registry says so).

The chi-squared interval that follows from an EDF is
:func:`stability.intervals.chi2_interval`.

Bias
----
The total and Theo1 estimators are biased against the Allan (or Hadamard,
modified Allan) variance for some noise types; each bias rule returns the factor
B with corrected variance = raw variance / B. The TOTVAR (WPM, FPM), MTOT and
HTOT factors are exact ratios of expectations (:mod:`stability.confidence_models`);
the TOTVAR FFM/RWFM and Theo1 factors are from [2]_, [3]_, [4]_ (from memory, see
the project's reference notes).

References
----------
.. [1] C. A. Greenhall, W. J. Riley, "Uncertainty of stability variances based on
   finite differences", Proc. 35th PTTI Meeting (2003).
.. [2] W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065 (2008),
   sections 5.2.11-5.2.14 and 5.3 (tables 5, 11, 12).
.. [3] D. A. Howe, "The total deviation approach to long-term characterization of
   frequency stability", IEEE Trans. UFFC 47 (2000) 1102-1110.
.. [4] D. A. Howe, T. N. Tasset, "Theo1: characterization of very long-term
   frequency stability", Proc. EFTF (2004); D. A. Howe, "ThêoH: a hybrid,
   high-confidence statistic that improves on the Allan deviation", Metrologia 43
   (2006) (bibliographic details from memory).
.. [5] F. Vernotte, M. Lenczner, P.-Y. Bourgeois, E. Rubiola, "The parabolic
   variance (PVAR): a wavelet variance based on the least-square fit", IEEE Trans.
   UFFC (2016), arXiv:1506.00687.
.. [6] J. A. Barnes, "Tables of bias functions, B1 and B2, for variances based on
   finite samples of processes with power law spectral densities", NBS Technical
   Note 375 (1969).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from numbers import Integral, Real
from typing import Any

import numpy as np

from . import confidence_models as exact
from .errors import InputError

__all__ = [
    "ALPHAS",
    "GreenhallModel",
    "greenhall_edf",
    "totvar_edf",
    "mtot_edf",
    "htot_edf",
    "theo1_edf",
    "totvar_bias",
    "mtot_bias",
    "htot_bias",
    "theo1_bias",
    "check_alpha",
    "check_row",
    "simple_oadev_edf",
]

#: The five power-law exponents alpha of S_y(f), WPM to RWFM.
ALPHAS = (2, 1, 0, -1, -2)
_JMAX = 100  # Greenhall & Riley [1]: cap on the number of correlation terms summed.

# Greenhall & Riley [1], table 1 (modified variances, F = 1): alpha -> (a0, a1) for d = 1, 2, 3.
# None where alpha + 2d <= 1 (variance not convergent).
_TABLE1 = {
    2: ((2 / 3, 1 / 3), (7 / 9, 1 / 2), (22 / 25, 2 / 3)),
    1: ((0.840, 0.345), (0.997, 0.616), (1.141, 0.843)),
    0: ((1.079, 0.368), (1.033, 0.607), (1.184, 0.848)),
    -1: (None, (1.048, 0.534), (1.180, 0.816)),
    -2: (None, (1.302, 0.535), (1.175, 0.777)),
    -3: (None, None, (1.194, 0.703)),
    -4: (None, None, (1.489, 0.702)),
}
# Table 2 (unmodified variances, F = m).
_TABLE2 = {
    2: ((3 / 2, 1 / 2), (35 / 18, 1.0), (231 / 100, 3 / 2)),
    1: ((78.6, 25.2), (790.0, 410.0), (9950.0, 6520.0)),
    0: ((2 / 3, 1 / 6), (2 / 3, 1 / 3), (7 / 9, 1 / 2)),
    -1: (None, (0.852, 0.375), (0.997, 0.617)),
    -2: (None, (1.079, 0.368), (1.033, 0.607)),
    -3: (None, None, (1.053, 0.553)),
    -4: (None, None, (1.302, 0.535)),
}
# Table 3 (unmodified, alpha = 1): sz(0) ~ b0 + b1 ln m for d = 1, 2, 3.
_TABLE3 = ((6.0, 4.0), (15.23, 12.0), (47.8, 40.0))

# NIST SP 1065 [2] (TOTVAR, from memory): alpha -> (b, c), edf = b * T / tau - c.
_TOT_BC = {0: (1.50, 0.0), -1: (1.17, 0.22), -2: (0.93, 0.36)}

# AVAR/Theo1 = a + b / tau^c, tau in units of tau0 (= 0.75 m).
_THEO1_BIAS = {
    2: (0.09, 0.74, 0.40),
    1: (0.14, 0.82, 0.30),
    0: (1.0, 0.0, 0.0),
    -1: (1.87, -1.05, 0.79),
    -2: (2.70, -1.53, 0.85),
}


# --------------------------------------------------------------------------- validation


def _as_int(value: Any, name: str, *, low: int | None = None, high: int | None = None) -> int:
    """``value`` as a Python int (integral numbers only), within [low, high]."""
    ok = isinstance(value, Integral) and not isinstance(value, bool)
    if not ok and isinstance(value, Real) and not isinstance(value, bool):
        ok = math.isfinite(float(value)) and float(value) == int(value)
    if not ok:
        raise InputError(f"{name} must be an integer, got {value!r}")
    out = int(value)
    if (low is not None and out < low) or (high is not None and out > high):
        lo = "-inf" if low is None else str(low)
        hi = "inf" if high is None else str(high)
        raise InputError(f"{name} must lie in [{lo}, {hi}], got {value!r}")
    return out


def _validate_greenhall(
    alpha: Any, d: Any, m: Any, n: Any, F: Any, S: Any
) -> tuple[int, int, int, int, float, int]:
    d = _as_int(d, "d", low=1, high=3)
    alpha = _as_int(alpha, "alpha", low=-4, high=2)
    if alpha + 2 * d <= 1:
        raise InputError(
            f"alpha + 2d must exceed 1 for the variance to converge, got alpha={alpha}, d={d}",
            hint="use d = 2 (Allan) for alpha >= -2 or d = 3 (Hadamard) for alpha >= -4",
        )
    m = _as_int(m, "m", low=1)
    n = _as_int(n, "n", low=2)
    if F is None:
        f = float(m)
    elif isinstance(F, Real) and not isinstance(F, bool) and (F == 0 or math.isinf(F)):
        f = math.inf
    elif isinstance(F, Real) and not isinstance(F, bool) and F in (1, m):
        f = float(F)
    else:
        raise InputError(
            f"F must be 1 (modified), m = {m} (unmodified) or 0 / math.inf (infinite), got {F!r}"
        )
    if math.isinf(f) and alpha > 0:
        raise InputError(
            f"F = infinity needs alpha <= 0 (WPM and FPM depend on the bandwidth), got {alpha}"
        )
    S = _as_int(S, "S", low=1, high=m)
    length = (0.0 if math.isinf(f) else m / f) + m * d
    if n < length:
        raise InputError(
            f"n = {n} phase samples is shorter than the filter length L = {length:g} "
            f"(m = {m}, d = {d})",
            hint="pass a smaller m or a longer record",
        )
    return alpha, d, m, n, f, S


def check_alpha(alpha: Any) -> int | None:
    """alpha in -2..2 as an int, or None for 'not identified' (None or NaN)."""
    if alpha is None:
        return None
    if isinstance(alpha, Real) and not isinstance(alpha, bool) and math.isnan(float(alpha)):
        return None
    return _as_int(alpha, "alpha", low=-2, high=2)


def check_row(alpha: Any, m: Any, n: Any) -> tuple[int | None, int, int]:
    """Validated (alpha, m, n) of one row: alpha -2..2 or None, m >= 1, n >= 2."""
    return check_alpha(alpha), _as_int(m, "m", low=1), _as_int(n, "n", low=2)


# --------------------------------------------------------------------------- Greenhall


def _binomial(n: int, k: Any) -> Any:
    """C(n, k) as float, 0 where k < 0 or k > n; ``k`` may be an integer array."""
    ks = np.asarray(k)
    values = np.array([math.comb(n, int(j)) if 0 <= j <= n else 0 for j in ks.ravel()], float)
    return values.reshape(ks.shape) if ks.ndim else float(values[0])


def _sw(t: np.ndarray, alpha: int) -> np.ndarray:
    """Generalised autocovariance of the phase, Greenhall & Riley [1] eq. (7)."""
    a = np.abs(t)
    if alpha == 2:
        return -a
    if alpha == 0:
        return a**3
    if alpha == -2:
        return -(a**5)
    if alpha == -4:
        return a**7
    lg = np.log(np.where(a > 0, a, 1.0))  # t^k ln|t| -> 0 at t = 0
    if alpha == 1:
        return t**2 * lg
    if alpha == -1:
        return -(t**4) * lg
    return t**6 * lg  # alpha == -3


def _xlogx2(q: np.ndarray) -> np.ndarray:
    """q^2 ln|q| with the value 0 at q = 0."""
    a = np.abs(q)
    return q * q * np.log(np.where(a > 0, a, 1.0))


def _sx_fpm(t: np.ndarray, F: float) -> np.ndarray:
    """Eq. (8) for alpha = 1, written so that large F keeps its digits.

    With q = tF and h = 1/F, F^2 [2 sw(t) - sw(t - h) - sw(t + h)] = c(q) + 2 ln F
    where c(q) = 2q^2 ln|q| - (q-1)^2 ln|q-1| - (q+1)^2 ln|q+1|. For |q| >= 1000
    the series c(q) = -2 ln|q| - 3 + 1/(6 q^2) + O(q^-4) replaces the cancelling sum.
    """
    q = np.asarray(t, dtype=float) * F
    aq = np.abs(q)
    direct = 2.0 * _xlogx2(q) - _xlogx2(q - 1.0) - _xlogx2(q + 1.0)
    big = np.where(aq >= 1000.0, aq, 1000.0)
    series = -2.0 * np.log(big) - 3.0 + 1.0 / (6.0 * big * big)
    return np.where(aq >= 1000.0, series, direct) + 2.0 * math.log(F)


def _sx(t: np.ndarray, F: float, alpha: int) -> np.ndarray:
    """Eq. (8): the phase autocovariance after the F-point moving average."""
    if math.isinf(F):
        return _sw(t, alpha + 2)
    if alpha == 1:
        return _sx_fpm(t, F)
    h = 1.0 / F
    return F * F * (2.0 * _sw(t, alpha) - _sw(t - h, alpha) - _sw(t + h, alpha))


def _sz(t: np.ndarray, F: float, alpha: int, d: int) -> np.ndarray:
    """Eq. (9): autocovariance of the d-th difference; vectorised over ``t``."""
    k = np.arange(-d, d + 1)
    coef = (-1.0) ** k * _binomial(2 * d, d + k)
    t = np.atleast_1d(np.asarray(t, dtype=float))
    return (_sx(t[:, None] + k[None, :], F, alpha) * coef).sum(axis=1)


def _basic_sum(J: float, M: float, S: float, F: float, alpha: int, d: int) -> float:
    """Eq. (10): sz(0)^2 + (1 - J/M) sz(J/S)^2 + 2 sum_{j=1}^{J-1} (1 - j/M) sz(j/S)^2."""
    J = int(J)
    j = np.arange(0, J + 1, dtype=float)
    sz2 = _sz(j / S, F, alpha, d) ** 2
    weight = 2.0 * (1.0 - j / M)
    weight[0] = 1.0
    weight[-1] = 1.0 - J / M if J > 0 else 1.0
    if J == 0:
        return float(sz2[0])
    return float((weight * sz2).sum())


def _greenhall_inverse(alpha: int, d: int, m: int, n: int, F: float, S: int) -> float:
    """1/edf by the case analysis of Greenhall & Riley [1], section 5."""
    inf = math.inf
    length = (0.0 if math.isinf(F) else m / F) + m * d
    M = 1 + math.floor(S * (n - length) / m)
    J = min(M, (d + 1) * S)
    r = M / S
    modified = F == 1.0
    # Past Jmax terms: the asymptotic tables when r > d + 1, else the sum rescaled to
    # Jmax terms with stride m' = Jmax / r. The boundary r = d + 1 goes to the rescaled
    # sum, as in allantools (both forms agree closely there).

    if modified:  # Case 1: modified variances, all alpha.
        if J <= _JMAX:
            return _basic_sum(J, M, S, 1.0, alpha, d) / (M * _sz(0.0, 1.0, alpha, d)[0] ** 2)
        if r > d + 1:
            a0, a1 = _TABLE1[alpha][d - 1]
            return (a0 - a1 / r) / r
        mp = _JMAX / r
        return _basic_sum(_JMAX, _JMAX, mp, 1.0, alpha, d) / (
            _JMAX * _sz(0.0, 1.0, alpha, d)[0] ** 2
        )

    if alpha <= 0:  # Case 2: unmodified, alpha <= 0 (also F = infinity).
        if J <= _JMAX:
            fp = F if (not math.isinf(F) and m * (d + 1) <= _JMAX) else inf
            return _basic_sum(J, M, S, fp, alpha, d) / (M * _sz(0.0, fp, alpha, d)[0] ** 2)
        if r > d + 1:
            a0, a1 = _TABLE2[alpha][d - 1]
            return (a0 - a1 / r) / r
        mp = _JMAX / r
        return _basic_sum(_JMAX, _JMAX, mp, inf, alpha, d) / (
            _JMAX * _sz(0.0, inf, alpha, d)[0] ** 2
        )

    if alpha == 1:  # Case 3: unmodified FPM.
        if J <= _JMAX:
            return _basic_sum(J, M, S, F, 1, d) / (M * _sz(0.0, F, 1, d)[0] ** 2)
        b0, b1 = _TABLE3[d - 1]
        norm = (b0 + b1 * math.log(m)) ** 2
        if r > d + 1:
            a0, a1 = _TABLE2[1][d - 1]
            return (a0 - a1 / r) / (norm * r)
        mp = _JMAX / r
        return _basic_sum(_JMAX, _JMAX, mp, mp, 1, d) / (_JMAX * norm)

    # Case 4: unmodified WPM. The filtered phase differences are correlated only at
    # lags that are whole multiples of m, which gives a closed form.
    K = math.ceil(r)
    c0 = _binomial(2 * d, d) ** 2
    if K <= d:
        k = np.arange(1 - K, K)
        return float(((1.0 - np.abs(k) / r) * _binomial(2 * d, d + k) ** 2).sum() / (M * c0))
    a0 = _binomial(4 * d, 2 * d) / c0
    a1 = d / 2.0
    return float((a0 - a1 / r) / M)


def greenhall_edf(
    alpha: int, d: int, m: int, n: int, *, F: int | float | None = None, S: int = 1
) -> float:
    """Equivalent degrees of freedom of a finite-difference variance (Greenhall & Riley).

    Parameters
    ----------
    alpha
        Power-law exponent of S_y(f), 2 (WPM) down to -4; alpha + 2d must exceed 1.
    d
        Order of the phase difference: 1 (first-difference variance), 2 (Allan,
        modified Allan, time), 3 (Hadamard).
    m
        Averaging factor, tau = m tau0.
    n
        Number of phase samples N.
    F
        Filter factor: ``m`` (default, unmodified variances), 1 (modified
        variances), or 0 / ``math.inf`` for the infinite-F limit of the paper
        (alpha <= 0 only).
    S
        Stride factor: 1 for the non-overlapped estimator, m for the fully
        overlapped one (any integer 1..m is accepted).

    Returns
    -------
    float
        The EDF, by the case analysis of [1]_ (section 5): the exact correlation
        sum while it has at most 100 terms, the asymptotic forms of tables 1-3
        beyond, and the closed form for unmodified WPM.

    Raises
    ------
    InputError
        For alpha, d, m, n, F or S out of range, alpha + 2d <= 1, or n shorter than
        the filter length L = m/F + m d.

    References
    ----------
    .. [1] C. A. Greenhall, W. J. Riley, "Uncertainty of stability variances based
       on finite differences", Proc. 35th PTTI Meeting (2003).
    """
    alpha, d, m, n, f, S = _validate_greenhall(alpha, d, m, n, F, S)
    return 1.0 / _greenhall_inverse(alpha, d, m, n, f, S)


# --------------------------------------------------------------------------- per statistic
# Each model takes an identified alpha (-2..2), the averaging factor m and the
# number of phase samples n, and returns the raw EDF; the statistics registry
# (stability.deviations.registry) says which model a statistic uses, raises the
# result to the floor of one degree of freedom and handles an unknown alpha.


@dataclass(frozen=True)
class GreenhallModel:
    """Greenhall & Riley's EDF [1]_ for one kind of finite-difference variance.

    ``d`` is the difference order (2 Allan and modified Allan, 3 Hadamard),
    ``modified`` selects F = 1 (else F = m), ``overlapping`` S = m (else 1).
    """

    d: int
    modified: bool
    overlapping: bool

    def __call__(self, alpha: int, m: int, n: int) -> float:
        if m == 1:
            # At m = 1 each of these variances is the mean square of the N - d sampled
            # d-th phase differences: the exact EDF of the sampled power law
            # (confidence_models.increment_edf). The paper's F = m filter models phase
            # averaged over tau0 and gives 17 to 24 % more degrees of freedom than
            # sampled WFM, FFM and RWFM noise has (tests/test_confidence_exact.py).
            return exact.increment_edf(alpha, self.d, n - self.d) if n > self.d else 1.0
        f = 1.0 if self.modified else float(m)
        s = m if self.overlapping else 1
        if n < (m / f) + m * self.d:
            # Beyond the model's range the estimator has at most about one term: the floor.
            return 1.0
        return 1.0 / _greenhall_inverse(alpha, self.d, m, n, f, s)


_OADEV_MODEL = GreenhallModel(2, modified=False, overlapping=True)
_MDEV_MODEL = GreenhallModel(2, modified=True, overlapping=True)
_OHDEV_MODEL = GreenhallModel(3, modified=False, overlapping=True)


def totvar_edf(alpha: int, m: int, n: int) -> float:
    """TOTVAR EDF.

    At m = 1, where TOTDEV is OADEV, OADEV's. For WFM, FFM and RWFM the empirical
    ``b T/tau - c`` of NIST SP 1065 [2]_ table 11 (from memory); for WPM and FPM the
    models fitted to the exact moments (:func:`confidence_models.totvar_edf_pm`):
    the reflected ends cost degrees of freedom at long tau, far below OAVAR's.
    """
    if m == 1:
        return _OADEV_MODEL(alpha, 1, n)
    if alpha not in _TOT_BC:
        return exact.totvar_edf_pm(alpha, m, n, _OADEV_MODEL(alpha, m, n))
    b, c = _TOT_BC[alpha]
    return b * (n - 1) / m - c  # T / tau with T = (N - 1) tau0


def mtot_edf(alpha: int, m: int, n: int) -> float:
    """MTOT and TTOT EDF: MVAR's at m = 1 (MTOT^2 = MVAR/2 there); for m >= 2 the model
    fitted to the exact EDF (:func:`confidence_models.mtot_edf`)."""
    if m == 1:
        return _MDEV_MODEL(alpha, 1, n)
    return exact.mtot_edf(alpha, m, n)


def htot_edf(alpha: int, m: int, n: int) -> float:
    """HTOT EDF: OHDEV's at m = 1 (HTOT is OHDEV there); for m >= 2 the model fitted to
    the exact EDF (:func:`confidence_models.htot_edf`)."""
    if m == 1:
        return _OHDEV_MODEL(alpha, 1, n)
    return exact.htot_edf(alpha, m, n)


def theo1_edf(alpha: int, m: int, n: int) -> float:
    """Howe's Theo1 EDF with r = 0.75 m (SP 1065 [2]_; from memory).

    FPM has no formula at hand: the smaller of its neighbours WPM and WFM.
    """
    r = 0.75 * m
    N = float(n)
    with np.errstate(all="ignore"):
        if alpha == 2:
            return 0.86 * (N + 1) * (N - 4 * r / 3) / (N - r) * r / (r + 1.14)
        if alpha == 0:
            return ((4.1 * N + 0.8) / r - (3.1 * N + 6.5) / N) * r**1.5 / (r**1.5 + 5.2)
        if alpha == -1:
            return (2 * N * N - 1.3 * N * r - 3.5 * r) / (N * r) * r**3 / (r**3 + 2.3)
        if alpha == -2:
            u = 4.4 * N - 1
            return (
                (4.4 * N - 2)
                / (2.9 * r)
                * (u * u - 8.6 * r * u + 11.4 * r * r)
                / (4.4 * N - 3) ** 2
            )
    return min(theo1_edf(2, m, n), theo1_edf(0, m, n))


# --------------------------------------------------------------------------- bias
# Each bias rule returns B with corrected variance = raw variance / B for an
# identified alpha (SP 1065 [2]_ sections 5.2.11-5.2.14 and Howe's papers;
# coefficients from memory, see the module docstring).


def totvar_bias(alpha: int, m: int, n: int) -> float:
    """TOTVAR/AVAR (:func:`confidence_models.totvar_bias`): 1 at m = 1; WPM exact, FPM a
    fit to the exact ratio, WFM 1, FFM and RWFM 1 - a tau/T (SP 1065, from memory)."""
    return exact.totvar_bias(alpha, m, n)


def mtot_bias(alpha: int, m: int, n: int) -> float:
    """MTOT/MVAR: 1/2 at m = 1 (exact for any data), the exact ratio of expectations
    for m >= 2 (about 0.995, 0.851, 0.771, 0.718, 0.679, WPM .. RWFM)."""
    return exact.mtot_bias(alpha, m)


def htot_bias(alpha: int, m: int, n: int) -> float:
    """HTOT/HVAR: 1 at m = 1 (HTOT is OHDEV), the exact ratio for m >= 2 (WPM
    1.25-1.38, FPM 1.11-1.28, WFM 0.995, FFM 0.85, RWFM 0.77)."""
    return exact.htot_bias(alpha, m)


def theo1_bias(alpha: int, m: int, n: int) -> float:
    """AVAR/Theo1 = a + b / tau^c (tau = 0.75 m in units of tau0), so B = 1/(a + b/tau^c)."""
    a, b, c = _THEO1_BIAS[alpha]
    ratio = a + b / (0.75 * m) ** c
    return 1.0 / ratio if ratio > 0 else 1.0


# --------------------------------------------------------------------------- other forms


def _validate_simple(alpha: Any, m: Any, n: Any) -> tuple[int, int, int]:
    alpha = _as_int(alpha, "alpha", low=-2, high=2)
    n = _as_int(n, "n", low=4)
    m = _as_int(m, "m", low=1, high=(n - 1) // 2)
    return alpha, m, n


def simple_oadev_edf(alpha: int, m: int, n: int) -> float:
    """The handbook's approximate EDF of the overlapping Allan variance.

    Closed forms of Howe, Allan and Barnes as given in NIST SP 1065 (from memory);
    a quick alternative to :func:`greenhall_edf`, which is the reference. N is
    the number of phase samples.

    ====  =====================================================================
    WPM   (N+1)(N-2m) / (2(N-m))
    FPM   exp{sqrt[ln((N-1)/(2m)) ln((2m+1)(N-1)/4)]}
    WFM   [3(N-1)/(2m) - 2(N-2)/N] 4m^2/(4m^2+5)
    FFM   m = 1: 2(N-2)^2/(2.3N-4.9);  m >= 2: 5N^2/(4m(N+3m))
    RWFM  (N-2)/m [(N-1)^2 - 3m(N-1) + 4m^2] / (N-3)^2
    ====  =====================================================================

    Raises
    ------
    InputError
        For alpha outside -2..2, n < 4, or m outside 1..(n-1)//2.
    """
    alpha, m, n = _validate_simple(alpha, m, n)
    N = float(n)
    if alpha == 2:
        return (N + 1) * (N - 2 * m) / (2 * (N - m))
    if alpha == 1:
        return math.exp(
            math.sqrt(math.log((N - 1) / (2 * m)) * math.log((2 * m + 1) * (N - 1) / 4))
        )
    if alpha == 0:
        return (3 * (N - 1) / (2 * m) - 2 * (N - 2) / N) * 4 * m * m / (4 * m * m + 5)
    if alpha == -1:
        if m == 1:
            return 2 * (N - 2) ** 2 / (2.3 * N - 4.9)
        return 5 * N * N / (4 * m * (N + 3 * m))
    return (N - 2) / m * ((N - 1) ** 2 - 3 * m * (N - 1) + 4 * m * m) / (N - 3) ** 2
