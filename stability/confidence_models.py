"""EDF and bias models derived from the exact moments of the estimators.

Each variance estimator of the Allan, Hadamard and total families is a quadratic
form v = x' Q x of the phase. For Gaussian power-law noise with phase covariance C
its mean is tr(QC) and its EDF tr(QC)^2 / tr((QC)^2). The models here were derived
from those exact moments for the discrete power-law noise of Kasdin and Walter [1]_
(the model ``stability.simulate`` generates; for white FM it is sampled Brownian
phase exactly), and are re-checked by the project's tests with an independent
implementation of the forms.

* :func:`increment_edf`: the exact EDF at m = 1. There every statistic of the Allan
  family (ADEV, OADEV, MDEV, TDEV, TOTDEV, and MTOT, which is MVAR/2 there) is the mean
  square of one stationary sequence, the second differences of the phase; the
  Hadamard family uses the third differences. Their autocovariance is that of a
  fractionally differenced white noise (a discrete power law), known in closed form
  [2]_, and the EDF is an O(N) sum. Greenhall and Riley's general algorithm [3]_
  models the phase as averaged over tau0 (F = m), which at m = 1 gives 17 to 24 %
  more degrees of freedom than sampled WFM, FFM and RWFM noise has; it stays in use
  for m >= 2, where the two agree closely.
* :func:`reflected_total_ratio`: E[MTOT] / E[MVAR] (and, shifted by two in alpha,
  E[HTOT] / E[HVAR]), tabulated over m. This is the bias of MTOT relative to MVAR
  that NIST SP 1065 [4]_ (section 5.2.12) corrects by dividing MTOT by a per-noise
  factor; the handbook's factors (0.94, 0.83, 0.73, 0.70, 0.69 for WPM .. RWFM, from
  memory) are replaced by the exact ratios.
* :func:`totvar_bias` and :func:`totvar_edf_pm`: the bias and EDF of TOTVAR for WPM
  and FPM, where no published model was at hand. The reflected ends add 2(m - 1)
  terms of larger variance that share the end samples.
* :func:`reflected_total_edf`, :func:`mtot_edf` and :func:`htot_edf`: the EDF of MTOT
  (and TTOT) and HTOT for m >= 2, a model fitted to the exact EDF over N = 128 .. 2048.
  It replaces the handbook's MTOT ``b T/tau - c`` [4]_ (from memory), which is 19 to
  27 % high at m = 64, N = 512 and twice the exact EDF for WPM at m = 2, and the
  overlapping Hadamard EDF that HTOT borrowed, 2 to 3 times too low at long tau.

References
----------
.. [1] N. J. Kasdin, T. Walter, "Discrete simulation of power law noise", Proc. IEEE
   Frequency Control Symposium (1992).
.. [2] J. R. M. Hosking, "Fractional differencing", Biometrika 68 (1981) 165-176:
   the autocovariance of (1 - B)^(-d) white noise, gamma_0 = Gamma(1 - 2d) /
   Gamma(1 - d)^2, gamma_k = gamma_{k-1} (k - 1 + d) / (k - d).
.. [3] C. A. Greenhall, W. J. Riley, "Uncertainty of stability variances based on
   finite differences", Proc. 35th PTTI Meeting (2003).
.. [4] W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065 (2008).
"""

from __future__ import annotations

import math

import numpy as np

__all__ = [
    "increment_autocovariance",
    "increment_edf",
    "reflected_total_ratio",
    "mtot_bias",
    "htot_bias",
    "totvar_bias",
    "totvar_edf_pm",
    "reflected_total_edf",
    "mtot_edf",
    "htot_edf",
]

#: Lags summed in :func:`increment_edf`; the squared autocovariance of every
#: supported case decays at least as k^-4, so the tail past this is below 1e-12.
_MAX_LAGS = 1 << 16


def increment_autocovariance(alpha: int, d: int, lags: int) -> np.ndarray:
    """Autocovariance r_0 .. r_{lags-1} of the d-th phase difference (unit white input).

    Discrete power-law phase noise of type alpha is (1 - B)^-(2 - alpha)/2 applied to
    white noise [1]_; its d-th difference is fractionally differenced white noise
    with memory parameter f = (2 - alpha)/2 - d < 1/2, whose autocovariance is
    Hosking's closed form [2]_.
    """
    f = (2.0 - alpha) / 2.0 - d
    r0 = math.exp(math.lgamma(1.0 - 2.0 * f) - 2.0 * math.lgamma(1.0 - f))
    k = np.arange(1, max(lags, 1), dtype=float)
    return r0 * np.concatenate(([1.0], np.cumprod((k - 1.0 + f) / (k - f))))


def increment_edf(alpha: int, d: int, terms: int) -> float:
    """Exact EDF of the mean square of ``terms`` consecutive d-th phase differences.

    edf = n^2 r_0^2 / (n r_0^2 + 2 sum_{k=1}^{n-1} (n - k) r_k^2), n = terms, with the
    autocovariance of :func:`increment_autocovariance`. This is the EDF at m = 1 of
    ADEV, OADEV, MDEV, TDEV, TOTDEV, MTOT, TTOT (d = 2) and HDEV, OHDEV, HTOT (d = 3).
    For white FM and d = 2 it is 2n^2 / (3n - 1), Greenhall and Riley's exact case.
    """
    n = int(terms)
    if n < 1:
        return math.nan
    r = increment_autocovariance(alpha, d, min(n, _MAX_LAGS))
    lag = np.arange(r.size, dtype=float)
    weight = 2.0 * (n - lag)
    weight[0] = n
    return float(n * n * r[0] ** 2 / np.dot(weight, r * r))


# E[MTOT]/E[MVAR] for phase noise of type alpha' (4 and 3 serve HTOT's WPM and FPM,
# see reflected_total_ratio), by averaging factor, separately for even and odd m
# (the half-average slope of an odd 3m-sample subsequence leaves out its middle
# sample). Exact moments of the quadratic forms for Kasdin-Walter noise, computed by
# tests/tools/derive_total_ratios.py; the ratio does not depend on N.
_M_EVEN = (2, 4, 6, 8, 10, 12, 14, 16, 24, 32, 48, 64, 128, 256, 512)
_RATIO_EVEN = {
    4: (1.2458, 1.3117, 1.3343, 1.3458, 1.3528, 1.3574, 1.3608, 1.3633, 1.3691, 1.3721,
        1.3750, 1.3765, 1.3787, 1.3798, 1.3803),
    3: (1.1136, 1.1565, 1.1773, 1.1903, 1.1995, 1.2065, 1.2121, 1.2167, 1.2293, 1.2372,
        1.2471, 1.2533, 1.2657, 1.2751, 1.2820),
    2: (0.9979, 0.9960, 0.9956, 0.9955, 0.9954, 0.9954, 0.9953, 0.9953, 0.9953, 0.9953,
        0.9953, 0.9953, 0.9953, 0.9953, 0.9953),
    1: (0.8986, 0.8706, 0.8619, 0.8580, 0.8559, 0.8547, 0.8539, 0.8533, 0.8522, 0.8517,
        0.8512, 0.8509, 0.8503, 0.8496, 0.8489),
    0: (0.8144, 0.7837, 0.7766, 0.7740, 0.7727, 0.7721, 0.7717, 0.7714, 0.7709, 0.7707,
        0.7706, 0.7706, 0.7705, 0.7705, 0.7705),
    -1: (0.7443, 0.7241, 0.7204, 0.7191, 0.7185, 0.7183, 0.7181, 0.7180, 0.7178, 0.7177,
         0.7176, 0.7175, 0.7172, 0.7169, 0.7167),
    -2: (0.6866, 0.6812, 0.6799, 0.6794, 0.6792, 0.6790, 0.6790, 0.6789, 0.6788, 0.6788,
         0.6788, 0.6788, 0.6787, 0.6787, 0.6787),
}  # fmt: skip
_M_ODD = (3, 5, 7, 9, 11, 13, 15, 17, 25, 33, 49, 65, 129, 257, 513)
_RATIO_ODD = {
    4: (1.0942, 1.2033, 1.2499, 1.2757, 1.2922, 1.3036, 1.3119, 1.3183, 1.3337, 1.3416,
        1.3497, 1.3538, 1.3601, 1.3633, 1.3641),
    3: (1.0254, 1.1073, 1.1428, 1.1634, 1.1772, 1.1872, 1.1950, 1.2012, 1.2176, 1.2275,
        1.2392, 1.2464, 1.2604, 1.2707, 1.2779),
    2: (0.9375, 0.9726, 0.9828, 0.9871, 0.9894, 0.9908, 0.9917, 0.9923, 0.9936, 0.9941,
        0.9946, 0.9948, 0.9951, 0.9952, 0.9952),
    1: (0.8526, 0.8576, 0.8562, 0.8549, 0.8540, 0.8534, 0.8530, 0.8526, 0.8519, 0.8515,
        0.8511, 0.8509, 0.8503, 0.8496, 0.8489),
    0: (0.7811, 0.7765, 0.7739, 0.7727, 0.7720, 0.7716, 0.7713, 0.7712, 0.7708, 0.7707,
        0.7706, 0.7706, 0.7705, 0.7705, 0.7705),
    -1: (0.7250, 0.7206, 0.7191, 0.7185, 0.7182, 0.7180, 0.7179, 0.7179, 0.7177, 0.7177,
         0.7176, 0.7175, 0.7172, 0.7169, 0.7167),
    -2: (0.6814, 0.6800, 0.6794, 0.6791, 0.6790, 0.6789, 0.6789, 0.6789, 0.6788, 0.6788,
         0.6788, 0.6788, 0.6787, 0.6787, 0.6787),
}  # fmt: skip


def reflected_total_ratio(alpha: int, m: int) -> float:
    """E[MTOT] / E[MVAR] at averaging factor m >= 2 for phase noise of type alpha (-2..4).

    Linear interpolation in ln m on the table of even or odd m (its parity); past the
    table's end (m > 513) its last value, which has settled to 0.2 % there. The
    tabulated values are exact to 4 digits at the listed m; between them the
    interpolation error is below 0.3 %.

    HTOT applies MTOT's recipe to the frequency y, and OHVAR of the phase is MVAR's
    form applied to y, so E[HTOT] / E[HVAR] at alpha is this ratio at alpha + 2.
    """
    grid, table = (_M_EVEN, _RATIO_EVEN) if m % 2 == 0 else (_M_ODD, _RATIO_ODD)
    values = table[alpha]
    if m <= grid[0]:
        return values[0]
    return float(np.interp(math.log(m), np.log(grid), values))


def mtot_bias(alpha: int, m: int) -> float:
    """Bias factor B of MTOT (and TTOT) relative to MVAR: corrected variance = MTOT^2 / B.

    At m = 1 the recipe's 3-sample subsequences make MTOT^2 = MVAR/2 exactly for any
    data, so B = 1/2 for every noise type; for m >= 2, B = E[MTOT]/E[MVAR]
    (:func:`reflected_total_ratio`): about 0.995, 0.851, 0.771, 0.718, 0.679 for
    WPM .. RWFM at large m, up to 0.998, 0.899, 0.814, 0.744, 0.687 at m = 2.
    """
    if m == 1:
        return 0.5
    return reflected_total_ratio(alpha, m)


def htot_bias(alpha: int, m: int) -> float:
    """Bias factor B of HTOT relative to HVAR: corrected variance = HTOT^2 / B.

    At m = 1 HTOT is OHDEV (SP 1065 section 5.2.14), so B = 1. For m >= 2,
    B = E[HTOT]/E[HVAR], the MTOT ratio at alpha + 2: WPM 1.25 (m = 2) rising to
    1.38, FPM 1.11 rising to 1.28 (the reflected ends let the high-frequency noise
    in), WFM 0.995, FFM 0.85-0.90, RWFM 0.77-0.81.
    """
    if m == 1:
        return 1.0
    return reflected_total_ratio(alpha + 2, m)


# FFM, RWFM: TOTVAR/AVAR = 1 - a tau/T (Howe 2000; NIST SP 1065 section 5.2.11, from
# memory), T = (N - 1) tau0; within 1 % of the exact ratio for m <= N/4.
_TOT_BIAS_A = {0: 0.0, -1: 0.481, -2: 0.750}


def totvar_bias(alpha: int, m: int, n: int) -> float:
    """Bias factor B of TOTVAR relative to AVAR: corrected variance = TOTVAR / B.

    * m = 1: TOTDEV is OADEV, B = 1.
    * WPM (exact): the 2(m - 1) reflected terms 2x_1 - x_{1+j} - 2x_i + x_{i+m} have
      variance 10 var(x) instead of 6 (14 where m - i = i, once for even m), so
      B = 1 + 4 (m - 1 + [m even]) / (3 (N - 2)).
    * FPM: B = 1 + (0.818 m - 0.37)/(N - 2), a fit to the exact ratio over
      N = 128 .. 2048, 2 <= m <= N/2 (within 0.5 %).
    * WFM: 1 (the exact ratio is 1 + 1/N or closer).
    * FFM, RWFM: 1 - a tau/T with a = 0.481, 0.750 [SP 1065], T = (N - 1) tau0.
    """
    if m == 1:
        return 1.0
    if alpha == 2:
        return 1.0 + 4.0 * (m - 1 + (m % 2 == 0)) / (3.0 * (n - 2))
    if alpha == 1:
        return 1.0 + (0.818 * m - 0.37) / (n - 2)
    return 1.0 - _TOT_BIAS_A[alpha] * min(m / (n - 1), 1.0)


def totvar_edf_pm(alpha: int, m: int, n: int, oadev_edf: float) -> float:
    """EDF of TOTVAR for WPM (alpha = 2) and FPM (alpha = 1), m >= 2.

    The reflected ends repeat the end samples x_1 and x_N in every one of their m - 1
    terms, which adds a variance growing as m^2 and makes TOTVAR's EDF fall far
    below OAVAR's at long tau (about 1/6 of it at m = N/4 for WPM).

    * WPM: edf = (N + 1.312 m)^2 / (1.944 N + 0.884 m^2 - 0.086 m ln m + 3.82 m).
      The leading terms follow from the white phase: mean 6(N - 2) + 8m, variance of
      the sum 140 N from the interior and 2 x 32 m^2 from the ends (72 edf =
      2 x 36 (N + 4m/3)^2 / ...); the coefficients are a least-squares fit to the
      exact EDF over N = 128 .. 2048, 2 <= m <= N/2, within 0.5 %.
    * FPM: 1/edf = 1/(1.120 e) + (0.277 m^2 - 9.18 m)/(N + 2.50 m)^2 with e the
      overlapping Allan EDF (Greenhall and Riley) at the same m and N; a fit to the
      exact EDF over the same range, within +17 % / -30 % (the larger errors at
      m = 2 and m near N/2).
    """
    N = float(n)
    if alpha == 2:
        den = 1.944 * N + 0.884 * m * m - 0.086 * m * math.log(m) + 3.82 * m
        return (N + 1.312 * m) ** 2 / den
    inv = 1.0 / (1.120 * oadev_edf) + (0.277 * m * m - 9.18 * m) / (N + 2.50 * m) ** 2
    return 1.0 / inv if inv > 0 else 1.120 * oadev_edf


# EDF of the reflected total form (MTOT's on x; HTOT's is the same form on y = diff(x),
# see reflected_total_edf), alpha' -> (b0, b1, b2, b3, c1, c2, c3, g, k). A least-squares
# fit of log EDF to the exact EDF of the quadratic form for Kasdin-Walter noise, N = 128,
# 256, 512, 1024, 2048 and m = 2 .. N/3 (tests/tools/derive_total_edf.py). Worst relative
# error over that grid: 6.9 (2.6 for m <= N/4), 9.9, 4.5, 2.3, 0.8, 1.9, 1.2 % for
# alpha' = 4 .. -2.
_REFLECTED_EDF = {
    4: (0.7652, -0.2700, -0.0838, -0.1152, -2.6324, 9.6146, -4.9001, 1.0096, 0.0786),
    3: (2.4003, -5.1127, 4.5529, -0.2884, -3.5416, 18.4607, -37.2072, 0.3472, 0.0031),
    2: (1.8792, -0.3284, -1.9146, -0.4253, -3.0535, 9.6285, -11.6858, 0.0, 0.0),
    1: (1.2158, 0.6210, -1.1804, -0.1183, -2.5315, 3.3568, 3.8661, 0.0, 0.0),
    0: (1.0843, 0.2232, 0.0746, -0.0309, -2.1937, -0.6313, 11.5776, 0.0, 0.0),
    -1: (1.0112, 0.0625, 0.5139, -0.0175, -1.8619, -5.1840, 20.3777, 0.0, 0.0),
    -2: (0.7997, 0.0101, 0.5507, -0.0158, -1.8970, -7.1848, 26.4024, 0.0, 0.0),
}


def reflected_total_edf(alpha: int, m: int, n: int) -> float:
    """EDF of the reflected total form (MTOT's) on n samples, m >= 2, phase noise alpha (-2..4).

    With r = n/m, x = m/n and c = n - 3m + 1 subsequences,

        edf = r m^g (b0 + b1/m + b2/m^2 + b3 [m odd]/m) (1 + c1 x + c2 x^2 + c3 x^3) c/(c + k m).

    For alpha <= 2 the EDF is nearly a function of r (g = k = 0): about 1.9, 1.2, 1.08,
    1.01, 0.80 times r for WPM .. RWFM at large r, falling towards the end of the record.
    The rows 4 and 3 serve HTOT's WPM and FPM: there the reflected ends let the white
    and flicker phase into every subsequence and the EDF stays near 0.7 n for white PM.
    Fitted over n = 128 .. 2048 (see ``_REFLECTED_EDF`` for the accuracy); beyond that
    the model extrapolates in r, where the exact EDF has settled.
    """
    b0, b1, b2, b3, c1, c2, c3, g, k = _REFLECTED_EDF[alpha]
    x = m / n
    count = n - 3 * m + 1
    if count < 1:
        return math.nan
    odd = 1.0 if m % 2 else 0.0
    b = b0 + b1 / m + b2 / (m * m) + b3 * odd / m
    shape = 1.0 + c1 * x + c2 * x * x + c3 * x**3
    return (n / m) * m**g * b * shape * count / (count + k * m)


def mtot_edf(alpha: int, m: int, n: int) -> float:
    """EDF of MTOT and TTOT for N = n phase samples, m >= 2: :func:`reflected_total_edf`."""
    return reflected_total_edf(alpha, m, n)


def htot_edf(alpha: int, m: int, n: int) -> float:
    """EDF of HTOT for N = n phase samples, m >= 2.

    HTOT applies MTOT's form to the n - 1 frequency values, and the first difference of
    Kasdin-Walter phase noise of type alpha is such noise of type alpha + 2; so the EDF
    is :func:`reflected_total_edf` at alpha + 2 on n - 1 samples.
    """
    return reflected_total_edf(alpha + 2, m, n - 1)
