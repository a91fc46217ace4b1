"""``analyze()``: estimate every requested statistic over its tau grid.

This is the library's main entry point after reading a log::

    m = stability.read_log("counter.csv")
    table = stability.analyze(m, stats=["oadev", "mdev"], taus="octave")
    table.to_frame()
"""

from __future__ import annotations

import dataclasses
import functools
import math
from collections.abc import Callable, Sequence
from typing import Any

import numpy as np

from .deviations.allan import oadev
from .deviations.registry import Statistic, get_statistic
from .errors import AnalysisError, InputError, StabilityError
from .intervals import check_confidence
from .measurement import Measurement
from .powerlaw import frequency_slope
from .qualify import qualify as qualify_table
from .table import StabilityTable, StatisticResult
from .taus import GRIDS, MAX_FACTOR, tau_grid

__all__ = ["analyze", "estimate", "DEFAULT_STATS", "validate_analysis_args"]

DEFAULT_STATS = ("oadev", "mdev")


def _stat_list(stats: str | Sequence[str]) -> list[Statistic]:
    if isinstance(stats, str):
        names = [s.strip() for s in stats.split(",")]
    elif isinstance(stats, Sequence) and all(isinstance(s, str) for s in stats):
        names = [s.strip() for s in stats]
    else:
        raise InputError(
            f"stats must be a comma string or a list of statistic names, got {stats!r}",
            hint="pass stats such as 'oadev,mdev'",
        )
    names = [n for n in names if n]
    if not names:
        raise InputError("no statistic asked for", hint="pass stats such as 'oadev,mdev'")
    out: list[Statistic] = []
    for name in names:
        stat = get_statistic(name)
        if stat not in out:
            out.append(stat)
    return out


def _check_taus(taus: Any) -> None:
    hint = "choose octave, decade, all or a list of taus in seconds"
    if isinstance(taus, str):
        if taus.strip().lower() not in GRIDS:
            raise InputError(f"unknown tau grid {taus!r}", hint=hint)
        return
    try:
        values = [float(t) for t in taus]
    except (TypeError, ValueError):
        raise InputError(
            f"taus must be a grid name or a list of seconds, got {taus!r}", hint=hint
        ) from None
    if not values:
        raise InputError("taus is an empty list", hint=hint)


def validate_analysis_args(
    measurement: Any, stats: str | Sequence[str], taus: Any, confidence: Any
) -> tuple[list[Statistic], float]:
    """Check the arguments of :func:`analyze`; raise :class:`InputError` naming the bad one."""
    if not isinstance(measurement, Measurement):
        raise InputError(
            f"measurement must be a stability.Measurement, got {type(measurement).__name__}",
            hint="build one with Measurement.from_phase, Measurement.from_frequency or read_log",
        )
    level = check_confidence(confidence)
    _check_taus(taus)
    return _stat_list(stats), level


def _values(
    stat: Statistic, x: np.ndarray, tau0: float, ms: np.ndarray, seg: Any, memo: dict
) -> list[tuple[float, int]]:
    """(value, terms) at each m, shared through ``memo`` between the statistics of one run.

    A derived statistic (TDEV from MDEV) transforms its base's values, so a run
    asking for both computes the base once.
    """
    if stat.derived is not None:
        base_name, transform = stat.derived
        base = _values(get_statistic(base_name), x, tau0, ms, seg, memo)
        return [(transform(v, int(m), tau0), k) for m, (v, k) in zip(ms, base, strict=True)]
    keys = [(stat.name, int(m)) for m in ms]
    if all(key in memo for key in keys):
        return [memo[key] for key in keys]
    if stat.multi is not None:
        values = stat.multi(x, tau0, [int(m) for m in ms], seg)
    else:
        values = [stat.func(x, tau0, int(m), seg) for m in ms]
    memo.update(zip(keys, values, strict=True))
    return values


def estimate(
    measurement: Measurement, stat: Statistic | str, taus: Any = "octave"
) -> StatisticResult:
    """Raw estimates of one statistic over its tau grid (no qualification).

    ``stat`` is a registry entry or its identifier.
    """
    return _estimate(measurement, stat, taus, None)


def _estimate(
    measurement: Measurement, stat: Statistic | str, taus: Any, memo: dict | None
) -> StatisticResult:
    if not isinstance(measurement, Measurement):
        raise InputError(
            f"measurement must be a stability.Measurement, got {type(measurement).__name__}",
            hint="build one with Measurement.from_phase, Measurement.from_frequency or read_log",
        )
    if isinstance(stat, str):
        stat = get_statistic(stat)
    elif not isinstance(stat, Statistic):
        raise InputError(f"stat must be a statistic name, got {stat!r}")
    _check_taus(taus)
    n = measurement.n
    finite = int(np.isfinite(measurement.phase).sum())
    max_m = stat.allowed_m(n)
    if max_m < 1 or finite < stat.min_points:
        raise AnalysisError(
            f"{stat.name} needs at least {stat.min_points} phase samples; "
            f"the record has {finite} usable of {n}",
        )
    unit = measurement.tau0 * stat.tau_factor  # tau = tau_factor * m * tau0
    ms = tau_grid(taus, max_m, unit, step=stat.m_step)
    if not isinstance(taus, str):
        asked = tau_grid(taus, MAX_FACTOR, unit, step=stat.m_step)
        too_long = asked[asked > max_m]
        if too_long.size:
            tau = too_long[0] * measurement.tau0 * stat.tau_factor
            raise AnalysisError(
                f"tau {tau:g} s is too long for {stat.name} on a record of {n} samples "
                f"(largest tau {max_m * measurement.tau0 * stat.tau_factor:g} s)",
                hint="drop the longer taus or use --taus octave",
            )
    if ms.size == 0:
        raise AnalysisError(f"no tau of the requested grid fits {stat.name} on {n} samples")
    _check_cost(stat, ms, n, taus)
    x = measurement.phase_with_offset() if stat.family == "time_error" else measurement.phase
    seg = measurement.segments
    tau0 = measurement.tau0
    with np.errstate(over="ignore", invalid="ignore"):
        values = _values(stat, x, tau0, ms, seg, {} if memo is None else memo)
    dev = np.array([v for v, _ in values], dtype=float)
    used = np.array([k for _, k in values], dtype=np.int64)
    keep = used > 0
    if not keep.any():
        where = measurement.provenance.path
        raise AnalysisError(
            f"{stat.name}: every term touches a gap at every tau; nothing can be computed",
            path=where,
            hint="the record is too broken up for this statistic: check the gaps with "
            "stability inspect, or pass a shorter tau list",
        )
    notes = []
    if stat.note is not None:
        remark = stat.note(n, tau0, ms[keep])
        if remark:
            notes.append(remark)
    dropped = ms[~keep]
    if dropped.size:
        notes.append(
            f"{stat.name}: no usable term at m = {', '.join(str(int(m)) for m in dropped)} "
            "(every term touches a gap)"
        )
    return StatisticResult.build(
        stat.name,
        ms[keep] * tau0 * stat.tau_factor,
        ms[keep],
        used[keep],
        dev[keep],
        notes=notes,
    )


#: Work allowed for one statistic, in sample-steps (taus x samples): a few
#: seconds of numpy kernels. A grid beyond it (``all`` on a long record) is
#: refused with what it would cost rather than left to run for hours.
WORK_BUDGET = 2e10


def _check_cost(stat: Statistic, ms: np.ndarray, n: int, taus: Any) -> None:
    work = float(ms.size) * float(n)
    if stat.multi is None and work > WORK_BUDGET:
        grid = taus if isinstance(taus, str) else "the tau list"
        raise AnalysisError(
            f"{grid} asks for {ms.size} taus of {stat.name} on {n} samples, about "
            f"{work:.1e} sample-steps (hours of computing)",
            hint="use --taus decade or octave, a shorter list, or --average first",
        )


def _model_source(measurement: Measurement, stats: list[Statistic], memo: dict):
    """A raw OADEV on the octave grid for the power-law model, when the run asks for none."""
    if any(s.name == "oadev" for s in stats):
        return None
    oadev = get_statistic("oadev")
    if oadev.allowed_m(measurement.n) < 1:
        return None
    try:
        return _estimate(measurement, oadev, "octave", memo)
    except StabilityError:
        return None


#: Above this ratio of the drift terms to the detrended Allan variance the
#: shortcut of :func:`_detrended_oadev` would lose more than half its digits.
_CANCELLATION_LIMIT = 1e8


#: Samples per block of :func:`_lag_differences_sum`.
_BLOCK = 1 << 16


def _lag_differences_sum(x: np.ndarray, start: int, m: int) -> float:
    """sum_{k=start}^{start+m-1} (x_{k+m} - x_k), in blocks: at the longest taus m is
    a quarter of the record (3.4 B/row at 1e7 rows as one array)."""
    total = 0.0
    for lo in range(start, start + m, _BLOCK):
        hi = min(lo + _BLOCK, start + m)
        total += float(np.sum(x[lo + m : hi + m] - x[lo:hi]))
    return total


def _detrended_oadev(
    measurement: Measurement, base: StatisticResult, slope: float
) -> StatisticResult:
    """OADEV of unbroken data with a linear frequency drift ``slope`` (1/s) removed.

    With D_k = (x_{k+2m} - 2 x_{k+m} + x_k) / tau the terms of the Allan
    variance of the original phase, the detrended terms are D_k - slope * tau
    (the second difference of slope t^2 / 2 at step tau), so
    AVAR' = AVAR - slope tau mean(D) + slope^2 tau^2 / 2, and mean(D) telescopes
    to 2m phase differences at the two ends of the record. Each tau then costs
    O(m) instead of O(N); where the drift terms would cancel too many digits
    the estimator sums the detrended terms themselves.
    """
    x = measurement.phase
    n = x.size
    tau0 = measurement.tau0
    values = np.empty(len(base))
    for i, (m, dev) in enumerate(zip(base.m, base.deviation, strict=True)):
        m = int(m)
        count = n - 2 * m
        tau = m * tau0
        tail = _lag_differences_sum(x, count, m)
        head = _lag_differences_sum(x, 0, m)
        mean_d = (tail - head) / (count * tau)
        avar = float(dev) ** 2
        drift_part = abs(slope * tau * mean_d) + 0.5 * (slope * tau) ** 2
        new = avar - slope * tau * mean_d + 0.5 * (slope * tau) ** 2
        if new > 0 and (avar + drift_part) < _CANCELLATION_LIMIT * new:
            values[i] = math.sqrt(new)
        else:
            values[i] = oadev(x, tau0, m, None, drift=slope)[0]
    return StatisticResult.build("oadev", base.tau, base.m, base.n_terms, values)


def _drift_model_source(
    measurement: Measurement, base: StatisticResult | None
) -> tuple[float, StatisticResult] | None:
    """The least-squares frequency drift of the data and the raw OADEV without it.

    The noise model behind the uncertainties of the frequency offset and drift
    is fitted to the data with a linear drift removed, whatever drift the
    analysis removed: a drift left in the data would otherwise be read as
    random-walk FM and inflate the drift's own uncertainty many times over. A
    linear frequency drift D is the phase D t^2 / 2; with the least-squares D
    of the frequency that term is subtracted (a straight line left in the
    phase does not change OADEV). No detrended copy of the record is made
    (8 B/row held at 1e7 rows before): the estimators take the drift out term
    by term (``drift=`` of :func:`stability.deviations.allan.oadev` and of
    :func:`stability.noise.identify`). ``base`` is the raw OADEV of the data
    already computed (the table's or the model source's): on unbroken data
    the detrended values follow from it (:func:`_detrended_oadev`); otherwise
    OADEV is estimated on the octave grid.
    """
    stat = get_statistic("oadev")
    if stat.allowed_m(measurement.n) < 1:
        return None
    slope = frequency_slope(measurement)
    if not math.isfinite(slope):
        return None
    if base is not None and not measurement.has_gaps and len(base):
        return slope, _detrended_oadev(measurement, base, slope)
    detrended = dataclasses.replace(stat, func=functools.partial(oadev, drift=slope))
    try:
        return slope, _estimate(measurement, detrended, "octave", None)
    except StabilityError:
        return None


def analyze(
    measurement: Measurement,
    stats: str | Sequence[str] = DEFAULT_STATS,
    taus: str | Sequence[float] = "octave",
    confidence: float = 0.683,
    *,
    qualify: bool = True,
    f_h: float | None = None,
    offset_source: Measurement | None = None,
    on_step: Callable[[str], None] | None = None,
    bias_correction: bool = True,
) -> StabilityTable:
    """Estimate the requested statistics of a measurement.

    Parameters
    ----------
    measurement
        The data, from :func:`stability.read_log` or the ``Measurement`` constructors.
    stats
        Statistic identifiers (a list or a comma string), e.g. ``"oadev,mdev"``.
    taus
        ``"octave"``, ``"decade"``, ``"all"`` or a list of taus in seconds.
    confidence
        Two-sided confidence level of the intervals (default 0.683).
    qualify
        Identify noise types and fill EDF, bias corrections, intervals, the
        power-law model and the offset and drift (default True).
    f_h
        High cut-off frequency of the power-law model in Hz (default 1/(2 tau0)).
    offset_source
        The measurement whose frequency offset and drift are reported
        (default: the analysed one); pass the data before drift removal. Their
        uncertainties come from a noise model fitted to the OADEV of the
        analysed data with a linear drift removed.
    on_step
        Called with a short label after each statistic and after the
        qualification (for progress displays); ``len(stats) + 1`` calls.
    bias_correction
        Correct the bias of the total and Theo families for the identified noise
        type (default True); False reports the raw estimates (bias factor 1).

    Returns
    -------
    StabilityTable
    """
    stat_list, level = validate_analysis_args(measurement, stats, taus, confidence)
    results = {}
    memo: dict = {}  # estimates shared between statistics of this one run
    for stat in stat_list:
        results[stat.name] = _estimate(measurement, stat, taus, memo)
        if on_step is not None:
            on_step(stat.name)
    if not math.isfinite(sum(float(np.nansum(r.deviation)) for r in results.values())):
        raise AnalysisError("the estimates are not finite; check the data for huge values")
    settings = {
        "stats": [s.name for s in stat_list],
        "taus": taus if isinstance(taus, str) else [float(t) for t in taus],
        "confidence": level,
        "f_h_hz": float(f_h) if f_h is not None else 1.0 / (2.0 * measurement.tau0),
        "bias_correction": bool(bias_correction),
    }
    results = {name: dataclasses.replace(r, confidence=level) for name, r in results.items()}
    table = StabilityTable(
        results=results, confidence=level, settings=settings, measurement=measurement
    )
    if qualify:
        model_source = _model_source(measurement, stat_list, memo)
        base = results.get("oadev", model_source)
        table = qualify_table(
            table,
            model_source=model_source,
            drift_model_source=_drift_model_source(measurement, base),
            f_h=f_h,
            offset_source=offset_source,
            bias_correction=bias_correction,
        )
    if on_step is not None:
        on_step("qualification")
    return table
