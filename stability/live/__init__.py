"""Live work on a running measurement: follow a growing log, and log a counter over SCPI.

:class:`~stability.live.growing.GrowingLog` reads the lines a logger appends as
:func:`stability.read_log` would read the whole file;
:class:`~stability.live.tail.LogTail` finds those lines (and a rotated log);
:class:`~stability.live.watch.Watcher` re-analyses and writes the outputs as the
log grows; :mod:`stability.live.capture` logs a counter over a raw SCPI socket
or VISA.
"""
