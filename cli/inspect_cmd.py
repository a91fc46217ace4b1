"""``stability inspect``: say what is in a log and how it will be read.

The command only calls :func:`stability.ingest.inspect_log` and prints its report.
"""

from __future__ import annotations

import json

import typer

from stability.ingest import inspect_log

from .common import (
    ColumnOpt,
    DebugOpt,
    JsonOpt,
    KindOpt,
    LogArg,
    NominalOpt,
    StrictOpt,
    Tau0Opt,
    TimeColumnOpt,
    WrapOpt,
    handle_errors,
)
from .main import app

__all__ = ["inspect"]


@app.command("inspect")
@handle_errors
def inspect(
    log: LogArg,
    kind: KindOpt = "auto",
    column: ColumnOpt = None,
    time_column: TimeColumnOpt = None,
    tau0: Tau0Opt = None,
    nominal: NominalOpt = None,
    wrap: WrapOpt = None,
    strict: StrictOpt = False,
    json_out: JsonOpt = False,
    debug: DebugOpt = False,
) -> None:
    """Show what is in a log (dialect, columns, units, time grid, gaps) before analysis.

    Example: stability inspect counter.csv --nominal 10MHz
    """
    report = inspect_log(
        log,
        kind=kind,
        column=column,
        time_column=time_column,
        tau0=tau0,
        nominal=nominal,
        wrap=wrap,
        strict=strict,
    )
    if json_out:
        typer.echo(json.dumps(report.to_dict(), indent=2))
    else:
        typer.echo(report.to_text())
