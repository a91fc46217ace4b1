"""Uncertainty of three-cornered-hat estimates: variance, resolution and intervals.

The hat estimate of oscillator i is a fixed linear combination of the pair
variance estimates, s_i^2 = sum_k c_ik v_k (Gray & Allan, reference 1). Each
pair variance is a quadratic form Q(d_k) of the pair's phase, and pair k holds
the difference d_k = sum_j D_kj n_j of the oscillators' noises n_j
(D_kj = +1 for the first member, -1 for the second). Expanding,

    s_i^2 = sum_{j,l} G_jl B(n_j, n_l),    G = D^T diag(c_i) D,

with B the bilinear form of Q (B(n, n) = Q(n)). For independent Gaussian
noises the terms are uncorrelated, and by Isserlis' theorem (reference 2)
Var Q(n_j) = 2 tr(Q S_j Q S_j) and Var B(n_j, n_l) = tr(Q S_j Q S_l), S_j the
covariance of n_j. Writing tr(Q S_j Q S_l) = sigma_j^2 sigma_l^2 / nu_jl
(nu_jj is the equivalent degrees of freedom of oscillator j's own variance
estimate, reference 3), the variance of the hat estimate is

    Var s_i^2 = 2 sum_{j,l} G_jl^2 sigma_j^2 sigma_l^2 / nu_jl.

For three oscillators and oscillator C this is
(2 sigma_C^4 + sigma_A^2 sigma_C^2 + sigma_B^2 sigma_C^2 + sigma_A^2 sigma_B^2) / nu
when all share one noise type (one nu). It differs from the sum for
independent pair estimates, sum_k 2 (c_k v_k)^2 / nu_k, because the pairs
share oscillators: for a quiet C the independent sum is three times too
large, for a noisy C next to two quiet ones half the truth. Here the
sigma_j^2 are the hat's own estimates (negative ones taken as zero), nu_jl is
the EDF of the measured pair (j, l) (its noise is the sum of the two), and
nu_jj the geometric mean of the EDFs of the pairs holding j; the result is
exact when all oscillators share one noise type.

Resolution. The terms without oscillator i make up the scatter that the
estimate of a noiseless oscillator i would have: the resolution of the hat
for i at that tau, r_i = sqrt(2 sum_{j,l != i} G_jl^2 sigma_j^2 sigma_l^2 /
nu_jl). It is evaluated as it would be if i were noiseless: the variance of
a measured pair (i, j) then is sigma_j^2, and that pair variance stands in
for sigma_j^2 (a hat estimate of sigma_j^2 falls where the estimate of i
rises, and would make a lucky estimate of i look resolved). Without i the
estimate is a sum of cross terms B(n_j, n_l) (G_jj = 0 for j != i, the
estimate being unbiased); a cross term of noises with nu degrees of freedom
is distributed as (X - Y) / 2, X and Y independent chi-squared(nu), a
symmetric law with excess kurtosis 6 / nu (:func:`null_multiple`). An
estimate is *resolved* when it exceeds the quantile of that law at the
one-sided tail of a three-sigma normal event (0.135 %), or of the interval's
own upper end when the confidence level is above 99.73 %, in units of r_i:
3 r_i for many degrees of freedom, 3.36 r_i at nu = 10, 4.18 r_i at nu = 2.
So a noiseless oscillator is reported as measured in about one row in a
thousand. A resolved row gets the chi-squared interval with the equivalent
degrees of freedom of the combination matched to its variance
(Satterthwaite, reference 4):

    nu_eff = 2 (s_i^2)^2 / Var s_i^2.

Any other row is *below resolution*: its interval is taken from the normal
distribution of the difference of the pair estimates, [0, U] (the lower
bound is zero wherever the interval reaches it), and U is reported as the
upper bound. U^2 is the largest sigma_i^2 = u that the estimate does not
reject at the upper end of the two-sided interval, the variance being taken
at u itself: max(s_i^2, 0) >= u - z sd(u), z the normal quantile of that
end (as the score interval of a proportion takes its variance at the bound).
Where the degrees of freedom are too few for a finite root (z^2 times the
relative variance of oscillator i's own term reaches 1), U is the cap of
:mod:`stability.hat`. A chi-squared interval with a fraction of a degree of
freedom is never used: with nu_eff << 1 its lower bound collapses onto the
estimate.

References
----------
1. J. E. Gray, D. W. Allan, "A method for estimating the frequency stability
   of an individual oscillator", Proc. 28th Annual Symposium on Frequency
   Control (1974), pp. 243-246.
2. L. Isserlis, "On a formula for the product-moment coefficient of any
   order of a normal frequency distribution in any number of variables",
   Biometrika 12, 134-139 (1918).
3. W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065
   (2008), sections 5.3 (EDF, chi-squared intervals) and 9.2 (three-cornered hat).
4. F. E. Satterthwaite, "An approximate distribution of estimates of variance
   components", Biometrics Bulletin 2(6), 110-114 (1946).
"""

from __future__ import annotations

import functools
import math
from collections.abc import Sequence
from typing import NamedTuple

import numpy as np

from .intervals import chi2_interval

__all__ = [
    "RESOLVED_MULTIPLE",
    "HatIntervals",
    "difference_matrix",
    "combination_variance",
    "null_multiple",
    "hat_intervals",
]

#: Resolved estimates exceed this many times the hat's resolution (at least).
RESOLVED_MULTIPLE = 3.0


class HatIntervals(NamedTuple):
    """Per oscillator and tau (arrays of shape (oscillators, taus))."""

    estimate: np.ndarray  # the signed variance estimate
    deviation: np.ndarray  # sqrt(estimate) where resolved, NaN otherwise
    ci_low: np.ndarray
    ci_high: np.ndarray
    edf: np.ndarray  # nu_eff where resolved, NaN otherwise
    upper_bound: np.ndarray  # ci_high where resolved, U otherwise (both capped)
    resolved: np.ndarray  # bool
    resolution: np.ndarray  # r_i, the scatter of a noiseless oscillator's estimate
    sd: np.ndarray  # standard deviation of the variance estimate


def difference_matrix(pairs: Sequence[tuple[str, str]], names: Sequence[str]) -> np.ndarray:
    """D (pairs x oscillators): +1 for a pair's first member, -1 for its second."""
    index = {n: i for i, n in enumerate(names)}
    design = np.zeros((len(pairs), len(names)))
    for k, (a, b) in enumerate(pairs):
        design[k, index[a]] = 1.0
        design[k, index[b]] = -1.0
    return design


def _oscillator_edfs(diff: np.ndarray, edfs: np.ndarray) -> np.ndarray:
    """nu_jl (oscillators x oscillators x taus) from the pair EDFs (module docstring)."""
    count = diff.shape[1]
    member = diff != 0  # (pair, osc)
    with np.errstate(divide="ignore", invalid="ignore"):
        log_edf = np.log(edfs)  # (pair, tau)
        own = np.array(
            [np.exp(np.mean(log_edf[member[:, j]], axis=0)) for j in range(count)]
        )  # (osc, tau)
    nu = np.sqrt(own[:, None, :] * own[None, :, :])
    for k in range(diff.shape[0]):
        first, second = np.flatnonzero(member[k])
        nu[first, second] = nu[second, first] = edfs[k]
    for j in range(count):
        nu[j, j] = own[j]
    return nu


def _null_plugins(coefs: np.ndarray, diff: np.ndarray, pairs: np.ndarray, levels: np.ndarray):
    """sigma_j^2 of the other oscillators as they are when oscillator i is noiseless.

    Under that hypothesis the variance of a measured pair (i, j) is sigma_j^2
    itself; an oscillator not paired with i keeps its hat estimate. Returns an
    (oscillators x oscillators x taus) array: row i holds the values for i.
    """
    count = coefs.shape[0]
    member = diff != 0
    out = np.repeat(levels[None, :, :], count, axis=0)
    for k in range(diff.shape[0]):
        first, second = np.flatnonzero(member[k])
        out[first, second] = pairs[k]
        out[second, first] = pairs[k]
    return out


def combination_variance(
    coefs: np.ndarray, diff: np.ndarray, levels: np.ndarray, edfs: np.ndarray
) -> np.ndarray:
    """Variance of each hat estimate, Var s_i^2 (oscillators x taus).

    Parameters
    ----------
    coefs
        c_ik (oscillators x pairs).
    diff
        D (pairs x oscillators), see :func:`difference_matrix`.
    levels
        sigma_j^2 per oscillator and tau (negative values are taken as zero).
    edfs
        EDF of each pair curve (pairs x taus).
    """
    s = np.clip(np.nan_to_num(levels, nan=0.0), 0.0, None)
    return _terms(coefs, diff, np.repeat(s[None], coefs.shape[0], axis=0), edfs)[0]


def _terms(coefs: np.ndarray, diff: np.ndarray, plug: np.ndarray, edfs: np.ndarray):
    """Var s_i^2, and for the terms without i their variance, EDF and the coefficients
    of the own terms (see :func:`hat_intervals`), each (oscillators x taus)."""
    nu = _oscillator_edfs(diff, edfs)  # (osc, osc, tau)
    count = coefs.shape[0]
    shape = (count, edfs.shape[1])
    var, floor, floor_edf, own_sq, own_lin = (np.empty(shape) for _ in range(5))
    with np.errstate(divide="ignore", invalid="ignore"):
        for i in range(count):
            s = np.clip(np.nan_to_num(plug[i], nan=0.0), 0.0, None)  # (osc, tau)
            g = diff.T @ (coefs[i][:, None] * diff)  # G = D^T diag(c_i) D
            g2 = (g * g)[:, :, None]
            terms = 2.0 * g2 * s[:, None, :] * s[None, :, :] / nu
            var[i] = terms.sum(axis=(0, 1))
            others = np.ones(count, dtype=bool)
            others[i] = False
            rest = terms[others][:, others]
            floor[i] = rest.sum(axis=(0, 1))
            # each cross term appears twice (j, l) and (l, j): pair them up for its EDF
            floor_edf[i] = floor[i] ** 2 / np.sum(
                2.0 * rest**2 / nu[others][:, others], axis=(0, 1)
            )
            own_sq[i] = 2.0 * g2[i, i] / nu[i, i]
            own_lin[i] = 4.0 * np.sum((g2[i, :, :] * s / nu[i, :, :])[others], axis=0)
    return var, floor, floor_edf, own_sq, own_lin


def _variance_gamma_tail(nu: float, t: float) -> float:
    """P[(X - Y) / (2 sqrt(nu)) > t] for independent X, Y ~ chi-squared(nu)."""
    from scipy.integrate import quad
    from scipy.special import chdtrc, chdtri

    c = 2.0 * t * math.sqrt(nu)
    # E over Y of P(X > Y + c), with Y = F^-1(u) so that the integrand is smooth in u.
    value, _ = quad(lambda u: chdtrc(nu, chdtri(nu, u) + c), 0.0, 1.0, limit=200)
    return float(value)


@functools.lru_cache(maxsize=512)
def null_multiple(nu: float, tail: float) -> float:
    """The (1 - tail) quantile of a noiseless oscillator's estimate over its resolution.

    Without oscillator i the hat estimate is a sum of cross terms B(n_j, n_l)
    of the other oscillators (the estimate is unbiased, so G_jj = 0 for
    j != i). A cross term of two noises that each fill nu degrees of freedom
    is (X - Y) / 2 with X, Y independent chi-squared(nu) variables (write
    a b = ((a + b)^2 - (a - b)^2) / 4), of variance nu: a symmetric law with
    excess kurtosis 6 / nu, heavier-tailed than the normal for small nu. The
    quantile is found by root finding on its tail; above nu = 2000 the normal
    quantile is used.
    """
    from scipy.optimize import brentq
    from scipy.special import ndtri

    normal = float(ndtri(1.0 - tail))
    if not math.isfinite(nu) or nu <= 0:
        return math.inf
    if nu > 2000.0:
        return normal
    high = 2.0 * normal
    while _variance_gamma_tail(nu, high) > tail:
        high *= 2.0
        if high > 1e6:
            return math.inf
    return float(brentq(lambda t: _variance_gamma_tail(nu, t) - tail, 0.5 * normal, high))


def _round3(value: float) -> float:
    """Three significant digits (the cache key of :func:`null_multiple`)."""
    if not math.isfinite(value) or value <= 0:
        return math.nan
    return float(f"{value:.3g}")


def _upper_bound(estimate, own_sq, own_lin, floor, z):
    """Largest sigma_i^2 = u with max(s_i^2, 0) >= u - z sd(u), sd^2(u) = a u^2 + b u + c.

    The bound of the normal interval with the variance taken at the bound
    itself (as the score interval of a proportion is), so that a low
    estimate with a small plug-in variance cannot give a bound below the
    truth too often. Infinite where z^2 a >= 1 (too few degrees of freedom).
    """
    v = np.clip(estimate, 0.0, None)
    lead = 1.0 - z * z * own_sq
    half = v + 0.5 * z * z * own_lin
    with np.errstate(invalid="ignore", divide="ignore"):
        disc = half * half - lead * (v * v - z * z * floor)
        u = (half + np.sqrt(np.clip(disc, 0.0, None))) / lead
    return np.where(lead > 0, u, np.inf)


def hat_intervals(
    coefs: np.ndarray,
    diff: np.ndarray,
    variances: np.ndarray,
    edfs: np.ndarray,
    cap: np.ndarray,
    confidence: float,
) -> HatIntervals:
    """Status, interval and upper bound of every oscillator at every tau.

    ``variances`` and ``edfs`` are the pair variances and EDFs (pairs x taus),
    ``cap`` the smallest upper bound of the pairs holding each oscillator
    (oscillators x taus): no oscillator is noisier than a difference it takes
    part in. See the module docstring for the rules.
    """
    from scipy.special import ndtr, ndtri

    estimate = coefs @ variances  # (osc, tau)
    clipped = np.clip(np.nan_to_num(estimate, nan=0.0), 0.0, None)
    var = _terms(coefs, diff, np.repeat(clipped[None], coefs.shape[0], axis=0), edfs)[0]
    plug = _null_plugins(coefs, diff, variances, clipped)
    _, floor, floor_edf, own_sq, own_lin = _terms(coefs, diff, plug, edfs)
    sd = np.sqrt(var)
    resolution = np.sqrt(floor)
    z = float(ndtri(0.5 + confidence / 2.0))
    tail = float(ndtr(-max(RESOLVED_MULTIPLE, z)))
    multiple = np.vectorize(lambda nu: null_multiple(_round3(nu), tail), otypes=[float])(floor_edf)
    known = np.isfinite(sd) & np.isfinite(resolution) & np.isfinite(multiple)
    resolved = np.where(known, estimate > multiple * resolution, estimate > 0)
    with np.errstate(divide="ignore", invalid="ignore"):
        nu_eff = np.where(resolved & known & (var > 0), 2.0 * estimate**2 / var, np.nan)
    deviation = np.where(resolved, np.sqrt(np.where(resolved, estimate, 0.0)), np.nan)
    low = np.full_like(estimate, np.nan)
    high = np.full_like(estimate, np.nan)
    good = resolved & np.isfinite(nu_eff)
    if good.any():
        lo, hi = chi2_interval(deviation[good], nu_eff[good], confidence)
        low[good] = np.asarray(lo, dtype=float)
        high[good] = np.asarray(hi, dtype=float)
    # The cap tightens an interval only where it lies above the estimate: an estimate
    # above a pair's bound means the pairs disagree, and clipping the interval there
    # would show no upward uncertainty at all; the chi-squared bound is kept instead.
    high = np.where(resolved & (cap >= deviation), np.minimum(high, cap), high)
    normal_bound = np.sqrt(_upper_bound(estimate, own_sq, own_lin, floor, z))
    below_bound = np.where(np.isfinite(normal_bound) & (normal_bound > 0), normal_bound, cap)
    below_bound = np.minimum(below_bound, cap)
    upper = np.where(resolved, np.where(np.isnan(high), cap, high), below_bound)
    below = ~resolved
    low = np.where(below, 0.0, low)
    high = np.where(below, upper, high)
    return HatIntervals(
        estimate=estimate,
        deviation=deviation,
        ci_low=low,
        ci_high=high,
        edf=nu_eff,
        upper_bound=upper,
        resolved=resolved,
        resolution=resolution,
        sd=sd,
    )
