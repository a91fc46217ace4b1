"""Time-error metrics of a 1 PPS or packet-timing log: max|TE|, cTE, dTE, peak-to-peak.

Definitions (time error TE(t) = the clock's time minus the reference's, in
seconds, ITU-T G.810 4.5.13; the names of G.8260 Appendix I and G.8273.x):

``max|TE|``
    the largest absolute time error over the record (the TE as measured,
    including any constant offset such as cable and antenna delays not
    calibrated out);
``cTE``
    constant time error: the mean of TE over an averaging window. G.8273.2
    (from memory) averages over 1000 s; the record mean and the largest |cTE|
    of consecutive windows of :data:`CTE_WINDOW` are both reported;
``dTE``
    dynamic time error, TE - cTE. G.8273.2 (from memory, clause 7.1 and its
    appendix on filtering) splits it with a 0.1 Hz filter: ``dTE_L``, TE
    through a first-order low-pass filter of bandwidth :data:`DTE_BANDWIDTH`,
    judged with MTIE and TDEV, and ``dTE_H``, the remainder (a complementary
    first-order high-pass), judged peak-to-peak. The first-order filter and
    the 0.1 Hz are recalled, not read from the Recommendation; the filter is
    a bilinear (Tustin) first-order Butterworth section run forward, as a
    measuring instrument would run it, started at rest on the first sample;
``peak-to-peak TE``
    max(TE) - min(TE) over the record (MTIE over the whole record).

The observation-window rule of thumb: MTIE at tau needs a window of tau, so
at most the record length T (by definition); TDEV at tau is estimated for
tau <= T/3 but is only trusted, as a rule of thumb recalled from the ITU-T
clock Recommendations' measurement notes (from memory), for a record of at
least :data:`TDEV_RECORD_FACTOR` times tau. Taus beyond the rule are
``not measured`` when judged against a mask.

References
----------
1. ITU-T Recommendation G.810 (1996), definitions of TIE, MTIE, TDEV.
2. ITU-T Recommendation G.8260 (2020), Appendix I (time-error metrics: max|TE|,
   cTE, dTE), from memory.
3. ITU-T Recommendation G.8273.2 (2020), clause 7.1 (cTE, dTE_L, dTE_H, the
   0.1 Hz filter), from memory.
4. W. J. Riley, NIST SP 1065 (2008), section 5.2.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from ..measurement import Measurement

__all__ = [
    "CTE_WINDOW",
    "DTE_BANDWIDTH",
    "TDEV_RECORD_FACTOR",
    "TimeErrorMetrics",
    "OffsetRemoval",
    "DteSplit",
    "absolute_time_error",
    "remove_frequency_offset",
    "split_dte",
    "time_error_metrics",
    "longest_tau",
    "apply_sawtooth",
]

#: Averaging window of cTE, seconds (G.8273.2, from memory).
CTE_WINDOW = 1000.0
#: Bandwidth of the dTE low-pass/high-pass split, hertz (G.8273.2, from memory).
DTE_BANDWIDTH = 0.1
#: A record of at least this many times tau for TDEV at tau (rule of thumb, from memory).
TDEV_RECORD_FACTOR = 12.0


def absolute_time_error(measurement: Measurement) -> np.ndarray:
    """TE in seconds as logged: the phase with its offset and origin added back (a new array)."""
    if not isinstance(measurement, Measurement):
        raise InputError(
            f"measurement must be a stability.Measurement, got {type(measurement).__name__}"
        )
    return measurement.phase_with_offset() + measurement.origin


@dataclass(frozen=True)
class OffsetRemoval:
    """A frequency offset removed from a time-error series (least-squares line)."""

    frequency_offset: float  # fractional frequency (slope of TE in s/s)
    time_offset: float  # TE of the fitted line at the first sample, seconds

    def describe(self) -> str:
        return (
            f"frequency offset {self.frequency_offset:.4g} removed before MTIE and the "
            "time-error figure (least-squares line through the time error)"
        )


def remove_frequency_offset(te: np.ndarray, tau0: float) -> tuple[np.ndarray, OffsetRemoval]:
    """TE minus its least-squares line (NaN samples skipped); the line is kept, not its mean.

    Only the slope is removed, so the result keeps the record's mean time error:
    cTE and max|TE| stay those of the log, MTIE no longer sees the ramp of a
    frequency offset (ITU-T G.810 appendix II, common practice: say whether it was
    removed).
    """
    te = np.asarray(te, dtype=np.float64)
    good = np.isfinite(te)
    if good.sum() < 2:
        raise InputError("removing the frequency offset needs at least two time-error samples")
    t = np.flatnonzero(good).astype(np.float64) * tau0
    tm = t.mean()
    ym = te[good].mean()
    slope = float(np.dot(t - tm, te[good] - ym) / np.dot(t - tm, t - tm))
    ramp = slope * (np.arange(te.size, dtype=np.float64) * tau0 - tm)
    return te - ramp, OffsetRemoval(slope, float(ym - slope * tm))


@dataclass(frozen=True)
class DteSplit:
    """dTE split by the low-pass/high-pass filter pair (NaN where TE is missing)."""

    low: np.ndarray  # dTE_L: TE - cTE through the low-pass filter
    high: np.ndarray  # dTE_H: TE - cTE minus dTE_L
    bandwidth: float  # Hz; NaN when the sample rate is too low for the filter
    note: str


def split_dte(te: np.ndarray, tau0: float, bandwidth: float = DTE_BANDWIDTH) -> DteSplit:
    """dTE_L and dTE_H of a time-error series (first-order filter pair, from memory).

    Gaps are bridged by linear interpolation for the filter only and are NaN
    again in the result. When ``bandwidth`` is at or above the Nyquist
    frequency 1/(2 tau0) the filter cannot act: dTE_L is TE - cTE itself,
    dTE_H is zero, and the note says so.
    """
    te = np.asarray(te, dtype=np.float64)
    if not (math.isfinite(bandwidth) and bandwidth > 0):
        raise InputError(f"the dTE filter bandwidth must be a positive frequency, got {bandwidth}")
    good = np.isfinite(te)
    if not good.any():
        raise InputError("no time-error sample to filter")
    centred = te - np.mean(te[good])
    nyquist = 0.5 / tau0
    if bandwidth >= nyquist:
        high = np.where(good, 0.0, np.nan)
        note = (
            f"sample interval {tau0:g} s is too long for a {bandwidth:g} Hz filter "
            f"(Nyquist {nyquist:g} Hz): dTE_L is the whole dTE, dTE_H is not resolved"
        )
        return DteSplit(centred, high, math.nan, note)
    from scipy.signal import butter, sosfilt, sosfilt_zi  # scipy.signal loads on first use

    filled = centred
    if not good.all():
        idx = np.arange(te.size)
        filled = np.interp(idx, idx[good], centred[good])
    sos = butter(1, bandwidth, btype="low", fs=1.0 / tau0, output="sos")
    low, _ = sosfilt(sos, filled, zi=sosfilt_zi(sos) * filled[0])
    high = filled - low
    low[~good] = np.nan
    high[~good] = np.nan
    note = (
        f"dTE split by a first-order {bandwidth:g} Hz low-pass filter and its complement "
        "(G.8273.2, from memory), run forward from rest on the first sample"
    )
    return DteSplit(low, high, float(bandwidth), note)


def _window_means(te: np.ndarray, n: int) -> np.ndarray:
    """Means of consecutive windows of n samples (the last partial window dropped)."""
    k = te.size // n
    if k == 0:
        return np.zeros(0)
    blocks = te[: k * n].reshape(k, n)
    with np.errstate(invalid="ignore"):
        counts = np.isfinite(blocks).sum(axis=1)
        sums = np.nansum(blocks, axis=1)
        means = np.where(counts > 0, sums / np.maximum(counts, 1), np.nan)
    return means


@dataclass(frozen=True)
class TimeErrorMetrics:
    """The time-error metrics of one record, seconds (NaN where not defined)."""

    max_abs_te: float
    max_abs_te_at: float  # seconds from the first sample
    peak_to_peak: float
    cte: float  # record mean
    cte_window: float  # seconds
    cte_windows: int  # whole windows in the record
    max_abs_cte: float  # largest |mean| over consecutive windows (NaN: record too short)
    dte_low_pp: float  # peak-to-peak of dTE_L
    max_abs_te_low: float  # max |cTE + dTE_L| (max|TE_L|)
    dte_high_pp: float  # peak-to-peak of dTE_H
    dte_bandwidth: float
    dte_note: str
    samples: int  # finite samples

    def rows(self) -> list[tuple[str, float, str]]:
        """(metric, value in seconds, what it is) in the order tables print them."""
        window = f"{self.cte_window:g} s"
        return [
            ("max|TE|", self.max_abs_te, "largest absolute time error"),
            ("peak-to-peak TE", self.peak_to_peak, "max(TE) - min(TE)"),
            ("cTE (record)", self.cte, "mean time error over the record"),
            (f"max|cTE| ({window})", self.max_abs_cte, f"largest |mean| of {window} windows"),
            ("max|TE_L|", self.max_abs_te_low, "largest |cTE + dTE_L|"),
            ("dTE_L peak-to-peak", self.dte_low_pp, "low-pass part of TE - cTE"),
            ("dTE_H peak-to-peak", self.dte_high_pp, "high-pass part of TE - cTE"),
        ]

    def to_dict(self) -> dict[str, float | int | str | None]:
        def plain(v: float) -> float | None:
            return float(v) if math.isfinite(v) else None

        return {
            "max_abs_te_s": plain(self.max_abs_te),
            "max_abs_te_at_s": plain(self.max_abs_te_at),
            "peak_to_peak_te_s": plain(self.peak_to_peak),
            "cte_s": plain(self.cte),
            "cte_window_s": self.cte_window,
            "cte_windows": self.cte_windows,
            "max_abs_cte_s": plain(self.max_abs_cte),
            "max_abs_te_low_s": plain(self.max_abs_te_low),
            "dte_low_peak_to_peak_s": plain(self.dte_low_pp),
            "dte_high_peak_to_peak_s": plain(self.dte_high_pp),
            "dte_bandwidth_hz": plain(self.dte_bandwidth),
            "dte_note": self.dte_note,
            "samples": self.samples,
        }


def _pp(a: np.ndarray) -> float:
    good = a[np.isfinite(a)]
    return float(good.max() - good.min()) if good.size else math.nan


def time_error_metrics(
    te: np.ndarray,
    tau0: float,
    *,
    cte_window: float = CTE_WINDOW,
    bandwidth: float = DTE_BANDWIDTH,
) -> TimeErrorMetrics:
    """max|TE|, peak-to-peak, cTE (record and windows), dTE_L/dTE_H of a TE series (seconds)."""
    te = np.asarray(te, dtype=np.float64)
    if not (math.isfinite(cte_window) and cte_window > 0):
        raise InputError(f"the cTE window must be a positive duration, got {cte_window}")
    good = np.isfinite(te)
    if not good.any():
        raise InputError("the time-error series holds no finite sample")
    absolute = np.abs(np.where(good, te, 0.0))
    at = int(np.argmax(absolute))
    n_window = max(1, int(round(cte_window / tau0)))
    means = _window_means(te, n_window)
    finite_means = means[np.isfinite(means)]
    split = split_dte(te, tau0, bandwidth)
    cte = float(np.mean(te[good]))
    te_low = cte + split.low
    return TimeErrorMetrics(
        max_abs_te=float(absolute[at]),
        max_abs_te_at=at * tau0,
        peak_to_peak=_pp(te),
        cte=cte,
        cte_window=float(cte_window),
        cte_windows=int(means.size),
        max_abs_cte=float(np.max(np.abs(finite_means))) if finite_means.size else math.nan,
        dte_low_pp=_pp(split.low),
        max_abs_te_low=float(np.nanmax(np.abs(te_low))),
        dte_high_pp=_pp(split.high),
        dte_bandwidth=split.bandwidth,
        dte_note=split.note,
        samples=int(good.sum()),
    )


def longest_tau(statistic: str, span: float) -> float:
    """The longest tau a record of ``span`` seconds is judged at (rule of thumb above).

    MTIE: the record itself (one window). TDEV: span / :data:`TDEV_RECORD_FACTOR`.
    """
    if statistic == "mtie":
        return float(span)
    if statistic == "tdev":
        return float(span) / TDEV_RECORD_FACTOR
    raise InputError(f"no observation-window rule for {statistic!r}", hint="use mtie or tdev")


def apply_sawtooth(
    te: np.ndarray, sawtooth: np.ndarray, *, sign: int = -1, applies_to: str = "next"
) -> np.ndarray:
    """TE corrected by a GNSS receiver's reported quantisation error (sawtooth).

    Convention: the receiver reports, with each pulse, the error ``q`` of its
    *next* pulse as pulse time minus the ideal time of its solution (a late pulse
    has a positive ``q``), so a TE logged as clock minus reference is corrected
    by ``TE[i + 1] - q[i]`` (``sign=-1``, ``applies_to="next"``). A receiver that
    reports the opposite sense takes ``sign=+1``; a logger that already wrote
    each value on the row of its own pulse takes ``applies_to="same"``. The
    first sample (no earlier report) and samples whose report is missing become
    missing (NaN): an uncorrected pulse would carry the whole quantisation error.
    """
    te = np.asarray(te, dtype=np.float64)
    q = np.asarray(sawtooth, dtype=np.float64)
    if q.shape != te.shape:
        raise InputError("the sawtooth column must have one value per time-error sample")
    if sign not in (-1, 1):
        raise InputError(f"sawtooth sign must be -1 or +1, got {sign!r}")
    if applies_to == "same":
        shifted = q
    elif applies_to == "next":
        shifted = np.empty_like(q)
        shifted[0] = np.nan
        shifted[1:] = q[:-1]
    else:
        raise InputError(
            f"the sawtooth applies to the next or the same pulse, got {applies_to!r}",
            hint="use next or same",
        )
    return te + sign * shifted
