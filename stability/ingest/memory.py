"""Refuse a log too large for memory up front, instead of being killed halfway.

The rows of a log are estimated from its size and the mean length of the
sampled data lines; reading holds a handful of arrays per row (line numbers,
readings, flags, stamps, their differences, the grid and the phase) plus, for
some paths, the file's text. When that estimate exceeds the memory the system
says is available, reading stops with an :class:`~stability.errors.InputError`.

References
----------
1. Linux kernel documentation, *The /proc Filesystem*, ``/proc/meminfo``
   (``MemAvailable``: memory available for starting new applications without swapping).
2. IEEE Std 1003.1 (POSIX), ``sysconf(_SC_AVPHYS_PAGES)`` and ``_SC_PAGE_SIZE``.
"""

from __future__ import annotations

from ..errors import InputError
from .limits import BYTES_PER_ROW, available_bytes
from .sniff import Dialect, RawSource

__all__ = ["BYTES_PER_ROW", "available_bytes", "estimated_rows", "check_memory"]


def estimated_rows(src: RawSource, d: Dialect) -> int:
    """Rows of the log, from its text size and the mean length of the sampled data lines."""
    body = [ln for ln in src.sample[d.first_data_line - 1 :] if ln.strip()] or src.sample
    per_line = max(1.0, sum(len(s.encode("utf-8", errors="replace")) + 1 for s in body) / len(body))
    size = len(src.buffer) if src.buffer is not None else src.size
    return int(size / per_line)


def check_memory(src: RawSource, d: Dialect) -> None:
    """Raise when reading the log would need more memory than is available.

    Raises
    ------
    InputError
        The estimate exceeds the available memory.
    """
    free = available_bytes()
    if free is None:
        return
    rows = estimated_rows(src, d)
    text = len(src.buffer) if src.buffer is not None else src.size
    need = rows * BYTES_PER_ROW + text
    if need <= free:
        return
    raise InputError(
        f"the log is too large for this machine's memory: about {rows:,} rows, reading needs "
        f"about {need / 2**30:.1f} GiB and {free / 2**30:.1f} GiB are available",
        path=src.path,
        hint="split the log into parts (by day, say) and read each, or use a machine with "
        "more memory",
    )
