"""Dynamic stability: a deviation computed in a window that slides along the record.

The dynamic Allan variance (reference 1) is the overlapping Allan variance
evaluated on the N_w phase samples of a window centred at each time t,
for every tau that fits the window; shown over (t, tau) it reveals noise
that changes with time (a level step, a burst, a change of noise type) that
a single curve over the whole record averages away. The same construction
applies to the modified Allan, time and overlapping Hadamard deviations.

Computation. Every estimator here is a mean of squared terms, each term a
fixed combination of phase samples (reference 2, eqs. 11, 14, 15 and 18)::

    oadev  d_i = x_{i+2m} - 2 x_{i+m} + x_i,                   AVAR = sum d^2 / (2 tau^2 n)
    ohdev  d_i = x_{i+3m} - 3 x_{i+2m} + 3 x_{i+m} - x_i,     HVAR = sum d^2 / (6 tau^2 n)
    mdev   d_j = sum_{i=j}^{j+m-1} (x_{i+2m} - 2 x_{i+m} + x_i), MVAR = sum d^2 / (2 m^2 tau^2 n)
    tdev    tau * MDEV / sqrt(3)

A term belongs to a window when every sample it touches lies in the window.
So per tau the squared terms of the whole record are computed once, and the
running sums of the squares and of the count of valid terms give every
window's sum and term count by one subtraction: O(N) per tau for all windows
at once. Terms that touch a gap (NaN phase, or a frequency gap between their
first and last sample) are left out and each window is normalised by the
terms it used (reference 2, section 5.14). The running sums are of positive
numbers; their difference loses about log10(N / N_w) digits of float64,
harmless for a deviation.

Intervals. For each window the noise type is identified at each tau
(:func:`stability.noise.identify` on the window's data, or once on the whole
record with ``noise="record"``), the EDF follows from
:func:`stability.confidence.edf_for` for the window's N_w samples, and the
chi-squared interval from :func:`stability.confidence.chi2_interval`. When
the window's noise type cannot be identified, ``edf_for`` takes the smallest
EDF over the five noise types (a wider, safe interval).

References
----------
1. L. Galleani, P. Tavella, "The dynamic Allan variance", IEEE Trans.
   Ultrasonics, Ferroelectrics and Frequency Control 56(3), 450-464 (2009).
2. W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065
   (2008), sections 5.2.4, 5.2.5, 5.2.6, 5.2.9 and 5.14.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Sequence
from dataclasses import dataclass, field
from datetime import datetime, timedelta
from typing import Any, Literal

import numpy as np
import pandas as pd

from .deviations._kernels import comb_terms
from .deviations.registry import get_statistic
from .display import Displayable
from .display import plot as _plot
from .errors import AnalysisError, InputError, StabilityWarning
from .intervals import chi2_interval
from .measurement import Measurement
from .noise import identify
from .taus import GRIDS, tau_grid
from .units import parse_duration

__all__ = ["DYNAMIC_STATS", "DynamicResult", "dynamic_stability", "window_sums"]

#: Statistics available in a sliding window.
DYNAMIC_STATS = ("oadev", "mdev", "tdev", "ohdev")

_D2 = (1.0, -2.0, 1.0)
_D3 = (-1.0, 3.0, -3.0, 1.0)
_WHOLE_RTOL = 1e-6


@dataclass
class DynamicResult(Displayable):
    """A deviation over (window centre time, tau).

    Matrices have shape (windows, taus); a cell is NaN where the window has
    no usable term at that tau.

    Attributes
    ----------
    statistic
        Statistic identifier.
    time_s
        Window centres in seconds from the first sample.
    time
        Window centres as datetimes when the measurement has a start time, else None.
    tau
        Averaging times in seconds.
    m
        Averaging factors.
    deviation, n_terms
        The deviation and the number of terms used in every cell.
    ci_low, ci_high, edf
        Chi-squared interval bounds and EDF (NaN when not computed).
    alpha
        Identified power-law exponent per cell (NaN where unidentified).
    window_points, step_points
        Window length and step in phase samples.
    confidence
        Two-sided confidence level of the intervals.
    notes
        What was done, in plain sentences.
    """

    statistic: str
    time_s: np.ndarray
    time: list[datetime] | None
    tau: np.ndarray
    m: np.ndarray
    deviation: np.ndarray
    n_terms: np.ndarray
    ci_low: np.ndarray
    ci_high: np.ndarray
    edf: np.ndarray
    alpha: np.ndarray
    window_points: int
    step_points: int
    confidence: float
    notes: list[str] = field(default_factory=list)

    @property
    def shape(self) -> tuple[int, int]:
        return self.deviation.shape

    def plot(self, ax: Any = None, *, figure: Any = None, **options: Any) -> Any:
        """Stability over time, as ``stability timeline`` draws it: the map and its trace.

        Parameters
        ----------
        ax
            A matplotlib ``Axes`` (or two: the map, then the shortest-tau
            trace) to draw into, in a figure the caller lays out. None draws
            a figure of its own
            (``matplotlib.figure.Figure``, never pyplot).
        figure
            A ``Figure`` or ``SubFigure`` to draw the whole figure into instead.
        options
            Those of :func:`stability.figures.timeline_figure` (title, footer).

        Returns
        -------
        stability.figures.TimelineDrawn
            The figure, its panels (``.axes``) and the data as drawn; it shows
            itself in a notebook.
        """
        return _plot(self, ax=ax, figure=figure, **options)

    def to_frame(self) -> pd.DataFrame:
        """Long format, one row per (window, tau).

        Columns: time_s, time (datetime or empty), tau_s, m, n_terms,
        deviation, ci_low, ci_high, edf.
        """
        windows, taus = self.deviation.shape
        times = self.time if self.time is not None else [None] * windows
        return pd.DataFrame(
            {
                "time_s": np.repeat(self.time_s, taus),
                "time": pd.to_datetime(np.repeat(np.array(times, dtype=object), taus)),
                "tau_s": np.tile(self.tau, windows),
                "m": np.tile(self.m, windows),
                "n_terms": self.n_terms.ravel(),
                "deviation": self.deviation.ravel(),
                "ci_low": self.ci_low.ravel(),
                "ci_high": self.ci_high.ravel(),
                "edf": self.edf.ravel(),
            }
        )


def _seconds(value: Any, name: str) -> float:
    if isinstance(value, str):
        return parse_duration(value, what=name)
    try:
        out = float(value)
    except (TypeError, ValueError):
        raise InputError(f"{name} must be a duration in seconds, got {value!r}") from None
    if not math.isfinite(out):
        raise InputError(f"{name} must be a finite number of seconds, got {value!r}")
    return out


def _samples(seconds: float, tau0: float, name: str, notes: list[str]) -> int:
    ratio = seconds / tau0
    count = int(round(ratio))
    if abs(ratio - count) > _WHOLE_RTOL * max(1.0, ratio):
        notes.append(
            f"{name} {seconds:g} s is not a whole multiple of tau0 {tau0:g} s; "
            f"{count} samples ({count * tau0:g} s) used"
        )
    return count


def _validate_dynamic(
    measurement: Any,
    window: Any,
    step: Any,
    taus: Any,
    stat: Any,
    confidence: Any,
    noise: Any,
    notes: list[str],
) -> tuple[int, int, str, float]:
    if not isinstance(measurement, Measurement):
        raise InputError(
            f"measurement must be a stability.Measurement, got {type(measurement).__name__}",
            hint="build one with Measurement.from_phase, Measurement.from_frequency or read_log",
        )
    name = str(stat).strip().lower()
    if name not in DYNAMIC_STATS:
        raise InputError(
            f"stat {stat!r} is not available in a sliding window",
            hint=f"choose from {', '.join(DYNAMIC_STATS)}",
        )
    if isinstance(taus, str) and taus.strip().lower() not in GRIDS:
        raise InputError(
            f"unknown tau grid {taus!r}", hint="choose octave, decade, all or a list of taus"
        )
    try:
        level = float(confidence)
    except (TypeError, ValueError):
        raise InputError(f"confidence must be a number in (0, 1), got {confidence!r}") from None
    if not 0.0 < level < 1.0:
        raise InputError(f"confidence must lie strictly between 0 and 1, got {confidence!r}")
    if noise not in ("window", "record"):
        raise InputError(f"noise must be 'window' or 'record', got {noise!r}")
    tau0 = measurement.tau0
    window_s = _seconds(window, "window")
    step_s = _seconds(step, "step")
    if step_s <= 0:
        raise InputError(f"step must be positive, got {step_s:g} s")
    if window_s < 3 * tau0 * (1.0 - _WHOLE_RTOL):
        raise InputError(
            f"window {window_s:g} s is shorter than 3 samples (3 tau0 = {3 * tau0:g} s)",
            hint="pass a window of at least three sample intervals",
        )
    points = _samples(window_s, tau0, "window", notes)
    if points > measurement.n:
        raise InputError(
            f"window {window_s:g} s ({points} samples) is longer than the record "
            f"({measurement.n} samples, {measurement.n * tau0:g} s)",
            hint="pass a shorter window",
        )
    if step_s < tau0 * (1.0 - _WHOLE_RTOL):
        raise InputError(
            f"step {step_s:g} s is shorter than the sample interval tau0 = {tau0:g} s",
            hint="pass a step of at least one sample interval",
        )
    stride = max(1, _samples(step_s, tau0, "step", notes))
    return points, stride, name, level


def window_sums(
    values: np.ndarray, valid: np.ndarray, starts: np.ndarray, length: int
) -> tuple[np.ndarray, np.ndarray]:
    """Sums and counts of the valid entries of ``values[s:s+length]`` for every start s.

    Running sums make this O(len(values) + len(starts)) whatever the overlap.
    """
    clean = np.where(valid, values, 0.0)
    csum = np.zeros(clean.size + 1)
    np.cumsum(clean, out=csum[1:])
    ccount = np.zeros(clean.size + 1, dtype=np.int64)
    np.cumsum(valid, out=ccount[1:])
    return csum[starts + length] - csum[starts], ccount[starts + length] - ccount[starts]


def _terms(name: str, x: np.ndarray, seg: np.ndarray | None, m: int) -> tuple[np.ndarray, int]:
    """The terms of the whole record at factor m (NaN where invalid) and their span in samples."""
    if name == "ohdev":
        return comb_terms(x, seg, (0, m, 2 * m, 3 * m), _D3, x.size - 3 * m), 3 * m + 1
    d2 = comb_terms(x, seg, (0, m, 2 * m), _D2, x.size - 2 * m)
    if name == "oadev":
        return d2, 2 * m + 1
    # mdev, tdev: moving sums of m second differences (invalid if any is invalid).
    bad = np.isnan(d2)
    sums, count = window_sums(d2, ~bad, np.arange(d2.size - m + 1), m)
    sums[count < m] = np.nan
    return sums, 3 * m


def _scale(name: str, m: int, tau: float) -> float:
    if name == "ohdev":
        return 6.0 * tau * tau
    if name == "oadev":
        return 2.0 * tau * tau
    return 2.0 * m * m * tau * tau


def _intervals(
    result: DynamicResult,
    measurement: Measurement,
    starts: np.ndarray,
    noise: str,
) -> None:
    """Noise type, EDF and chi-squared interval of every cell (in place)."""
    statistic = get_statistic(result.statistic)
    name = statistic.noise_source or statistic.name
    ms = [int(m) for m in result.m]
    points = result.window_points
    alpha = np.full(result.deviation.shape, np.nan)
    with np.errstate(all="ignore"), warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        if noise == "record":
            found = identify(measurement, name, ms)
            alpha[:] = np.asarray(found.alpha, dtype=float)[None, :]
        else:
            for w, s in enumerate(starts):
                part = _window(measurement, int(s), points)
                if part is None:
                    continue
                alpha[w] = np.asarray(identify(part, name, ms).alpha, dtype=float)
    edf = np.full(result.deviation.shape, np.nan)
    cache: dict[tuple[int | None, int, int], float] = {}
    n_eff = _effective_points(measurement, starts, points)
    for w in range(alpha.shape[0]):
        for k, m in enumerate(ms):
            if result.n_terms[w, k] == 0 or n_eff[w] < 2:
                continue
            a = None if math.isnan(alpha[w, k]) else int(alpha[w, k])
            key = (a, m, int(n_eff[w]))
            if key not in cache:
                cache[key] = statistic.edf_for(a, m, int(n_eff[w]))
            edf[w, k] = cache[key]
    good = np.isfinite(edf) & np.isfinite(result.deviation)
    low = np.full(edf.shape, np.nan)
    high = np.full(edf.shape, np.nan)
    if good.any():
        lo, hi = chi2_interval(result.deviation[good], edf[good], result.confidence)
        low[good] = np.asarray(lo, dtype=float)
        high[good] = np.asarray(hi, dtype=float)
    result.alpha = alpha
    result.edf = edf
    result.ci_low = low
    result.ci_high = high
    scope = "each window" if noise == "window" else "the whole record"
    result.notes.append(f"noise type identified on {scope}; EDF for {points}-sample windows")


def _effective_points(measurement: Measurement, starts: np.ndarray, points: int) -> np.ndarray:
    """Finite phase samples less frequency gaps in every window."""
    finite = np.isfinite(measurement.phase)
    _, count = window_sums(np.ones(finite.size), finite, starts, points)
    if measurement.segments is not None:
        seg = measurement.segments
        count = count - (seg[starts + points - 1] - seg[starts])
    return count


def _window(measurement: Measurement, start: int, points: int) -> Measurement | None:
    """The phase of one window as a Measurement (None when it holds no finite sample)."""
    phase = measurement.phase[start : start + points]
    if not np.isfinite(phase).any():
        return None
    seg = None if measurement.segments is None else measurement.segments[start : start + points]
    return Measurement(phase=phase, tau0=measurement.tau0, segments=seg, kind="phase")


def dynamic_stability(
    measurement: Measurement,
    *,
    window: float | str,
    step: float | str,
    taus: str | Sequence[float] = "octave",
    stat: str = "oadev",
    confidence: float = 0.683,
    noise: Literal["window", "record"] = "window",
) -> DynamicResult:
    """A deviation in a window sliding along the record (dynamic Allan deviation).

    Parameters
    ----------
    measurement
        The data.
    window
        Window length in seconds (or a duration string such as ``"1h"``);
        N_w = window / tau0 phase samples, at least 3, at most the record.
    step
        Distance between consecutive windows in seconds (at least tau0).
    taus
        ``"octave"``, ``"decade"``, ``"all"`` or taus in seconds; capped at the
        largest tau the statistic allows on N_w samples.
    stat
        One of :data:`DYNAMIC_STATS` (default ``oadev``).
    confidence
        Two-sided confidence level of the intervals (default 0.683).
    noise
        Identify the noise type in each window (``"window"``, default) or
        once on the whole record (``"record"``, faster for many windows).

    Returns
    -------
    DynamicResult

    Raises
    ------
    InputError
        On a bad argument: unknown statistic, window longer than the record or
        shorter than 3 tau0, step not positive or shorter than tau0.
    AnalysisError
        When no tau of the grid fits the window.
    """
    notes: list[str] = []
    points, stride, name, level = _validate_dynamic(
        measurement, window, step, taus, stat, confidence, noise, notes
    )
    statistic = get_statistic(name)
    tau0 = measurement.tau0
    max_m = statistic.allowed_m(points)
    ms = tau_grid(taus, max_m, tau0)
    if not isinstance(taus, str):
        asked = tau_grid(taus, 10**18, tau0)
        if (asked > max_m).any():
            too_long = asked[asked > max_m][0]
            raise AnalysisError(
                f"tau {too_long * tau0:g} s does not fit a window of {points} samples for "
                f"{name} (largest tau {max_m * tau0:g} s)",
                hint="drop the longer taus or pass a longer window",
            )
    if ms.size == 0:
        raise AnalysisError(f"no tau of the grid fits {name} in a window of {points} samples")
    starts = np.arange(0, measurement.n - points + 1, stride, dtype=np.int64)
    x = measurement.phase
    seg = measurement.segments
    deviation = np.full((starts.size, ms.size), np.nan)
    n_terms = np.zeros((starts.size, ms.size), dtype=np.int64)
    for k, m in enumerate(ms):
        m = int(m)
        tau = m * tau0
        terms, span = _terms(name, x, seg, m)
        valid = ~np.isnan(terms)
        sums, count = window_sums(terms * terms, valid, starts, points - span + 1)
        with np.errstate(divide="ignore", invalid="ignore"):
            dev = np.sqrt(sums / (_scale(name, m, tau) * count))
        dev[count == 0] = np.nan
        if name == "tdev":
            dev = dev * tau / math.sqrt(3.0)
        deviation[:, k] = dev
        n_terms[:, k] = count
    centre = (starts + (points - 1) / 2.0) * tau0
    times = None
    if measurement.start is not None:
        times = [measurement.start + timedelta(seconds=float(t)) for t in centre]
    empty = int((n_terms == 0).sum())
    if empty:
        message = f"{empty} of {n_terms.size} cells have no usable term (gaps); they are NaN"
        warnings.warn(message, StabilityWarning, stacklevel=2)
        notes.append(message)
    notes.append(
        f"{name} in windows of {points} samples ({points * tau0:g} s) every {stride} "
        f"samples ({stride * tau0:g} s): {starts.size} windows"
    )
    nan = np.full(deviation.shape, np.nan)
    result = DynamicResult(
        statistic=name,
        time_s=centre,
        time=times,
        tau=ms * tau0,
        m=ms.copy(),
        deviation=deviation,
        n_terms=n_terms,
        ci_low=nan.copy(),
        ci_high=nan.copy(),
        edf=nan.copy(),
        alpha=nan.copy(),
        window_points=points,
        step_points=stride,
        confidence=level,
        notes=notes,
    )
    _intervals(result, measurement, starts, noise)
    return result
