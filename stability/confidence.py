"""Equivalent degrees of freedom, chi-squared confidence intervals and bias corrections.

A stability variance estimate s^2 of a power-law noise process is treated as
chi-squared distributed, ``nu * s^2 / sigma^2 ~ chi2(nu)``, with an *equivalent
degrees of freedom* (EDF) ``nu`` that depends on the statistic, the noise type
alpha (exponent of S_y(f)), the averaging factor m and the record length N
(number of phase samples). This module computes that EDF, the interval that
follows from it, and the bias factors of the total and Theo families.

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
* Modified total and time total variances: ``edf = b T/tau - c`` for all five
  noise types [2]_ (from memory); at m = 1, where MTOT^2 = MVAR/2, MVAR's EDF.
* Hadamard total variance: no EDF coefficients could be confirmed here, so the
  overlapping Hadamard EDF (Greenhall, d = 3, F = m, S = m) is used. HTOT has at
  least the EDF of OHVAR at the same tau, so this is conservative.
* Theo1, TheoBR, ThêoH: Howe's Theo1 EDF formulas with r = 0.75 m [4]_ (from
  memory, see the project's reference notes). For FPM no formula is at hand: the
  smaller of the WPM and WFM values (its neighbours) is used. ThêoH at taus where
  it is computed as OADEV is qualified by the caller as ``oadev``.
* Parabolic variance: the modified Allan EDF (Greenhall, d = 2, F = 1, S = m).
  This is a fallback recalled, not read, from Vernotte et al. [5]_, who report
  PVAR confidence close to that of MVAR (from memory).
* MTIE and TIE rms are not chi-squared distributed: their EDF is NaN.

When the noise type is unknown (``alpha=None``) the smallest EDF over
alpha = -2..2 is used, i.e. the widest interval. Every EDF where a model applies
is finite and at least 1 (smaller values, which empirical formulas give near the
end of the record, are raised to 1).

Confidence intervals
--------------------
``nu s^2 / chi2_{1-p/2}(nu) <= sigma^2 <= nu s^2 / chi2_{p/2}(nu)``, p = 1 -
confidence, square-rooted for the deviation [2]_ (section 5.3).

Bias
----
The total and Theo1 estimators are biased against the Allan (or Hadamard,
modified Allan) variance for some noise types; :func:`bias_factor` returns the
factor B with corrected variance = raw variance / B. The TOTVAR (WPM, FPM), MTOT
and HTOT factors are exact ratios of expectations (:mod:`stability.confidence_models`);
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

import difflib
import math
from numbers import Integral, Real
from typing import Any

import numpy as np

from .confidence_models import htot_bias, increment_edf, mtot_bias, totvar_bias, totvar_edf_pm
from .errors import InputError
from .special import binomial, chi2_upper_quantile
from .table import ConfidenceInterval

__all__ = [
    "EDF_STATISTICS",
    "BIAS_CORRECTED",
    "greenhall_edf",
    "edf_for",
    "edf_many",
    "chi2_interval",
    "bias_factor",
    "barnes_b2",
    "simple_oadev_edf",
    "theo1_interval",
]

#: Statistic identifiers :func:`edf_for` and :func:`bias_factor` understand.
EDF_STATISTICS = (
    "adev",
    "oadev",
    "mdev",
    "tdev",
    "hdev",
    "ohdev",
    "totdev",
    "mtot",
    "ttot",
    "htot",
    "theo1",
    "theobr",
    "theoh",
    "pdev",
    "mtie",
    "tie_rms",
)

#: Statistics whose raw estimate :func:`bias_factor` corrects. TheoBR is bias-removed
#: by construction (it is scaled to the Allan variance), and ThêoH is built from
#: TheoBR and OADEV, so neither is listed.
BIAS_CORRECTED: frozenset[str] = frozenset({"totdev", "mtot", "ttot", "htot", "theo1"})

_ALPHAS = (2, 1, 0, -1, -2)
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

# NIST SP 1065 [2] (TOTVAR and MTOT/TTOT, from memory): alpha -> (b, c),
# edf = b * T / tau - c.
_TOT_BC = {0: (1.50, 0.0), -1: (1.17, 0.22), -2: (0.93, 0.36)}
_MTOT_BC = {2: (1.90, 2.10), 1: (1.20, 1.40), 0: (1.10, 1.20), -1: (0.85, 0.50), -2: (0.75, 0.31)}

# TOTVAR, MTOT and HTOT bias: stability.confidence_models (exact moments; FFM and RWFM
# TOTVAR from SP 1065 section 5.2.11). Theo1 (SP 1065, from memory):
# AVAR/Theo1 = a + b / tau^c, tau in units of tau0 (= 0.75 m).
_THEO1_BIAS = {
    2: (0.09, 0.74, 0.40),
    1: (0.14, 0.82, 0.30),
    0: (1.0, 0.0, 0.0),
    -1: (1.87, -1.05, 0.79),
    -2: (2.70, -1.53, 0.85),
}

# statistic -> (d, modified, overlapping) for the Greenhall-based models.
_GREENHALL_KIND = {
    "adev": (2, False, False),
    "oadev": (2, False, True),
    "mdev": (2, True, True),
    "tdev": (2, True, True),
    "pdev": (2, True, True),
    "hdev": (3, False, False),
    "ohdev": (3, False, True),
    "htot": (3, False, True),
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


def _check_statistic(statistic: Any) -> str:
    key = str(statistic).strip().lower() if isinstance(statistic, str) else None
    if key not in EDF_STATISTICS:
        close = difflib.get_close_matches(str(statistic).lower(), EDF_STATISTICS, n=1)
        hint = f"did you mean {close[0]!r}? " if close else ""
        raise InputError(
            f"statistic must be one of the known identifiers, got {statistic!r}",
            hint=f"{hint}choose from {', '.join(EDF_STATISTICS)}",
        )
    return key


def _check_alpha(alpha: Any) -> int | None:
    """alpha in -2..2, or None / NaN for 'not identified'."""
    if alpha is None:
        return None
    if isinstance(alpha, Real) and not isinstance(alpha, bool) and math.isnan(float(alpha)):
        return None
    return _as_int(alpha, "alpha", low=-2, high=2)


def _validate_edf_for(
    statistic: Any, alpha: Any, m: Any, n: Any
) -> tuple[str, int | None, int, int]:
    return (
        _check_statistic(statistic),
        _check_alpha(alpha),
        _as_int(m, "m", low=1),
        _as_int(n, "n", low=2),
    )


def _validate_confidence(confidence: Any) -> float:
    if isinstance(confidence, bool) or not isinstance(confidence, Real):
        raise InputError(f"confidence must be a number in (0, 1), got {confidence!r}")
    level = float(confidence)
    if not 0.0 < level < 1.0:
        raise InputError(f"confidence must lie strictly between 0 and 1, got {confidence!r}")
    return level


# --------------------------------------------------------------------------- Greenhall


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
    coef = (-1.0) ** k * binomial(2 * d, d + k)
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
    c0 = binomial(2 * d, d) ** 2
    if K <= d:
        k = np.arange(1 - K, K)
        return float(((1.0 - np.abs(k) / r) * binomial(2 * d, d + k) ** 2).sum() / (M * c0))
    a0 = binomial(4 * d, 2 * d) / c0
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


def _greenhall_for(statistic: str, alpha: int, m: int, n: int) -> float:
    d, modified, overlapping = _GREENHALL_KIND[statistic]
    if m == 1:
        # Every one of these is the mean square of the N - d d-th phase differences at
        # m = 1: the exact EDF of the sampled power law (confidence_models.increment_edf).
        return increment_edf(alpha, d, n - d) if n > d else 1.0
    f = 1.0 if modified else float(m)
    s = m if overlapping else 1
    if n < (m / f) + m * d:
        # Beyond the model's range the estimator has at most about one term: the floor.
        return 1.0
    return 1.0 / _greenhall_inverse(alpha, d, m, n, f, s)


def _theo1_edf(alpha: int, m: int, n: int) -> float:
    """Howe's Theo1 EDF with r = 0.75 m (SP 1065 [2]; from memory)."""
    r = 0.75 * m
    N = float(n)
    if alpha == 2:
        return 0.86 * (N + 1) * (N - 4 * r / 3) / (N - r) * r / (r + 1.14)
    if alpha == 0:
        return ((4.1 * N + 0.8) / r - (3.1 * N + 6.5) / N) * r**1.5 / (r**1.5 + 5.2)
    if alpha == -1:
        return (2 * N * N - 1.3 * N * r - 3.5 * r) / (N * r) * r**3 / (r**3 + 2.3)
    if alpha == -2:
        u = 4.4 * N - 1
        return (4.4 * N - 2) / (2.9 * r) * (u * u - 8.6 * r * u + 11.4 * r * r) / (4.4 * N - 3) ** 2
    # FPM: no published formula at hand; the smaller of its neighbours WPM and WFM.
    return min(_theo1_edf(2, m, n), _theo1_edf(0, m, n))


def _edf_known(statistic: str, alpha: int, m: int, n: int) -> float:
    """EDF for an identified alpha; NaN for the time-error statistics."""
    if statistic in ("mtie", "tie_rms"):
        return math.nan
    ratio = (n - 1) / m  # T / tau with T = (N - 1) tau0
    if statistic == "totdev":
        if m == 1:  # TOTDEV(tau0) is OADEV(tau0)
            edf = _greenhall_for("oadev", alpha, 1, n)
        elif alpha in _TOT_BC:
            b, c = _TOT_BC[alpha]
            edf = b * ratio - c
        else:  # WPM / FPM: derived from the exact moments (confidence_models)
            edf = totvar_edf_pm(alpha, m, n, _greenhall_for("oadev", alpha, m, n))
    elif statistic in ("mtot", "ttot"):
        if m == 1:  # MTOT(tau0)^2 = MVAR(tau0)/2 exactly: MVAR's EDF
            edf = _greenhall_for("mdev", alpha, 1, n)
        else:
            b, c = _MTOT_BC[alpha]
            edf = b * ratio - c
    elif statistic in ("theo1", "theobr", "theoh"):
        with np.errstate(all="ignore"):
            edf = _theo1_edf(alpha, m, n)
    else:
        edf = _greenhall_for(statistic, alpha, m, n)
    # Empirical formulas go below 1 (even negative) near the end of the record,
    # and the Greenhall sum can give values just under 1 with one term: a variance
    # estimate always has at least one degree of freedom, so raise them to 1.
    if not math.isfinite(edf) or edf < 1.0:
        return 1.0
    return float(edf)


def edf_for(statistic: str, alpha: int | None, m: int, n: int) -> float:
    """EDF of one statistic at one averaging factor.

    Parameters
    ----------
    statistic
        Identifier: adev, oadev, mdev, tdev, hdev, ohdev, totdev, mtot, ttot,
        htot, theo1, theobr, theoh, pdev, mtie, tie_rms (see the module
        docstring for the model used by each).
    alpha
        Identified power-law exponent of S_y(f), -2..2; None (or NaN) when the
        noise type is not known: the smallest EDF over the five types is used.
    m
        Averaging factor (for the Theo family, tau = 0.75 m tau0).
    n
        Number of phase samples N.

    Returns
    -------
    float
        A finite EDF >= 1 for the variance statistics, NaN for MTIE and TIE rms.
        Averaging factors beyond a model's range give 1 (the floor).

    Raises
    ------
    InputError
        For an unknown statistic, alpha outside -2..2, m < 1 or n < 2.
    """
    statistic, alpha, m, n = _validate_edf_for(statistic, alpha, m, n)
    if alpha is not None:
        return _edf_known(statistic, alpha, m, n)
    if statistic in ("mtie", "tie_rms"):
        return math.nan
    return min(_edf_known(statistic, a, m, n) for a in _ALPHAS)


def edf_many(statistic: str, alphas: Any, ms: Any, n: int) -> np.ndarray:
    """:func:`edf_for` over arrays of alphas and averaging factors (broadcast together).

    NaN entries of ``alphas`` mean "not identified".
    """
    _check_statistic(statistic)
    _as_int(n, "n", low=2)
    try:
        a = np.asarray(alphas, dtype=float)
        mm = np.asarray(ms)
        a, mm = np.broadcast_arrays(a, mm)
    except (TypeError, ValueError):
        raise InputError(
            "alphas and ms must be numeric arrays of broadcastable shapes, "
            f"got shapes {np.shape(alphas)} and {np.shape(ms)}"
        ) from None
    out = np.empty(a.shape, dtype=float)
    for idx in np.ndindex(a.shape):  # one call per tau
        alpha = None if np.isnan(a[idx]) else a[idx]
        out[idx] = edf_for(statistic, alpha, mm[idx].item(), n)
    return out


# --------------------------------------------------------------------------- intervals


def chi2_interval(deviation: Any, edf: Any, confidence: float = 0.683) -> ConfidenceInterval:
    """Chi-squared confidence interval of a deviation.

    The variance interval is ``[nu s^2 / chi2_{1-p/2}(nu), nu s^2 / chi2_{p/2}(nu)]``
    with p = 1 - confidence and non-integer nu allowed (NIST SP 1065 section 5.3);
    the deviation bounds are its square roots.

    Parameters
    ----------
    deviation
        Deviation(s) s (bias-corrected where that applies); arrays broadcast with
        ``edf``.
    edf
        Equivalent degrees of freedom nu.
    confidence
        Two-sided confidence level in (0, 1), 0.683 by default.

    Returns
    -------
    ConfidenceInterval
        ``(low, high)``, floats for scalar input, arrays otherwise. Bounds are NaN
        where the deviation is NaN, infinite or negative, or the EDF is NaN,
        infinite or <= 0. Always
        ``low <= deviation <= high``: at low confidence levels the chi-squared
        interval can miss the point estimate (the chi-squared median lies below
        its mean), and is then widened to reach it.
    """
    level = _validate_confidence(confidence)
    try:
        s = np.asarray(deviation, dtype=float)
        nu = np.asarray(edf, dtype=float)
        s, nu = np.broadcast_arrays(s, nu)
    except (TypeError, ValueError):
        raise InputError(
            "deviation and edf must be numbers or arrays of broadcastable shapes, "
            f"got {type(deviation).__name__} and {type(edf).__name__}"
        ) from None
    p = 1.0 - level
    good = np.isfinite(s) & (s >= 0) & np.isfinite(nu) & (nu > 0)
    nu_ok = np.where(good, nu, 1.0)
    # the chi-squared quantiles with upper-tail probabilities p/2 and 1 - p/2
    upper_q = chi2_upper_quantile(nu_ok, p / 2.0)
    lower_q = chi2_upper_quantile(nu_ok, 1.0 - p / 2.0)
    # a fraction of one degree of freedom has a lower quantile that underflows: no upper bound
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        low = s * np.sqrt(nu_ok / upper_q)
        high = s * np.sqrt(nu_ok / lower_q)
    low = np.where(good, np.minimum(low, s), np.nan)
    high = np.where(good, np.maximum(high, s), np.nan)
    if low.ndim == 0:
        return ConfidenceInterval(float(low), float(high))
    return ConfidenceInterval(low, high)


# --------------------------------------------------------------------------- bias


def bias_factor(statistic: str, alpha: int | None, m: int, n: int) -> float:
    """Bias factor B of a statistic: corrected variance = raw variance / B.

    * totdev: TOTVAR/AVAR (:func:`~stability.confidence_models.totvar_bias`): 1 at
      m = 1; WPM 1 + 4(m - 1 + [m even])/(3(N - 2)) (exact); FPM
      1 + (0.818 m - 0.37)/(N - 2); WFM 1; FFM, RWFM 1 - a tau/T, a = 0.481, 0.750,
      T = (N - 1) tau0.
    * mtot, ttot: MTOT/MVAR (:func:`~stability.confidence_models.mtot_bias`): 1/2 at
      m = 1 (exact for any data), the exact ratio for m >= 2 (about 0.995, 0.851,
      0.771, 0.718, 0.679, WPM .. RWFM).
    * htot: HTOT/HVAR (:func:`~stability.confidence_models.htot_bias`): 1 at m = 1
      (HTOT is OHDEV there), the exact ratio for m >= 2 (WPM 1.25-1.38, FPM
      1.11-1.28, WFM 0.995, FFM 0.85, RWFM 0.77).
    * theo1: AVAR/Theo1 = a + b / tau^c (tau = 0.75 m in units of tau0), so
      B = 1 / (a + b / tau^c).

    Sources: exact moments of the estimators (stability.confidence_models), NIST SP
    1065 sections 5.2.11 and 5.2.14 and Howe's papers (Theo1 and the FFM/RWFM TOTVAR
    coefficients from memory, see the module docstring). Every other statistic, and an unknown
    alpha, gives 1.0 (no correction).
    """
    statistic, alpha, m, n = _validate_edf_for(statistic, alpha, m, n)
    if alpha is None or statistic not in BIAS_CORRECTED:
        return 1.0
    if statistic == "totdev":
        return totvar_bias(alpha, m, n)
    if statistic in ("mtot", "ttot"):
        return mtot_bias(alpha, m)
    if statistic == "htot":
        return htot_bias(alpha, m)
    a, b, c = _THEO1_BIAS[alpha]
    ratio = a + b / (0.75 * m) ** c
    return 1.0 / ratio if ratio > 0 else 1.0


def theo1_interval(
    raw_deviation: float,
    alpha: int,
    m: int,
    n: int,
    confidence: float = 0.683,
    *,
    uncertain: bool | float = True,
) -> tuple[float, ConfidenceInterval, tuple[int, ...]]:
    """Theo1 deviation and an interval that covers the plausible noise types.

    Theo1's bias factor (AVAR/Theo1 = a + b/tau^c) changes by a factor of up to 3
    between neighbouring noise types at long tau, so a missed identification moves
    the corrected value far more than its chi-squared interval is wide. When the
    identification is uncertain, the interval returned is the union of the
    intervals for the identified type and its neighbours alpha - 1 and alpha + 1
    (within -2..2), each with its own bias correction and EDF; the point estimate
    stays the one for the identified type.

    Parameters
    ----------
    raw_deviation
        Theo1 deviation before any bias correction.
    alpha
        Identified power-law exponent, -2..2.
    m, n
        Averaging factor (tau = 0.75 m tau0) and number of phase samples.
    confidence
        Two-sided confidence level.
    uncertain
        True: take the union with the neighbours; False: the identified type only; a
        number in [0, 1]: the probability that a neighbouring type is the true one,
        and the neighbours are taken when it is at least 0.05.

    Returns
    -------
    (deviation, interval, alphas)
        The bias-corrected deviation for ``alpha``, the interval, and the noise types
        whose intervals it joins.
    """
    statistic, alpha, m, n = _validate_edf_for("theo1", alpha, m, n)
    if alpha is None:
        raise InputError("alpha must be an identified type in -2..2 for theo1_interval")
    if isinstance(uncertain, bool):
        wide = uncertain
    elif isinstance(uncertain, Real) and 0.0 <= float(uncertain) <= 1.0:
        wide = float(uncertain) >= 0.05
    else:
        raise InputError(
            f"uncertain must be True, False or a probability in [0, 1], got {uncertain!r}"
        )
    alphas = tuple(a for a in (alpha - 1, alpha, alpha + 1) if -2 <= a <= 2) if wide else (alpha,)
    lows, highs = [], []
    point = math.nan
    for a in alphas:
        dev = float(raw_deviation) / math.sqrt(bias_factor(statistic, a, m, n))
        low, high = chi2_interval(dev, edf_for(statistic, a, m, n), confidence)
        lows.append(low)
        highs.append(high)
        if a == alpha:
            point = dev
    return point, ConfidenceInterval(min(lows), max(highs)), alphas


# --------------------------------------------------------------------------- other forms


def _validate_b2(r: Any, mu: Any) -> tuple[np.ndarray, float]:
    try:
        rr = np.asarray(r, dtype=float)
    except (TypeError, ValueError):
        raise InputError(f"r must be a positive number or array, got {r!r}") from None
    if rr.size == 0 or not np.all(np.isfinite(rr) & (rr > 0)):
        raise InputError(f"r (T/tau) must be finite and > 0, got {r!r}")
    if isinstance(mu, bool) or not isinstance(mu, Real) or not -2.0 <= float(mu) < 2.0:
        raise InputError(f"mu must be a number in [-2, 2), got {mu!r}")
    return rr, float(mu)


def barnes_b2(r: Any, mu: float) -> Any:
    """Barnes' bias function B2(r, mu) for dead time between measurements.

    B2 = AVAR with dead time / AVAR without, for r = T/tau (T the repetition
    interval, tau the averaging time) and mu = -alpha - 1 (NBS TN 375)::

        B2(r, mu) = [(r+1)^(mu+2) - 2 r^(mu+2) + |r-1|^(mu+2) - 2] / [4 (2^mu - 1)]

    At mu = 0 (FFM) the expression is 0/0; its limit is used,
    [(r+1)^2 ln(r+1) - 2 r^2 ln r + (r-1)^2 ln|r-1|] / (4 ln 2). ``|r-1|^(mu+2)``
    is taken as 0 at r = 1 (its limit for mu > -2), so B2(1, mu) = 1.

    Parameters
    ----------
    r
        Ratio T/tau > 0, scalar or array.
    mu
        Exponent in [-2, 2).

    References
    ----------
    .. [1] J. A. Barnes, NBS Technical Note 375 (1969).
    """
    rr, mu = _validate_b2(r, mu)
    e = mu + 2.0
    near = np.abs(rr - 1.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        if mu == 0.0:

            def xlx(v: np.ndarray) -> np.ndarray:
                return v * v * np.log(np.where(v > 0, v, 1.0))

            out = (xlx(rr + 1.0) - 2.0 * xlx(rr) + xlx(near)) / (4.0 * math.log(2.0))
        else:
            tail = np.where(near > 0, near ** np.where(near > 0, e, 1.0), 0.0)
            out = ((rr + 1.0) ** e - 2.0 * rr**e + tail - 2.0) / (4.0 * (2.0**mu - 1.0))
    return float(out) if out.ndim == 0 else out


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
