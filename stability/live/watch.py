"""Follow a log as a logger writes it, re-analyse it as it grows, and write the outputs.

:class:`Watcher` looks at the log every ``poll`` seconds (:class:`LogTail`),
hands the complete new lines to a :class:`GrowingLog`, and re-analyses every
``every`` seconds while new lines arrive, or sooner when enough new lines
arrived (``rows``; by default when the record has doubled since the last
analysis, which is when the next octave of tau becomes available). Each analysis
writes the outputs of ``stability analyze`` through
:func:`stability.workflow.analyze_into`: all or nothing, so a viewer that
refreshes the figure always sees a whole one. The outputs equal those of a
one-shot analysis of the same bytes (the complete lines read so far).

Clock and sleep are injectable, so the loop can be driven in tests without
waiting; :meth:`Watcher.status` is what a panel shows.
"""

from __future__ import annotations

import os
import time
from collections.abc import Callable
from dataclasses import dataclass, field
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

from ..deviations.registry import get_statistic
from ..errors import InputError, StabilityError
from ..ingest.readers import validate_read_args
from ..run import AnalysisRun
from ..settings import RunSettings
from ..taus import tau_grid
from ..workflow import analyze_into, check_plot_format
from .growing import GrowingLog
from .tail import LogTail

__all__ = ["Watcher", "WatchStatus", "NextTau", "next_tau"]


@dataclass(frozen=True)
class NextTau:
    """When the next tau of the grid has enough terms for the first statistic."""

    statistic: str
    tau: float
    samples_needed: int
    seconds: float


@dataclass(frozen=True)
class WatchStatus:
    """What the watcher knows after a look at the log (what a live panel shows).

    Attributes
    ----------
    path
        The log followed.
    lines
        Complete lines read from the current file.
    run
        The latest analysis, or None before the first one.
    analyses
        Analyses written so far.
    waiting
        Why there is no analysis of the latest lines (a log still too short, a
        reading error), "" otherwise.
    silent_for
        Seconds since the last new line arrived (None before any).
    stalled
        No new line for longer than the stall limit.
    next
        When the next tau will have enough terms, or None.
    notes
        What happened to the log (rotation, truncation), oldest first.
    missing
        The log does not exist at the moment.
    """

    path: str
    lines: int
    run: AnalysisRun | None
    analyses: int
    waiting: str
    silent_for: float | None
    stalled: bool
    next: NextTau | None
    notes: tuple[str, ...]
    missing: bool
    folder: str
    updated: datetime


def next_tau(run: AnalysisRun) -> NextTau | None:
    """The next tau of the run's grid for its first statistic, and the data it needs."""
    if not run.table.results:
        return None
    name = next(iter(run.table.results))
    stat = get_statistic(name)
    m = run.measurement
    n, tau0 = int(m.n), float(m.tau0)
    grid = run.table.settings.get("taus", "octave")
    grid = grid if isinstance(grid, str) else [float(t) for t in grid]
    now = tau_grid(grid, stat.allowed_m(n), tau0, step=stat.m_step)
    biggest = int(now.max()) if now.size else 0
    # the grid as it would be for a very long record, beyond the taus there now
    later = tau_grid(grid, max(biggest * 1024, 1 << 20), tau0, step=stat.m_step)
    later = later[later > biggest]
    if not later.size:
        return None
    want = int(later[0])
    lo, hi = n, max(n + 1, 2 * n)
    while stat.allowed_m(hi) < want:
        hi *= 2
        if hi > 1 << 50:
            return None
    while lo < hi:  # smallest record length that allows the wanted averaging factor
        mid = (lo + hi) // 2
        if stat.allowed_m(mid) >= want:
            hi = mid
        else:
            lo = mid + 1
    tau = want * tau0 * stat.tau_factor
    return NextTau(name, tau, lo - n, (lo - n) * tau0)


@dataclass
class Watcher:
    """Follow ``log``, re-analyse it as it grows and write the outputs into ``folder``.

    Parameters
    ----------
    log, folder
        The log followed and the output folder.
    settings
        Reading, preparation and analysis settings (as ``stability analyze``).
    every
        Seconds between analyses while new lines arrive.
    rows
        Re-analyse as soon as this many new lines arrived (None: when the lines
        have doubled since the last analysis).
    stall
        Seconds of silence after which the logger counts as stalled.
    clock, sleep
        Monotonic clock and sleep (injectable for tests).
    """

    log: str | os.PathLike[str]
    folder: str | os.PathLike[str]
    settings: RunSettings = field(default_factory=RunSettings)
    every: float = 300.0
    rows: int | None = None
    stall: float = 60.0
    plot_format: str = "png"
    title: str | None = None
    noise_labels: Any = None
    clock: Callable[[], float] = time.monotonic
    sleep: Callable[[float], None] = time.sleep
    now: Callable[[], datetime] = field(default=lambda: datetime.now(UTC))

    def __post_init__(self) -> None:
        self.log = os.fspath(self.log)
        self.folder = os.fspath(self.folder)
        self.plot_format = check_plot_format(self.plot_format)
        for name in ("every", "stall"):
            value = getattr(self, name)
            if not (isinstance(value, (int, float)) and 0 < value < float("inf")):
                raise InputError(f"{name} must be a positive number of seconds, got {value!r}")
        if self.rows is not None and (isinstance(self.rows, bool) or int(self.rows) < 1):
            raise InputError(f"rows must be a positive number of lines, got {self.rows!r}")
        if Path(self.folder).resolve() == Path(self.log).resolve():
            raise InputError("the output folder is the log itself", path=str(self.log))
        self._hints = validate_read_args(**self.settings.read.as_kwargs())
        self._tail = LogTail(self.log)
        self._growing = GrowingLog(self.log, self._hints)
        self._run: AnalysisRun | None = None
        self._analyses = 0
        self._lines_at_analysis = 0
        self._last_analysis: float | None = None
        self._last_arrival: float | None = None
        self._tried_at_lines = -1
        self._waiting = ""
        self._notes: list[str] = []
        self._missing = False
        self.written: dict[str, Path] = {}

    # ------------------------------------------------------------------ looking
    def look(self) -> bool:
        """Read the lines appended since the last look; True when there were any."""
        update = self._tail.poll()
        while update.more and not update.restarted:  # a backlog: read it all before analysing
            more = self._tail.poll()
            if more.restarted:
                update = more
                break
            update.lines += more.lines
            update.more = more.more
        self._missing = update.missing
        if update.restarted:
            self._notes.append(
                f"{self.now():%Y-%m-%d %H:%M:%S} UTC: {update.restarted}; "
                f"started over from its first line"
            )
            self._growing = GrowingLog(self.log, self._hints)
            self._lines_at_analysis = 0
            self._tried_at_lines = -1
        if update.lines:
            self._growing.extend(update.lines)
            self._last_arrival = self.clock()
            return True
        return False

    def due(self) -> bool:
        """Whether the lines read call for a new analysis now."""
        lines = self._growing.lines
        if lines == self._tried_at_lines or lines == 0:
            return False
        if self._run is None or self._last_analysis is None:
            return True  # no analysis yet: try as soon as lines arrive
        new = lines - self._lines_at_analysis
        enough = self.rows if self.rows is not None else max(1, self._lines_at_analysis)
        return new >= enough or self.clock() - self._last_analysis >= self.every

    def analyse(self) -> bool:
        """Analyse the lines read so far and write the outputs; False when not possible yet."""
        lines = self._growing.lines
        self._tried_at_lines = lines
        try:
            measurement, _ = self._growing.measurement()
            run, files = analyze_into(
                measurement,
                self.folder,
                self.settings,
                plot_format=self.plot_format,
                title=self.title,
                noise_labels=self.noise_labels,
            )
        except StabilityError as exc:
            self._waiting = exc.one_line()
            return False
        self._run, self.written = run, files
        self._analyses += 1
        self._lines_at_analysis = lines
        self._last_analysis = self.clock()
        self._waiting = ""
        return True

    def step(self) -> WatchStatus:
        """One look, and an analysis when one is due."""
        self.look()
        if self.due():
            self.analyse()
        return self.status()

    def finish(self) -> WatchStatus:
        """The last look and, when lines arrived since the last analysis, a final analysis."""
        self.look()
        if self._growing.lines and self._growing.lines != self._tried_at_lines:
            self.analyse()
        return self.status()

    def run(
        self,
        poll: float = 1.0,
        on_status: Callable[[WatchStatus], None] | None = None,
        until: Callable[[WatchStatus], bool] | None = None,
    ) -> WatchStatus:
        """Look every ``poll`` seconds until ``until`` says stop or the user interrupts.

        An interrupt (Ctrl-C) ends the loop with :meth:`finish`: the final
        analysis is written and the last status returned.
        """
        try:
            while True:
                status = self.step()
                if on_status is not None:
                    on_status(status)
                if until is not None and until(status):
                    break
                self.sleep(poll)
        except KeyboardInterrupt:
            pass
        status = self.finish()
        if on_status is not None:
            on_status(status)
        return status

    # ------------------------------------------------------------------ status
    def status(self) -> WatchStatus:
        silent = None if self._last_arrival is None else self.clock() - self._last_arrival
        lines = self._growing.lines
        if self._missing:
            waiting = "the log does not exist (yet)"
        elif lines == 0:
            waiting = "no complete line yet"
        else:  # the reason the latest lines could not be analysed, if they could not
            waiting = self._waiting if self._tried_at_lines == lines else ""
        return WatchStatus(
            path=str(self.log),
            lines=self._growing.lines,
            run=self._run,
            analyses=self._analyses,
            waiting=waiting,
            silent_for=silent,
            stalled=silent is not None and silent > self.stall,
            next=None if self._run is None else next_tau(self._run),
            notes=tuple(self._notes),
            missing=self._missing,
            folder=str(self.folder),
            updated=self.now(),
        )

    @property
    def growing(self) -> GrowingLog:
        """The complete lines read from the current file."""
        return self._growing
