"""``stability watch LOG``: follow a log another program is writing, and keep its analysis fresh.

The library's :class:`stability.live.watch.Watcher` reads the appended lines,
re-analyses every ``--every`` (or after ``--rows`` new lines) and writes the
outputs of ``stability analyze`` atomically each time. On a terminal a live
panel (:mod:`.watch_panel`) shows the latest state; otherwise one plain line per
event. Ctrl-C (or ``--duration``) ends the watch with a final analysis, exit 0.
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

from rich.console import Console
from rich.live import Live

from stability.live.watch import Watcher, WatchStatus
from stability.summary import summary_json
from stability.units import parse_duration

from .command_options import WATCHING
from .common import echo
from .options import (
    ANALYSING,
    PREPARING,
    READING,
    STABILITY_PLOT,
    WRITING,
    LogArg,
    RunOptions,
    command,
)
from .watch_panel import PlainReport, panel

__all__ = ["watch"]


@command(READING, PREPARING, ANALYSING, WRITING, STABILITY_PLOT, WATCHING)
def watch(log: LogArg, *, opts: RunOptions) -> None:
    """Follow a log as it grows: re-analyse it and rewrite the outputs as lines arrive.

    Reads only the lines appended since the last look (a rotated or truncated
    log is read again from its start), writes the outputs of analyze into the
    output folder all or nothing each time, and shows a live panel on a
    terminal. Ctrl-C writes a final analysis and ends with exit 0.

    Example: stability watch counter.csv --nominal 10MHz --every 5min --stall 1min
    """
    given = opts.given
    folder = opts.folder(Path.cwd() / f"{log.name}-stability")
    watcher = Watcher(
        log,
        folder,
        opts.settings,
        every=parse_duration(given["every"], "--every"),
        rows=given.get("rows"),
        stall=parse_duration(given["stall"], "--stall"),
        plot_format=opts.plot_format,
        title=opts.title,
        noise_labels=opts.noise_labels,
    )
    poll = parse_duration(given["poll"], "--poll")
    limit = given.get("stop_after")
    end = None if limit is None else time.monotonic() + parse_duration(limit, "--duration")

    def until(_status: WatchStatus) -> bool:
        return end is not None and time.monotonic() >= end

    if not opts.json and sys.stdout.isatty():
        console = Console()
        with Live(console=console, auto_refresh=False, transient=False) as live:

            def show(status: WatchStatus) -> None:
                live.update(panel(status), refresh=True)

            status = watcher.run(poll=poll, on_status=show, until=until)
    else:
        report = PlainReport()

        def say(status: WatchStatus) -> None:
            if not opts.json:
                for line in report.lines(status):
                    echo(line)

        status = watcher.run(poll=poll, on_status=say, until=until)
    if opts.json:
        if status.run is not None:
            echo(summary_json(status.run.summary()), nl=False)
        return
    if status.run is None:
        echo(f"no analysis written: {status.waiting or 'no complete line was read'}")
    else:
        done = "1 analysis" if status.analyses == 1 else f"{status.analyses} analyses"
        echo(f"wrote {done} into {folder}; the last covers {status.lines} lines")
