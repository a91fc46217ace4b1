"""``stability batch [PATTERN ...] | --manifest FILE``: a whole fleet of logs on Dask.

Each log is analysed (and judged, with a specification) as ``analyze`` and
``record`` would, into ``OUT/<device>/``, by the workers of a local Dask
cluster (one process per core, ``--workers N``) or of a running scheduler
(``--scheduler ADDRESS``); then the fleet's table, figures and page are
written into ``OUT``. Exit code 0 when every log succeeded, 1 when any failed
(each failure named on standard error); a second run of the same command
skips the logs finished with unchanged input and settings.
"""

from __future__ import annotations

import json
import os
from pathlib import Path
from typing import Annotated

import typer

from stability.errors import InputError
from stability.fleet import batch as run_batch
from stability.fleet import fleet_names, jobs_from_patterns, read_manifest
from stability.fleet.manifest import compile_device_rule
from stability.reports.fleet import fleet_counts
from stability.spec import load_info, load_spec
from stability.units import parse_duration

from .common import EXIT_ERROR, command_line_checks, echo
from .options import (
    ANALYSING,
    JSON,
    OUT,
    PREPARING,
    READING,
    TAUS,
    TITLE,
    WRITING,
    RunOptions,
    command,
)
from .progress import LogsProgress

__all__ = ["batch"]

SpecOpt = Annotated[
    Path | None,
    typer.Option(
        "--spec",
        help="Specification file (TOML) every log is judged against (a manifest row may name "
        "its own).",
        metavar="FILE",
        show_default=False,
    ),
]
InfoOpt = Annotated[
    Path | None,
    typer.Option(
        "--info",
        help="Information file (TOML): with --spec, each device gets a full calibration record.",
        metavar="FILE",
        show_default=False,
    ),
]
ForceOpt = Annotated[
    bool,
    typer.Option(
        "--force", help="Overwrite existing calibration records (with --info), as record --force."
    ),
]
ManifestOpt = Annotated[
    Path | None,
    typer.Option(
        "--manifest",
        help="Manifest of the fleet (CSV with a header row, or TOML): one log per row with its "
        "path, device id, reading hints and specification.",
        metavar="FILE",
        show_default=False,
    ),
]
DeviceIdOpt = Annotated[
    str | None,
    typer.Option(
        "--device-id",
        help="Regular expression giving the device id from a log's file name: its group id, "
        "else its first group, else the match (default: the name without extensions).",
        metavar="REGEX",
        show_default=False,
    ),
]
AtOpt = Annotated[
    str,
    typer.Option("--at", help="Averaging time of the distribution figure.", metavar="DURATION"),
]
WorkersOpt = Annotated[
    int | None,
    typer.Option(
        "--workers",
        help="Worker processes of the local Dask cluster (default: one per core).",
        metavar="N",
        min=1,
        show_default=False,
    ),
]
SchedulerOpt = Annotated[
    str | None,
    typer.Option(
        "--scheduler",
        help="Address of a running Dask scheduler, e.g. tcp://10.0.0.5:8786, instead of a local "
        "cluster; its workers must see the logs and the output folder under the same paths.",
        metavar="ADDRESS",
        show_default=False,
    ),
]
PatternsArg = Annotated[
    list[str] | None,
    typer.Argument(
        help="Log files or glob patterns (quote them; ** descends into folders).",
        metavar="PATTERN...",
        show_default=False,
    ),
]


@command(
    READING,
    PREPARING,
    ANALYSING,
    WRITING,
    variants=(
        TAUS.but(
            default="decade",
            help=TAUS.help
            + " Default here: decade, so the fleet table's 1, 10, 100 s are measured.",
        ),
        TITLE.but(help="Title of the fleet figures and pages (default: fleet of N logs)."),
        OUT.but(help="Output folder (default: fleet-stability/ in the current folder)."),
        JSON.but(help="Print the fleet table (JSON records) to standard output."),
    ),
)
def batch(
    patterns: PatternsArg = None,
    manifest: ManifestOpt = None,
    device_id: DeviceIdOpt = None,
    spec: SpecOpt = None,
    info: InfoOpt = None,
    force: ForceOpt = False,
    at: AtOpt = "100s",
    workers: WorkersOpt = None,
    scheduler: SchedulerOpt = None,
    *,
    opts: RunOptions,
) -> None:
    """Analyse a fleet of logs on Dask: one row per log, the fleet's figures and page.

    Writes OUT/<device>/ per log (the outputs of analyze, or of record with --spec
    and --info), and fleet.csv, fleet.parquet, fleet.md, fleet.png,
    fleet_distribution.png and fleet.html into OUT. Exit 1 when any log failed.

    Example: stability batch 'logs/*.csv' --device-id 'OCXO-(\\d+)' --spec ocxo.toml --out fleet/
    """
    rule = device_id
    with command_line_checks():
        if manifest is not None and patterns:
            raise InputError("give either a --manifest or log patterns, not both")
        if manifest is None and not patterns:
            raise InputError("no logs given", hint="pass log patterns or --manifest FILE")
        if rule is not None:
            compile_device_rule(rule)
        if info is not None and spec is None:
            raise InputError("--info needs --spec", hint="add --spec FILE")
        seconds = parse_duration(at, "--at")
    if spec is not None:  # a shared file is checked once, before any log is started
        load_spec(spec)
    if info is not None:
        load_info(info)
    folder = opts.folder(Path.cwd() / "fleet-stability")
    if manifest is not None:
        jobs = read_manifest(manifest, opts.settings, device_rule=rule, spec=spec, info=info)
    else:
        jobs = jobs_from_patterns(
            patterns or [], opts.settings, device_rule=rule, spec=spec, info=info
        )

    def started(dashboard: str | None) -> None:
        if scheduler is not None:
            where = f"the workers of the Dask scheduler {scheduler}"
        else:
            where = f"a local cluster of {workers or os.cpu_count() or 1} worker processes"
        if bar.shown:  # on a terminal only, as the bar
            echo(f"{len(jobs)} logs on {where}", err=True)
        if dashboard and not opts.json:
            echo(f"Dask dashboard: {dashboard}", err=True)

    resumed = []

    def finished(done: int, total: int, result: dict) -> None:
        if result["status"] == "skipped":
            resumed.append(result["device"])
        bar.update(done, total, result)

    with LogsProgress(enabled=not opts.json) as bar:
        fleet = run_batch(
            jobs,
            folder,
            at=seconds,
            plot_format=opts.plot_format,
            force=force,
            workers=workers,
            scheduler=scheduler,
            title=opts.title,
            inputs=[manifest] if manifest is not None else [],
            on_start=started,
            on_result=finished,
        )
    frame = fleet.table
    counts = fleet_counts(frame)
    if opts.json:
        echo(json.dumps(json.loads(frame.to_json(orient="records")), indent=2))
    else:
        line = f"{counts['logs']} logs: {counts['ok']} analysed, {counts['error']} failed"
        if resumed:
            line += f" ({len(resumed)} unchanged since an earlier run, not analysed again)"
        if "pass" in counts:
            line += (
                f"; verdicts: {counts['pass']} pass, {counts['fail']} fail, "
                f"{counts['inconclusive']} inconclusive"
            )
        echo(line)
        echo(f"wrote {', '.join(fleet_names()[0])} and a folder per device into {folder}")
    for row in frame[frame["status"] == "error"].itertuples(index=False):
        echo(f"error: {row.device}: {row.error}", err=True)
    if counts["error"]:
        raise typer.Exit(EXIT_ERROR)
