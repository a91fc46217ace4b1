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
is 2 sigma^4 / nu; the gamma quasi-likelihood by iteratively reweighted least
squares, reference 4), a term kept only where the data support it (a
likelihood-ratio test on the deviance at the 1 % level, references 5 and 6).

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
   Transactions on Automatic Control 19, 716-723 (1974) (selection of a
   model by its likelihood plus a price per parameter).
6. S. G. Self, K.-Y. Liang, "Asymptotic properties of maximum likelihood
   estimators and likelihood ratio tests under nonstandard conditions",
   Journal of the American Statistical Association 82, 605-610 (1987).
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Callable, Iterable, Iterator, Mapping
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
    "frequency_slope",
    "model_from_levels",
]

ALPHAS = (2, 1, 0, -1, -2)
_LN2 = math.log(2.0)
_DAY = 86400.0
#: Most reweighting steps of the power-law fit (it settles in a handful).
_IRLS_STEPS = 30
#: The reweighting stops when no model value moves by more than this fraction.
_IRLS_RTOL = 1e-7
#: A noise term enters the fitted model only if it lowers the deviance by more
#: than this: the likelihood-ratio test of its absence at the 1 % level, whose
#: null law for a coefficient held at >= 0 is half chi-squared(0) plus half
#: chi-squared(1) (Self & Liang, reference 6), so P(chi2_1 > 5.41) / 2 = 0.01.
_TERM_PENALTY = 5.41
#: Samples per block of the least-squares sums over a frequency array.
_FIT_BLOCK = 1 << 16


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


def nonnegative_least_squares(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Minimise ||a x - b|| subject to x >= 0, for a handful of columns (at most 12).

    The solution of a non-negative least-squares problem is the unconstrained
    least-squares solution on its own support, with every coefficient there
    positive (the Karush-Kuhn-Tucker conditions; C. L. Lawson, R. J. Hanson,
    *Solving Least Squares Problems*, SIAM (1995), chapter 23). With five noise
    terms there are only 31 supports, so trying each and keeping the feasible one
    of least residual finds that solution exactly, without an iterative solver.
    """
    a = np.asarray(a, dtype=float)
    b = np.asarray(b, dtype=float)
    k = a.shape[1]
    if k > 12:
        raise InputError(f"non-negative least squares here takes at most 12 columns, got {k}")
    best = np.zeros(k)
    best_sse = float(b @ b)
    best_size = 0
    for size in range(1, k + 1):
        for support in itertools.combinations(range(k), size):
            cols = list(support)
            x, *_ = np.linalg.lstsq(a[:, cols], b, rcond=None)
            if not np.all(x > 0):
                continue
            resid = b - a[:, cols] @ x
            sse = float(resid @ resid)
            # a larger support must lower the residual by more than rounding to win
            if sse < best_sse * (1.0 - 1e-12) or (sse <= best_sse and size == best_size):
                best = np.zeros(k)
                best[cols] = x
                best_sse, best_size = sse, size
    return best


def _weighted(design: np.ndarray, avar: np.ndarray, nu: np.ndarray, expected: np.ndarray):
    """Design and target weighted by sqrt(nu / 2) / expected, columns scaled to unit norm."""
    weight = np.sqrt(nu / 2.0) / expected
    a_w = design * weight[:, None]
    scale = np.linalg.norm(a_w, axis=0)
    return a_w / scale, avar * weight, scale


def _gamma_fit(design: np.ndarray, avar: np.ndarray, nu: np.ndarray) -> np.ndarray | None:
    """Quasi-likelihood fit of AVAR = design @ h for gamma-distributed estimates.

    Iteratively reweighted least squares, the weight of each point the inverse
    standard deviation sqrt(nu / 2) / AVAR of a chi-squared variance estimate
    taken at the model's own value (McCullagh & Nelder, reference 4). None
    unless every coefficient comes out positive.
    """
    expected = avar
    coef = None
    for step in range(_IRLS_STEPS):
        a_n, b_w, scale = _weighted(design, avar, nu, expected)
        try:
            # normal equations of at most five unit-norm columns
            solution = np.linalg.solve(a_n.T @ a_n, a_n.T @ b_w)
        except np.linalg.LinAlgError:
            return None  # terms that cannot be told apart on these taus
        coef = solution / scale
        model = design @ coef
        if not np.all(model > 0) or (step > 0 and not np.all(coef > 0)):
            # a model that vanishes somewhere cannot weight the points; a coefficient
            # still negative once the weights come from a model marks a set whose
            # non-negative solution lies on a smaller set
            return None
        settled = float(np.max(np.abs(model / expected - 1.0))) < _IRLS_RTOL
        expected = model
        if settled:
            break
    return coef if coef is not None and np.all(coef > 0) else None


def _deviance(avar: np.ndarray, model: np.ndarray, nu: np.ndarray) -> float:
    """Gamma deviance sum nu [avar / model - 1 - ln(avar / model)] (-2 log-likelihood
    up to a constant for chi-squared estimates with nu degrees of freedom)."""
    ratio = avar / model
    return float(np.sum(nu * (ratio - 1.0 - np.log(ratio))))


def fit_power_law(
    tau: Any,
    deviation: Any,
    edf: Any | None = None,
    *,
    f_h: float,
    alphas: tuple[int, ...] = ALPHAS,
) -> PowerLawModel | None:
    """Fit h_alpha to an overlapping Allan deviation curve.

    Each Allan variance estimate is taken as chi-squared distributed with its
    equivalent degrees of freedom nu (a gamma law of shape nu / 2 about the
    model value). For every set of noise terms the coefficients are the
    quasi-likelihood estimate, found by iteratively reweighted least squares
    with weights sqrt(nu / 2) / AVAR at the model's own value (reference 4);
    sets with a coefficient <= 0 are dropped (the non-negative solution lies on
    a smaller set). The set kept minimises the deviance plus 5.41 per term:
    a term enters only where it lowers the deviance by more than the 1 %
    point of the likelihood-ratio test of its absence (a coefficient held at
    >= 0 has the null law chi-squared(0)/2 + chi-squared(1)/2, reference 6),
    the price per parameter of an information criterion (reference 5).
    Weighting by the observed value instead would give a point that happens
    to fall low the largest weight and pull the whole model down (a single
    nearly empty estimate at the longest tau could halve a white FM level);
    with Akaike's price of 2 per term a random rise of the last few points of
    white FM data brings in a small flicker or random-walk term in about one
    fit of seven, which multiplies the uncertainty of a drift and turns the
    noise type red at long tau. Returns None when fewer than two usable
    points exist.

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
    columns = [k for k in range(len(alphas)) if np.all(design[:, k] > 0)]
    best: tuple[float, list[int], np.ndarray] | None = None
    for size in range(1, len(columns) + 1):
        for support in itertools.combinations(columns, size):
            cols = list(support)
            coef = _gamma_fit(design[:, cols], avar, nu)
            if coef is None:
                continue
            score = _deviance(avar, design[:, cols] @ coef, nu) + _TERM_PENALTY * size
            if best is None or score < best[0] - 1e-9 * abs(best[0]):
                best = (score, cols, coef)
    h = dict.fromkeys(alphas, 0.0)
    u = dict.fromkeys(alphas, math.nan)
    notes = []
    if best is not None:
        _, cols, coef = best
        for k, c in zip(cols, coef, strict=True):
            h[alphas[k]] = float(c)
        model = design[:, cols] @ coef
        a_n, b_w, scale = _weighted(design[:, cols], avar, nu, model)
        resid = b_w - a_n @ (coef * scale)
        dof = max(1, len(tau) - len(cols))
        # Reduced chi-squared inflates the covariance when the model does not fit.
        s2 = max(1.0, float(resid @ resid) / dof)
        try:
            cov = np.linalg.inv(a_n.T @ a_n) * s2
            for j, k in enumerate(cols):
                u[alphas[k]] = float(math.sqrt(max(cov[j, j], 0.0)) / scale[j])
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

    def blocks() -> Iterator[tuple[int, np.ndarray]]:
        for lo in range(0, y.size, _FIT_BLOCK):
            yield lo, y[lo : lo + _FIT_BLOCK]

    return _least_squares(blocks, tau0, model, detrended)


def _known(blocks: Callable[[], Iterable[tuple[int, np.ndarray]]]):
    """(sample indices as float64, values) of the finite samples of each block."""
    index = np.empty(0)
    for lo, y in blocks():
        if index.size < y.size:
            index = np.arange(y.size, dtype=np.float64)
        k = index[: y.size] + lo  # exact: whole numbers below 2**53
        ok = np.isfinite(y)
        if ok.all():
            yield k, y
        else:
            yield k[ok], y[ok]


def _line(blocks: Callable[[], Iterable[tuple[int, np.ndarray]]], tau0: float):
    """(count, offset, slope per second, span, mean index, centred sum of squared indices)
    of the finite samples of ``blocks()``, or None below 3 samples.

    The sums over the sample index k (time t = k tau0) are accumulated block
    by block, so no array of the record's length is made: offset = mean(y),
    slope from the centred cross sum (ordinary least squares), in two passes
    over the blocks. For a measurement the blocks come from its phase: the
    whole-array sums over its frequency took 33 B/row at 1e7 rows, these ~0.
    """
    count, sum_y, sum_k, sum_kk = 0, 0.0, 0.0, 0.0
    first = last = math.nan
    for k, y in _known(blocks):
        if k.size:
            if count == 0:
                first = float(k[0])
            last = float(k[-1])
            count += int(k.size)
            sum_y += float(np.sum(y))
            sum_k += float(np.sum(k))
            sum_kk += float(np.einsum("i,i->", k, k))
    if count < 3:
        return None
    offset = sum_y / count
    k_mean = sum_k / count
    skk = sum_kk - count * k_mean * k_mean
    # sum k (y - mean) equals the centred cross sum and keeps its digits under a
    # large offset.
    sky = 0.0
    for k, y in _known(blocks):
        sky += float(np.einsum("i,i->", k, y - offset))
    slope = sky / skk / tau0 if skk > 0 else math.nan
    span = (last - first) * tau0 + tau0
    return count, offset, slope, span, k_mean, skk


def _frequency_blocks(measurement: Any) -> Callable[[], Iterator[tuple[int, np.ndarray]]]:
    """Blocks (first index, values) of a measurement's fractional frequency, one reused
    buffer of :data:`_FIT_BLOCK` samples made from the phase (see :func:`_line`)."""

    def blocks() -> Iterator[tuple[int, np.ndarray]]:
        for lo, _, values in measurement.frequency_blocks(_FIT_BLOCK, reuse=True):
            yield lo, values

    return blocks


def _least_squares(
    blocks: Callable[[], Iterable[tuple[int, np.ndarray]]],
    tau0: float,
    model: PowerLawModel | None,
    detrended: bool,
) -> OffsetDrift:
    """Offset and drift of the finite samples of ``blocks()`` (see :func:`_line`);
    without a model a third pass sums the squared residuals."""
    line = _line(blocks, tau0)
    if line is None:
        return OffsetDrift(math.nan, math.nan, math.nan, math.nan, 0.0, "too few samples")
    count, offset, slope, span, k_mean, skk = line
    if _usable(model):
        return _with_model(offset, slope, span, model, detrended)
    # resid = (y - offset) - slope tau0 (k - mean k)
    sum_rr = 0.0
    for k, y in _known(blocks):
        fit = np.subtract(k, k_mean)
        fit *= slope * tau0
        resid = y - offset
        resid -= fit
        sum_rr += float(np.einsum("i,i->", resid, resid))
    s2 = sum_rr / max(1, count - 2)
    sxx = skk * tau0 * tau0
    return OffsetDrift(
        offset=offset,
        u_offset=math.sqrt(s2 / count),
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


def _phase_sums(measurement: Any) -> tuple[float, float, float] | None:
    """(offset, slope per second, span) of an unbroken record from its phase, else None.

    With y_k = (x_{k+1} - x_k)/tau0 for k = 0..M-1, summation by parts gives
    sum k y_k = [(M - 1) x_M - sum_{j=1}^{M-1} x_j] / tau0 and mean(y) =
    (x_M - x_0) / (M tau0), to which the removed offset is added back.
    """
    x = measurement.phase
    tau0 = measurement.tau0
    if measurement.has_gaps or x.size < 4:
        return None
    count = x.size - 1
    offset = float(x[-1] - x[0]) / (count * tau0) + measurement.frequency_offset
    k_mean = (count - 1) / 2.0
    skk = count * (count * count - 1) / 12.0  # sum (k - mean)^2 over k = 0..M-1
    sum_ky = ((count - 1) * float(x[-1]) - float(np.sum(x[1:-1]))) / tau0
    sky = sum_ky - k_mean * (float(x[-1] - x[0]) / tau0)
    return offset, sky / skk / tau0, count * tau0


def frequency_slope(measurement: Any) -> float:
    """Least-squares slope (per second) of a measurement's fractional frequency."""
    sums = _phase_sums(measurement)
    if sums is not None:
        return sums[1]
    line = _line(_frequency_blocks(measurement), measurement.tau0)
    return math.nan if line is None else line[2]


def offset_and_drift_of(
    measurement: Any, model: PowerLawModel | None, *, detrended: bool = False
) -> OffsetDrift:
    """:func:`offset_and_drift` of a measurement's fractional frequency.

    For an unbroken record with a usable model the sums come from the phase
    directly, in one pass and without forming the frequency (see
    :func:`_phase_sums`).
    """
    sums = _phase_sums(measurement)
    if sums is not None and _usable(model):
        return _with_model(*sums, model, detrended)
    return _least_squares(_frequency_blocks(measurement), measurement.tau0, model, detrended)
