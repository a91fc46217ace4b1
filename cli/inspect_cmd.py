"""``stability inspect``: say what is in a log and how it will be read.

The command only calls :func:`stability.ingest.inspect_log` with the shared
reading options and prints its report.
"""

from __future__ import annotations

import json

from stability.ingest import inspect_log

from .common import echo
from .options import JSON, READING, LogArg, RunOptions, command

__all__ = ["inspect"]


@command(READING, JSON.but(help="Print the report as JSON to standard output instead."))
def inspect(log: LogArg, *, opts: RunOptions) -> None:
    """Show what is in a log (dialect, columns, units, time grid, gaps) before analysis.

    Example: stability inspect counter.csv --nominal 10MHz
    """
    report = inspect_log(log, **opts.settings.read.as_kwargs())
    if opts.json:
        echo(json.dumps(report.to_dict(), indent=2))
    else:
        echo(report.to_text())
