"""The fleet on Dask: one task per log, on a local cluster of processes or a running scheduler.

:func:`run_fleet` hands each log to :func:`stability.fleet.work.run_task` through
``dask.distributed`` [1]_: by default a :class:`~distributed.LocalCluster` of
worker processes on this machine (one per core, one thread each, listening on
the loopback address only); with ``scheduler`` a client of a scheduler already
running, whose workers may sit on many machines. The workers write each
device's outputs themselves and send back small rows; this process keeps the
progress file as rows arrive (:mod:`stability.fleet.state`) and builds the
fleet table. Dask is imported on first use.

An interruption (Ctrl-C, SIGTERM) cancels what has not started, closes the
client and the local cluster, and removes what stopped workers left in the
device folders (pending files and folders they made), so every device folder
holds a whole set of outputs or nothing new.

References
----------
.. [1] Dask Development Team, "Dask.distributed" documentation
   (https://distributed.dask.org): ``LocalCluster``, ``Client.map``,
   ``as_completed``.
"""

from __future__ import annotations

import contextlib
import dataclasses
import importlib.util
import logging
import os
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from ..errors import InputError, StabilityError
from ..outputs import OutputSet
from ..spec import load_spec
from .manifest import FleetJob
from .state import ProgressLog, read_progress
from .work import DEFAULT_KEY_TAUS, FleetTask, job_hash, run_task

__all__ = ["FleetRun", "run_fleet", "fleet_statistic", "LOCAL_HOST"]

#: Where a local cluster listens: the loopback address, reachable from this machine only.
LOCAL_HOST = "127.0.0.1"

#: Called with (logs done, logs in all, the log's result) as each log finishes.
OnResult = Callable[[int, int, Mapping[str, Any]], None]
#: Called once the cluster is up, with the dashboard's address (None: no dashboard).
OnStart = Callable[[str | None], None]


@dataclass(frozen=True)
class FleetRun:
    """The results of a fleet run, one per log in the order of the jobs.

    ``results`` are the mappings :func:`~stability.fleet.work.run_task` returns;
    ``statistic`` and ``key_taus`` say what the table shows, ``judged``
    whether any log has a specification, ``specs`` the specifications read.
    """

    jobs: list[FleetJob]
    results: list[dict[str, Any]]
    statistic: str
    key_taus: tuple[float, ...]
    judged: bool
    folder: Path
    dashboard: str | None = None
    specs: dict[str, Any] = field(default_factory=dict)


def _first_stat(stats: Any) -> str:
    names = stats.split(",") if isinstance(stats, str) else list(stats)
    names = [str(n).strip() for n in names if str(n).strip()]
    return names[0] if names else "oadev"


def fleet_statistic(
    jobs: Sequence[FleetJob], statistic: str | None = None, key_taus: Sequence[float] | None = None
) -> tuple[str, tuple[float, ...], dict[str, Any]]:
    """(statistic, key taus, specs by path) of a fleet.

    The statistic is ``statistic`` if given, else that of the specifications
    when the fleet has any, else the first of the first log's statistics. The
    key taus are ``key_taus`` if given, else every tau a specification lists,
    else 1, 10, 100 and 1000 s. A specification that cannot be read here is
    left to its logs (their rows say why).
    """
    specs: dict[str, Any] = {}
    for job in jobs:
        if job.spec is not None and str(job.spec) not in specs:
            with contextlib.suppress(StabilityError):
                specs[str(job.spec)] = load_spec(job.spec)
    names = sorted({s.statistic for s in specs.values()})
    if statistic is None:
        statistic = names[0] if names else _first_stat(jobs[0].settings.analysis.stats)
    if key_taus is None:
        listed = sorted({float(t) for s in specs.values() for t, _ in s.limits})
        key_taus = tuple(listed) if listed else DEFAULT_KEY_TAUS
    taus = tuple(float(t) for t in key_taus)
    if not taus or any(not t > 0 for t in taus):
        raise InputError(f"key taus must be positive seconds, got {list(key_taus)}")
    return statistic, taus, specs


def _client(workers: int | None, scheduler: str | None) -> tuple[Any, Any, str | None]:
    """(client, local cluster or None, dashboard address or None)."""
    try:
        from dask.distributed import Client, LocalCluster
    except ImportError:
        raise InputError(
            "a fleet runs on Dask, which is not installed",
            hint="pip install 'oscillator-stability[fleet]' (dask[distributed])",
        ) from None

    if scheduler is not None:
        try:
            client = Client(scheduler, timeout="20s")
        except (OSError, TimeoutError) as exc:
            raise InputError(
                f"cannot reach the Dask scheduler: {exc}",
                path=scheduler,
                hint="check the address (tcp://host:8786) and that the scheduler runs",
            ) from None
        services = client.scheduler_info().get("services", {})
        return client, None, client.dashboard_link if "dashboard" in services else None
    count = workers if workers is not None else (os.cpu_count() or 1)
    # the dashboard needs bokeh; like the cluster it listens on the loopback address only
    dashboard = f"{LOCAL_HOST}:8787" if importlib.util.find_spec("bokeh") is not None else None
    cluster = LocalCluster(
        n_workers=count,
        threads_per_worker=1,
        processes=True,
        host=LOCAL_HOST,
        dashboard_address=dashboard,
        silence_logs=logging.ERROR,  # the command line speaks in its own one-line messages
    )
    client = Client(cluster)
    return client, cluster, client.dashboard_link if dashboard is not None else None


def _tidy(folder: Path) -> None:
    """Remove what a stopped worker left in a device folder: pending files, an empty folder."""
    if not folder.is_dir():
        return
    with contextlib.suppress(StabilityError, OSError), OutputSet(folder, []):
        pass  # entering sweeps the pending files of processes that no longer run
    with contextlib.suppress(OSError):
        folder.rmdir()  # only when empty


def _absolute(job: FleetJob) -> FleetJob:
    """The job with its files named by absolute paths (from this process's folder)."""
    return dataclasses.replace(
        job,
        path=job.path.absolute(),
        spec=job.spec.absolute() if job.spec is not None else None,
        info=job.info.absolute() if job.info is not None else None,
    )


def _error(job: FleetJob, message: str, settings_hash: str) -> dict[str, Any]:
    return {
        "device": job.device,
        "file": str(job.path),
        "sha256": "",
        "status": "error",
        "error": message,
        "settings_hash": settings_hash,
        "row": {},
        "curve": [],
        "seconds": 0.0,
    }


def run_fleet(
    jobs: Sequence[FleetJob],
    folder: str | os.PathLike[str],
    *,
    statistic: str | None = None,
    key_taus: Sequence[float] | None = None,
    plot_format: str = "png",
    force: bool = False,
    workers: int | None = None,
    scheduler: str | None = None,
    on_start: OnStart | None = None,
    on_result: OnResult | None = None,
) -> FleetRun:
    """Analyse every log of a fleet on Dask, each into ``folder/<device>/``; see the module doc.

    Logs finished by an earlier run into the same folder with unchanged input
    and settings are not analysed again (their rows come from the progress
    file). ``workers`` sets the size of the local cluster (default: one per
    core); ``scheduler`` (``tcp://host:8786``) uses a running cluster instead,
    whose workers must see the logs and ``folder`` under the same paths.
    """
    jobs = list(jobs)
    if not jobs:
        raise InputError("the fleet has no logs", hint="list at least one log")
    if workers is not None and (not isinstance(workers, int) or workers < 1):
        raise InputError(f"workers must be a whole number of at least 1, got {workers!r}")
    out = Path(folder)
    stat, taus, specs = fleet_statistic(jobs, statistic, key_taus)
    previous = read_progress(out)
    tasks = []
    for job in jobs:
        digest = job_hash(job, stat, taus, plot_format, force)
        if scheduler is not None:  # workers elsewhere run in other folders: absolute paths
            job = _absolute(job)
        entry = previous.get(job.device)
        tasks.append(
            FleetTask(
                job=job,
                folder=(out / job.device).absolute(),
                statistic=stat,
                key_taus=taus,
                plot_format=plot_format,
                force=force,
                settings_hash=digest,
                previous=entry if entry is not None and entry.get("status") == "ok" else None,
            )
        )
    results: dict[int, dict[str, Any]] = {}
    out.mkdir(parents=True, exist_ok=True)
    client, cluster, dashboard = _client(workers, scheduler)
    try:
        if on_start is not None:
            on_start(dashboard)
        _gather(client, tasks, out, results, on_result)
    finally:
        with contextlib.suppress(Exception):
            client.close()
        if cluster is not None:  # the local workers are gone: tidy what they left
            with contextlib.suppress(Exception):
                cluster.close()
            for index, task in enumerate(tasks):
                if index not in results:
                    _tidy(task.folder)
    return FleetRun(
        jobs=jobs,
        results=[results[i] for i in range(len(tasks))],
        statistic=stat,
        key_taus=taus,
        judged=any(job.spec is not None for job in jobs),
        folder=out,
        dashboard=dashboard,
        specs=specs,
    )


def _gather(
    client: Any,
    tasks: list[FleetTask],
    out: Path,
    results: dict[int, dict[str, Any]],
    on_result: OnResult | None,
) -> None:
    """Submit every task; fill ``results`` (by index) and the progress file as results come."""
    from dask.distributed import as_completed

    futures = client.map(run_task, tasks, pure=False)
    index = {future.key: i for i, future in enumerate(futures)}
    with ProgressLog(out) as progress:
        try:
            for future in as_completed(futures):
                i = index[future.key]
                try:
                    result = future.result()
                except Exception as exc:  # the worker died or the task could not run
                    text = " ".join(str(exc).split()) or type(exc).__name__
                    result = _error(
                        tasks[i].job,
                        f"{tasks[i].job.path}: the worker analysing it failed: {text}",
                        tasks[i].settings_hash,
                    )
                results[i] = result
                if result["status"] != "skipped":
                    progress.add(_entry(result))
                if on_result is not None:
                    on_result(len(results), len(tasks), result)
        except KeyboardInterrupt:  # Ctrl-C or SIGTERM: nothing new starts
            with contextlib.suppress(Exception):
                client.cancel(futures, force=True)
            raise
        latest = read_progress(out)
        progress.compact(latest[t.job.device] for t in tasks if t.job.device in latest)


def _entry(result: Mapping[str, Any]) -> dict[str, Any]:
    keys = ("device", "file", "sha256", "settings_hash", "status", "error", "row", "curve")
    return {k: result[k] for k in keys}
