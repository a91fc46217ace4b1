"""Frequency drift: estimate it, describe it, and remove it from a measurement.

Models fitted to fractional frequency y(t), t in days from the first sample [1]_:

``"none"``
    y = c (the mean frequency; nothing is removed).
``"linear"``
    y = c + a t, least squares (equivalent to a quadratic fit to phase).
``"quadratic"``
    y = c + a t + q t^2, least squares.
``"log"``
    y = a ln(b t + 1) + c, the usual model of a quartz oscillator settling
    after turn-on [1]_, fitted with a Levenberg-Marquardt / trust-region
    least-squares search [2]_ started from the best of a grid of ``b`` values
    (for fixed ``b`` the model is linear in ``a`` and ``c``).
``"diffusion"``
    y = a + b sqrt(t + c), the diffusion model of reference [1]_, fitted the
    same way from the best of a grid of ``c`` values (for fixed ``c`` it is
    linear in ``a`` and ``b``).

Drift estimators as cross-checks [1]_: from phase, the three-point estimate
(second divided difference of the phase at the start, middle and end of the
longest unbroken stretch) and the mean second difference of the phase; from
frequency, the bisection estimate (the mean frequencies of the two halves).

Standard errors assume white residuals (white FM); with flicker or random-walk
FM they are optimistic, as the references point out for every least-squares
drift fit. ``per_day`` is the mean drift rate over the record,
``(y(T) - y(0)) / T``: the slope for the linear model.

Removing a model works on the phase: the integral of the model minus its
record mean is subtracted from every phase sample, so the gaps (NaN samples)
and segments (frequency gaps) stay exactly where they were, and the mean
frequency offset is kept.

References
----------
.. [1] W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST Special
   Publication 1065 (2008), data preprocessing: frequency drift (drift from
   phase: quadratic fit, three-point, mean second difference; from frequency:
   linear fit, bisection, log model, diffusion model).
.. [2] P. Virtanen et al., *SciPy 1.0: fundamental algorithms for scientific
   computing in Python*, Nature Methods 17 (2020): ``scipy.optimize.curve_fit``.
.. [3] G. E. Forsythe, "Generation and use of orthogonal polynomials for
   data-fitting with a digital computer", *Journal of the Society for
   Industrial and Applied Mathematics* 5 (1957) 74-88.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass, field
from typing import Any, Literal

import numpy as np

from ..errors import AnalysisError, InputError, StabilityWarning
from ..measurement import Measurement
from ._common import SECONDS_PER_DAY, centred_frequency, check_measurement

__all__ = [
    "DRIFT_MODELS",
    "DriftFit",
    "fit_drift",
    "remove_drift",
    "three_point_drift",
    "mean_second_difference_drift",
    "bisection_drift",
    "check_drift_model",
]

DriftModel = Literal["none", "linear", "quadratic", "log", "diffusion"]
#: Names of the drift models and what they are.
DRIFT_MODELS: dict[str, str] = {
    "none": "no drift model (mean frequency only)",
    "linear": "linear frequency drift y = c + a t",
    "quadratic": "quadratic frequency drift y = c + a t + q t^2",
    "log": "logarithmic frequency drift y = a ln(b t + 1) + c",
    "diffusion": "diffusion frequency drift y = a + b sqrt(t + c)",
}

_POLY_DEGREE = {"none": 0, "linear": 1, "quadratic": 2}
_POLY_NAMES = ("offset", "drift_per_day", "curvature_per_day2")


def check_drift_model(model: Any, name: str = "drift") -> str:
    """Validate a drift model name; raise :class:`InputError` listing the choices."""
    if isinstance(model, str) and model.strip().lower() in DRIFT_MODELS:
        return model.strip().lower()
    raise InputError(
        f"{name} must be one of {', '.join(DRIFT_MODELS)}, got {model!r}",
        hint="pass --drift none, linear, quadratic, log or diffusion",
    )


def _plain(value: float) -> float | None:
    return float(value) if math.isfinite(value) else None


def _h(z: np.ndarray) -> np.ndarray:
    """(1 + z) ln(1 + z) - z, with its series where z is small (no cancellation)."""
    z = np.asarray(z, dtype=float)
    small = np.abs(z) < 1e-3
    zs = np.where(small, z, 0.0)
    series = zs**2 / 2 - zs**3 / 6 + zs**4 / 12 - zs**5 / 20
    zl = np.where(small, 0.0, z)
    direct = (1 + zl) * np.log1p(zl) - zl
    return np.where(small, series, direct)


@dataclass(frozen=True, eq=False)
class DriftFit:
    """A fitted drift model.

    Attributes
    ----------
    model
        ``"none"``, ``"linear"``, ``"quadratic"``, ``"log"`` or ``"diffusion"``.
    method
        How it was estimated (e.g. least squares on frequency, three-point).
    coefficients
        Model coefficients, time in days: ``offset`` (fractional frequency at
        the first sample), ``drift_per_day``, ``curvature_per_day2`` for the
        polynomials; ``a``, ``b_per_day``, ``c`` for the log model; ``a``,
        ``b_per_sqrt_day``, ``c_days`` for the diffusion model.
    errors
        Standard error of each coefficient (NaN where the method gives none).
    per_day
        Mean drift rate over the record, fractional frequency per day.
    per_day_error
        Its standard error.
    n_used
        Frequency samples used.
    residual_rms
        RMS of the frequency residuals from the model.
    span_days
        Record length in days.
    t
        Mid-time of each frequency sample, seconds from the first phase sample.
    y_model
        Model fractional frequency at ``t``.
    """

    model: str
    method: str
    coefficients: dict[str, float]
    errors: dict[str, float]
    per_day: float
    per_day_error: float
    n_used: int
    residual_rms: float
    span_days: float
    t: np.ndarray = field(repr=False)
    y_model: np.ndarray = field(repr=False)

    def frequency_at(self, t: Any) -> np.ndarray:
        """Model fractional frequency at times ``t`` (seconds from the first sample)."""
        days = np.asarray(t, dtype=float) / SECONDS_PER_DAY
        return _evaluate(self.model, self.coefficients, days)

    def phase_at(self, t: Any) -> np.ndarray:
        """Integral of the model from the first sample to ``t``, in seconds."""
        days = np.asarray(t, dtype=float) / SECONDS_PER_DAY
        offset = _constant(self.model, self.coefficients)
        varying = _drift_integral(self.model, self.coefficients, days)
        return (varying + offset * days) * SECONDS_PER_DAY

    @property
    def description(self) -> str:
        """The fit in one plain sentence."""
        rate = f"{self.per_day:.3g}"
        if math.isfinite(self.per_day_error):
            rate += f" +/- {self.per_day_error:.2g}"
        if self.model == "none":
            return (
                f"no drift model; mean fractional frequency "
                f"{self.coefficients['offset']:.6g} over {self.n_used} samples"
            )
        what = {
            "linear": "linear drift",
            "quadratic": "quadratic drift, mean rate",
            "log": "log-model drift, mean rate",
            "diffusion": "diffusion-model drift, mean rate",
        }[self.model]
        extra = ""
        if self.model == "diffusion":
            a, b, c = (self.coefficients[k] for k in ("a", "b_per_sqrt_day", "c_days"))
            extra = (
                f"; y = {a:.3g} {'-' if b < 0 else '+'} {abs(b):.3g} sqrt(t + {c:.3g}), t in days"
            )
        if self.model == "log":
            extra = (
                f"; y = {self.coefficients['a']:.3g} ln({self.coefficients['b_per_day']:.3g} t + 1)"
                f" {'-' if self.coefficients['c'] < 0 else '+'} {abs(self.coefficients['c']):.3g}"
                ", t in days"
            )
        return (
            f"{what} {rate} per day ({self.method}, {self.n_used} frequency samples "
            f"over {self.span_days:.3g} days){extra}"
        )

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready summary (the model curve itself is left out)."""
        return {
            "model": self.model,
            "method": self.method,
            "coefficients": {k: _plain(v) for k, v in self.coefficients.items()},
            "errors": {k: _plain(v) for k, v in self.errors.items()},
            "per_day": _plain(self.per_day),
            "per_day_error": _plain(self.per_day_error),
            "n_used": int(self.n_used),
            "residual_rms": _plain(self.residual_rms),
            "span_days": _plain(self.span_days),
            "description": self.description,
        }


def _constant(model: str, coef: dict[str, float]) -> float:
    """The constant term of a model (fractional frequency)."""
    return {"log": coef.get("c"), "diffusion": coef.get("a")}.get(model, coef.get("offset", 0.0))


def _evaluate(model: str, coef: dict[str, float], days: np.ndarray) -> np.ndarray:
    if model == "log":
        return coef["a"] * np.log1p(coef["b_per_day"] * days) + coef["c"]
    if model == "diffusion":
        return coef["a"] + coef["b_per_sqrt_day"] * np.sqrt(days + coef["c_days"])
    degree = _POLY_DEGREE[model]
    days = np.asarray(days, dtype=float)
    if degree == 0:
        return np.full(days.shape, coef["offset"], dtype=float)
    # offset + a t (+ q t^2), summed in that order; t^2 is t * t, as days**2 is.
    out = np.multiply(days, coef[_POLY_NAMES[1]])
    out += coef["offset"]
    if degree == 2:
        term = np.multiply(days, days)
        term *= coef[_POLY_NAMES[2]]
        out += term
    return out


def _drift_integral(model: str, coef: dict[str, float], days: np.ndarray) -> np.ndarray:
    """Integral (fractional frequency x days) of the model without its constant term."""
    if model == "log":
        a, b = coef["a"], coef["b_per_day"]
        return a * _h(b * days) / b
    if model == "diffusion":
        b, c = coef["b_per_sqrt_day"], coef["c_days"]
        return b * (2.0 / 3.0) * ((days + c) ** 1.5 - c**1.5)
    out = np.zeros(np.shape(days), dtype=float)
    for p, name in enumerate(_POLY_NAMES[1 : _POLY_DEGREE[model] + 1], start=1):
        out = out + coef[name] * days ** (p + 1) / (p + 1)
    return out


def _times(measurement: Measurement) -> tuple[np.ndarray, float]:
    """Mid-times of the frequency samples (s) and the record length (s)."""
    t = np.arange(measurement.n - 1, dtype=float)
    t += 0.5
    t *= measurement.tau0
    return t, measurement.span


def _validate_fit_args(measurement: Any, model: Any, function: str) -> tuple[Measurement, str]:
    m = check_measurement(measurement, function)
    return m, check_drift_model(model, "model")


def _finish(
    m: Measurement,
    model: str,
    method: str,
    coef: dict[str, float],
    errors: dict[str, float],
    per_day: float,
    per_day_error: float,
    y: np.ndarray,
) -> DriftFit:
    t, span = _times(m)
    y_model = _evaluate(model, coef, t / SECONDS_PER_DAY)
    good = np.isfinite(y)
    n_used = int(np.count_nonzero(good))
    resid = y + m.frequency_offset
    resid -= y_model
    if n_used < resid.size:
        resid = resid[good]
    rms = float(np.sqrt(np.mean(np.square(resid, out=resid)))) if n_used else math.nan
    return DriftFit(
        model=model,
        method=method,
        coefficients=coef,
        errors=errors,
        per_day=per_day,
        per_day_error=per_day_error,
        n_used=n_used,
        residual_rms=rms,
        span_days=span / SECONDS_PER_DAY,
        t=t,
        y_model=y_model,
    )


def _least_squares_polynomial(
    u: np.ndarray, target: np.ndarray, degree: int
) -> tuple[np.ndarray, np.ndarray, float]:
    """Least-squares polynomial ``target ~ sum_p beta_p u^p`` without a design matrix.

    The fit is made in the basis of the polynomials orthogonal over the sample
    times (Forsythe's three-term recurrence [3]_): ``p_0 = 1``,
    ``p_1 = u - a_1``, ``p_(k+1) = (u - a_(k+1)) p_k - b_k p_(k-1)``, whose Gram
    matrix ``G = P^T P`` is diagonal up to rounding, so the normal equations
    ``G gamma = P^T target`` are well conditioned and need only O(N) sums.
    With ``P = D C`` (``D`` the Vandermonde design, ``C`` upper triangular, the
    monomial coefficients of each ``p_k``): ``beta = C gamma`` and
    ``(D^T D)^-1 = C G^-1 C^T``, the same solution and covariance factor as a
    least-squares solve on ``D``.

    Returns
    -------
    (beta, (D^T D)^-1, SSE)
        Monomial coefficients, the inverse normal matrix and the residual sum of squares.
    """
    n = float(u.size)
    basis: list[np.ndarray | None] = [None]  # None stands for p_0 = 1
    monomial = np.zeros((degree + 1, degree + 1))
    monomial[0, 0] = 1.0
    norms = [n]
    for k in range(degree):
        current = basis[k]
        if current is None:
            shift = float(np.sum(u)) / n
            following = u - shift
        else:
            weighted = current * current
            shift = float(np.dot(u, weighted)) / norms[k]
            previous = basis[k - 1]
            following = (u - shift) * current
            following -= norms[k] / norms[k - 1] * (1.0 if previous is None else previous)
        # Monomial coefficients: p_(k+1) = u p_k - shift p_k - b_k p_(k-1).
        monomial[1:, k + 1] = monomial[:-1, k]
        monomial[:, k + 1] -= shift * monomial[:, k]
        if k > 0:
            monomial[:, k + 1] -= norms[k] / norms[k - 1] * monomial[:, k - 1]
        basis.append(following)
        norms.append(float(np.dot(following, following)))

    def inner(a: np.ndarray | None, b: np.ndarray | None) -> float:
        if a is None and b is None:
            return n
        if a is None or b is None:
            return float(np.sum(b if a is None else a))
        return float(np.dot(a, b))

    size = degree + 1
    gram = np.diag(norms)
    for i in range(size):
        for j in range(i + 1, size):
            gram[i, j] = gram[j, i] = inner(basis[i], basis[j])
    rhs = np.array([inner(p, target) for p in basis])
    gram_inverse = np.linalg.inv(gram)
    gamma = gram_inverse @ rhs
    resid = target - gamma[0]
    for k in range(1, size):
        term = basis[k]
        assert term is not None
        resid -= np.multiply(term, gamma[k], out=term)
    sse = float(np.dot(resid, resid))
    beta = monomial @ gamma
    return beta, monomial @ gram_inverse @ monomial.T, sse


def _fit_polynomial(m: Measurement, model: str, y: np.ndarray | None = None) -> DriftFit:
    """Least-squares polynomial drift; ``y`` is ``centred_frequency(m)`` when already known."""
    degree = _POLY_DEGREE[model]
    names = _POLY_NAMES[: degree + 1]
    if y is None:
        y = centred_frequency(m)
    t, span = _times(m)
    good = np.isfinite(y)
    n_used = int(np.count_nonzero(good))
    span_days = span / SECONDS_PER_DAY
    nan_fit = (
        {k: math.nan for k in names},
        {k: math.nan for k in names},
    )
    if n_used < degree + 1:
        warnings.warn(
            f"{model} drift needs at least {degree + 1} frequency samples, the record has "
            f"{n_used}; the fit is NaN",
            StabilityWarning,
            stacklevel=4,
        )
        coef, errors = nan_fit
        return _finish(m, model, "least squares on frequency", coef, errors, *([math.nan] * 2), y)
    # Scaled time u in [0, 1] and scaled values keep the normal equations well conditioned.
    gapless = n_used == y.size
    u = np.divide(t if gapless else t[good], span)
    values = y if gapless else y[good]
    centre = float(np.mean(values))
    scale = float(np.std(values)) or 1.0
    target = np.subtract(values, centre)
    target /= scale
    beta, gram_inverse, sse = _least_squares_polynomial(u, target, degree)
    del u, values, target
    dof = n_used - (degree + 1)
    if dof > 0:
        cov_u = sse / dof * gram_inverse
    else:
        cov_u = np.full((degree + 1, degree + 1), np.nan)
    # Back to natural units: coefficient p is per day^p.
    factor = scale / span_days ** np.arange(degree + 1)
    natural = beta * factor
    natural[0] += centre + m.frequency_offset
    cov = cov_u * np.outer(factor, factor)
    coef = {k: float(v) for k, v in zip(names, natural, strict=True)}
    variances = np.diag(cov)
    errors = {
        k: float(math.sqrt(v)) if v >= 0 else math.nan
        for k, v in zip(names, variances, strict=True)
    }
    if degree == 0:
        per_day, per_day_error = 0.0, 0.0
    else:
        grad = np.zeros(degree + 1)
        grad[1] = 1.0
        if degree == 2:
            grad[2] = span_days
        per_day = float(grad @ natural)
        var = float(grad @ cov @ grad)
        per_day_error = math.sqrt(var) if var >= 0 else math.nan
    return _finish(m, model, "least squares on frequency", coef, errors, per_day, per_day_error, y)


@dataclass
class _Scaled:
    """A record's frequency ready for a nonlinear fit: u = t / T, target = (y - centre) / scale."""

    y: np.ndarray
    span: float
    u: np.ndarray
    centre: float
    scale: float
    target: np.ndarray


def _scaled(m: Measurement, model: str, hint: str) -> _Scaled:
    y = centred_frequency(m)
    t, span = _times(m)
    good = np.isfinite(y)
    if int(good.sum()) < 4:
        raise AnalysisError(
            f"the {model} drift model needs at least 4 frequency samples, got {int(good.sum())}",
            hint=hint,
        )
    values = y[good]
    centre = float(np.mean(values))
    scale = float(np.std(values)) or 1.0
    return _Scaled(y, span, t[good] / span, centre, scale, (values - centre) / scale)


def _nonlinear_fit(
    model: str,
    curve: Any,
    data: _Scaled,
    grid: np.ndarray,
    basis: Any,
    start: Any,
    bounds: tuple[list[float], list[float]],
    hint: str,
) -> tuple[np.ndarray, np.ndarray]:
    """Bounded least squares of a 3-parameter model, started from the best of a grid.

    For a fixed value ``g`` of the nonlinear parameter the model is linear in the
    other two: ``basis(u, g)`` gives their columns, ``start(g, coefs)`` the full
    start vector. Returns (parameters, covariance) in the scaled units.
    """
    best: tuple[float, np.ndarray] | None = None
    for g in grid:
        columns = basis(data.u, g)
        coefs, *_ = np.linalg.lstsq(columns, data.target, rcond=None)
        sse = float(np.sum((data.target - columns @ coefs) ** 2))
        if best is None or sse < best[0]:
            best = (sse, np.asarray(start(float(g), coefs), dtype=float))
    assert best is not None
    from scipy.optimize import OptimizeWarning, curve_fit  # only the nonlinear models need it

    try:
        with warnings.catch_warnings():
            warnings.simplefilter("error", OptimizeWarning)
            popt, pcov = curve_fit(
                curve, data.u, data.target, p0=best[1], bounds=bounds, max_nfev=2000
            )
    except (RuntimeError, OptimizeWarning, ValueError) as exc:
        raise AnalysisError(f"the {model} drift model did not converge: {exc}", hint=hint) from None
    return popt, pcov


def _not_identified(model: str, curvature: str, hint: str) -> AnalysisError:
    return AnalysisError(
        f"the {model} drift model did not converge: the data show no identifiable "
        f"{curvature} curvature",
        hint=hint,
    )


def _natural(
    m: Measurement,
    data: _Scaled,
    popt: np.ndarray,
    pcov: np.ndarray,
    factor: np.ndarray,
    constant: int,
    names: tuple[str, str, str],
) -> tuple[np.ndarray, np.ndarray, dict[str, float], dict[str, float]]:
    """Parameters and covariance back in natural units (days), as dicts too."""
    natural = popt * factor
    natural[constant] += data.centre + m.frequency_offset
    cov = pcov * np.outer(factor, factor)
    coef = {k: float(v) for k, v in zip(names, natural, strict=True)}
    errors = {k: float(math.sqrt(max(v, 0.0))) for k, v in zip(names, np.diag(cov), strict=True)}
    return natural, cov, coef, errors


def _log_curve(u: np.ndarray, a: float, b: float, c: float) -> np.ndarray:
    return a * np.log1p(b * u) + c


def _fit_log(m: Measurement) -> DriftFit:
    hint = "the data may not follow a log model; use --drift linear"
    data = _scaled(m, "log", hint)
    popt, pcov = _nonlinear_fit(
        "log",
        _log_curve,
        data,
        np.logspace(-1, 4, 26),
        lambda u, b: np.column_stack([np.log1p(b * u), np.ones_like(u)]),
        lambda b, ac: (ac[0], b, ac[1]),
        ([-np.inf, 1e-9, -np.inf], [np.inf, np.inf, np.inf]),
        hint,
    )
    # The curvature must be identified: b T not vanishing (else the model is a straight
    # line over the record) and b known to better than 100 %.
    if (
        not np.all(np.isfinite(pcov))
        or popt[1] < 1e-3
        or not (math.sqrt(max(pcov[1, 1], 0.0)) < popt[1])
    ):
        raise _not_identified("log", "logarithmic", hint)
    span_days = data.span / SECONDS_PER_DAY
    factor = np.array([data.scale, 1.0 / span_days, data.scale])
    natural, cov, coef, errors = _natural(m, data, popt, pcov, factor, 2, ("a", "b_per_day", "c"))
    a, b = natural[0], natural[1]
    per_day = float(a * np.log1p(b * span_days) / span_days)
    grad = np.array(
        [np.log1p(b * span_days) / span_days, a / (1.0 + b * span_days), 0.0], dtype=float
    )
    var = float(grad @ cov @ grad)
    per_day_error = math.sqrt(var) if var >= 0 else math.nan
    return _finish(
        m, "log", "least squares on frequency", coef, errors, per_day, per_day_error, data.y
    )


def _diffusion_curve(u: np.ndarray, a: float, b: float, c: float) -> np.ndarray:
    return a + b * np.sqrt(u + c)


def _fit_diffusion(m: Measurement) -> DriftFit:
    hint = "the data may not follow a diffusion model; use --drift linear"
    data = _scaled(m, "diffusion", hint)  # u: time in record lengths
    popt, pcov = _nonlinear_fit(
        "diffusion",
        _diffusion_curve,
        data,
        np.concatenate([[0.0], np.logspace(-4, 2, 25)]),
        lambda u, c: np.column_stack([np.ones_like(u), np.sqrt(u + c)]),
        lambda c, ab: (ab[0], ab[1], c),
        ([-np.inf, -np.inf, 0.0], [np.inf, np.inf, np.inf]),
        hint,
    )
    # The curvature must be identified: c not so large that sqrt(t + c) is a straight
    # line over the record, and b known to better than 100 %.
    if (
        not np.all(np.isfinite(pcov))
        or popt[2] > 100.0
        or not (math.sqrt(max(pcov[1, 1], 0.0)) < abs(popt[1]))
    ):
        raise _not_identified("diffusion", "square-root", hint)
    span_days = data.span / SECONDS_PER_DAY
    # back to days: a + b sqrt(u + c) with u = t / T gives b / sqrt(T) and c T
    factor = np.array([data.scale, data.scale / math.sqrt(span_days), span_days])
    natural, cov, coef, errors = _natural(
        m, data, popt, pcov, factor, 0, ("a", "b_per_sqrt_day", "c_days")
    )
    b, c = natural[1], natural[2]
    rise = math.sqrt(span_days + c) - math.sqrt(c)
    per_day = float(b * rise / span_days)
    slope_c = (0.5 / math.sqrt(span_days + c) - (0.5 / math.sqrt(c) if c > 0 else 0.0)) / span_days
    grad = np.array([0.0, rise / span_days, b * slope_c], dtype=float)
    if c == 0.0:  # at the bound the derivative in c is infinite: b alone carries the error
        grad[2] = 0.0
    var = float(grad @ cov @ grad)
    per_day_error = math.sqrt(var) if var >= 0 else math.nan
    return _finish(
        m, "diffusion", "least squares on frequency", coef, errors, per_day, per_day_error, data.y
    )


def fit_drift(measurement: Measurement, model: DriftModel = "linear") -> DriftFit:
    """Fit a drift model to the fractional frequency of a measurement.

    Parameters
    ----------
    measurement
        The data; gaps are skipped.
    model
        ``"none"``, ``"linear"``, ``"quadratic"``, ``"log"`` or ``"diffusion"``.

    Returns
    -------
    DriftFit
        Coefficients with standard errors, the model curve and the mean rate per day.

    Raises
    ------
    InputError
        Unknown model.
    AnalysisError
        The log or diffusion model does not converge (use ``"linear"``).
    """
    m, model = _validate_fit_args(measurement, model, "fit_drift")
    return _fit_drift(m, model)


def _fit_drift(m: Measurement, model: str, y: np.ndarray | None = None) -> DriftFit:
    """The work of :func:`fit_drift`; ``y`` is ``centred_frequency(m)`` when already known."""
    if model == "log":
        return _fit_log(m)
    if model == "diffusion":
        return _fit_diffusion(m)
    return _fit_polynomial(m, model, y)


def remove_drift(
    measurement: Measurement, model: DriftModel = "linear"
) -> tuple[Measurement, DriftFit]:
    """Fit a drift model and remove it, keeping gaps, segments and the mean offset.

    The integral of ``y_model - mean(y_model)`` is subtracted from the phase,
    so the frequency loses the drift but keeps its mean; NaN samples and
    segment breaks are untouched. ``"none"`` returns an unchanged copy.

    Returns
    -------
    (Measurement, DriftFit)
        The new measurement (with a note) and the fit that was removed.
    """
    m, model = _validate_fit_args(measurement, model, "remove_drift")
    return _remove_fit(m, _fit_drift(m, model))


def _remove_fit(m: Measurement, fit: DriftFit) -> tuple[Measurement, DriftFit]:
    """The work of :func:`remove_drift` once ``fit`` (a fit to ``m``) is known."""
    model = fit.model
    if model == "none":
        return m.replace(), fit
    if not all(math.isfinite(v) for v in fit.coefficients.values()):
        raise AnalysisError(
            f"the {model} drift could not be fitted ({fit.n_used} usable frequency samples)",
            hint="use --drift none on so short a record",
        )
    days = np.arange(m.n, dtype=float) * m.tau0 / SECONDS_PER_DAY
    integral = _drift_integral(model, fit.coefficients, days)
    # Remove the drift minus its record mean: zero at both ends of the record.
    correction = (integral - integral[-1] * days / days[-1]) * SECONDS_PER_DAY
    new = m.replace(phase=m.phase - correction)
    new.notes.append(f"Removed {fit.description}; the mean frequency offset was kept.")
    return new, fit


def _stretch(m: Measurement) -> np.ndarray:
    """Indices of the finite phase samples of the longest segment."""
    finite = np.isfinite(m.phase)
    seg = m.segments if m.segments is not None else np.zeros(m.n, dtype=np.int64)
    counts = np.bincount(seg[finite] - seg[0])
    label = int(np.argmax(counts)) + int(seg[0])
    return np.flatnonzero(finite & (seg == label))


def three_point_drift(measurement: Measurement) -> DriftFit:
    """Linear frequency drift from three phase samples.

    Uses the first, middle and last finite phase samples of the longest
    unbroken stretch: drift = 2 x (second divided difference of the phase),
    which for equally spaced points is ``4 (x_end - 2 x_mid + x_start) / T^2``
    [1]_. Exact on a noiseless quadratic phase; no standard error is given
    (it depends on the noise type).
    """
    m = check_measurement(measurement, "three_point_drift")
    idx = _stretch(m)
    if idx.size < 3:
        raise AnalysisError(
            f"three-point drift needs 3 phase samples in one unbroken stretch, got {idx.size}"
        )
    i0, i2 = int(idx[0]), int(idx[-1])
    i1 = int(idx[1:-1][np.argmin(np.abs(idx[1:-1] - 0.5 * (i0 + i2)))])
    t0, t1, t2 = (np.array([i0, i1, i2], dtype=float) * m.tau0).tolist()
    x0, x1, x2 = m.phase[[i0, i1, i2]].tolist()
    slope01 = (x1 - x0) / (t1 - t0)
    slope12 = (x2 - x1) / (t2 - t1)
    rate = 2.0 * (slope12 - slope01) / (t2 - t0)  # per second
    offset = slope01 - rate * 0.5 * (t0 + t1) + m.frequency_offset
    return _phase_estimate(m, "three-point estimate from phase", rate, offset)


def mean_second_difference_drift(measurement: Measurement) -> DriftFit:
    """Linear frequency drift from the mean second difference of the phase.

    drift = mean(x[i+2] - 2 x[i+1] + x[i]) / tau0^2 over the second
    differences that touch no gap [1]_. Exact on a noiseless quadratic phase;
    efficient for random-walk FM. No standard error is given (the second
    differences are correlated in a way that depends on the noise type).
    """
    m = check_measurement(measurement, "mean_second_difference_drift")
    y = centred_frequency(m)
    d2 = np.diff(y)
    good = np.isfinite(d2)
    if not good.any():
        raise AnalysisError("mean second difference drift needs 3 phase samples without a gap")
    rate = float(np.mean(d2[good])) / m.tau0  # per second
    t, _ = _times(m)
    yg = np.isfinite(y)
    offset = float(np.mean(y[yg]) - rate * np.mean(t[yg])) + m.frequency_offset
    return _phase_estimate(m, "mean second difference of phase", rate, offset)


def bisection_drift(measurement: Measurement) -> DriftFit:
    """Linear frequency drift from the mean frequencies of the two halves of the record.

    drift = (mean y of the second half - mean y of the first half) / (the
    difference of their mean times), over the finite frequency samples [1]_.
    Exact on a noiseless linear frequency drift; robust to a few noisy samples
    and simple to check by hand. No standard error is given (it depends on the
    noise type).
    """
    m = check_measurement(measurement, "bisection_drift")
    y = centred_frequency(m)
    t, _ = _times(m)
    half = y.size // 2
    parts = []
    for part in (slice(0, half), slice(half, y.size)):
        good = np.isfinite(y[part])
        if not good.any():
            raise AnalysisError(
                "bisection drift needs frequency samples in both halves of the record"
            )
        parts.append((float(np.mean(y[part][good])), float(np.mean(t[part][good]))))
    (y1, t1), (y2, t2) = parts
    rate = (y2 - y1) / (t2 - t1)  # per second
    yg = np.isfinite(y)
    offset = float(np.mean(y[yg]) - rate * np.mean(t[yg])) + m.frequency_offset
    return _phase_estimate(m, "bisection of the frequency record", rate, offset)


def _phase_estimate(m: Measurement, method: str, rate: float, offset: float) -> DriftFit:
    per_day = rate * SECONDS_PER_DAY
    coef = {"offset": offset, "drift_per_day": per_day}
    errors = {"offset": math.nan, "drift_per_day": math.nan}
    return _finish(m, "linear", method, coef, errors, per_day, math.nan, centred_frequency(m))
