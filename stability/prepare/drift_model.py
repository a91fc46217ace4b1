"""Drift models and the result of a drift fit (:class:`DriftFit`).

The model curves, their phase integrals and the common finishing step of every
fit live here; the fits themselves are in :mod:`stability.prepare.drift`
(least-squares polynomials, and the entry points), :mod:`.drift_nonlinear`
(logarithmic and diffusion models) and :mod:`.drift_checks` (the phase-based
cross-check estimators). NIST SP 1065 (2008), data preprocessing: frequency drift.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Literal

import numpy as np

from ..errors import InputError
from ..measurement import Measurement
from ._common import SECONDS_PER_DAY, check_measurement, frequency_blocks

__all__ = ["DRIFT_MODELS", "DriftFit", "DriftModel", "check_drift_model"]

#: Polynomial models: degree and coefficient names.
_POLY_DEGREE = {"none": 0, "linear": 1, "quadratic": 2}
_POLY_NAMES = ("offset", "drift_per_day", "curvature_per_day2")

DriftModel = Literal["none", "linear", "quadratic", "log", "diffusion"]
#: Names of the drift models and what they are.
DRIFT_MODELS: dict[str, str] = {
    "none": "no drift model (mean frequency only)",
    "linear": "linear frequency drift y = c + a t",
    "quadratic": "quadratic frequency drift y = c + a t + q t^2",
    "log": "logarithmic frequency drift y = a ln(b t + 1) + c",
    "diffusion": "diffusion frequency drift y = a + b sqrt(t + c)",
}


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
    samples, tau0
        Frequency samples of the record and their interval, seconds.
    t
        Mid-time of each frequency sample, seconds from the first phase sample
        (made on each access: a fit holds no array of the record's length).
    y_model
        Model fractional frequency at ``t`` (made on each access;
        :meth:`y_model_between` gives a part of it).
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
    samples: int
    tau0: float

    @property
    def t(self) -> np.ndarray:
        return _mid_times(self.samples, self.tau0)

    @property
    def y_model(self) -> np.ndarray:
        return self.y_model_between(0, self.samples)

    def y_model_between(self, start: int, stop: int) -> np.ndarray:
        """``y_model[start:stop]`` (the same numbers), made without the rest of the record."""
        t = _mid_times(stop, self.tau0, start)
        t /= SECONDS_PER_DAY
        return _evaluate(self.model, self.coefficients, t)

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


def _mid_times(samples: int, tau0: float, start: int = 0) -> np.ndarray:
    """Mid-times of frequency samples ``start`` to ``samples - 1``, ``tau0`` apart (s)."""
    t = np.arange(start, samples, dtype=float)
    t += 0.5
    t *= tau0
    return t


def _times(measurement: Measurement) -> tuple[np.ndarray, float]:
    """Mid-times of the frequency samples (s) and the record length (s)."""
    return _mid_times(measurement.n - 1, measurement.tau0), measurement.span


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
    y: np.ndarray | None,
) -> DriftFit:
    """The fit of ``m`` with its residual RMS; ``y`` is ``centred_frequency(m)`` or None."""
    # The residuals are summed block by block: no array of the record's length.
    n_used, squares = 0, 0.0
    for start, stop, values in frequency_blocks(m, y):
        good = np.isfinite(values)
        resid = np.add(values, m.frequency_offset)
        t = _mid_times(stop, m.tau0, start)
        t /= SECONDS_PER_DAY  # in place: the same numbers as t / SECONDS_PER_DAY
        resid -= _evaluate(model, coef, t)
        if not good.all():
            resid = resid[good]
        n_used += resid.size
        squares += float(np.einsum("i,i->", resid, resid))  # no BLAS: see DEVELOPERS.md
    rms = math.sqrt(squares / n_used) if n_used else math.nan
    return DriftFit(
        model=model,
        method=method,
        coefficients=coef,
        errors=errors,
        per_day=per_day,
        per_day_error=per_day_error,
        n_used=n_used,
        residual_rms=rms,
        span_days=m.span / SECONDS_PER_DAY,
        samples=m.n - 1,
        tau0=m.tau0,
    )
