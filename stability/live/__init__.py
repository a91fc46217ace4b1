"""Live work on a running measurement: follow a growing log, and log a counter over SCPI.

:class:`~stability.live.growing.GrowingLog` reads the lines a logger appends as
:func:`stability.read_log` would read the whole file;
:class:`~stability.live.tail.LogTail` finds those lines (and a rotated log);
:class:`~stability.live.watch.Watcher` re-analyses and writes the outputs as the
log grows; :mod:`stability.live.capture` logs a counter over a raw SCPI socket
or VISA.
"""

from .capture import Capture, CaptureResult
from .growing import GrowingLog
from .scpi import CaptureSettings, LinkLost, SocketLink, VisaLink, load_capture_settings
from .tail import LogTail, TailUpdate
from .watch import NextTau, Watcher, WatchStatus, next_tau

__all__ = [
    "Capture",
    "CaptureResult",
    "CaptureSettings",
    "GrowingLog",
    "LinkLost",
    "LogTail",
    "NextTau",
    "SocketLink",
    "TailUpdate",
    "VisaLink",
    "WatchStatus",
    "Watcher",
    "load_capture_settings",
    "next_tau",
]
