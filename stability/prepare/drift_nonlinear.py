"""Nonlinear drift models fitted to frequency: y = a ln(b t + 1) + c and y = a + b sqrt(t + c).

Both are fitted with a Levenberg-Marquardt / trust-region least-squares search
(``scipy.optimize.curve_fit``) started from the best of a grid of the nonlinear
parameter, for which the model is linear in the others [1]_ [2]_.

References
----------
.. [1] W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065
   (2008), data preprocessing: frequency drift (log and diffusion models).
.. [2] P. Virtanen et al., *SciPy 1.0: fundamental algorithms for scientific
   computing in Python*, Nature Methods 17 (2020): ``scipy.optimize.curve_fit``.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..errors import AnalysisError
from ..measurement import Measurement
from ._common import SECONDS_PER_DAY, centred_frequency
from .drift_model import DriftFit, _finish, _times

__all__ = ["fit_log", "fit_diffusion"]


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


def fit_log(m: Measurement) -> DriftFit:
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


def fit_diffusion(m: Measurement) -> DriftFit:
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
