"""Qualification: noise type, degrees of freedom, bias correction and interval for every row.

For each statistic and tau of a :class:`~stability.table.StabilityTable`:

1. identify the power-law noise type at that tau (:mod:`stability.noise`),
   then weigh the calls across tau (:mod:`stability.noise_evidence`): weak
   calls are decided by the power-law model fitted to the Allan deviation
   with the calls as they stand, and the types are made monotone in tau by a
   fit weighted by the number of averages;
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
from .noise_evidence import weigh_evidence
from .powerlaw import PowerLawModel, fit_power_law, offset_and_drift_of
from .table import StabilityTable, StatisticResult

__all__ = [
    "qualify",
    "qualify_result",
    "effective_points",
    "model_curve",
    "model_curves",
]


def effective_points(measurement: Measurement) -> int:
    """Phase samples that carry information: finite samples less the frequency gaps."""
    finite = int(np.isfinite(measurement.phase).sum())
    breaks = 0 if measurement.segments is None else int(measurement.segments[-1])
    return max(finite - breaks, 0)


def _rows(stat: Statistic, result: StatisticResult, alpha: np.ndarray, n_eff: int, correct: bool):
    """EDF, bias factor (on the deviation) and EDF record length of every row."""
    edf = np.empty(len(result))
    factor = np.ones(len(result))
    points = np.empty(len(result), dtype=np.int64)
    for k, m in enumerate(result.m):
        a = None if math.isnan(alpha[k]) else int(alpha[k])
        points[k] = stat.row_points(int(m), int(result.n_terms[k]), n_eff)
        edf[k] = stat.edf_for(a, int(m), int(points[k]))
        if correct:
            factor[k] = 1.0 / math.sqrt(stat.bias_factor(a, int(m), n_eff))
    return edf, factor, points


#: Fewest averages (N/m) at which an identification by the lag-1 method counts as
#: settled for a bias correction that depends on the noise type.
SETTLED_AVERAGES = 128


def _uncertain_rows(stat: Statistic, result: StatisticResult, alpha, methods, n_eff) -> list[int]:
    """Rows of a bias-corrected statistic whose noise type is not settled."""
    if stat.bias is None:
        return []
    return [
        k
        for k, m in enumerate(result.m)
        if not math.isnan(alpha[k]) and (methods[k] != "acf" or n_eff / float(m) < SETTLED_AVERAGES)
    ]


def _widen(stat, result, alpha, edf_points, n_eff, confidence, rows, low, high) -> str | None:
    """Intervals over the plausible types (identified +-1) at the unsettled rows, in place."""
    for k in rows:
        a = int(alpha[k])
        plausible = [b for b in (a - 1, a, a + 1) if -2 <= b <= 2]
        (lo, hi), _ = stat.interval_over_types(
            float(result.raw_deviation[k]),
            plausible,
            int(result.m[k]),
            n_eff,
            confidence,
            edf_points=int(edf_points[k]),
        )
        low[k], high[k] = min(low[k], lo), max(high[k], hi)
    if not rows:
        return None
    taus = ", ".join(f"{result.tau[k]:g}" for k in rows)
    return (
        f"{stat.name}: at tau {taus} s the noise type is not settled; the interval spans "
        "the bias corrections of the neighbouring noise types"
    )


def qualify_result(
    result: StatisticResult,
    measurement: Measurement,
    confidence: float,
    *,
    noise: NoiseResult | None = None,
    known: Known | None = None,
    model: PowerLawModel | None = None,
    bias_correction: bool = True,
    drift: float = 0.0,
) -> StatisticResult:
    """A new result with the noise, EDF, bias and interval columns of one statistic filled.

    ``noise`` is an identification already made and weighed for the same data
    and taus (for a statistic that shares it, see
    :attr:`Statistic.noise_source`), used as it is. Without it the noise is
    identified here and weighed (:func:`stability.noise_evidence.weigh_evidence`)
    with ``model``, the power-law model of the data when known. ``known``
    holds OADEV and MDEV estimates already made for the data. With
    ``bias_correction=False`` the raw estimates are reported (bias factor 1)
    and their intervals are those of the raw estimator. ``drift`` is a linear
    frequency drift (1/s) taken out of ``measurement`` for the identification
    (``result`` is then an estimate of the detrended data).
    """
    stat = get_statistic(result.statistic)
    if not stat.has_interval:
        note = (
            f"{stat.name}: no chi-squared model applies to a maximum or rms time error; "
            "no interval is given"
        )
        return dataclasses.replace(result, confidence=confidence, notes=(*result.notes, note))
    if noise is None:
        raw = identify(
            measurement, stat.noise_source or stat.name, result.m, known=known, drift=drift
        )
        noise = weigh_evidence(raw, measurement.tau0, effective_points(measurement), model)
    alpha = np.array(noise.alpha, dtype=float)  # a copy: the identification may be shared
    notes = [*result.notes, *(f"{stat.name}: {n}" for n in noise.notes)]
    n_eff = effective_points(measurement)
    edf, factor, points = _rows(stat, result, alpha, n_eff, bias_correction)
    deviation = result.raw_deviation * factor
    if np.any(factor != 1.0):
        notes.append(f"{stat.name}: bias-corrected for the identified noise type")
    low, high = (np.array(v, dtype=float) for v in chi2_interval(deviation, edf, confidence))
    rows = _uncertain_rows(stat, result, alpha, noise.method, n_eff) if bias_correction else []
    widened = _widen(stat, result, alpha, points, n_eff, confidence, rows, low, high)
    if widened:
        notes.append(widened)
    return dataclasses.replace(
        result,
        deviation=deviation,
        edf=edf,
        alpha=alpha,
        noise=tuple(noise.noise),
        noise_method=tuple(noise.method),
        ci_low=low,
        ci_high=high,
        bias_factor=factor,
        confidence=confidence,
        notes=tuple(notes),
    )


def _fit(result: StatisticResult | None, f_h: float) -> PowerLawModel | None:
    if result is None:
        return None
    return fit_power_law(result.tau, result.deviation, result.edf, f_h=f_h)


#: Most rounds of fitting the model and weighing the calls with it.
_MODEL_ROUNDS = 4


def _settled_model(
    base: StatisticResult,
    raw: NoiseResult,
    measurement: Measurement,
    confidence: float,
    f_h: float,
) -> PowerLawModel | None:
    """The power-law model that the weighed calls agree with.

    The model is fitted to OADEV qualified with the calls (their EDFs weight
    the fit), the raw calls are weighed with that model, and the two steps are
    repeated until the calls stop changing: a model fitted with the weights of
    a few wrong raw calls could otherwise decide the calls it was fitted with.
    """
    points = effective_points(measurement)
    calls = raw
    model = None
    for _ in range(_MODEL_ROUNDS):
        model = _fit(qualify_result(base, measurement, confidence, noise=calls), f_h)
        weighed = weigh_evidence(raw, measurement.tau0, points, model)
        if calls is not raw and weighed.noise == calls.noise:
            break
        calls = weighed
    return model


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
    drift_model_source: tuple[float, StatisticResult] | None = None,
    f_h: float | None = None,
    offset_source: Measurement | None = None,
    bias_correction: bool = True,
) -> StabilityTable:
    """A new table with every statistic qualified, plus the model, offset and drift.

    ``model_source`` is an OADEV estimate made for the power-law model fit when
    the table holds none (the caller computes it; qualification does not call
    the estimators' orchestration). ``offset_source`` is the measurement whose
    frequency offset and drift are reported (default: the analysed one).
    ``drift_model_source`` is (a linear frequency drift of the data in 1/s,
    the raw OADEV of the data with that drift removed): the noise model
    behind the offset and drift uncertainties is fitted to it, so that a drift
    in the data is not read as random-walk noise (without it the table's own
    model is used).
    """
    measurement = table.measurement
    known = _known_estimates(table.results)
    f_h = 1.0 / (2.0 * measurement.tau0) if f_h is None else float(f_h)
    points = effective_points(measurement)
    results: dict[str, StatisticResult] = {}
    with np.errstate(all="ignore"), warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        raw: dict[tuple[str, tuple[int, ...]], NoiseResult] = {}
        for name, result in table.results.items():
            stat = get_statistic(name)
            key = (stat.noise_source or stat.name, tuple(int(m) for m in result.m))
            if stat.has_interval and key not in raw:
                raw[key] = identify(measurement, key[0], result.m, known=known)
        base = table.results.get("oadev", model_source)
        first = None
        if base is not None:
            key = ("oadev", tuple(int(m) for m in base.m))
            if key not in raw:
                raw[key] = identify(measurement, "oadev", base.m, known=known)
            first = _settled_model(base, raw[key], measurement, table.confidence, f_h)
        weighed = {
            key: weigh_evidence(found, measurement.tau0, points, first)
            for key, found in raw.items()
        }
        for name, result in table.results.items():
            stat = get_statistic(name)
            key = (stat.noise_source or stat.name, tuple(int(m) for m in result.m))
            results[name] = qualify_result(
                result,
                measurement,
                table.confidence,
                noise=weighed.get(key),
                bias_correction=bias_correction,
            )
        source = results.get("oadev")
        if source is None and model_source is not None:
            key = ("oadev", tuple(int(m) for m in model_source.m))
            source = qualify_result(model_source, measurement, table.confidence, noise=weighed[key])
        model = _fit(source, f_h)
        drift_model = model
        if drift_model_source is not None:
            slope, raw_oadev = drift_model_source
            drift_model = _fit(
                qualify_result(raw_oadev, measurement, table.confidence, drift=slope), f_h
            )
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
    settings = {"f_h_hz": f_h, "bias_correction": bool(bias_correction), **table.settings}
    return dataclasses.replace(table, results=results, extras=extras, settings=settings)


def model_curve(model: PowerLawModel | None, tau: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Dense (tau, sigma) of the model over the span of ``tau`` for plotting."""
    if model is None or tau.size == 0:
        return np.zeros(0), np.zeros(0)
    grid = np.geomspace(float(np.min(tau)), float(np.max(tau)), 200)
    return grid, model.deviation(grid)


def model_curves(table: StabilityTable) -> dict[str, tuple[np.ndarray, np.ndarray]]:
    """The table's fitted power-law model as (tau, sigma) for its Allan-type statistics.

    The model describes the (overlapping) Allan variance, so only ``oadev`` and
    ``adev`` get a curve; none when no model was fitted.
    """
    model = table.extras.get("power_law_model")
    out = {}
    for name in ("oadev", "adev"):
        if name in table.results:
            out[name] = model_curve(model, table[name].tau)
    return {k: v for k, v in out.items() if v[0].size}
