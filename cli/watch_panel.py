"""What ``stability watch`` shows: a live rich panel on a terminal, plain lines otherwise.

:func:`panel` draws one :class:`stability.live.watch.WatchStatus`: readings,
span, the latest deviations at the key taus (the decades) with their intervals
and noise types, gaps and outliers since the start, the time since the last
line (red once the logger has been silent longer than ``--stall``), and when the
next tau will have enough terms. :class:`PlainReport` says the same in a few
plain lines, one per event (an analysis, a rotation, a stall), for a log file or
a pipe.
"""

from __future__ import annotations

import math
from datetime import timedelta

import numpy as np
from rich.console import Group
from rich.panel import Panel
from rich.table import Table
from rich.text import Text

from stability.live.watch import WatchStatus
from stability.reports.tables import format_tau, format_value, statistic_unit
from stability.run import AnalysisRun
from stability.units import format_duration

from .common import printable

__all__ = ["panel", "key_rows", "PlainReport"]

#: Key taus shown per statistic: the decades, at most this many.
KEY_TAUS = 6


def key_rows(run: AnalysisRun) -> list[tuple[str, float, float, float, float, str, int]]:
    """(statistic, tau, deviation, low, high, noise, terms) at the decade taus of each statistic.

    The row nearest each power of ten (on a log scale) within the statistic's
    taus, largest taus last; a grid without decades shows its rows thinned.
    """
    out = []
    for name, res in run.table.results.items():
        taus = np.asarray(res.tau, dtype=float)
        if not taus.size:
            continue
        logs = np.log10(taus)
        picks: list[int] = []
        for decade in range(math.floor(logs.min()), math.ceil(logs.max()) + 1):
            i = int(np.argmin(np.abs(logs - decade)))
            if abs(logs[i] - decade) < 0.35 and i not in picks:
                picks.append(i)
        if not picks:
            picks = sorted({0, taus.size // 2, taus.size - 1})
        for i in picks[-KEY_TAUS:]:
            out.append(
                (
                    name,
                    float(taus[i]),
                    float(res.deviation[i]),
                    float(res.ci_low[i]),
                    float(res.ci_high[i]),
                    res.noise[i],
                    int(res.n_terms[i]),
                )
            )
    return out


def _counts(run: AnalysisRun) -> tuple[int, int, int]:
    """(readings, gaps, outliers) of a run, counted as the summary block counts them."""
    source, prep = run.source, run.preparation
    readings = source.n - 1 if source.kind == "frequency" else source.n
    return readings, int(prep.gaps_before), int(prep.outliers.count)


def _since(seconds: float | None) -> str:
    return "no line yet" if seconds is None else f"{format_duration(seconds)} ago"


def panel(status: WatchStatus) -> Panel:
    """The live panel of one status."""
    head = Table.grid(padding=(0, 2))
    head.add_column(style="bold")
    head.add_column()
    run = status.run
    if run is not None:
        readings, gaps, outliers = _counts(run)
        head.add_row("readings", f"{readings} (tau0 {format_tau(run.source.tau0)})")
        head.add_row("span", format_duration(run.source.span))
        head.add_row("gaps", f"{gaps} missing readings since the start")
        head.add_row("outliers", f"{outliers} taken out since the start")
    else:
        head.add_row("lines", str(status.lines))
    silence = Text(_since(status.silent_for))
    if status.stalled:
        silence = Text(f"{_since(status.silent_for)}: the logger has stalled", style="bold red")
    head.add_row("last line", silence)
    if status.next is not None:
        nxt = status.next
        when = (status.updated + timedelta(seconds=nxt.seconds)).strftime("%Y-%m-%d %H:%M UTC")
        head.add_row(
            "next tau",
            f"{nxt.statistic} at {format_tau(nxt.tau)} in {format_duration(nxt.seconds)} "
            f"({nxt.samples_needed} more samples, about {when})",
        )
    if status.waiting:
        head.add_row("waiting", Text(printable(status.waiting), style="yellow"))
    parts: list = [head]
    if run is not None:
        table = Table(title=f"latest analysis ({run.analysis_time:%H:%M:%S} UTC)", expand=False)
        for col, justify in (
            ("statistic", "left"),
            ("tau", "right"),
            ("deviation", "right"),
            (f"{run.table.confidence:.1%} interval", "right"),
            ("noise", "left"),
            ("terms", "right"),
        ):
            table.add_column(col, justify=justify)
        for name, tau, dev, lo, hi, noise, terms in key_rows(run):
            unit = statistic_unit(name)
            interval = f"{format_value(lo, unit)} .. {format_value(hi, unit)}"
            table.add_row(
                name,
                format_tau(tau),
                format_value(dev, unit),
                interval if lo == lo else "",
                noise,
                str(terms),
            )
        parts.append(table)
    for note in status.notes[-3:]:
        parts.append(Text(printable(note), style="cyan"))
    title = f"watching {printable(status.path)}"
    done = "1 analysis" if status.analyses == 1 else f"{status.analyses} analyses"
    subtitle = f"{done} written into {printable(status.folder)}"
    return Panel(Group(*parts), title=title, subtitle=subtitle, expand=False)


class PlainReport:
    """Plain lines for a log file or a pipe: one per analysis, rotation, stall or wait."""

    def __init__(self) -> None:
        self._analyses = 0
        self._notes = 0
        self._stalled = False
        self._waiting = ""

    def lines(self, status: WatchStatus) -> list[str]:
        """The lines this status adds to what was said before."""
        out: list[str] = []
        stamp = f"{status.updated:%H:%M:%S}"
        for note in status.notes[self._notes :]:
            out.append(f"{stamp} {printable(note)}")
        self._notes = len(status.notes)
        if status.analyses > self._analyses and status.run is not None:
            self._analyses = status.analyses
            run = status.run
            readings, gaps, outliers = _counts(run)
            shown = "; ".join(
                f"{name} {format_tau(tau)} {format_value(dev, statistic_unit(name))}"
                + (f" {noise}" if noise else "")
                for name, tau, dev, _lo, _hi, noise, _n in key_rows(run)
                if name == next(iter(run.table.results))
            )
            out.append(
                f"{stamp} analysis {status.analyses}: {readings} readings over "
                f"{format_duration(run.source.span)}, {gaps} gaps, {outliers} outliers; {shown}"
            )
        if status.stalled and not self._stalled:
            out.append(f"{stamp} no new line for {format_duration(status.silent_for or 0)}")
        elif self._stalled and not status.stalled:
            out.append(f"{stamp} new lines again")
        self._stalled = status.stalled
        if status.waiting and status.waiting != self._waiting:
            out.append(f"{stamp} waiting: {printable(status.waiting)}")
        self._waiting = status.waiting
        return out
