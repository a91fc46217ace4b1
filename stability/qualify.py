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

import math
import warnings

import numpy as np

from .confidence import bias_factor, chi2_interval, edf_for
from .deviations.registry import get_statistic
from .errors import StabilityError, StabilityWarning
from .measurement import Measurement
from .noise import NoiseResult, identify, remember
from .powerlaw import PowerLawModel, fit_power_law, offset_and_drift_of
from .table import NOISE_LABELS, StabilityTable, StatisticResult

__all__ = [
    "qualify",
    "qualify_result",
    "noise_source",
    "effective_points",
    "model_curve",
    "row_points",
]

#: The statistic whose identified noise is shared by its sibling (same data, same m).
_NOISE_SOURCE = {"tdev": "mdev", "ttot": "mtot"}


def effective_points(measurement: Measurement) -> int:
    """Phase samples that carry information: finite samples less the frequency gaps."""
    finite = int(np.isfinite(measurement.phase).sum())
    breaks = 0 if measurement.segments is None else int(measurement.segments[-1])
    return max(finite - breaks, 0)


def _never_whiter(result: StatisticResult) -> None:
    """Keep the identified alpha from rising with tau (in place).

    In a sum of power laws S_y(f) = sum h_alpha f^alpha the term with the
    smaller exponent dominates ever more as f falls, so the dominant type at
    a longer tau is never whiter than at a shorter one. An identification that
    says otherwise is a statistical miss (most often B1 or R(n) on a few
    averages) and would give too many degrees of freedom, i.e. an interval
    that is too narrow; the shorter tau's type is kept instead, and said.
    """
    lowest = math.inf
    changed = []
    for k, a in enumerate(result.alpha):
        if math.isnan(a):
            continue
        if a > lowest:
            result.alpha[k] = lowest
            result.noise[k] = NOISE_LABELS[int(lowest)]
            changed.append(f"{result.tau[k]:g} s")
        lowest = min(lowest, result.alpha[k])
    if changed:
        result.notes.append(
            f"{result.statistic}: at tau {', '.join(changed)} the identification said a whiter "
            "noise than at a shorter tau; the shorter tau's type was kept (a sum of power "
            "laws never gets whiter at longer tau)"
        )


#: Record length N that gives ``terms`` terms at averaging factor m, per statistic
#: (the inverse of each estimator's term count). With gaps, fewer terms are used
#: than the record length suggests, and the EDF must follow the terms actually used.
_POINTS_FROM_TERMS = {
    "adev": lambda t, m: (t + 1) * m + 1,
    "oadev": lambda t, m: t + 2 * m,
    "mdev": lambda t, m: t + 3 * m - 1,
    "tdev": lambda t, m: t + 3 * m - 1,
    "hdev": lambda t, m: (t + 2) * m + 1,
    "ohdev": lambda t, m: t + 3 * m,
    "totdev": lambda t, m: t + 2,
}


def row_points(name: str, m: int, terms: int, n_eff: int) -> int:
    """Record length to use in the EDF model of one row: never more than the terms support."""
    inverse = _POINTS_FROM_TERMS.get(name)
    if inverse is None:
        return n_eff
    return int(min(n_eff, inverse(int(terms), int(m))))


def _row_edf(name: str, alpha: int | None, m: int, n: int, tau0: float) -> float:
    """EDF of one row; ThêoH rows computed as OADEV (at 0.75 m) take OADEV's model."""
    if name == "theoh":
        from .deviations.theo import theoh_uses_allan

        if theoh_uses_allan(n, tau0, m):
            return edf_for("oadev", alpha, (3 * m) // 4, n)
    return edf_for(name, alpha, m, n)


def noise_source(statistic: str) -> str:
    """The statistic whose noise identification a statistic uses (TDEV shares MDEV's)."""
    return _NOISE_SOURCE.get(statistic, statistic)


def qualify_result(
    result: StatisticResult,
    measurement: Measurement,
    confidence: float,
    *,
    noise: NoiseResult | None = None,
) -> StatisticResult:
    """Fill the noise, EDF, bias and interval columns of one statistic (in place).

    ``noise`` is an identification already made for the same data and taus
    (for a statistic that shares it, see :func:`noise_source`).
    """
    stat = get_statistic(result.statistic)
    if stat.family == "time_error":
        result.confidence = confidence
        result.notes.append(
            f"{stat.name}: no chi-squared model applies to a maximum or rms time error; "
            "no interval is given"
        )
        return result
    n_eff = effective_points(measurement)
    if noise is None:
        noise = identify(measurement, noise_source(stat.name), result.m)
    result.alpha = np.array(noise.alpha, dtype=float)  # a copy: the identification may be shared
    result.noise = list(noise.noise)
    result.noise_method = list(noise.method)
    _never_whiter(result)
    edf = np.empty(len(result))
    factors = np.ones(len(result))
    for k, m in enumerate(result.m):
        a = None if math.isnan(result.alpha[k]) else int(result.alpha[k])
        n_row = row_points(stat.name, int(m), int(result.n_terms[k]), n_eff)
        edf[k] = _row_edf(stat.name, a, int(m), n_row, measurement.tau0)
        factors[k] = bias_factor(stat.name, a, int(m), n_eff)
    result.edf = edf
    if np.any(factors != 1.0):
        result.raw_deviation = result.deviation.copy()
        result.deviation = result.deviation / np.sqrt(factors)
        result.bias_corrected = True
        result.notes.append(f"{stat.name}: bias-corrected for the identified noise type")
    low, high = chi2_interval(result.deviation, result.edf, confidence)
    result.ci_low = np.asarray(low, dtype=float)
    result.ci_high = np.asarray(high, dtype=float)
    result.confidence = confidence
    return result


def _model_curve(
    table: StabilityTable, measurement: Measurement, f_h: float
) -> PowerLawModel | None:
    """Fit the power-law model to the table's OADEV, or to an OADEV made for the purpose."""
    source = table.results.get("oadev")
    if source is None:
        from .analysis import estimate

        stat = get_statistic("oadev")
        if stat.allowed_m(measurement.n) < 1:
            return None
        try:
            source = estimate(measurement, stat, "octave")
            qualify_result(source, measurement, table.confidence)
        except StabilityError:
            return None
    return fit_power_law(source.tau, source.deviation, source.edf, f_h=f_h)


def qualify(
    table: StabilityTable,
    *,
    f_h: float | None = None,
    offset_source: Measurement | None = None,
) -> StabilityTable:
    """Qualify every statistic of ``table`` and add the model, offset and drift (in place).

    ``offset_source`` is the measurement whose frequency offset and drift are
    reported (default: the analysed one, i.e. after any drift removal).
    """
    measurement = table.measurement
    with np.errstate(all="ignore"), warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        for result in table:
            for m, dev, terms in zip(result.m, result.deviation, result.n_terms, strict=True):
                remember(measurement, result.statistic, int(m), float(dev), int(terms))
        identified: dict[tuple[str, tuple[int, ...]], NoiseResult] = {}
        for result in table:
            key = (noise_source(result.statistic), tuple(int(m) for m in result.m))
            if get_statistic(result.statistic).family != "time_error" and key not in identified:
                identified[key] = identify(measurement, key[0], result.m)
            qualify_result(result, measurement, table.confidence, noise=identified.get(key))
        f_h = 1.0 / (2.0 * measurement.tau0) if f_h is None else float(f_h)
        model = _model_curve(table, measurement, f_h)
    if model is None:
        warnings.warn(
            "too few Allan deviation points to fit a power-law noise model",
            StabilityWarning,
            stacklevel=2,
        )
    table.extras["power_law_model"] = model
    source = measurement if offset_source is None else offset_source
    table.extras["offset_drift"] = offset_and_drift_of(source, model)
    table.extras["bias_corrected"] = [r.statistic for r in table if r.bias_corrected]
    table.settings.setdefault("f_h_hz", f_h)
    return table


def model_curve(model: PowerLawModel | None, tau: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Dense (tau, sigma) of the model over the span of ``tau`` for plotting."""
    if model is None or tau.size == 0:
        return np.zeros(0), np.zeros(0)
    grid = np.geomspace(float(np.min(tau)), float(np.max(tau)), 200)
    return grid, model.deviation(grid)
