"""Averaging adjacent samples for a longer sample interval.

Averaging ``factor`` adjacent fractional-frequency samples gives the frequency
over ``factor * tau0``; for phase data that is simply every ``factor``-th phase
sample, since ``(x[(j+1)f] - x[jf]) / (f tau0)`` is the mean of the ``f``
frequencies in between [1]_.

Gaps. Frequency data: a block holding a missing frequency sample becomes a
gap. Phase data: a block whose end samples are missing, or which spans a
segment break, becomes a gap; a missing phase sample strictly inside a block
does not matter, because the block's mean frequency depends only on its two
end samples. A trailing part block of frequency data is dropped.

References
----------
.. [1] W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST Special
   Publication 1065 (2008): conversion between phase and frequency, and
   averaging (decimation) of phase and frequency data.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from ..errors import InputError
from ..measurement import Measurement
from ._common import carry_meta, centred_frequency, check_measurement

__all__ = ["average", "largest_average_factor"]


def largest_average_factor(measurement: Measurement) -> int:
    """Largest factor that leaves at least two averaged frequency samples."""
    return max(1, (measurement.n - 1) // 2)


def _validate_average_args(measurement: Any, factor: Any) -> tuple[Measurement, int]:
    m = check_measurement(measurement, "average")
    limit = largest_average_factor(m)
    allowed = f"an integer from 1 to {limit} (half the {m.n - 1} frequency samples)"
    if isinstance(factor, bool) or not isinstance(factor, int | np.integer):
        raise InputError(f"average factor must be {allowed}, got {factor!r}")
    if not (1 <= factor <= limit):
        raise InputError(
            f"average factor must be {allowed}, got {factor!r}",
            hint="a larger factor leaves too few samples for any statistic",
        )
    return m, int(factor)


def average(measurement: Measurement, factor: int) -> Measurement:
    """Average ``factor`` adjacent samples: tau0 becomes ``factor * tau0``.

    Parameters
    ----------
    measurement
        The data.
    factor
        Samples per block (1 returns an unchanged copy).

    Returns
    -------
    Measurement
        The averaged data, with the source line of the first sample of each
        block and a note.
    """
    m, factor = _validate_average_args(measurement, factor)
    if factor == 1:
        return m.replace()
    tau0 = m.tau0 * factor
    if m.kind == "phase":
        new = m.replace(
            phase=m.phase[::factor],
            tau0=tau0,
            segments=None if m.segments is None else m.segments[::factor],
            lines=None if m.lines is None else m.lines[::factor],
        )
    else:
        y = centred_frequency(m)
        blocks = y.size // factor
        # NaN propagates through the mean: a block touching a gap is a gap.
        means = y[: blocks * factor].reshape(blocks, factor).mean(axis=1) + m.frequency_offset
        lines = None
        if m.lines is not None and m.lines.size >= blocks * factor:
            lines = m.lines[: blocks * factor : factor]
        new = Measurement.from_frequency(means, tau0, lines=lines, **carry_meta(m))
    new.notes.append(
        f"Averaged {factor} adjacent samples: tau0 {m.tau0:g} s became {tau0:g} s "
        f"({new.n} phase samples from {m.n})."
    )
    return new
