"""The power-law noise model: h_alpha coefficients, their fit, and what follows from them.

The one-sided spectral density of fractional frequency is modelled as
S_y(f) = sum_alpha h_alpha f^alpha for 0 < f < f_h, alpha = 2 (WPM), 1 (FPM),
0 (WFM), -1 (FFM), -2 (RWFM). Each term contributes to the Allan variance in
closed form (references 1 and 2)::

    WPM   AVAR = 3 f_h h2 / (4 pi^2 tau^2)
    FPM   AVAR = h1 [1.038 + 3 ln(2 pi f_h tau)] / (4 pi^2 tau^2)
    WFM   AVAR = h0 / (2 tau)
    FFM   AVAR = 2 ln 2 h_-1
    RWFM  AVAR = (2 pi^2 / 3) h_-2 tau

so the model is linear in the coefficients and is fitted to an overlapping
Allan variance curve by non-negative weighted least squares, each point
weighted by its equivalent degrees of freedom and the model's own value there
(the variance of a chi-squared variance estimate with nu degrees of freedom
is 2 sigma^4 / nu; iteratively reweighted, reference 4), a term kept only
where it earns its place by Akaike's criterion (reference 5).

The same model gives honest uncertainties of the mean frequency offset and
of a linear drift: a weighted mean of y with weight function w(t) has variance
int_0^f_h S_y(f) |W(f)|^2 df, where W is the Fourier transform of w
(reference 3, chapter 3). For the drift (least-squares slope) W vanishes at
f = 0 and the integral converges for every power-law type; for the mean it
diverges for FFM and RWFM, and common practice (reference 1, section 5.2.3)
quotes the Allan deviation at the record length instead, which equals the
exact standard deviation of the mean for white FM.

References
----------
1. W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065
   (2008), sections 5.2.3 and 6 (conversions).
2. IEEE Std 1139-2008, *Definitions of physical quantities for fundamental
   frequency and time metrology*, annex (conversions).
3. D. B. Percival, A. T. Walden, *Spectral Analysis for Physical
   Applications*, Cambridge (1993), chapter 3 (linear filters and variance).
4. P. McCullagh, J. A. Nelder, *Generalized Linear Models*, 2nd ed., Chapman
   & Hall (1989), sections 2.5 (iteratively reweighted least squares) and 8.3
   (gamma-distributed observations).
5. H. Akaike, "A new look at the statistical model identification", IEEE
   Transactions on Automatic Control 19, 716-723 (1974).
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from .errors import InputError

__all__ = [
    "ALPHAS",
    "avar_kernel",
    "PowerLawModel",
    "fit_power_law",
    "nonnegative_least_squares",
    "OffsetDrift",
    "offset_and_drift",
    "offset_and_drift_of",
    "model_from_levels",
]

ALPHAS = (2, 1, 0, -1, -2)
_LN2 = math.log(2.0)
_DAY = 86400.0
#: Most reweighting steps of the power-law fit (it settles in a handful).
_IRLS_STEPS = 30
#: A noise term enters the fitted model only if it lowers the weighted chi-squared
#: by more than this (Akaike's criterion: 2 per parameter).
_TERM_PENALTY = 2.0


def avar_kernel(alpha: int, tau: Any, f_h: float) -> np.ndarray:
    """Allan variance per unit h_alpha at tau (NIST SP 1065)."""
    tau = np.asarray(tau, dtype=float)
    if alpha == 2:
        return 3.0 * f_h / (4.0 * math.pi**2 * tau**2)
    if alpha == 1:
        return (1.038 + 3.0 * np.log(2.0 * math.pi * f_h * tau)) / (4.0 * math.pi**2 * tau**2)
    if alpha == 0:
        return 1.0 / (2.0 * tau)
    if alpha == -1:
        return np.full_like(tau, 2.0 * _LN2)
    if alpha == -2:
        return (2.0 * math.pi**2 / 3.0) * tau
    raise InputError(f"alpha must be one of 2, 1, 0, -1, -2, got {alpha!r}")


@dataclass
class PowerLawModel:
    """Fitted power-law coefficients.

    Attributes
    ----------
    h
        alpha -> h_alpha (non-negative).
    u_h
        alpha -> standard uncertainty of h_alpha (NaN where the coefficient
        sits at zero and the fit gives no uncertainty).
    f_h
        High cut-off frequency in Hz used for WPM and FPM.
    tau_range
        (smallest, largest) tau of the points fitted.
    """

    h: dict[int, float]
    u_h: dict[int, float]
    f_h: float
    tau_range: tuple[float, float]
    points: int = 0
    notes: list[str] = field(default_factory=list)

    def avar(self, tau: Any) -> np.ndarray:
        tau = np.asarray(tau, dtype=float)
        total = np.zeros_like(tau)
        for alpha, h in self.h.items():
            if h > 0:
                total = total + h * avar_kernel(alpha, tau, self.f_h)
        return total

    def deviation(self, tau: Any) -> np.ndarray:
        """Model Allan deviation sigma_y(tau)."""
        return np.sqrt(self.avar(tau))

    def sy(self, f: Any) -> np.ndarray:
        """Model one-sided S_y(f) (zero above f_h)."""
        f = np.asarray(f, dtype=float)
        total = np.zeros_like(f)
        for alpha, h in self.h.items():
            if h > 0:
                total = total + h * f**alpha
        return np.where(f <= self.f_h, total, 0.0)

    def dominant(self, tau: float) -> int:
        """The alpha whose term contributes most at tau."""
        parts = {a: float(h * avar_kernel(a, tau, self.f_h)) for a, h in self.h.items()}
        return max(parts, key=parts.get)

    def to_dict(self) -> dict[str, Any]:
        return {
            "f_h_hz": self.f_h,
            "h": {str(a): self.h[a] for a in ALPHAS},
            "u_h": {str(a): (None if math.isnan(self.u_h[a]) else self.u_h[a]) for a in ALPHAS},
            "tau_range_s": list(self.tau_range),
            "points": self.points,
            "notes": list(self.notes),
        }


def _validate_fit(tau: np.ndarray, dev: np.ndarray, edf: np.ndarray, f_h: float) -> None:
    if not (math.isfinite(f_h) and f_h > 0):
        raise InputError(f"f_h must be a positive frequency in Hz, got {f_h!r}")
    if tau.shape != dev.shape or tau.shape != edf.shape:
        raise InputError("tau, deviation and edf must have the same length")


def nonnegative_least_squares(a: np.ndarray, b: np.ndarray, *, penalty: float = 0.0) -> np.ndarray:
    """Minimise ||a x - b||^2 + penalty * (number of x > 0) subject to x >= 0.

    For at most 12 columns. The solution of a non-negative least-squares problem
    is the unconstrained least-squares solution on its own support, with every
    coefficient there positive (the Karush-Kuhn-Tucker conditions; C. L. Lawson,
    R. J. Hanson, *Solving Least Squares Problems*, SIAM (1995), chapter 23).
    With five noise terms there are only 31 supports, so trying each and keeping
    the feasible one of least residual finds that solution exactly, without an
    iterative solver. With ``penalty`` > 0 each coefficient on the support costs
    that much residual: on a chi-squared scale 2 is Akaike's information
    criterion (H. Akaike, "A new look at the statistical model
    identification", IEEE Trans. Automatic Control 19, 716-723 (1974)), which
    keeps a term that the data barely support out of the model. The default 0
    is plain non-negative least squares.
    """
    a = np.asarray(a, dtype=float)
    b = np.asarray(b, dtype=float)
    k = a.shape[1]
    if k > 12:
        raise InputError(f"non-negative least squares here takes at most 12 columns, got {k}")
    best = np.zeros(k)
    best_sse = float(b @ b)
    best_size = 0
    best_score = best_sse
    for size in range(1, k + 1):
        for support in itertools.combinations(range(k), size):
            cols = list(support)
            x, *_ = np.linalg.lstsq(a[:, cols], b, rcond=None)
            if not np.all(x > 0):
                continue
            resid = b - a[:, cols] @ x
            sse = float(resid @ resid)
            score = sse + penalty * size
            # a larger support must lower the score by more than rounding to win
            if score < best_score * (1.0 - 1e-12) or (score <= best_score and size == best_size):
                best = np.zeros(k)
                best[cols] = x
                best_sse, best_size, best_score = sse, size, score
    return best


def _weighted_fit(
    design: np.ndarray, avar: np.ndarray, nu: np.ndarray, expected: np.ndarray
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Non-negative weighted least squares with weights sqrt(nu / 2) / expected.

    Returns the coefficients, the weighted design scaled to unit columns, the
    weighted target and the column scales.
    """
    weight = np.sqrt(nu / 2.0) / expected
    a_w = design * weight[:, None]
    b_w = avar * weight
    # Scale columns so that NNLS works on numbers of order one.
    scale = np.linalg.norm(a_w, axis=0)
    coef_scaled = nonnegative_least_squares(a_w / scale, b_w, penalty=_TERM_PENALTY)
    return coef_scaled / scale, a_w / scale, b_w, scale


def fit_power_law(
    tau: Any,
    deviation: Any,
    edf: Any | None = None,
    *,
    f_h: float,
    alphas: tuple[int, ...] = ALPHAS,
) -> PowerLawModel | None:
    """Fit h_alpha to an overlapping Allan deviation curve.

    Non-negative least squares on the Allan variance, each point weighted by
    sqrt(edf / 2) / AVAR, the inverse standard deviation of a chi-squared
    variance estimate. The AVAR in the weight is the model's own value, found
    by iterating the fit (iteratively reweighted least squares for estimates
    with a gamma distribution, whose solution is the quasi-likelihood
    estimate: P. McCullagh, J. A. Nelder, *Generalized Linear Models*, 2nd ed.,
    Chapman & Hall (1989), sections 2.5 and 8.3). Weighting by the observed
    value instead gives a point that happens to fall low the largest weight
    and pulls the whole model down: a single nearly empty estimate at the
    longest tau could halve the fitted white FM level. A term enters the
    model only where it lowers the weighted chi-squared by more than 2
    (Akaike's criterion, see :func:`nonnegative_least_squares`): without it a
    random rise of the last few points adds a small random-walk term to white
    FM data in four fits of ten, and such a term multiplies the uncertainty of
    a drift. Returns None when fewer than two usable points exist.

    Parameters
    ----------
    tau, deviation
        The OADEV curve.
    edf
        Equivalent degrees of freedom per point (NaN or None: weight as 1 dof).
    f_h
        High cut-off frequency, usually 1 / (2 tau0).
    """
    tau = np.asarray(tau, dtype=float)
    dev = np.asarray(deviation, dtype=float)
    nu = np.ones_like(tau) if edf is None else np.asarray(edf, dtype=float)
    _validate_fit(tau, dev, nu, f_h)
    nu = np.where(np.isfinite(nu) & (nu > 0), nu, 1.0)
    ok = np.isfinite(tau) & np.isfinite(dev) & (dev > 0) & (tau > 0)
    if ok.sum() < 2:
        return None
    tau, avar, nu = tau[ok], dev[ok] ** 2, nu[ok]
    design = np.column_stack([avar_kernel(a, tau, f_h) for a in alphas])
    usable = np.all(design > 0, axis=0)
    design = design[:, usable]
    expected = avar
    for _ in range(_IRLS_STEPS):
        coef, a_n, b_w, scale = _weighted_fit(design, avar, nu, expected)
        model = design @ coef
        if not np.all(model > 0):
            break  # a model that vanishes somewhere cannot weight the points
        converged = np.allclose(model, expected, rtol=1e-6, atol=0.0)
        expected = model
        if converged:
            break
    h = dict.fromkeys(alphas, 0.0)
    u = dict.fromkeys(alphas, math.nan)
    used_alphas = [a for a, keep in zip(alphas, usable, strict=True) if keep]
    for a, c in zip(used_alphas, coef, strict=True):
        h[a] = float(c)
    active = [k for k, c in enumerate(coef) if c > 0]
    notes = []
    if active:
        sub = a_n[:, active]
        resid = b_w - a_n @ (coef * scale)
        dof = max(1, len(tau) - len(active))
        # Reduced chi-squared inflates the covariance when the model does not fit.
        s2 = max(1.0, float(resid @ resid) / dof)
        try:
            cov = np.linalg.inv(sub.T @ sub) * s2
            for k, idx in enumerate(active):
                u[used_alphas[idx]] = float(math.sqrt(max(cov[k, k], 0.0)) / scale[idx])
        except np.linalg.LinAlgError:
            notes.append("the fitted noise terms are not separable: no uncertainties")
    return PowerLawModel(
        h=h,
        u_h=u,
        f_h=float(f_h),
        tau_range=(float(tau.min()), float(tau.max())),
        points=int(tau.size),
        notes=notes,
    )


@dataclass
class OffsetDrift:
    """Mean fractional-frequency offset and linear drift, with standard uncertainties.

    ``offset`` is dimensionless, ``drift_per_day`` is fractional frequency per
    day; ``method`` says how each uncertainty was obtained.
    """

    offset: float
    u_offset: float
    drift_per_day: float
    u_drift_per_day: float
    span_s: float
    method: str

    def to_dict(self) -> dict[str, Any]:
        def clean(v: float) -> float | None:
            return None if not math.isfinite(v) else float(v)

        return {
            "offset": clean(self.offset),
            "u_offset": clean(self.u_offset),
            "drift_per_day": clean(self.drift_per_day),
            "u_drift_per_day": clean(self.u_drift_per_day),
            "span_s": self.span_s,
            "method": self.method,
        }


def _slope_response(f: np.ndarray, span: float) -> np.ndarray:
    """|W(f)|^2 of the least-squares slope over [0, T] (weights 12 (t - T/2) / T^3)."""
    omega = 2.0 * math.pi * f
    u = omega * span / 2.0
    w = (12.0 / span**3) * (span * np.cos(u) / omega - 2.0 * np.sin(u) / omega**2)
    return w * w


def _slope_variance(model: PowerLawModel, span: float) -> float:
    """Variance of the least-squares frequency slope under the model spectrum."""
    f_lo = 1e-4 / span
    f = np.geomspace(f_lo, model.f_h, 20000)
    integrand = model.sy(f) * _slope_response(f, span)
    # Integrate in log f (df = f dlnf); the response is smooth on this grid
    # below 1/T and oscillates fast above, where the grid averages it.
    g = integrand * f
    lnf = np.log(f)
    return float(np.sum((g[1:] + g[:-1]) * np.diff(lnf)) / 2.0)


def _usable(model: PowerLawModel | None) -> bool:
    return model is not None and any(v > 0 for v in model.h.values())


def _with_model(
    offset: float, slope: float, span: float, model: PowerLawModel, detrended: bool
) -> OffsetDrift:
    """Offset and drift (slope per second) with the noise model's uncertainties."""
    source = (
        "noise model fitted to the OADEV of the linearly detrended frequency"
        if detrended
        else "noise model fitted to the OADEV of the data"
    )
    return OffsetDrift(
        offset=offset,
        u_offset=float(model.deviation(span)),
        drift_per_day=slope * _DAY,
        u_drift_per_day=math.sqrt(max(_slope_variance(model, span), 0.0)) * _DAY,
        span_s=span,
        method=(
            "offset: Allan deviation of the noise model at the record length; "
            "drift: least-squares slope, variance integrated over the noise-model spectrum; "
            + source
        ),
    )


def offset_and_drift(
    y: np.ndarray, tau0: float, model: PowerLawModel | None, *, detrended: bool = False
) -> OffsetDrift:
    """Mean offset and least-squares linear drift of fractional frequency ``y``.

    Uncertainties follow the noise model (see module docstring); without a
    model they are the ordinary least-squares errors, labelled as assuming
    white frequency noise. ``detrended`` says the model was fitted to the
    linearly detrended data (it only changes the description in ``method``).
    """
    y = np.asarray(y, dtype=float)
    ok = np.isfinite(y)
    count = int(ok.sum())
    if count < 3:
        return OffsetDrift(math.nan, math.nan, math.nan, math.nan, 0.0, "too few samples")
    # Sums over the sample index k (time t = k tau0) without building a time array
    # per sample beyond one index vector: offset = mean(y), slope from the centred
    # cross sum (ordinary least squares).
    k = np.arange(y.size, dtype=np.float64)
    if count == y.size:
        yy, kk = y, k
    else:
        yy, kk = y[ok], k[ok]
    offset = float(yy.mean())
    k_mean = float(kk.mean())
    skk = float(np.einsum("i,i->", kk, kk)) - count * k_mean * k_mean
    # sum k (y - mean) equals the centred cross sum and keeps its digits under a
    # large offset.
    sky = float(np.einsum("i,i->", kk, yy - offset))
    sxx = skk * tau0 * tau0
    slope = sky / skk / tau0 if skk > 0 else math.nan
    span = float(kk[-1] - kk[0]) * tau0 + tau0
    if _usable(model):
        return _with_model(offset, slope, span, model, detrended)
    resid = yy - offset - slope * tau0 * (kk - k_mean)
    s2 = float(np.einsum("i,i->", resid, resid)) / max(1, yy.size - 2)
    return OffsetDrift(
        offset=offset,
        u_offset=math.sqrt(s2 / yy.size),
        drift_per_day=slope * _DAY,
        u_drift_per_day=(math.sqrt(s2 / sxx) if sxx > 0 else math.nan) * _DAY,
        span_s=span,
        method="ordinary least squares (assumes white frequency noise; no noise model)",
    )


def model_from_levels(levels: Mapping[int, float], f_h: float) -> PowerLawModel:
    """A model with given coefficients (for simulation and reference stability)."""
    h = dict.fromkeys(ALPHAS, 0.0)
    for a, v in levels.items():
        if a not in ALPHAS:
            raise InputError(f"alpha must be one of 2, 1, 0, -1, -2, got {a!r}")
        if not (math.isfinite(v) and v >= 0):
            raise InputError(f"h_{a} must be a non-negative number, got {v!r}")
        h[int(a)] = float(v)
    return PowerLawModel(h=h, u_h=dict.fromkeys(ALPHAS, math.nan), f_h=f_h, tau_range=(0.0, 0.0))


def offset_and_drift_of(
    measurement: Any, model: PowerLawModel | None, *, detrended: bool = False
) -> OffsetDrift:
    """:func:`offset_and_drift` of a measurement's fractional frequency.

    For an unbroken record the sums come from the phase directly, in one pass
    and without forming the frequency: with y_k = (x_{k+1} - x_k)/tau0 for
    k = 0..M-1, summation by parts gives
    sum k y_k = [(M - 1) x_M - sum_{j=1}^{M-1} x_j] / tau0 and mean(y) =
    (x_M - x_0) / (M tau0), to which the removed offset is added back.
    """
    x = measurement.phase
    tau0 = measurement.tau0
    if measurement.has_gaps or x.size < 4:
        return offset_and_drift(measurement.frequency(), tau0, model, detrended=detrended)
    count = x.size - 1
    offset = float(x[-1] - x[0]) / (count * tau0) + measurement.frequency_offset
    k_mean = (count - 1) / 2.0
    skk = count * (count * count - 1) / 12.0  # sum (k - mean)^2 over k = 0..M-1
    sum_ky = ((count - 1) * float(x[-1]) - float(np.sum(x[1:-1]))) / tau0
    sky = sum_ky - k_mean * (float(x[-1] - x[0]) / tau0)
    slope = sky / skk / tau0
    span = count * tau0
    if _usable(model):
        return _with_model(offset, slope, span, model, detrended)
    return offset_and_drift(measurement.frequency(), tau0, model, detrended=detrended)
