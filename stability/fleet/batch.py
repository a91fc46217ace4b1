"""``batch``: a whole fleet from its logs to the fleet table, figures and page, in one call.

::

    fleet = stability.fleet.batch("fleet.csv", "out/", nominal="10MHz")  # a manifest
    fleet = stability.fleet.batch(jobs_from_patterns(["logs/*.csv"]), "out/")
    fleet.table                       # the fleet table (pandas), as in fleet.csv
    fleet.plot(view="distribution")   # the figures it wrote, drawn again

Each log is done by :func:`stability.fleet.engine.run_fleet` on Dask into
``out/<device>/``; then the fleet's own outputs are written into ``out/`` as
one set (:class:`stability.outputs.OutputSet`: all or nothing, the folder
locked, no output may be an input): ``fleet.csv`` (full precision),
``fleet.parquet`` (when pyarrow is installed), ``fleet.md``, ``fleet.png``,
``fleet_distribution.png`` and ``fleet.html``. A run stopped by Ctrl-C or
SIGTERM writes none of them; its progress file lets the next run resume. It
returns the :class:`~stability.fleet.result.Fleet`, whose figures are drawn by
the functions that drew the files.
"""

from __future__ import annotations

import dataclasses
import importlib.util
import math
import os
from collections.abc import Sequence
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

from ..errors import InputError
from ..figures import save_figure
from ..figures.labels import analysis_date
from ..outputs import OutputSet
from ..reports.fleet import fleet_html, fleet_markdown
from ..run import resolve_settings
from ..settings import RunSettings
from .engine import OnResult, OnStart, run_fleet
from .manifest import FleetJob, read_manifest
from .result import NAMED_DEVICES, Fleet, draw_distribution, draw_fleet, fleet_result

__all__ = ["batch", "fleet_names", "NAMED_DEVICES"]


def fleet_names() -> tuple[list[str], list[str]]:
    """(the fleet files a batch writes, the earlier files it removes)."""
    names = ["fleet.csv", "fleet.md", "fleet.png", "fleet_distribution.png", "fleet.html"]
    if importlib.util.find_spec("pyarrow") is not None:
        return [*names, "fleet.parquet"], []
    return names, ["fleet.parquet"]


def _jobs(
    jobs: Sequence[FleetJob] | str | os.PathLike[str],
    settings: RunSettings | None,
    options: dict[str, Any],
) -> list[FleetJob]:
    if isinstance(jobs, (str, os.PathLike)):
        return read_manifest(jobs, resolve_settings(settings, options))
    listed = list(jobs)
    if not all(isinstance(j, FleetJob) for j in listed):
        raise InputError(
            "jobs must be a manifest file or a list of stability.fleet.FleetJob",
            hint="make them with read_manifest or jobs_from_patterns",
        )
    if settings is not None or options:
        raise InputError(
            "settings go into the jobs themselves when jobs are given",
            hint="pass them to read_manifest or jobs_from_patterns",
        )
    return listed


def _shared_settings(jobs: Sequence[FleetJob]) -> dict[str, Any]:
    """The preparation and analysis settings every log shares (empty when they differ).

    A judged log adds its specification's statistic and uses its confidence
    level, as a calibration record does; the line says so.
    """
    shared = [
        {**dataclasses.asdict(j.settings.prepare), **dataclasses.asdict(j.settings.analysis)}
        for j in jobs
    ]
    if any(s != shared[0] for s in shared[1:]):
        return {}
    out = dict(shared[0])
    judged = sum(job.spec is not None for job in jobs)
    if judged == len(jobs):
        out["confidence"] = "the specification's level"
    elif judged:
        out["confidence"] = f"{out['confidence']:g} (the specification's level where judged)"
    if judged:
        out["stats"] = f"{out['stats']} and the specification's statistic"
    return out


def batch(
    jobs: Sequence[FleetJob] | str | os.PathLike[str],
    folder: str | os.PathLike[str],
    settings: RunSettings | None = None,
    *,
    statistic: str | None = None,
    key_taus: Sequence[float] | None = None,
    at: float = 100.0,
    plot_format: str = "png",
    force: bool = False,
    workers: int | None = None,
    scheduler: str | None = None,
    title: str | None = None,
    inputs: Sequence[str | os.PathLike[str]] = (),
    on_start: OnStart | None = None,
    on_result: OnResult | None = None,
    **options: Any,
) -> Fleet:
    """Analyse a fleet of logs on Dask and write the fleet outputs; return the fleet.

    Parameters
    ----------
    jobs
        A manifest file (CSV or TOML, :func:`~stability.fleet.read_manifest`)
        or a list of :class:`~stability.fleet.FleetJob`.
    folder
        The output folder: ``folder/<device>/`` per log, the fleet files in it.
    settings, options
        The fleet's settings (or keyword settings), with a manifest only.
    statistic, key_taus
        What the fleet table shows (default: the specification's statistic
        and taus, else the first statistic at 1, 10, 100 and 1000 s).
    at
        The tau of the distribution figure, in seconds.
    plot_format, force
        As ``stability analyze --plot-format`` and ``stability record --force``
        (the fleet's own figures are PNG, embedded in ``fleet.html``).
    workers, scheduler
        A local cluster of ``workers`` processes (default one per core), or
        the address of a running Dask scheduler.
    title
        The heading of the figures and pages (default ``fleet of N logs``).
    inputs
        Further input files no output may overwrite (the manifest the jobs
        came from; a manifest given as ``jobs`` is protected anyway).
    on_start, on_result
        Called when the cluster is up (with the dashboard's address) and as
        each log finishes (done, total, result).

    Returns
    -------
    stability.fleet.Fleet
        The fleet: ``.table`` is the fleet table as in ``fleet.csv`` (a failed
        log has status ``error`` and its message), ``.plot()`` and
        ``.plot(view="distribution")`` draw the two figures it wrote, and in a
        notebook it shows the counts, the worst devices and the sortable table.
    """
    listed = _jobs(jobs, settings, options)
    try:
        at = float(at)
    except (TypeError, ValueError):
        raise InputError(f"at must be a tau in seconds, got {at!r}") from None
    if not (at > 0 and math.isfinite(at)):
        raise InputError(f"at must be a positive tau in seconds, got {at!r}")
    names, stale = fleet_names()
    protected = [*inputs, *([jobs] if isinstance(jobs, (str, os.PathLike)) else [])]
    protected += [p for job in listed for p in (job.path, job.spec, job.info) if p is not None]
    with OutputSet(folder, names, inputs=protected, stale=stale) as out:
        run = run_fleet(
            listed,
            folder,
            statistic=statistic,
            key_taus=key_taus,
            plot_format=plot_format,
            force=force,
            workers=workers,
            scheduler=scheduler,
            on_start=on_start,
            on_result=on_result,
        )
        fleet = fleet_result(
            run,
            at=at,
            title=title or f"fleet of {len(listed)} logs: {run.statistic}",
            generated=datetime.now(UTC),
            settings=_shared_settings(listed),
        )
        frame, ranking, heading = fleet.table, fleet.ranking, fleet.title
        save_figure(draw_fleet(fleet), out.path("fleet.png"), "png")
        save_figure(draw_distribution(fleet), out.path("fleet_distribution.png"), "png")
        frame.to_csv(out.path("fleet.csv"), index=False, lineterminator="\n")
        if "fleet.parquet" in names:
            frame.to_parquet(out.path("fleet.parquet"), index=False)
        captions = {
            f"{run.statistic} of every device, median and 10-90 % band": "fleet.png",
            f"spread of the devices at \u03c4 = {at:g} s": "fleet_distribution.png",
        }
        common = {
            "statistic": run.statistic,
            "key_taus": run.key_taus,
            "title": heading,
            "generated": analysis_date(fleet.generated),
            "settings": fleet.settings,
        }
        out.write_text("fleet.md", fleet_markdown(frame, ranking, figures=captions, **common))
        images = {c: Path(out.path(n)).read_bytes() for c, n in captions.items()}
        out.write_text("fleet.html", fleet_html(frame, ranking, figures=images, **common))
        out.commit()
    return fleet
