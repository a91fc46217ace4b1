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
.. [3] K. E. Batcher, "Sorting networks and their applications", *AFIPS
   Spring Joint Computer Conference* 32 (1968) 307-314: odd-even merge sort.
.. [4] R. W. Floyd, R. L. Rivest, "Expected time bounds for selection",
   *Communications of the ACM* 18 (1975) 165-172: selection between bounds
   taken from a sample.
"""

from __future__ import annotations

import math
from functools import lru_cache
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
    "no_spread",
    "carry_meta",
    "line_of",
]

SECONDS_PER_DAY = 86400.0
#: Median absolute deviation of a unit Gaussian (NIST SP 1065 outlier rule).
MAD_TO_SIGMA = 0.6745
_CHUNK = 1 << 16
#: Widest window whose local median uses the selection network (else a partition).
_NETWORK_LIMIT = 17
_NETWORK_CHUNK = 1 << 14
#: Arrays at least this long have their medians picked between bounds from a subsample.
_SELECT_MIN = 1 << 15
_SELECT_SAMPLE = 1 << 13


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
    y = np.diff(measurement.phase)
    y /= measurement.tau0
    segments = measurement.segments
    if segments is not None:
        y[segments[1:] != segments[:-1]] = np.nan
    return y


@lru_cache(maxsize=32)
def _selection_network(size: int) -> tuple[tuple[int, int, bool, bool], ...]:
    """Compare-exchange steps that put the two middle order statistics of ``size`` values in place.

    Batcher's odd-even merge sort [3]_ for the next power of two, with the
    lines beyond ``size`` taken as +inf (their comparators are no-ops and are
    dropped), then pruned backwards to the comparators whose results reach
    lines ``size // 2 - 1`` and ``size // 2``. Each step is ``(i, j, lo, hi)``:
    line ``i`` takes ``min``, line ``j`` takes ``max``, and ``lo`` / ``hi`` say
    which of the two results is still needed.
    """
    width = 1 << max(size - 1, 1).bit_length()
    steps: list[tuple[int, int]] = []
    run = 1
    while run < width:
        gap = run
        while gap >= 1:
            for j in range(gap % run, width - gap, 2 * gap):
                for i in range(min(gap, width - j - gap)):
                    if (i + j) // (2 * run) == (i + j + gap) // (2 * run):
                        steps.append((i + j, i + j + gap))
            gap //= 2
        run *= 2
    live = {size // 2 - 1, size // 2}
    kept: list[tuple[int, int, bool, bool]] = []
    for i, j in reversed([s for s in steps if s[1] < size]):
        lo, hi = i in live, j in live
        if lo or hi:
            kept.append((i, j, lo, hi))
            live.update((i, j))
    return tuple(reversed(kept))


def _middle_pair(
    columns: list[np.ndarray], pool: list[np.ndarray]
) -> tuple[np.ndarray, np.ndarray]:
    """The two middle order statistics, element by element, of an even number of columns.

    ``columns`` are read, never written; results go to the buffers of
    ``pool`` (at least ``len(columns) + 1`` arrays of the columns' length).
    ``min``/``max`` are exact, so the values are those a sort would give.
    """
    lines = list(columns)
    owned = [False] * len(lines)
    for i, j, lo, hi in _selection_network(len(lines)):
        a, b = lines[i], lines[j]
        if lo and (hi or not owned[i]):
            low = pool.pop()
            np.minimum(a, b, out=low)
        elif lo:
            low = np.minimum(a, b, out=a)
        if hi:
            high = b if owned[j] else pool.pop()
            np.maximum(a, b, out=high)
            lines[j], owned[j] = high, True
        if lo:
            if owned[i] and low is not a:
                pool.append(a)
            lines[i], owned[i] = low, True
    half = len(lines) // 2
    return lines[half - 1], lines[half]


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

    The median of the even number of neighbours is the mean of the two middle
    ones; for windows up to :data:`_NETWORK_LIMIT` they are picked with a
    selection network of element-wise ``min``/``max`` over shifted slices
    (exact: the same numbers a sort picks), in blocks that stay in cache;
    wider windows partition each row.
    """
    finite = np.isfinite(y)
    count = int(np.count_nonzero(finite))
    if count < 3:
        return np.full(y.shape, np.nan)
    half = window // 2
    if count > half:  # mirror the ends, as np.pad(mode="reflect") does
        padded = np.empty(count + 2 * half)
        values = padded[half : half + count]
        if count == y.size:
            values[...] = y
        else:
            values[...] = y[finite]
        padded[:half] = values[half:0:-1]
        padded[half + count :] = values[-2 : -half - 2 : -1]
    else:
        padded = np.pad(y[finite], half, mode="reflect")
        values = padded[half : half + count]
    offsets = [c for c in range(window) if c != half]
    level = np.empty(count)
    if window <= _NETWORK_LIMIT:
        size = min(_NETWORK_CHUNK, count)
        bases = [np.empty(size) for _ in range(window + 1)]
        for start in range(0, count, size):  # blocks of rows stay in cache
            stop = min(start + size, count)
            columns = [padded[start + c : stop + c] for c in offsets]
            low, high = _middle_pair(columns, [b[: stop - start] for b in bases])
            np.add(low, high, out=level[start:stop])
        level *= 0.5
    else:
        for start in range(0, count, _CHUNK):  # blocks of rows bound the memory
            stop = min(start + _CHUNK, count)
            rows = sliding_window_view(padded[start : stop + window - 1], window)[:, offsets]
            rows.partition([half - 1, half], axis=1)
            level[start:stop] = 0.5 * (rows[:, half - 1] + rows[:, half])
    np.subtract(values, level, out=level)
    if count == y.size:
        return level
    out = np.full(y.shape, np.nan)
    out[finite] = level
    return out


def _order_statistics(values: np.ndarray, ranks: list[int]) -> np.ndarray:
    """The values at sorted positions ``ranks`` (close together) of a finite 1-D array.

    Exact, like a full partition, but on a long array only the values between
    two bounds are partitioned: the bounds are order statistics of an evenly
    spaced subsample placed a few standard errors either side of the wanted
    ranks [4]_. With ``below`` values under the lower bound, the value of rank
    ``r`` is the value of rank ``r - below`` among those between the bounds,
    ties included; when the bounds miss (unusual data) the whole array is
    partitioned instead.
    """
    n = values.size
    if n >= _SELECT_MIN:
        stride = n // _SELECT_SAMPLE
        sample = np.sort(values[::stride])
        m = sample.size
        margin = 6.0 * math.sqrt(m) / 2.0 + 2.0  # sample ranks: 6 binomial sigmas at p = 1/2
        low = sample[max(int(ranks[0] / n * m - margin), 0)]
        high = sample[min(int(ranks[-1] / n * m + margin), m - 1)]
        below = int(np.count_nonzero(values < low))
        between = (values >= low) & (values <= high)
        count = int(np.count_nonzero(between))
        if below <= ranks[0] and ranks[-1] < below + count:
            inner = values[between]
            wanted = [r - below for r in ranks]
            inner.partition(wanted)
            return inner[wanted]
    part = np.partition(values, ranks)
    return part[ranks]


def _median(values: np.ndarray) -> float:
    """Median of a finite 1-D array, the same number ``np.median`` gives."""
    n = values.size
    if n % 2:
        return float(_order_statistics(values, [n // 2])[0])
    pair = _order_statistics(values, [n // 2 - 1, n // 2])
    return float((pair[0] + pair[1]) / 2.0)


def robust_spread(r: np.ndarray) -> tuple[float, float]:
    """Median and MAD-based sigma of the finite values of ``r`` (NaN when none)."""
    finite = np.isfinite(r)
    values = r if finite.all() else r[finite]
    if values.size == 0:
        return math.nan, math.nan
    centre = _median(values)
    deviation = np.subtract(values, centre)
    sigma = _median(np.abs(deviation, out=deviation)) / MAD_TO_SIGMA
    return centre, sigma


def no_spread(sigma: float, magnitude: float) -> bool:
    """True when a robust sigma is zero or only rounding noise of values of this magnitude.

    Quantised readings (a counter's last digit) have no spread at all, but the
    arithmetic of removing an offset and a drift model leaves residues of about
    eps times the readings; a sigma below 32 eps x magnitude is taken as zero,
    so screening is skipped instead of acting on rounding noise.
    """
    if not (sigma > 0):
        return True
    return sigma <= 32.0 * np.finfo(float).eps * magnitude


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
