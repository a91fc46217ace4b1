"""Drift estimators used as cross-checks: three-point and mean second difference of phase,
bisection of frequency (NIST SP 1065 (2008), data preprocessing: frequency drift)."""

from __future__ import annotations

import math

import numpy as np

from ..errors import AnalysisError
from ..measurement import Measurement
from ._common import SECONDS_PER_DAY, centred_frequency, check_measurement
from .drift_model import DriftFit, _finish, _times

__all__ = ["three_point_drift", "mean_second_difference_drift", "bisection_drift"]


def _stretch(m: Measurement) -> np.ndarray:
    """Indices of the finite phase samples of the longest segment."""
    finite = np.isfinite(m.phase)
    seg = m.segments if m.segments is not None else np.zeros(m.n, dtype=np.int64)
    counts = np.bincount(seg[finite] - seg[0])
    label = int(np.argmax(counts)) + int(seg[0])
    return np.flatnonzero(finite & (seg == label))


def three_point_drift(measurement: Measurement) -> DriftFit:
    """Linear frequency drift from three phase samples.

    Uses the first, middle and last finite phase samples of the longest
    unbroken stretch: drift = 2 x (second divided difference of the phase),
    which for equally spaced points is ``4 (x_end - 2 x_mid + x_start) / T^2``
    [1]_. Exact on a noiseless quadratic phase; no standard error is given
    (it depends on the noise type).
    """
    m = check_measurement(measurement, "three_point_drift")
    idx = _stretch(m)
    if idx.size < 3:
        raise AnalysisError(
            f"three-point drift needs 3 phase samples in one unbroken stretch, got {idx.size}"
        )
    i0, i2 = int(idx[0]), int(idx[-1])
    i1 = int(idx[1:-1][np.argmin(np.abs(idx[1:-1] - 0.5 * (i0 + i2)))])
    t0, t1, t2 = (np.array([i0, i1, i2], dtype=float) * m.tau0).tolist()
    x0, x1, x2 = m.phase[[i0, i1, i2]].tolist()
    slope01 = (x1 - x0) / (t1 - t0)
    slope12 = (x2 - x1) / (t2 - t1)
    rate = 2.0 * (slope12 - slope01) / (t2 - t0)  # per second
    offset = slope01 - rate * 0.5 * (t0 + t1) + m.frequency_offset
    return _phase_estimate(m, "three-point estimate from phase", rate, offset)


def mean_second_difference_drift(measurement: Measurement) -> DriftFit:
    """Linear frequency drift from the mean second difference of the phase.

    drift = mean(x[i+2] - 2 x[i+1] + x[i]) / tau0^2 over the second
    differences that touch no gap [1]_. Exact on a noiseless quadratic phase;
    efficient for random-walk FM. No standard error is given (the second
    differences are correlated in a way that depends on the noise type).
    """
    m = check_measurement(measurement, "mean_second_difference_drift")
    y = centred_frequency(m)
    d2 = np.diff(y)
    good = np.isfinite(d2)
    if not good.any():
        raise AnalysisError("mean second difference drift needs 3 phase samples without a gap")
    rate = float(np.mean(d2[good])) / m.tau0  # per second
    t, _ = _times(m)
    yg = np.isfinite(y)
    offset = float(np.mean(y[yg]) - rate * np.mean(t[yg])) + m.frequency_offset
    return _phase_estimate(m, "mean second difference of phase", rate, offset)


def bisection_drift(measurement: Measurement) -> DriftFit:
    """Linear frequency drift from the mean frequencies of the two halves of the record.

    drift = (mean y of the second half - mean y of the first half) / (the
    difference of their mean times), over the finite frequency samples [1]_.
    Exact on a noiseless linear frequency drift; robust to a few noisy samples
    and simple to check by hand. No standard error is given (it depends on the
    noise type).
    """
    m = check_measurement(measurement, "bisection_drift")
    y = centred_frequency(m)
    t, _ = _times(m)
    half = y.size // 2
    parts = []
    for part in (slice(0, half), slice(half, y.size)):
        good = np.isfinite(y[part])
        if not good.any():
            raise AnalysisError(
                "bisection drift needs frequency samples in both halves of the record"
            )
        parts.append((float(np.mean(y[part][good])), float(np.mean(t[part][good]))))
    (y1, t1), (y2, t2) = parts
    rate = (y2 - y1) / (t2 - t1)  # per second
    yg = np.isfinite(y)
    offset = float(np.mean(y[yg]) - rate * np.mean(t[yg])) + m.frequency_offset
    return _phase_estimate(m, "bisection of the frequency record", rate, offset)


def _phase_estimate(m: Measurement, method: str, rate: float, offset: float) -> DriftFit:
    per_day = rate * SECONDS_PER_DAY
    coef = {"offset": offset, "drift_per_day": per_day}
    errors = {"offset": math.nan, "drift_per_day": math.nan}
    return _finish(m, "linear", method, coef, errors, per_day, math.nan, centred_frequency(m))
