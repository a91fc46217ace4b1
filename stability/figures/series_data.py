"""The curves of the series figure, computed block by block from the phase.

:func:`series_curves` makes what :mod:`stability.figures.series` draws: the
fractional frequency (with the drift put back when it was removed), the phase
joined up from it (a missing frequency sample adds nothing, so the record
joins up across segment breaks) less its least-squares line, the time error of
a phase log and the gaps. Every one of them is a function of the phase alone:

* the frequency is ``y[k] = (x[k+1] - x[k]) / tau0 + offset``, NaN across a
  segment change (:meth:`~stability.Measurement.frequency`);
* the joined phase is ``X[0] = 0``, ``X[k+1] = X[k] + tau0 (y[k] - centre)``
  where ``y[k]`` is finite, NaN where the phase sample is missing;
* its least-squares line needs the means of the sample index and of ``X``
  over the finite samples, then two sums about those means.

So the record is walked in blocks of :data:`BLOCK` phase samples, carrying the
running sum from one block to the next, in a few passes (the means, the
line's sums, then the curves); each block's curve goes straight into its
min/max envelope (:class:`~stability.figures.reduce.Envelope`). No array of
the record's length is made, which is why these loops stand where one-line
whole-array numpy was: measured at 10^7 rows (tracemalloc, above entry), the
series figure of an analysis went from 41 to 1.2 B/row and that of a phase log
with its drift removed from 73 to 1.7 B/row, and both draw faster (0.8 s
instead of 1.3 s, 1.6 s instead of 2.9 s). Sums are taken per block and added
up, so a record of one block (every record too short to be decimated into the
default 2000 columns) is computed with the very operations of a whole-array
computation, and a longer one differs from it by rounding only.
"""

from __future__ import annotations

import warnings
from collections.abc import Iterator
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..measurement import Measurement
from .reduce import Envelope, GapRuns

__all__ = ["BLOCK", "SeriesCurves", "series_curves", "drift_at"]

#: Phase samples per block: large enough for whole-array speed, small enough to cost nothing.
BLOCK = 1 << 18

Curve = tuple[np.ndarray, np.ndarray]


@dataclass(frozen=True)
class SeriesCurves:
    """The curves of a series figure, in sample indices and seconds (see :func:`series_curves`).

    ``frequency`` holds frequency samples; ``time_error`` and ``residual`` phase
    samples (seconds), None when not drawn; ``offset`` is the frequency offset
    removed from the time error; ``gaps`` are (k, 2) [start, stop) ranges of
    frequency samples and ``missing`` the readings missing in them.
    """

    frequency: Curve
    time_error: Curve | None
    residual: Curve | None
    offset: float | None
    gaps: np.ndarray
    missing: int


def drift_at(drift: Any, index: np.ndarray) -> np.ndarray:
    """The drift model at frequency samples ``index``: an array's values, or a fit's.

    A fit (``frequency_at`` and ``tau0``, as :class:`~stability.prepare.drift.DriftFit`)
    is evaluated at the mid-time of each sample, as its ``y_model`` is.
    """
    if isinstance(drift, np.ndarray):
        return drift[index]
    t = np.asarray(index, dtype=float) + 0.5
    t *= drift.tau0
    return drift.frequency_at(t)


def _drift_block(drift: Any, lo: int, hi: int) -> np.ndarray:
    """:func:`drift_at` of frequency samples [lo, hi) (a view of an array's values)."""
    return drift[lo:hi] if isinstance(drift, np.ndarray) else drift_at(drift, np.arange(lo, hi))


def _blocks(n: int) -> Iterator[tuple[int, int, int]]:
    """(lo, hi, stop): phase samples [lo, hi) and their frequency samples [lo, stop)."""
    for lo in range(0, n, BLOCK):
        hi = min(lo + BLOCK, n)
        yield lo, hi, min(hi, n - 1)


class _Mean:
    """The mean of the finite values of a record given block by block."""

    def __init__(self) -> None:
        self.total, self.count = 0.0, 0

    def add(self, values: np.ndarray, good: np.ndarray) -> None:
        whole = bool(good.all())
        self.total += float(np.sum(values if whole else values[good]))
        self.count += values.size if whole else int(np.count_nonzero(good))

    def value(self, empty: float = 0.0) -> float:
        return self.total / self.count if self.count else empty


class _Joined:
    """A phase joined up from frequency less ``centre``, and its least-squares line.

    :meth:`block` makes the next block of the phase (the running sum carried
    over); :meth:`add_means`, then :meth:`add_slope` (a second walk) fit the
    line; :meth:`without_line` takes it off a block.
    """

    def __init__(self, tau0: float, centre: float, analysed: bool) -> None:
        self.tau0, self.centre, self.analysed = tau0, centre, analysed
        self.carry = 0.0
        self.k_mean = self.x_mean = self.slope = 0.0
        self._count, self._k_total, self._x_total, self._kx, self._kk = 0, 0.0, 0.0, 0.0, 0.0

    def block(self, values: np.ndarray, missing: np.ndarray) -> np.ndarray:
        """Phase samples [lo, hi) from frequency samples lo.. (``missing``: NaN phase samples)."""
        x = np.empty(values.size + 1)
        x[0] = self.carry
        steps = np.subtract(values, self.centre, out=x[1:])
        steps[~np.isfinite(values)] = 0.0
        steps *= self.tau0
        np.cumsum(x, out=x)  # x[0] is the carry: the sums run on as over the whole record
        self.carry = float(x[-1])
        x = x[: missing.size]
        x[missing] = np.nan
        return x

    @staticmethod
    def _finite(lo: int, x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        good = np.isfinite(x)
        k = np.arange(lo, lo + x.size, dtype=float)
        return (k, x) if good.all() else (k[good], x[good])

    def add_means(self, lo: int, x: np.ndarray) -> None:
        k, x = self._finite(lo, x)
        self._count += k.size
        self._k_total += float(np.sum(k))
        self._x_total += float(np.sum(x))

    def fit_means(self) -> None:
        self.k_mean = self._k_total / self._count if self._count else np.nan
        self.x_mean = self._x_total / self._count if self._count else np.nan

    @property
    def sloped(self) -> bool:
        """Whether a line is fitted (two finite samples at least), once the means are known."""
        return self._count >= 2

    def add_slope(self, lo: int, x: np.ndarray) -> None:
        k, x = self._finite(lo, x)
        dk = np.subtract(k, self.k_mean, out=k)
        centred = x - self.x_mean
        # einsum, not np.dot: 1-D dot goes to a threaded BLAS (see deviations._kernels.dot)
        self._kx += float(np.einsum("i,i->", dk, centred))
        self._kk += float(np.einsum("i,i->", dk, dk))

    def fit_slope(self) -> None:
        self.slope = self._kx / self._kk

    def without_line(self, lo: int, x: np.ndarray) -> np.ndarray:
        """``x`` (a block from :meth:`block`, overwritten) less the fitted line."""
        if not self.sloped:
            return np.subtract(x, self.x_mean, out=x)
        line = np.arange(lo, lo + x.size, dtype=float)
        line -= self.k_mean
        line *= self.slope
        line += self.x_mean  # x_mean + slope * (k - mean(k))
        return np.subtract(x, line, out=x)


class _Curve:
    """A curve fed block by block: its min/max envelope, or the whole of it (short records)."""

    def __init__(self, length: int, columns: int, decimate: bool) -> None:
        self._envelope = Envelope(length, columns) if decimate else None
        self._parts: list[np.ndarray] = []

    def add(self, values: np.ndarray) -> None:
        if self._envelope is None:
            self._parts.append(values)
            return
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)
            self._envelope.add(values)

    def result(self) -> Curve:
        if self._envelope is not None:
            return self._envelope.result()
        values = self._parts[0] if len(self._parts) == 1 else np.concatenate(self._parts)
        return np.arange(values.size, dtype=float), values


def _lost_block(
    measurement: Measurement,
    outliers: np.ndarray,
    block: tuple[int, int, int],
    frequency: np.ndarray,
) -> tuple[np.ndarray, int]:
    """Frequency samples [lo, stop) to shade as gaps, and the readings missing there.

    For a frequency log, a missing frequency sample is a missing reading; for a
    phase log, a missing phase sample (of the block's own [lo, hi)), which
    leaves the frequency samples on either side of it missing. Removed
    outliers (``outliers``, sorted source indices) are marked apart, not as gaps.
    """
    lo, hi, stop = block
    phase_log = measurement.kind == "phase"
    end = stop + 1 if phase_log else stop
    cut = np.searchsorted(outliers, [lo, end])
    if phase_log:
        nan_phase = np.isnan(measurement.phase[lo:end])
        nan_phase[outliers[cut[0] : cut[1]] - lo] = False
        return nan_phase[:-1] | nan_phase[1:], int(np.count_nonzero(nan_phase[: hi - lo]))
    lost = ~np.isfinite(frequency)
    lost[outliers[cut[0] : cut[1]] - lo] = False
    return lost, int(np.count_nonzero(lost))


def _shifted(frequency: np.ndarray, drift: np.ndarray, shift: float) -> np.ndarray:
    """``frequency + (drift - shift)``: the frequency with the drift put back."""
    put_back = np.subtract(drift, shift)
    put_back += frequency
    return put_back


def series_curves(
    measurement: Measurement,
    *,
    drift: Any,
    drift_removed: bool,
    frequency_offset: float | None,
    outliers: np.ndarray,
    columns: int,
    decimate: bool,
) -> SeriesCurves:
    """The curves of :func:`~stability.figures.series.series_figure`, block by block.

    Parameters
    ----------
    measurement
        The data as analysed.
    drift
        None, the drift model at each frequency sample (an array of ``n - 1``
        values) or a fitted drift (see :func:`drift_at`).
    drift_removed
        Whether the drift was removed: the frequency drawn then has it put back
        (less its mean over the samples where both are finite), and the time
        error of a phase log is made from that frequency.
    frequency_offset
        The offset to take off the time error of a phase log; None or NaN: the
        mean frequency plus the slope of the time error's least-squares line.
    outliers
        Removed outliers (source indices), not counted as gaps.
    columns, decimate
        Whether the curves are drawn as min/max envelopes of ``columns`` buckets.
    """
    n, tau0 = measurement.n, measurement.tau0
    shifted = drift is not None and drift_removed
    outliers = np.sort(outliers)
    # Pass 1: the mean frequency (and the drift's mean where both are known), and the gaps.
    mean_a, mean_d = _Mean(), _Mean()
    gaps, missing = GapRuns(n - 1, columns), 0
    for block in _blocks(n):
        frequency = measurement.frequency(block[0], block[2])
        lost, count = _lost_block(measurement, outliers, block, frequency)
        gaps.add(lost)
        missing += count
        del lost
        good = np.isfinite(frequency)
        mean_a.add(frequency, good)
        if shifted:
            d = _drift_block(drift, block[0], block[2])
            good &= np.isfinite(d)
            mean_d.add(d, good)
    shift = mean_d.value() if shifted else None
    walk = _Walk(measurement, drift, shift)
    timed = measurement.kind == "phase"
    stated = timed and frequency_offset is not None and bool(np.isfinite(frequency_offset))
    phases: dict[str, _Joined] = {}
    if timed:
        centre = float(frequency_offset) if stated else mean_a.value()
        if shifted and not stated:  # the time error's centre: the mean of the drawn frequency
            centre = walk.mean_shown()
        phases["time_error"] = _Joined(tau0, centre, analysed=not shifted)
    if not timed or drift_removed:
        phases["residual"] = _Joined(tau0, mean_a.value(), analysed=True)
    fitted = {name: p for name, p in phases.items() if not (name == "time_error" and stated)}
    # Passes 2 and 3: the least-squares line of each joined phase (its means, then its slope).
    for lo, _, xs in walk.blocks(fitted):
        for name, x in xs.items():
            fitted[name].add_means(lo, x)
    for p in fitted.values():
        p.fit_means()
    sloped = {name: p for name, p in fitted.items() if p.sloped}
    for lo, _, xs in walk.blocks(sloped):
        for name, x in xs.items():
            sloped[name].add_slope(lo, x)
    for p in sloped.values():
        p.fit_slope()
    # Pass 4: the curves.
    frequency_curve = _Curve(n - 1, columns, decimate)
    drawn = {name: _Curve(n, columns, decimate) for name in phases}
    for lo, shown, xs in walk.blocks(phases, draw=True):
        frequency_curve.add(shown)
        for name, x in xs.items():
            drawn[name].add(phases[name].without_line(lo, x) if name in fitted else x)
    offset = None
    if timed:
        slope = fitted["time_error"].slope if "time_error" in fitted else 0.0
        offset = float(frequency_offset) if stated else phases["time_error"].centre + slope / tau0
    return SeriesCurves(
        frequency=frequency_curve.result(),
        time_error=drawn["time_error"].result() if "time_error" in drawn else None,
        residual=drawn["residual"].result() if "residual" in drawn else None,
        offset=offset,
        gaps=gaps.result(),
        missing=missing,
    )


class _Walk:
    """Walks over the record block by block: its frequency, as analysed and as drawn."""

    def __init__(self, measurement: Measurement, drift: Any, shift: float | None) -> None:
        self.measurement, self.drift, self.shift = measurement, drift, shift

    def _shown(self, analysed: np.ndarray, lo: int, stop: int) -> np.ndarray:
        """The frequency as drawn: with the drift put back when it was removed."""
        if self.shift is None:
            return analysed
        return _shifted(analysed, _drift_block(self.drift, lo, stop), self.shift)

    def mean_shown(self) -> float:
        mean = _Mean()
        for lo, _, stop in _blocks(self.measurement.n):
            shown = self._shown(self.measurement.frequency(lo, stop), lo, stop)
            mean.add(shown, np.isfinite(shown))
        return mean.value()

    def blocks(
        self, phases: dict[str, _Joined], draw: bool = False
    ) -> Iterator[tuple[int, np.ndarray, dict[str, np.ndarray]]]:
        """(lo, frequency as drawn, {name: block of the joined phase}) for each block.

        The frequency as drawn is made only when drawing or when a phase is made
        from it (else the analysed frequency stands in).
        """
        if not phases and not draw:
            return
        for p in phases.values():
            p.carry = 0.0
        shown_needed = draw or any(not p.analysed for p in phases.values())
        for lo, hi, stop in _blocks(self.measurement.n):
            analysed = self.measurement.frequency(lo, stop)
            shown = self._shown(analysed, lo, stop) if shown_needed else analysed
            missing = np.isnan(self.measurement.phase[lo:hi])
            yield (
                lo,
                shown,
                {
                    name: p.block(analysed if p.analysed else shown, missing)
                    for name, p in phases.items()
                },
            )
