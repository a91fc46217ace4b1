"""``stability record LOG --spec SPEC.toml --info INFO.toml``: a calibration record with verdicts.

Runs the analysis as ``analyze`` does, judges the results against the
specification (:func:`stability.spec.judge`), and writes the analysis outputs
(with the limits drawn on the stability plot) plus ``record.pdf`` and
``record.json``. An existing record is never overwritten without ``--force``.
"""

from __future__ import annotations

from pathlib import Path
from typing import Annotated

import typer

from stability.files import refuse_overwrite
from stability.reports.record import RECORD_NAMES, write_record
from stability.reports.tables import format_tau, format_value, statistic_unit
from stability.run import run_analysis
from stability.spec import judge, load_info, load_spec
from stability.workflow import write_analysis

from .common import (
    ColumnOpt,
    DebugOpt,
    DriftOpt,
    KindOpt,
    LogArg,
    NominalOpt,
    OutliersOpt,
    OutOpt,
    StatsOpt,
    StrictOpt,
    Tau0Opt,
    TausOpt,
    TimeColumnOpt,
    handle_errors,
)
from .main import app

__all__ = ["record"]

SpecOpt = Annotated[
    Path,
    typer.Option("--spec", help="Specification file (TOML): statistic, confidence, limits."),
]
InfoOpt = Annotated[
    Path,
    typer.Option("--info", help="Information file (TOML): device id, reference, lab, procedure."),
]
RecordConfidenceOpt = Annotated[
    float | None,
    typer.Option(
        "--confidence",
        help="Confidence level of the intervals (default: the specification's own).",
    ),
]
ForceOpt = Annotated[
    bool, typer.Option("--force", help="Overwrite an existing record.pdf and record.json.")
]


def _outliers(value: str) -> float | str:
    text = value.strip().lower()
    if text in ("off", "none"):
        return "off"
    try:
        return float(text)
    except ValueError:
        from stability.errors import InputError

        raise InputError(
            f"--outliers must be a number of robust sigmas or off, got {value!r}"
        ) from None


@app.command("record")
@handle_errors
def record(
    log: LogArg,
    spec: SpecOpt,
    info: InfoOpt,
    kind: KindOpt = "auto",
    column: ColumnOpt = None,
    time_column: TimeColumnOpt = None,
    tau0: Tau0Opt = None,
    nominal: NominalOpt = None,
    stats: StatsOpt = "oadev,mdev",
    taus: TausOpt = "octave",
    confidence: RecordConfidenceOpt = None,
    outliers: OutliersOpt = "5",
    drift: DriftOpt = "none",
    out: OutOpt = None,
    force: ForceOpt = False,
    strict: StrictOpt = False,
    debug: DebugOpt = False,
) -> None:
    """Write a calibration record (PDF and JSON) with verdicts against a specification.

    Example: stability record counter.csv --spec spec.toml --info info.toml --out rec/
    """
    the_spec = load_spec(spec)
    the_info = load_info(info)
    folder = out if out is not None else Path.cwd() / f"{log.name}-stability"
    for name in RECORD_NAMES:
        refuse_overwrite(folder / name, force)
    names = [s.strip().lower() for s in stats.split(",") if s.strip()]
    if the_spec.statistic not in names:
        names.append(the_spec.statistic)
    run = run_analysis(
        log,
        kind=kind,
        column=column,
        time_column=time_column,
        tau0=tau0,
        nominal=nominal,
        strict=strict,
        stats=",".join(names),
        taus=taus,
        confidence=the_spec.confidence if confidence is None else confidence,
        outliers=_outliers(outliers),
        drift=drift,
    )
    judgement = judge(run.table, the_spec, reference=the_info.reference)
    written = write_analysis(
        run, folder, limits=judgement.plot_limits(), limits_statistic=judgement.statistic
    )
    written.update(write_record(run, judgement, the_info, folder, force=force))
    unit = statistic_unit(judgement.statistic)
    level = 100 * judgement.confidence
    typer.echo(
        f"device {the_info.device_id}: {judgement.statistic} against {the_spec.path} "
        f"at {level:.3g} % confidence"
    )
    for check in judgement.listed:
        shown = format_value(check.deviation, unit) or "n/a"
        extra = " (interpolated)" if check.interpolated else ""
        extra += " (reference-limited)" if check.reference_limited else ""
        typer.echo(
            f"  tau {format_tau(check.tau_s):>8}  limit {format_value(check.limit, unit):>9}  "
            f"measured {shown:>9}  {check.verdict}{extra}"
        )
    others = [c for c in judgement.checks if not c.listed]
    if others:
        failing = sum(c.verdict == "fail" for c in others)
        typer.echo(
            f"  {len(others)} measured tau(s) between the limits judged on the limit line"
            + (f", {failing} fail" if failing else "")
        )
    typer.echo(f"overall verdict: {judgement.overall}")
    typer.echo(f"wrote {written['record.pdf']}, {written['record.json']} and the analysis")
    typer.echo(f"  outputs in {folder}")
