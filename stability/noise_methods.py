"""The noise-identification methods at one averaging factor: lag-1 autocorrelation, B1, R(n).

:mod:`stability.noise` applies them over a tau grid. References as there:
W. J. Riley, C. A. Greenhall, "Power law noise identification using the lag 1
autocorrelation", Proc. 18th EFTF (2004); NIST SP 1065 (2008) section 5.6; J. A.
Barnes, NBS Technical Note 375 (1969).
"""

from __future__ import annotations

import math
from functools import lru_cache
from typing import Any, Literal

import numpy as np

from .dead_time import barnes_b1
from .errors import InputError

__all__ = [
    "lag1_acf",
    "lag1_acf_noise_id",
    "expected_acf_estimate",
    "b1_expected",
    "b1_noise_id",
    "rn_expected",
    "rn_noise_id",
    "acf_standard_error",
    "acf_neighbour",
    "ACF_MIN_POINTS",
    "ACF_BOUNDARY_Z",
    "B1_MIN_AVERAGES",
]

#: Fewest points (decimated phase or averaged frequency) for the lag-1 method
#: (Riley & Greenhall 2004 recommend about 30).
ACF_MIN_POINTS = 30

#: Fewest m-averages for the B1 ratio (with 2 averages B1 = 1 for every noise).
B1_MIN_AVERAGES = 4

#: Residual rms below this fraction of the data's scale counts as "no noise".
_DEGENERATE_RTOL = 1e-12

#: B1 exponents mu (AVAR ~ tau^mu) considered, and the alpha each stands for
#: (mu = -2 is WPM or FPM, resolved by R(n)).
_B1_MUS = (-2, -1, 0, 1)


# ---------------------------------------------------------------------- lag-1 method
def _detrend(z: np.ndarray, degree: int) -> np.ndarray:
    """Residuals of a least-squares polynomial of ``degree`` in a centred, scaled time.

    Gram-Schmidt on 1, t, t^2 with elementwise sums (no BLAS call, whose thread
    pool can stall on a busy machine for arrays of this size).
    """
    n = z.size
    if n <= degree + 1:
        return z - z.mean()
    t = np.linspace(-1.0, 1.0, n)
    basis: list[np.ndarray] = []
    resid = z.astype(np.float64, copy=True)
    for k in range(degree + 1):
        b = t**k
        for q in basis:
            b = b - np.sum(b * q) * q
        b = b / math.sqrt(float(np.sum(b * b)))
        basis.append(b)
        resid -= np.sum(resid * b) * b
    return resid


def lag1_acf(z: np.ndarray) -> float | None:
    """Lag-1 autocorrelation r1 = sum (z_t - mean)(z_{t+1} - mean) / sum (z_t - mean)^2.

    Riley & Greenhall (2004), eq. 1. None for fewer than 3 points or zero variance.
    """
    z = np.asarray(z, dtype=np.float64)
    if z.size < 3:
        return None
    c = z - z.mean()
    den = float(np.sum(c * c))
    if not math.isfinite(den) or den <= 0.0:
        return None
    return float(np.sum(c[:-1] * c[1:])) / den


def _validate_acf(z: Any, data: Any, dmin: Any, dmax: Any, min_points: Any) -> np.ndarray:
    try:
        arr = np.asarray(z, dtype=np.float64)
    except (TypeError, ValueError):
        raise InputError(f"z must be an array of numbers, got {type(z).__name__}") from None
    if arr.ndim != 1:
        raise InputError(f"z must be one-dimensional, got shape {arr.shape}")
    if data not in ("phase", "frequency"):
        raise InputError(f"data must be 'phase' or 'frequency', got {data!r}")
    for name, value in (("dmin", dmin), ("dmax", dmax), ("min_points", min_points)):
        if isinstance(value, bool) or not isinstance(value, (int, np.integer)) or value < 0:
            raise InputError(f"{name} must be a non-negative integer, got {value!r}")
    if dmax < dmin:
        raise InputError(f"dmax must be >= dmin, got dmin={dmin!r}, dmax={dmax!r}")
    return arr


def _lag1_loop(
    arr: np.ndarray, data: str, dmin: int, dmax: int, min_points: int
) -> tuple[float, int] | None:
    """The Riley-Greenhall loop on validated data: (p on the alpha scale, differences d)."""
    arr = arr[np.isfinite(arr)]
    if arr.size < max(min_points, 3):
        return None
    with np.errstate(all="ignore"):
        scale = float(np.max(np.abs(arr - arr.mean())))
        if not math.isfinite(scale) or scale == 0.0:
            return None
        work = _detrend(arr, 2 if data == "phase" else 1)
        if float(np.sqrt(np.mean(work * work))) <= _DEGENERATE_RTOL * scale:
            return None
        d = 0
        while True:
            r1 = lag1_acf(work)
            if r1 is None:
                return None
            delta = r1 / (1.0 + r1) if r1 > -1.0 else -math.inf
            if d >= dmin and (delta < 0.25 or d >= dmax):
                p = -2.0 * (delta + d)
                break
            work = np.diff(work)
            d += 1
    if data == "phase":
        p += 2.0
    if not math.isfinite(p):
        return None
    return float(p), d


def lag1_acf_noise_id(
    z: np.ndarray,
    *,
    data: Literal["phase", "frequency"],
    dmin: int = 0,
    dmax: int = 2,
    min_points: int = ACF_MIN_POINTS,
) -> tuple[int, float] | None:
    """Identify the power-law noise of a series by its lag-1 autocorrelation.

    Parameters
    ----------
    z
        Phase decimated by m, or m-averaged frequency (NaN samples are dropped).
    data
        ``"phase"`` or ``"frequency"``: what ``z`` holds.
    dmin, dmax
        Fewest and most differences taken (Riley & Greenhall 2004: dmax = 2 for
        the Allan family on phase, 3 for the Hadamard family).
    min_points
        Fewest finite points accepted (default 30).

    Returns
    -------
    tuple of (int, float) or None
        ``(alpha, p)``: alpha of S_y(f), ``round(p)`` clipped to -2..2, and the
        unrounded estimate p = -2 (delta + d) (+ 2 for phase data). None when
        the type cannot be told: too few points, constant or exactly polynomial data.
    """
    arr = _validate_acf(z, data, dmin, dmax, min_points)
    found = _lag1_loop(arr, data, dmin, dmax, min_points)
    if found is None:
        return None
    p = found[0]
    return int(min(2, max(-2, round(p)))), p


#: Largest averaging factor for which the expected lag-1 estimate is integrated
#: exactly; beyond it the value at this factor is used (it changes only
#: logarithmically with m, and only for the flicker noises).
_EXPECT_MAX_M = 1024


def expected_acf_estimate(alpha: int, d: int, m: int, span: int) -> float:
    """Expected lag-1 estimate p (alpha scale) for noise ``alpha`` seen at averaging factor m.

    The phase of Kasdin-Walter power-law noise has the spectrum
    S_x(f) ~ |2 sin(pi f tau0)|^-(2 - alpha) (Kasdin & Walter 1992). Decimated by
    m and differenced d times it has the spectrum S_x(f) |2 sin(pi f m tau0)|^(2d)
    and the lag-1 autocovariance (one step = m samples)
    R(1) = integral S_x(f) |2 sin(pi f m tau0)|^(2d) cos(2 pi f m tau0) df, taken
    from 1/span (the record length, in samples) to the Nyquist frequency. Then
    r1 = R(1)/R(0), delta = r1/(1 + r1) and p = 2 - 2 (delta + d), the value of
    the Riley-Greenhall estimate p for phase data (the m-averaged frequency gives
    the same p with one difference fewer).

    For white and random-walk noises p is the integer alpha at every m; for the
    flicker noises decimation and averaging move it (flicker phase looks whiter,
    flicker frequency redder as m grows), which is why :func:`identify` picks the
    type whose expected p is nearest instead of rounding.
    """
    return _expected_estimates((int(alpha),), d, m, span)[int(alpha)]


def _expected_estimates(alphas: tuple[int, ...], d: int, m: int, span: int) -> dict[int, float]:
    """:func:`expected_acf_estimate` of several noise types at once (one shared grid)."""
    if m > _EXPECT_MAX_M:
        span = max(2, (span * _EXPECT_MAX_M) // m)
        m = _EXPECT_MAX_M
    # The dependence on the record length is logarithmic: a power-of-two bucket of
    # the span lets records of similar length share the cached value.
    return _expected_on_grid(alphas, d, m, 1 << max(1, int(span).bit_length() - 1))


@lru_cache(maxsize=4096)
def _expected_on_grid(alphas: tuple[int, ...], d: int, m: int, span: int) -> dict[int, float]:
    f_low = 1.0 / max(span, 2 * m)
    f_mid = min(0.5, 1.0 / (8.0 * m))
    low = np.geomspace(f_low, f_mid, 2000) if f_mid > f_low else np.empty(0)
    # Eight points per period of the m-periodic factor: the estimate moves by
    # less than 0.003 from a grid eight times denser (types are 1 apart).
    high = np.linspace(f_mid, 0.5, int(8 * m * (d + 1)) + 2)
    f = np.concatenate([low, high[1:] if low.size else high])
    out = {}
    with np.errstate(all="ignore"):
        base = np.abs(2.0 * np.sin(np.pi * f))
        shaped = np.abs(2.0 * np.sin(np.pi * f * m)) ** (2 * d)
        lag = np.cos(2.0 * np.pi * f * m)
        for alpha in alphas:
            s = base ** (alpha - 2.0) * shaped  # |2 sin(pi f)|^-(2 - alpha)
            r0 = float(np.trapezoid(s, f))
            r1 = float(np.trapezoid(s * lag, f)) / r0
            delta = r1 / (1.0 + r1) if r1 > -1.0 else -math.inf
            out[alpha] = 2.0 - 2.0 * (delta + d)
    return out


#: A lag-1 estimate within this many standard errors of the boundary between two
#: types is uncertain (about 95 % of estimates of either type fall outside).
ACF_BOUNDARY_Z = 2.0


def acf_standard_error(p: float, d_phase: int, points: int) -> float:
    """Standard error of the lag-1 estimate p (alpha scale, phase convention).

    p = 2 - 2 (delta + d) with delta = r1 / (1 + r1), so
    se(p) = 2 se(r1) / (1 + r1)^2, and the lag-1 autocorrelation of ``points``
    values has se(r1) ~ sqrt((1 - r1^2) / points) (Bartlett's formula for a
    first-order autoregression: M. S. Bartlett, "On the theoretical
    specification and sampling properties of autocorrelated time-series",
    J. Royal Statistical Society Suppl. 8, 27-41 (1946)). At 42 points this is
    0.31 for white FM, where simulation gives 0.42 with the quadratic drift
    removal; above 64 points the two agree within 10 %.
    """
    delta = (2.0 - p) / 2.0 - d_phase
    r1 = delta / (1.0 - delta) if delta < 1.0 else 1.0
    r1 = min(max(r1, -0.999), 0.999)
    return 2.0 * math.sqrt(max(1.0 - r1 * r1, 0.0) / max(points, 1)) / (1.0 + r1) ** 2


def acf_neighbour(p: float, d_phase: int, m: int, span: int, dmax_phase: int, points: int):
    """(alpha, neighbour) of a lag-1 estimate: the nearest type and, where p lies within
    :data:`ACF_BOUNDARY_Z` standard errors of the boundary with an adjacent type (the
    midpoint of their expected estimates), that type; else None.
    """
    lowest = 2 - 2 * dmax_phase
    candidates = tuple(range(2, lowest - 1, -1))
    expected = _expected_estimates(candidates, d_phase, m, span)
    best = min(candidates, key=lambda a: abs(p - expected[a]))
    label = int(min(2, max(-2, best)))
    se = acf_standard_error(p, d_phase, points)
    closest = None
    for other in (label + 1, label - 1):
        if other not in expected or not -2 <= other <= 2:
            continue
        mid = 0.5 * (expected[label] + expected[other])
        gap = abs(p - mid)
        if gap < ACF_BOUNDARY_Z * se and (closest is None or gap < closest[1]):
            closest = (other, gap)
    return label, None if closest is None else closest[0]


# ---------------------------------------------------------------------- B1 and R(n)
def b1_expected(k: int, mu: float) -> float:
    """Expected B1 = standard variance / Allan variance of K averages for AVAR ~ tau^mu.

    Barnes, NBS TN 375 (1969): B1(K, mu) = K (1 - K^mu) / [2 (K - 1)(1 - 2^mu)];
    the mu = 0 limit is K ln K / [2 (K - 1) ln 2].
    """
    k = float(k)
    if k < 2:
        return math.nan
    return barnes_b1(k, mu)


def rn_expected(n: int, alpha: int) -> float:
    """Expected R(n) = MVAR / AVAR at averaging factor n for WPM (1/n) and FPM (SP 1065 5.6)."""
    if alpha == 2:
        return 1.0 / n
    if alpha == 1:
        return 3.374 / (1.038 + 3.0 * math.log(math.pi * n))
    raise InputError(f"alpha must be 2 or 1 for R(n), got {alpha!r}")


def b1_noise_id(b1: float, k: int) -> int | None:
    """The mu of AVAR ~ tau^mu (-2, -1, 0 or 1) whose expected B1 is nearest in log to ``b1``.

    ``k`` is the number of averages. None when ``b1`` is not a positive finite
    number or k < 4.
    """
    if not (math.isfinite(b1) and b1 > 0.0) or k < B1_MIN_AVERAGES:
        return None
    logs = [abs(math.log(b1) - math.log(b1_expected(k, mu))) for mu in _B1_MUS]
    return _B1_MUS[int(np.argmin(logs))]


def rn_noise_id(rn: float, n: int) -> int | None:
    """WPM (2) or FPM (1), whichever expected R(n) is nearer in log to ``rn``; None if unusable."""
    if not (math.isfinite(rn) and rn > 0.0) or n < 1:
        return None
    wpm = abs(math.log(rn) - math.log(rn_expected(n, 2)))
    fpm = abs(math.log(rn) - math.log(rn_expected(n, 1)))
    return 2 if wpm <= fpm else 1
