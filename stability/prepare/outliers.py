"""Outlier screening of fractional frequency with the median-absolute-deviation rule.

The rule [1]_: with the robust sigma ``s = median(|r - median(r)|) / 0.6745``,
a sample whose residual satisfies ``|r - median(r)| > k s`` is an outlier
(k = 5 by default) and becomes a gap.

Which residuals. The rule is applied to frequency residuals, not to the raw
frequency [1]_: first the chosen drift model is fitted and subtracted, then
each sample is compared with the median of its ``window - 1`` nearest
neighbours (three on each side by default), itself left out [2]_. A global fit
alone leaves the slow wander of flicker and random-walk FM, whose excursions
would be taken for outliers; the local median follows that wander, while one
glitch, two opposite samples (a phase glitch) or two alike cannot move the
median of six neighbours. Leaving the sample out of its own median keeps the
residuals' tails close to Gaussian, so the 5-sigma rule does not flag ordinary
noise; the residuals are stationary for all the power-law noises, so one
robust sigma serves the whole record.

What is removed.

* Frequency data: each flagged frequency sample becomes a gap (the record is
  rebuilt with :meth:`Measurement.from_frequency`, so the phase after it is a
  new segment).
* Phase data: a run of adjacent flagged frequency samples touches the phase
  samples at its ends and inside it. The phase samples inside the run are bad
  readings and are set missing (NaN): a single glitch in phase shows as two
  adjacent, opposite frequency outliers, and setting that one phase sample
  missing removes both without breaking the record, so statistics spanning it
  keep their terms. When the run also changes the phase for good (an isolated
  flagged sample, or a run whose sum is itself an outlier) the phase has
  stepped: the record is split there (a segment break), which removes exactly
  the offending frequency sample(s) and nothing more.

References
----------
.. [1] W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST Special
   Publication 1065 (2008), data preprocessing: outlier recognition with the
   median absolute deviation; remove drift before screening.
.. [2] J. W. Tukey, *Exploratory Data Analysis*, Addison-Wesley (1977):
   running medians as resistant smoothers.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..errors import StabilityWarning
from ..measurement import Measurement, index_dtype
from ._common import (
    beyond,
    blocks,
    carry_meta,
    centred_frequency,
    check_measurement,
    check_threshold,
    check_window,
    finite_count,
    line_of,
    local_residuals,
    max_abs,
    no_spread,
    robust_spread,
)
from .drift import DriftFit, _fit_drift, check_drift_model

__all__ = ["Outlier", "OutlierReport", "screen_outliers"]


def _plain(value: float) -> float | None:
    return float(value) if math.isfinite(value) else None


@dataclass(frozen=True)
class Outlier:
    """One source sample taken out by the screening.

    Attributes
    ----------
    index
        Index of the source sample: frequency sample for frequency data,
        phase sample for phase data.
    line
        Its source line, when the measurement knows it.
    value
        The source value as held by the measurement: fractional frequency for
        frequency data, phase in seconds (relative to the first sample) for
        phase data.
    frequency
        The flagged fractional frequency (for a phase sample, the adjacent
        one with the larger residual).
    sigmas
        Its residual in robust sigmas.
    action
        ``"removed"`` (frequency sample made a gap), ``"set missing"`` (phase
        sample made NaN) or ``"record split"`` (segment break before this
        phase sample).
    """

    index: int
    line: int | None
    value: float
    frequency: float
    sigmas: float
    action: str

    def to_dict(self) -> dict[str, Any]:
        return {
            "index": int(self.index),
            "line": self.line,
            "value": _plain(self.value),
            "frequency": _plain(self.frequency),
            "sigmas": _plain(self.sigmas),
            "action": self.action,
        }


@dataclass(frozen=True)
class OutlierReport:
    """What the outlier screening did.

    Attributes
    ----------
    threshold
        Threshold in robust sigmas (None: screening off).
    sigma
        Robust sigma of the frequency residuals (fractional frequency).
    centre
        Median of the residuals.
    window
        Local-median window (samples, the screened one in the middle).
    drift
        Drift model removed before screening.
    screened
        Frequency samples screened.
    samples
        The samples taken out, in index order.
    """

    threshold: float | None
    sigma: float
    centre: float
    window: int
    drift: str
    screened: int
    samples: list[Outlier] = field(default_factory=list)

    @property
    def count(self) -> int:
        """Number of samples taken out."""
        return len(self.samples)

    def to_dict(self) -> dict[str, Any]:
        return {
            "threshold": self.threshold,
            "sigma": _plain(self.sigma),
            "centre": _plain(self.centre),
            "window": self.window,
            "drift": self.drift,
            "screened": int(self.screened),
            "count": self.count,
            "samples": [s.to_dict() for s in self.samples],
        }


def _validate_screen_args(
    measurement: Any, threshold: Any, drift: Any, window: Any
) -> tuple[Measurement, float | None, str, int]:
    m = check_measurement(measurement, "screen_outliers")
    k = check_threshold(threshold, "threshold", allow_off=True)
    return m, k, check_drift_model(drift, "drift"), check_window(window)


def screen_outliers(
    measurement: Measurement,
    *,
    threshold: float | str | None = 5.0,
    drift: str = "linear",
    window: int = 7,
) -> tuple[Measurement, OutlierReport]:
    """Find frequency outliers with the MAD rule and turn them into gaps.

    Parameters
    ----------
    measurement
        The data.
    threshold
        Robust sigmas beyond which a residual is an outlier (default 5);
        None or ``"off"`` screens nothing.
    drift
        Drift model subtracted before screening (the data keep their drift).
    window
        Local-median window in samples, the sample itself included (odd, >= 3).

    Returns
    -------
    (Measurement, OutlierReport)
        The screened measurement (with a note) and what was removed.
    """
    m, k, drift, window = _validate_screen_args(measurement, threshold, drift, window)
    new, report, _ = _screen(m, k, drift, window)
    return new, report


def _screen(
    m: Measurement, k: float | None, drift: str, window: int
) -> tuple[Measurement, OutlierReport, DriftFit | None]:
    """The work of :func:`screen_outliers`, also returning the drift fit it screened against."""
    if k is None:
        new = m.replace()
        new.notes.append("Outlier screening was off.")
        return new, OutlierReport(None, math.nan, math.nan, window, drift, 0), None
    # the one array of the record's length the screening makes, one sample longer: the
    # screened record's phase is built in it (Measurement.from_frequency, adopt=True)
    y = centred_frequency(m, out=np.empty(m.n)[1:])
    fit = _fit_drift(m, drift, y)
    size = abs(m.frequency_offset) + max_abs(y)
    # The level y + offset - y_model is made in place block by block and the residuals
    # take the same buffer: y_model (with its times), the level and the residuals were
    # arrays of their own. Up to the building of the screened record the screening now
    # holds 9 B per sample (10^7 samples); prepare() as a whole went from 51 to 34 B
    # per sample above entry, 16 of them the screened record it returns.
    for start, stop in blocks(y.size):
        level = y[start:stop]
        level += m.frequency_offset
        level -= fit.y_model_between(start, stop)
    del level  # a view: it would keep the buffer alive
    resid = local_residuals(y, window, out=y)
    del y
    centre, sigma = robust_spread(resid)
    screened = finite_count(resid)
    if no_spread(sigma, size):
        warnings.warn(
            "outlier screening skipped: the robust spread of the frequency residuals is zero "
            "(quantised or constant data)",
            StabilityWarning,
            stacklevel=3,
        )
        new = m.replace()
        new.notes.append(
            "Outlier screening was skipped: the robust spread of the frequency is zero."
        )
        return new, OutlierReport(k, sigma, centre, window, drift, screened), fit
    dev = np.subtract(resid, centre, out=resid)
    del resid
    idx = np.flatnonzero(beyond(dev, k * sigma))  # the flagged samples
    if m.kind == "frequency":
        new, samples = _remove_frequency(m, idx, dev, sigma)
    else:
        samples, inner, splits = _phase_outliers(m, idx, dev, sigma, k)
        del dev  # done with before the new phase and segments are made
        new = _mark_phase(m, inner, splits) if samples else m.replace()
    report = OutlierReport(k, sigma, centre, window, drift, screened, samples)
    if samples:
        lines = [s.line for s in samples if s.line is not None]
        word = "line" if len(lines) == 1 else "lines"
        where = f" ({word} {', '.join(map(str, lines[:10]))}{' ...' if len(lines) > 10 else ''})"
        new.notes.append(
            f"Outlier screening (median absolute deviation, {k:g} robust sigmas of "
            f"{sigma:.3g} after {drift} drift removal) took out {len(samples)} "
            f"sample{'s' if len(samples) != 1 else ''}{where if lines else ''}."
        )
    else:
        new.notes.append(
            f"Outlier screening ({k:g} robust sigmas of {sigma:.3g}) found no outlier."
        )
    return new, report, fit


def _full_frequency(m: Measurement, index: np.ndarray) -> np.ndarray:
    """``frequency()[index]`` for finite samples: the same numbers, the rest not made."""
    steps = np.subtract(m.phase[index + 1], m.phase[index])
    steps /= m.tau0
    return steps + m.frequency_offset


def _remove_frequency(
    m: Measurement, idx: np.ndarray, dev: np.ndarray, sigma: float
) -> tuple[Measurement, list[Outlier]]:
    """Make the flagged samples ``idx`` gaps; the buffer of ``dev`` (the residuals) is reused."""
    if idx.size == 0:
        return m.replace(), []
    z = np.abs(dev[idx] / sigma)
    # The residuals are done with: their buffer takes the frequency to rebuild from.
    cleaned = centred_frequency(m, out=dev)
    del dev
    cleaned += m.frequency_offset
    samples = [
        Outlier(i, line_of(m, i), float(cleaned[i]), float(cleaned[i]), float(zi), "removed")
        for i, zi in zip(idx.tolist(), z.tolist(), strict=True)
    ]
    cleaned[idx] = np.nan
    # the lines are m's read-only array: shared, not copied
    new = Measurement.from_frequency(cleaned, m.tau0, lines=m.lines, adopt=True, **carry_meta(m))
    return new, samples


def _running_sums(values: np.ndarray, points: np.ndarray) -> np.ndarray:
    """``concatenate([[0], cumsum(nan_to_num(values))])[points]``, summed block by block.

    The running sum is carried from block to block in the order ``cumsum``
    adds, so the numbers are the same without the array of the record's length.
    """
    order = np.argsort(points, kind="stable")
    wanted = points[order]
    found = np.empty(points.size)
    carry, taken = 0.0, 0
    for start, stop in blocks(values.size):
        if taken == wanted.size:
            break
        run = np.empty(stop - start + 1)
        run[0] = carry
        run[1:] = values[start:stop]
        np.nan_to_num(run, copy=False)
        np.cumsum(run, out=run)
        here = wanted[taken:]
        here = here[here <= stop]
        found[taken : taken + here.size] = run[here - start]
        taken += here.size
        carry = float(run[-1])
    out = np.empty(points.size)
    out[order] = found
    return out


def _phase_outliers(
    m: Measurement, idx: np.ndarray, dev: np.ndarray, sigma: float, k: float
) -> tuple[list[Outlier], np.ndarray, np.ndarray]:
    """What to take out of phase data, given the flagged frequency samples ``idx``.

    The outliers, the phase samples to set missing and the phase samples
    before which the record is split (ascending).
    """
    if idx.size == 0:
        return [], idx, idx
    # Runs of adjacent flagged frequency samples: [start, end) in frequency index.
    cut = np.flatnonzero(np.diff(idx) != 1)
    starts = idx[np.concatenate([[0], cut + 1])]
    ends = idx[np.concatenate([cut, [idx.size - 1]])] + 1
    lengths = ends - starts
    # Phase samples inside a run (both neighbouring frequencies flagged) are bad readings.
    inner = idx[1:][np.diff(idx) == 1]
    # A run whose summed residual is itself an outlier changed the phase for good: split.
    sums = _running_sums(dev, np.concatenate([starts, ends]))
    net = np.abs(sums[starts.size :] - sums[: starts.size]) / np.sqrt(lengths)
    split = (lengths == 1) | (net > k * sigma)
    samples: list[Outlier] = []
    for i in inner.tolist():
        pair = np.abs(dev[i - 1 : i + 1])  # both finite: flagged
        j = i - 1 + int(pair[1] > pair[0])
        samples.append(
            Outlier(
                i,
                line_of(m, i),
                float(m.phase[i]),
                float(_full_frequency(m, np.array([j]))[0]),
                float(pair[j - i + 1] / sigma),
                "set missing",
            )
        )
    for s, e, size in zip(starts[split], ends[split], net[split], strict=True):
        samples.append(
            Outlier(
                int(e),
                line_of(m, int(e)),
                float(m.phase[e]),
                float(np.mean(_full_frequency(m, np.arange(s, e)))),
                float(size / sigma),
                "record split",
            )
        )
    samples.sort(key=lambda o: (o.index, o.action))
    return samples, inner, ends[split]


def _mark_phase(m: Measurement, inner: np.ndarray, splits: np.ndarray) -> Measurement:
    """Phase samples ``inner`` set missing and the record split before each of ``splits``."""
    n = m.n
    phase = m.phase.copy()
    phase[inner] = np.nan
    segments = np.zeros(n, dtype=index_dtype(n)) if m.segments is None else m.segments.copy()
    cuts = [*splits.tolist(), n]  # ascending: each split adds a segment from there on
    for count, (first, last) in enumerate(zip(cuts[:-1], cuts[1:], strict=True), start=1):
        segments[first:last] += count
    return m.replace(phase=phase, segments=segments, adopt=True)  # ours: handed over
