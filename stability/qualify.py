"""Qualification: noise type, degrees of freedom, bias correction and interval for every row.

For each statistic and tau of a :class:`~stability.table.StabilityTable`:

1. identify the power-law noise type at that tau (:mod:`stability.noise`);
2. compute the equivalent degrees of freedom for that statistic, tau, record
   length and noise type (:mod:`stability.confidence`);
3. correct the bias of the statistics that have a published correction
   (total and Theo families) and say so;
4. set the chi-squared confidence interval at the requested level.

Then fit the power-law model to the overlapping Allan deviation (computed for
the purpose when the table does not hold it) and derive the frequency offset
and drift with noise-aware uncertainties (:mod:`stability.powerlaw`).
"""

from __future__ import annotations

import dataclasses
import math
import warnings

import numpy as np

from .deviations.registry import Statistic, get_statistic
from .errors import StabilityWarning
from .intervals import chi2_interval
from .measurement import Measurement
from .noise import Known, NoiseResult, identify
from .powerlaw import PowerLawModel, fit_power_law, offset_and_drift_of
from .table import NOISE_LABELS, StabilityTable, StatisticResult

__all__ = [
    "qualify",
    "qualify_result",
    "effective_points",
    "model_curve",
]


def effective_points(measurement: Measurement) -> int:
    """Phase samples that carry information: finite samples less the frequency gaps."""
    finite = int(np.isfinite(measurement.phase).sum())
    breaks = 0 if measurement.segments is None else int(measurement.segments[-1])
    return max(finite - breaks, 0)


def _never_whiter(
    statistic: str, tau: np.ndarray, alpha: np.ndarray, noise: list[str]
) -> str | None:
    """Keep the identified alpha from rising with tau (in place on the new arrays).

    In a sum of power laws S_y(f) = sum h_alpha f^alpha the term with the
    smaller exponent dominates ever more as f falls, so the dominant type at
    a longer tau is never whiter than at a shorter one. An identification that
    says otherwise is a statistical miss (most often B1 or R(n) on a few
    averages) and would give too many degrees of freedom, i.e. an interval
    that is too narrow; the shorter tau's type is kept instead, and said.
    """
    lowest = math.inf
    changed = []
    for k, a in enumerate(alpha):
        if math.isnan(a):
            continue
        if a > lowest:
            alpha[k] = lowest
            noise[k] = NOISE_LABELS[int(lowest)]
            changed.append(f"{tau[k]:g} s")
        lowest = min(lowest, alpha[k])
    if not changed:
        return None
    return (
        f"{statistic}: at tau {', '.join(changed)} the identification said a whiter "
        "noise than at a shorter tau; the shorter tau's type was kept (a sum of power "
        "laws never gets whiter at longer tau)"
    )


def _rows(stat: Statistic, result: StatisticResult, alpha: np.ndarray, n_eff: int):
    """EDF and bias factor (on the deviation) of every row."""
    edf = np.empty(len(result))
    factor = np.ones(len(result))
    for k, m in enumerate(result.m):
        a = None if math.isnan(alpha[k]) else int(alpha[k])
        n_row = stat.row_points(int(m), int(result.n_terms[k]), n_eff)
        edf[k] = stat.edf_for(a, int(m), n_row)
        factor[k] = 1.0 / math.sqrt(stat.bias_factor(a, int(m), n_eff))
    return edf, factor


def qualify_result(
    result: StatisticResult,
    measurement: Measurement,
    confidence: float,
    *,
    noise: NoiseResult | None = None,
    known: Known | None = None,
) -> StatisticResult:
    """A new result with the noise, EDF, bias and interval columns of one statistic filled.

    ``noise`` is an identification already made for the same data and taus
    (for a statistic that shares it, see :attr:`Statistic.noise_source`);
    ``known`` holds OADEV and MDEV estimates already made for the data.
    """
    stat = get_statistic(result.statistic)
    if not stat.has_interval:
        note = (
            f"{stat.name}: no chi-squared model applies to a maximum or rms time error; "
            "no interval is given"
        )
        return dataclasses.replace(result, confidence=confidence, notes=(*result.notes, note))
    if noise is None:
        noise = identify(measurement, stat.noise_source or stat.name, result.m, known=known)
    alpha = np.array(noise.alpha, dtype=float)  # a copy: the identification may be shared
    labels = list(noise.noise)
    notes = list(result.notes)
    ratchet = _never_whiter(stat.name, result.tau, alpha, labels)
    if ratchet:
        notes.append(ratchet)
    edf, factor = _rows(stat, result, alpha, effective_points(measurement))
    deviation = result.raw_deviation * factor
    if np.any(factor != 1.0):
        notes.append(f"{stat.name}: bias-corrected for the identified noise type")
    low, high = chi2_interval(deviation, edf, confidence)
    return dataclasses.replace(
        result,
        deviation=deviation,
        edf=edf,
        alpha=alpha,
        noise=tuple(labels),
        noise_method=tuple(noise.method),
        ci_low=np.asarray(low, dtype=float),
        ci_high=np.asarray(high, dtype=float),
        bias_factor=factor,
        confidence=confidence,
        notes=tuple(notes),
    )


def _known_estimates(results: dict[str, StatisticResult]) -> dict[tuple[str, int], tuple]:
    """OADEV and MDEV already in the table, for B1 and R(n) to reuse."""
    known: dict[tuple[str, int], tuple[float, int]] = {}
    for name in ("oadev", "mdev"):
        r = results.get(name)
        if r is not None:
            for m, dev, terms in zip(r.m, r.raw_deviation, r.n_terms, strict=True):
                known[(name, int(m))] = (float(dev), int(terms))
    return known


def qualify(
    table: StabilityTable,
    *,
    model_source: StatisticResult | None = None,
    drift_model_source: tuple[Measurement, StatisticResult] | None = None,
    f_h: float | None = None,
    offset_source: Measurement | None = None,
) -> StabilityTable:
    """A new table with every statistic qualified, plus the model, offset and drift.

    ``model_source`` is an OADEV estimate made for the power-law model fit when
    the table holds none (the caller computes it; qualification does not call
    the estimators' orchestration). ``offset_source`` is the measurement whose
    frequency offset and drift are reported (default: the analysed one).
    ``drift_model_source`` is (linearly detrended data, its raw OADEV): the
    noise model behind the offset and drift uncertainties is fitted to it, so
    that a drift in the data is not read as random-walk noise (without it the
    table's own model is used).
    """
    measurement = table.measurement
    known = _known_estimates(table.results)
    results: dict[str, StatisticResult] = {}
    with np.errstate(all="ignore"), warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        identified: dict[tuple[str, tuple[int, ...]], NoiseResult] = {}
        for name, result in table.results.items():
            stat = get_statistic(name)
            key = (stat.noise_source or stat.name, tuple(int(m) for m in result.m))
            if stat.has_interval and key not in identified:
                identified[key] = identify(measurement, key[0], result.m, known=known)
            results[name] = qualify_result(
                result, measurement, table.confidence, noise=identified.get(key)
            )
        f_h = 1.0 / (2.0 * measurement.tau0) if f_h is None else float(f_h)
        source = results.get("oadev")
        if source is None and model_source is not None:
            source = qualify_result(model_source, measurement, table.confidence, known=known)
        model = (
            None
            if source is None
            else fit_power_law(source.tau, source.deviation, source.edf, f_h=f_h)
        )
        drift_model = model
        if drift_model_source is not None:
            detrended, raw = drift_model_source
            fitted = qualify_result(raw, detrended, table.confidence)
            drift_model = fit_power_law(fitted.tau, fitted.deviation, fitted.edf, f_h=f_h)
    if model is None:
        warnings.warn(
            "too few Allan deviation points to fit a power-law noise model",
            StabilityWarning,
            stacklevel=2,
        )
    extras = {
        **table.extras,
        "power_law_model": model,
        "offset_drift": offset_and_drift_of(
            measurement if offset_source is None else offset_source,
            drift_model,
            detrended=drift_model_source is not None,
        ),
        "bias_corrected": [r.statistic for r in results.values() if r.bias_corrected],
    }
    settings = {"f_h_hz": f_h, **table.settings}
    return dataclasses.replace(table, results=results, extras=extras, settings=settings)


def model_curve(model: PowerLawModel | None, tau: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Dense (tau, sigma) of the model over the span of ``tau`` for plotting."""
    if model is None or tau.size == 0:
        return np.zeros(0), np.zeros(0)
    grid = np.geomspace(float(np.min(tau)), float(np.max(tau)), 200)
    return grid, model.deviation(grid)
