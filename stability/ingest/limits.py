"""The bounds within which a log is read without being asked: memory, expansion, timing.

A log from the bench is a regular file of modest size whose samples lie
nanoseconds to a day apart over at most a few years. Anything far outside that
is almost always a mistake (a wrong unit, a typing slip in a date, a
decompression bomb, a device file given by accident), and reading it as given
would either exhaust the machine or give a result that looks valid and is not.
Such input is refused with one line saying which option accepts it.

* Memory: what the system says is available (``MemAvailable``), the budget for
  the decompressed text and the arrays of reading.
* Expansion: an archive may expand to at most :data:`DEFAULT_MAX_EXPANSION`
  times its stored size (``max_expansion`` raises it), and never beyond the
  memory budget. Common practice for logs: gzip compresses CSV text by 3 to 20
  times; a ratio far beyond 100 is the mark of a decompression bomb.
* Timing: a sample interval below :data:`TAU0_MIN` or above :data:`TAU0_MAX`,
  or a record longer than :data:`SPAN_MAX`, is refused unless the reader is
  told ``allow_unusual=True`` (``--unusual-timing``).

References
----------
1. Linux kernel documentation, *The /proc Filesystem*, ``/proc/meminfo``
   (``MemAvailable``: memory available for starting new applications without swapping).
2. IEEE Std 1003.1 (POSIX), ``sysconf(_SC_AVPHYS_PAGES)`` and ``_SC_PAGE_SIZE``.
3. D. Fifield, "A better zip bomb", WOOT 2019 (deflate expands at most about 1032:1
   per stream; nesting and overlap give far more).
"""

from __future__ import annotations

import math
import os

__all__ = [
    "BYTES_PER_ROW",
    "DEFAULT_MAX_EXPANSION",
    "MIN_EXPANDED_BYTES",
    "TAU0_MIN",
    "TAU0_MAX",
    "SPAN_MAX",
    "UNUSUAL_OPTION",
    "available_bytes",
    "expansion_limit",
    "usual_interval",
]

#: Bytes per row (or grid sample) that reading and then analysing a log hold at their
#: peak, beyond the fixed cost of the program. Measured: reading with the pyarrow engine
#: peaks at about 33 B a row (stamps, readings, int32 line numbers and the grid's
#: steps), a whole ``stability analyze`` at 29 to 33 B a row above its fixed cost at
#: 10^8 and 10^7 rows (tests/benchmarks/bench_memory.py); 40 leaves a margin. The
#: text of a log read whole into memory (the pandas engine) is counted on top.
BYTES_PER_ROW = 40
#: An archive may expand to this many times its stored size (``max_expansion``).
DEFAULT_MAX_EXPANSION = 100.0
#: A small archive may always expand to this many bytes, whatever the ratio.
MIN_EXPANDED_BYTES = 16 * 1024 * 1024
#: The shortest and longest sample interval read without ``allow_unusual``, seconds.
TAU0_MIN = 1e-9
TAU0_MAX = 86400.0
#: The longest record read without ``allow_unusual``: a century of 365.25 days, seconds.
SPAN_MAX = 100 * 365.25 * 86400.0
#: The command-line option that sets ``allow_unusual``.
UNUSUAL_OPTION = "--unusual-timing"


def available_bytes() -> int | None:
    """Memory available to a new process, bytes (``MemAvailable``), or None if unknown."""
    try:
        with open("/proc/meminfo") as fh:
            for line in fh:
                if line.startswith("MemAvailable:"):
                    return int(line.split()[1]) * 1024
    except (OSError, ValueError, IndexError):
        pass
    try:
        return int(os.sysconf("SC_AVPHYS_PAGES")) * int(os.sysconf("SC_PAGE_SIZE"))
    except (ValueError, OSError, AttributeError):
        return None


def expansion_limit(stored: int, max_expansion: float | None) -> tuple[int, str]:
    """The most bytes an archive of ``stored`` bytes may expand to, and what sets it.

    The limit is ``max_expansion`` (default :data:`DEFAULT_MAX_EXPANSION`) times
    the stored size, at least :data:`MIN_EXPANDED_BYTES`, and at most a third
    of the available memory (the text is held while it is decoded and parsed).
    Returns the limit and ``"ratio"`` or ``"memory"``.
    """
    ratio = DEFAULT_MAX_EXPANSION if max_expansion is None else float(max_expansion)
    by_ratio = max(float(MIN_EXPANDED_BYTES), ratio * max(stored, 1))
    free = available_bytes()
    by_memory = math.inf if free is None else free / 3.0
    if by_memory < by_ratio:
        return int(by_memory), "memory"
    return int(min(by_ratio, 2**62)), "ratio"


def usual_interval(seconds: float) -> bool:
    """Whether a sample interval lies within :data:`TAU0_MIN` .. :data:`TAU0_MAX`."""
    return TAU0_MIN <= seconds <= TAU0_MAX
