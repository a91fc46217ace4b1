"""Code shared by the preparation steps: argument checks and robust residuals.

The robust spread is the median absolute deviation scaled to a Gaussian sigma,
``sigma = median(|r - median(r)|) / 0.6745`` [1]_. The local level that the
residuals are taken from is the median of the nearest neighbours [2]_, which
follows slow wander (random-walk frequency, drift) but not single glitches.

References
----------
.. [1] W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST Special
   Publication 1065 (2008), data preprocessing: outliers (median absolute
   deviation rule).
.. [2] J. W. Tukey, *Exploratory Data Analysis*, Addison-Wesley (1977):
   running medians as resistant smoothers.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
from numpy.lib.stride_tricks import sliding_window_view

from ..errors import InputError
from ..measurement import Measurement

__all__ = [
    "SECONDS_PER_DAY",
    "MAD_TO_SIGMA",
    "check_measurement",
    "check_threshold",
    "check_window",
    "centred_frequency",
    "local_residuals",
    "robust_spread",
    "carry_meta",
    "line_of",
]

SECONDS_PER_DAY = 86400.0
#: Median absolute deviation of a unit Gaussian (NIST SP 1065 outlier rule).
MAD_TO_SIGMA = 0.6745
_CHUNK = 1 << 16


def check_measurement(measurement: Any, function: str) -> Measurement:
    """Raise :class:`InputError` unless ``measurement`` is a Measurement."""
    if not isinstance(measurement, Measurement):
        raise InputError(
            f"{function}: measurement must be a stability.Measurement, "
            f"got {type(measurement).__name__}",
            hint="build one with Measurement.from_phase, Measurement.from_frequency or read_log",
        )
    return measurement


def check_threshold(value: Any, name: str, *, allow_off: bool) -> float | None:
    """A positive, finite threshold in robust sigmas; None (or ``"off"``) when allowed."""
    allowed = "a positive number of robust sigmas" + (" or 'off'" if allow_off else "")
    if value is None or (isinstance(value, str) and value.strip().lower() in ("off", "none")):
        if allow_off:
            return None
        raise InputError(f"{name} must be {allowed}, got {value!r}")
    if isinstance(value, bool):
        raise InputError(f"{name} must be {allowed}, got {value!r}")
    try:
        number = float(value.strip() if isinstance(value, str) else value)
    except (TypeError, ValueError):
        raise InputError(f"{name} must be {allowed}, got {value!r}") from None
    if not math.isfinite(number) or number <= 0:
        raise InputError(f"{name} must be {allowed}, got {value!r}")
    return number


def check_window(window: Any) -> int:
    """An odd local-median window of at least 3 samples."""
    if isinstance(window, bool) or not isinstance(window, int | np.integer):
        raise InputError(f"window must be an odd integer >= 3, got {window!r}")
    if window < 3 or window % 2 == 0:
        raise InputError(f"window must be an odd integer >= 3, got {window!r}")
    return int(window)


def centred_frequency(measurement: Measurement) -> np.ndarray:
    """Fractional frequency minus ``frequency_offset``, NaN across gaps.

    Working without the (possibly large) offset keeps the digits of small
    fluctuations; add ``measurement.frequency_offset`` to get ``frequency()``.
    """
    y = np.diff(measurement.phase) / measurement.tau0
    if measurement.segments is not None:
        y[np.diff(measurement.segments) != 0] = np.nan
    return y


def local_residuals(y: np.ndarray, window: int) -> np.ndarray:
    """Residuals of ``y`` from the median of its ``window - 1`` nearest neighbours.

    The sample itself is left out of its median: when it is included the
    median leans toward it, the residuals shrink near zero and their tails
    grow heavier than the MAD-based sigma suggests, so a 5-sigma rule flags
    ordinary noise. With the sample left out the residuals of white,
    flicker and random-walk noise keep nearly Gaussian tails. Missing samples
    are skipped (the median runs over the finite neighbours, which for
    frequency data are comparable across a gap) and stay NaN; the ends are
    mirrored.
    """
    out = np.full(y.shape, np.nan)
    good = np.flatnonzero(np.isfinite(y))
    if good.size < 3:
        return out
    values = y[good]
    half = window // 2
    padded = np.pad(values, half, mode="reflect")
    cols = np.r_[0:half, half + 1 : window]
    level = np.empty_like(values)
    for start in range(0, values.size, _CHUNK):  # blocks of rows bound the memory
        stop = min(start + _CHUNK, values.size)
        rows = sliding_window_view(padded[start : stop + window - 1], window)[:, cols]
        rows = np.sort(rows, axis=1)
        level[start:stop] = 0.5 * (rows[:, half - 1] + rows[:, half])
    out[good] = values - level
    return out


def robust_spread(r: np.ndarray) -> tuple[float, float]:
    """Median and MAD-based sigma of the finite values of ``r`` (NaN when none)."""
    values = r[np.isfinite(r)]
    if values.size == 0:
        return math.nan, math.nan
    centre = float(np.median(values))
    sigma = float(np.median(np.abs(values - centre))) / MAD_TO_SIGMA
    return centre, sigma


def carry_meta(measurement: Measurement) -> dict[str, Any]:
    """Metadata to pass to a rebuilt measurement (notes copied)."""
    return {
        "nominal": measurement.nominal,
        "start": measurement.start,
        "provenance": measurement.provenance,
        "notes": list(measurement.notes),
    }


def line_of(measurement: Measurement, index: int) -> int | None:
    """Source line of source value ``index`` (None when lines are not known or 0)."""
    lines = measurement.lines
    if lines is None or not (0 <= index < lines.size):
        return None
    line = int(lines[index])
    return line if line > 0 else None
