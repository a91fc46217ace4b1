"""``stability analyze LOG``: the main job, from a raw log to a qualified table and plots."""

from __future__ import annotations

from pathlib import Path

import typer

from stability.reports.tables import terminal_table
from stability.run import AnalysisRun
from stability.summary import summary_json
from stability.workflow import analyze_into

from .common import (
    AverageOpt,
    ColumnOpt,
    ConfidenceOpt,
    DebugOpt,
    DriftOpt,
    JsonOpt,
    KindOpt,
    LogArg,
    NominalOpt,
    OutliersOpt,
    OutOpt,
    PlotFormatOpt,
    StatsOpt,
    StrictOpt,
    Tau0Opt,
    TausOpt,
    TimeColumnOpt,
    WrapOpt,
    handle_errors,
    outliers_value,
)
from .main import app


def summary_block(run: AnalysisRun) -> str:
    """The short summary printed under the table."""
    s = run.summary()
    inp, prep = s["input"], run.preparation
    od = s.get("offset_drift") or {}
    lines = [
        f"file        {inp.get('path')}",
        f"format      {run.source.provenance.reader or 'n/a'}",
        f"kind        {run.source.kind}"
        + (f", nominal {run.source.nominal:g} Hz" if run.source.nominal else ""),
        f"samples     {run.measurement.n}  tau0 {run.measurement.tau0:g} s  "
        f"span {run.measurement.span:g} s",
        f"gaps        {prep.gaps_after}",
        f"outliers    {len(prep.outliers.samples)} removed",
        f"drift       {prep.drift_model} removed",
    ]

    def pm(v, u, unit=""):
        if v is None:
            return "n/a"
        return f"{v:.4g} +/- {u:.2g}{unit}" if u is not None else f"{v:.4g}{unit}"

    lines.append(f"offset      {pm(od.get('offset'), od.get('u_offset'))}")
    lines.append(f"drift/day   {pm(od.get('drift_per_day'), od.get('u_drift_per_day'))}")
    return "\n".join(lines)


@app.command("analyze")
@handle_errors
def analyze(
    log: LogArg,
    kind: KindOpt = "auto",
    column: ColumnOpt = None,
    time_column: TimeColumnOpt = None,
    tau0: Tau0Opt = None,
    nominal: NominalOpt = None,
    stats: StatsOpt = "oadev,mdev",
    taus: TausOpt = "octave",
    confidence: ConfidenceOpt = 0.683,
    outliers: OutliersOpt = "5",
    drift: DriftOpt = "none",
    average: AverageOpt = 1,
    wrap: WrapOpt = None,
    out: OutOpt = None,
    plot_format: PlotFormatOpt = "png",
    strict: StrictOpt = False,
    json_out: JsonOpt = False,
    debug: DebugOpt = False,
) -> None:
    """Analyse a counter or time-interval log: table, summary and plots.

    Example: stability analyze counter.csv --nominal 10MHz --stats oadev,mdev
    """
    folder = out if out is not None else Path.cwd() / f"{log.name}-stability"
    run, written = analyze_into(
        log,
        folder,
        plot_format=plot_format,
        kind=kind,
        column=column,
        time_column=time_column,
        tau0=tau0,
        nominal=nominal,
        wrap=wrap,
        strict=strict,
        stats=stats,
        taus=taus,
        confidence=confidence,
        outliers=outliers_value(outliers),
        drift=drift,
        average=average,
    )
    if json_out:
        typer.echo(summary_json(run.summary()), nl=False)
        return
    typer.echo(terminal_table(run.table))
    typer.echo("")
    typer.echo(summary_block(run))
    typer.echo("")
    typer.echo(f"wrote {len(written)} files into {folder}")
