"""Phase steps: find them and report them; the data are not changed.

A phase step is a jump of the phase that stays: one first difference
``d_k = x[k+1] - x[k]`` far outside the robust spread of its neighbours, with
no opposite jump right after it. In frequency terms it is a single frequency
outlier in isolation [1]_; a phase *glitch* (one bad reading) instead makes
two adjacent, opposite outliers and is not a step.

Each first difference is compared with the median of its nearest neighbours
(itself left out, as in the outlier screening), the robust sigma is the median absolute
deviation of those residuals divided by 0.6745 [1]_, and a step is a residual
beyond ``threshold`` sigmas whose flagged neighbours (if any) have the same
sign. The size reported is the jump less the local median first difference,
in seconds.

References
----------
.. [1] W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST Special
   Publication 1065 (2008), data preprocessing: phase and frequency steps,
   outliers and the median absolute deviation.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from ..measurement import Measurement
from ._common import (
    beyond,
    check_measurement,
    check_threshold,
    check_window,
    frequency_blocks,
    line_of,
    local_residuals,
    max_abs,
    no_spread,
    robust_spread,
)

__all__ = ["PhaseStep", "detect_phase_steps"]


@dataclass(frozen=True)
class PhaseStep:
    """One phase step.

    Attributes
    ----------
    index
        Phase sample just after the step.
    line
        Source line of that sample (phase data) or of the frequency sample
        that carries the step (frequency data), when known.
    size
        The step in seconds (jump less the local median first difference).
    sigmas
        Its size in robust sigmas of the first differences.
    """

    index: int
    line: int | None
    size: float
    sigmas: float

    def to_dict(self) -> dict[str, Any]:
        return {
            "index": int(self.index),
            "line": self.line,
            "size_s": float(self.size),
            "sigmas": float(self.sigmas),
        }


def _validate_step_args(
    measurement: Any, threshold: Any, window: Any
) -> tuple[Measurement, float, int]:
    m = check_measurement(measurement, "detect_phase_steps")
    k = check_threshold(threshold, "threshold", allow_off=False)
    assert k is not None
    return m, k, check_window(window)


def detect_phase_steps(
    measurement: Measurement, *, threshold: float = 10.0, window: int = 7
) -> list[PhaseStep]:
    """Report the phase steps of a measurement (which is not changed).

    Parameters
    ----------
    measurement
        The data.
    threshold
        Robust sigmas of the phase first differences beyond which a jump is a
        step (default 10: much larger than the noise).
    window
        Local-median window in samples, the sample itself included (odd, >= 3).

    Returns
    -------
    list of PhaseStep
        In time order; empty when there is none.
    """
    m, k, window = _validate_step_args(measurement, threshold, window)
    return _find_phase_steps(m, k, window)


def _find_phase_steps(m: Measurement, k: float, window: int) -> list[PhaseStep]:
    """The work of :func:`detect_phase_steps`."""
    # The first differences in s (offset removed), made from the phase block by block
    # as (x[i+1] - x[i]) / tau0 * tau0, the numbers of centred_frequency(m) * tau0; the
    # residuals then take their buffer: one array in all (27 -> 10 B per sample, 10^7).
    d = np.empty(m.n - 1)
    largest = 0.0
    for start, stop, values in frequency_blocks(m):
        largest = max(largest, max_abs(values))
        np.multiply(values, m.tau0, out=d[start:stop])
    resid = local_residuals(d, window, out=d)
    del d
    centre, sigma = robust_spread(resid)
    size = (abs(m.frequency_offset) + largest) * m.tau0
    if no_spread(sigma, size):
        return []
    dev = np.subtract(resid, centre, out=resid)  # NaN where a sample is missing
    del resid
    flagged = beyond(dev, k * sigma)
    idx = np.flatnonzero(flagged)
    if idx.size == 0:
        return []
    # A flagged neighbour of opposite sign makes a glitch, not a step.
    sign = np.sign(dev[idx])
    before = np.zeros(idx.size, dtype=bool)
    after = np.zeros(idx.size, dtype=bool)
    inner = idx > 0
    before[inner] = flagged[idx[inner] - 1] & (np.sign(dev[idx[inner] - 1]) == -sign[inner])
    inner = idx < dev.size - 1
    after[inner] = flagged[idx[inner] + 1] & (np.sign(dev[idx[inner] + 1]) == -sign[inner])
    out = []
    for i in idx[~before & ~after]:
        index = int(i) + 1
        line = line_of(m, index if m.kind == "phase" else int(i))
        out.append(PhaseStep(index, line, float(dev[i]), abs(float(dev[i])) / sigma))
    return out
