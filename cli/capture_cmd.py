"""``stability capture LOG``: log a counter over SCPI (raw socket or VISA) for analyze to read.

The instrument, its setup commands and the reading query come from options or
from the ``[instrument]`` table of a small TOML file (``--config``; options win);
:class:`stability.live.capture.Capture` does the work. The log is never
overwritten (``--append`` resumes one); Ctrl-C, ``--count`` or ``--duration``
end the capture cleanly with exit 0.
"""

from __future__ import annotations

from pathlib import Path
from typing import Annotated

import typer

from stability.live.capture import Capture
from stability.live.scpi import load_capture_settings
from stability.units import format_duration, parse_duration

from .command_options import STOP_AFTER
from .common import command_line_checks, echo
from .option_checks import duration_check
from .options import RunOptions, checked, command

__all__ = ["capture"]

OutLogArg = Annotated[
    Path,
    typer.Argument(
        help="The log file to write (refused when it exists, unless --append).",
        metavar="LOG",
        show_default=False,
    ),
]
ConfigOpt = Annotated[
    Path | None,
    typer.Option(
        "--config",
        help="TOML file with an [instrument] table: address, port (or visa), setup, query, "
        "interval, timeout, retry_max.",
        metavar="FILE",
    ),
]
AddressOpt = Annotated[
    str | None,
    typer.Option("--address", help="The instrument's host name or IP address.", metavar="HOST"),
]
PortOpt = Annotated[
    int | None,
    typer.Option("--port", help="The instrument's raw SCPI port (often 5025).", metavar="N"),
]
VisaOpt = Annotated[
    str | None,
    typer.Option(
        "--visa",
        help="A VISA resource name instead of --address and --port "
        "(needs the instruments extra: pyvisa, pyvisa-py).",
        metavar="RESOURCE",
    ),
]
SetupOpt = Annotated[
    list[str] | None,
    typer.Option(
        "--setup",
        help="A setup command sent after each connection (repeat for several, in order).",
        metavar="CMD",
    ),
]
QueryOpt = Annotated[
    str | None,
    typer.Option("--query", help="The query that returns one reading, e.g. READ?.", metavar="CMD"),
]
IntervalOpt = Annotated[
    str | None,
    typer.Option(
        "--interval",
        help="Time between readings (default 1s).",
        metavar="DURATION",
        callback=checked(duration_check("--interval")),
    ),
]
TimeoutOpt = Annotated[
    str | None,
    typer.Option(
        "--timeout",
        help="Time allowed for a connection, a command or an answer (default 5s).",
        metavar="DURATION",
        callback=checked(duration_check("--timeout")),
    ),
]
CountOpt = Annotated[
    int | None,
    typer.Option("--count", help="Stop after this many readings.", metavar="N", min=1),
]
AppendOpt = Annotated[
    bool,
    typer.Option("--append", help="Resume an existing capture log (lines are only added)."),
]


@command(STOP_AFTER, subject="log")
def capture(
    log: OutLogArg,
    config: ConfigOpt = None,
    address: AddressOpt = None,
    port: PortOpt = None,
    visa: VisaOpt = None,
    setup: SetupOpt = None,
    query: QueryOpt = None,
    interval: IntervalOpt = None,
    timeout: TimeoutOpt = None,
    count: CountOpt = None,
    append: AppendOpt = False,
    *,
    opts: RunOptions,
) -> None:
    """Log a counter's readings over SCPI into a file that analyze and watch read.

    Each reading is one line: a UTC time stamp and the answer. The preamble
    holds the instrument's *IDN? answer, the setup and the start time. A lost
    connection is retried with back-off and written as comment lines; an error
    answer is written as a gap. Ctrl-C stops cleanly.

    Example: stability capture night.csv --address 192.168.1.50 --port 5025 --query READ?
    """
    with command_line_checks():
        settings = load_capture_settings(
            config,
            address=address,
            port=port,
            visa=visa,
            setup=setup or None,
            query=query,
            interval=interval,
            timeout=timeout,
        )
        limit = opts.given.get("stop_after")
        duration = None if limit is None else parse_duration(limit, "--duration")

    every = format_duration(settings.interval)

    def say(line: str) -> None:
        if line.startswith("# ") and line[2:3].isdigit():  # stamped events, not the preamble
            echo(line[2:], err=True)
        elif line.startswith("# instrument: "):  # connected: say what is being captured
            echo(f"capturing {line[14:]} at {settings.where} into {log} every {every}")
            echo("Ctrl-C stops the capture", err=True)

    job = Capture(settings, log, append=append, on_line=say)
    result = job.run(count=count, duration=duration)
    echo(
        f"wrote {_count(result.readings, 'reading')} ({_count(result.errors, 'error answer')} "
        f"as gaps, {_count(result.outages, 'outage')}) into {log}; {result.stopped}"
    )


def _count(n: int, word: str) -> str:
    return f"{n} {word}" + ("" if n == 1 else "s")
