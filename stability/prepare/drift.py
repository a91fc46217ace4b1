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
from collections.abc import Callable, Iterator

import numpy as np

from ..errors import AnalysisError, StabilityWarning
from ..measurement import Measurement
from ._common import SECONDS_PER_DAY, blocks, frequency_blocks
from .drift_checks import bisection_drift, mean_second_difference_drift, three_point_drift
from .drift_model import (
    _POLY_DEGREE,
    _POLY_NAMES,
    DRIFT_MODELS,
    DriftFit,
    DriftModel,
    _drift_integral,
    _finish,
    _mid_times,
    _validate_fit_args,
    check_drift_model,
)
from .drift_nonlinear import fit_diffusion, fit_log

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


#: One block of the least-squares data: scaled times ``u`` and scaled values ``target``.
Pieces = Callable[[], Iterator[tuple[np.ndarray, np.ndarray]]]


def _dot(a: np.ndarray, b: np.ndarray) -> float:
    """Inner product without BLAS (its thread pool stalls on a busy machine: DEVELOPERS.md)."""
    return float(np.einsum("i,i->", a, b))


def _basis(u: np.ndarray, shifts: list[float], norms: list[float]) -> list[np.ndarray]:
    """``p_1 .. p_k`` at ``u`` for the ``k`` recurrence shifts known so far (not ``p_0 = 1``)."""
    out: list[np.ndarray] = []
    for k, shift in enumerate(shifts):
        if k == 0:
            following = u - shift
        else:
            following = (u - shift) * out[k - 1]
            following -= norms[k] / norms[k - 1] * (1.0 if k == 1 else out[k - 2])
        out.append(following)
    return out


def _least_squares_polynomial(pieces: Pieces, degree: int) -> tuple[np.ndarray, np.ndarray, float]:
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

    ``pieces()`` yields the data block by block, ``(u, target)``, afresh on each
    call. The sums are taken block by block, in ``degree + 2`` passes (the
    counts, one per recurrence step, the residuals), so neither the times, the
    basis nor the residuals are arrays of the record's length. Measured with
    the data made block by block as well (:func:`_fit_polynomial`), 10^7
    samples, B per sample above entry: linear fit 33 -> 0.4 (25 -> 0.3 given
    the frequency), quadratic fit 49 -> 0.5.

    Returns
    -------
    (beta, (D^T D)^-1, SSE)
        Monomial coefficients, the inverse normal matrix and the residual sum of squares.
    """
    size = degree + 1
    count, sum_u, sum_target = 0, 0.0, 0.0
    for u, target in pieces():
        count += u.size
        sum_u += float(np.sum(u))
        sum_target += float(np.sum(target))
    n = float(count)
    norms = [n]
    shifts: list[float] = []
    monomial = np.zeros((size, size))
    monomial[0, 0] = 1.0
    gram = np.zeros((size, size))
    rhs = np.zeros(size)
    rhs[0] = sum_target
    shift_sum = 0.0  # sum of u p_k^2, for the shift of p_(k+1)
    for k in range(degree):
        shift = sum_u / n if k == 0 else shift_sum / norms[k]
        shifts.append(shift)
        # Monomial coefficients: p_(k+1) = u p_k - shift p_k - b_k p_(k-1).
        monomial[1:, k + 1] = monomial[:-1, k]
        monomial[:, k + 1] -= shift * monomial[:, k]
        if k > 0:
            monomial[:, k + 1] -= norms[k] / norms[k - 1] * monomial[:, k - 1]
        last = k + 1 == degree
        norm, shift_sum = 0.0, 0.0
        for u, target in pieces():
            basis = _basis(u, shifts, norms)
            following = basis[-1]
            norm += _dot(following, following)
            if not last:
                shift_sum += _dot(u, following * following)
                continue
            for j, p in enumerate(basis, start=1):  # the normal equations, in the last pass
                gram[0, j] += float(np.sum(p))
                for i in range(1, j):
                    gram[i, j] += _dot(basis[i - 1], p)
                rhs[j] += _dot(p, target)
        norms.append(norm)
    gram = np.triu(gram, 1)
    gram = gram + gram.T + np.diag(norms)
    gram_inverse = np.linalg.inv(gram)
    gamma = gram_inverse @ rhs
    sse = 0.0
    for u, target in pieces():
        resid = np.subtract(target, gamma[0], out=target)
        for k, term in enumerate(_basis(u, shifts, norms), start=1):
            resid -= np.multiply(term, gamma[k], out=term)
        sse += _dot(resid, resid)
    beta = monomial @ gamma
    return beta, monomial @ gram_inverse @ monomial.T, sse


def _finite(values: np.ndarray) -> np.ndarray:
    """The finite values (``values`` itself when all are)."""
    good = np.isfinite(values)
    return values if good.all() else values[good]


def _fit_polynomial(m: Measurement, model: str, y: np.ndarray | None = None) -> DriftFit:
    """Least-squares polynomial drift; ``y`` is ``centred_frequency(m)`` when already known.

    Without ``y`` the frequency is made from the phase block by block.
    """
    degree = _POLY_DEGREE[model]
    names = _POLY_NAMES[: degree + 1]
    span = m.span
    n_used, total = 0, 0.0
    for _, _, values in frequency_blocks(m, y):
        good = _finite(values)
        n_used += good.size
        total += float(np.sum(good))
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
    centre = total / n_used  # the mean and the standard deviation, summed block by block
    squares = 0.0
    for _, _, values in frequency_blocks(m, y):
        deviation = np.subtract(_finite(values), centre)
        squares += _dot(deviation, deviation)
    scale = math.sqrt(squares / n_used) or 1.0

    def pieces() -> Iterator[tuple[np.ndarray, np.ndarray]]:
        for start, stop, values in frequency_blocks(m, y):
            good = np.isfinite(values)
            t = _mid_times(stop, m.tau0, start)
            if not good.all():
                t, values = t[good], values[good]
            target = np.subtract(values, centre)
            target /= scale
            yield np.divide(t, span, out=t), target

    beta, gram_inverse, sse = _least_squares_polynomial(pieces, degree)
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
        return fit_log(m)
    if model == "diffusion":
        return fit_diffusion(m)
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
    params = len(fit.coefficients)
    if fit.n_used <= params:
        # the model passes through every sample: what is left is rounding, not noise
        raise AnalysisError(
            f"removing a {model} drift ({params} parameters) from {fit.n_used} usable "
            "frequency samples would leave nothing but rounding to estimate",
            path=m.provenance.path,
            hint="use --drift none (or a simpler model) on so short a record",
        )
    # Remove the drift minus its record mean: zero at both ends of the record. The
    # correction is made block by block into the new phase: the times, the integral
    # and the correction were arrays of the record's length (32 -> 9 B per sample at
    # 10^7, 8 of them the new phase).
    coef = fit.coefficients
    days_end = float(m.n - 1) * m.tau0 / SECONDS_PER_DAY
    integral_end = float(_drift_integral(model, coef, np.array([days_end]))[0])
    phase = np.empty(m.n)
    for start, stop in blocks(m.n):
        days = np.arange(start, stop, dtype=float) * m.tau0 / SECONDS_PER_DAY
        integral = _drift_integral(model, coef, days)
        correction = (integral - integral_end * days / days_end) * SECONDS_PER_DAY
        np.subtract(m.phase[start:stop], correction, out=phase[start:stop])
    new = m.replace(phase=phase, adopt=True)
    new.notes.append(f"Removed {fit.description}; the mean frequency offset was kept.")
    return new, fit
