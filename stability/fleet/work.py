"""One log of a fleet, done where a worker runs it: analyse, judge, write, return a small row.

:func:`run_task` is the unit of work the engine hands to Dask. It reads,
prepares, analyses and (with a specification) judges one log exactly as
``stability analyze`` and ``stability record`` do, through
:func:`stability.workflow.analyze_into` and :func:`stability.workflow.record_into`,
so the device's folder ``OUT/<device>/`` holds the usual outputs, written all
or nothing. What comes back is a plain mapping of numbers and short texts (the
row of the fleet table and the device's curve), small enough to send between
processes. Errors stay with their log: a log that cannot be read or analysed
gives a row with status ``error`` and its one-line message.
"""

from __future__ import annotations

import math
import os
import resource
import time
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from .._version import __version__
from ..errors import InputError, StabilityError
from ..files import settings_hash, sha256_file
from ..run import AnalysisRun
from ..spec import Judgement, Spec, judge, load_info, load_spec
from ..workflow import analyze_into, record_into, spec_settings
from .manifest import FleetJob

__all__ = ["FleetTask", "run_task", "job_hash", "key_columns", "DEFAULT_KEY_TAUS", "tau_label"]

#: The taus of the fleet table when no specification names its own (seconds).
DEFAULT_KEY_TAUS = (1.0, 10.0, 100.0, 1000.0)
_REL = 1e-9


@dataclass(frozen=True)
class FleetTask:
    """What a worker needs for one log.

    Attributes
    ----------
    job
        The log, its device id and settings.
    folder
        The device's output folder.
    statistic
        The statistic the fleet table and figures show.
    key_taus
        The taus of the fleet table's columns.
    plot_format, force
        As ``stability analyze --plot-format`` and ``stability record --force``.
    settings_hash
        The hash of everything but the log that decides the outputs (:func:`job_hash`).
    previous
        The resume entry of an earlier run (input SHA-256, settings hash, row), or None.
    """

    job: FleetJob
    folder: Path
    statistic: str
    key_taus: tuple[float, ...]
    plot_format: str = "png"
    force: bool = False
    settings_hash: str = ""
    previous: Mapping[str, Any] | None = None


def _file_hash(path: Path | None) -> str | None:
    if path is None:
        return None
    try:
        return sha256_file(path)
    except StabilityError:
        return f"unreadable:{path}"


def job_hash(
    job: FleetJob, statistic: str, key_taus: Sequence[float], plot_format: str, force: bool
) -> str:
    """The hash of what decides a log's outputs besides the log itself.

    The settings, the specification's and information file's contents, the
    fleet's statistic and key taus, the plot format and the tool version: a log
    whose input and this hash are unchanged since it was finished is skipped.
    """
    return settings_hash(
        {
            "settings": job.settings.flat(),
            "spec": _file_hash(job.spec),
            "info": _file_hash(job.info),
            "statistic": statistic,
            "key_taus": list(key_taus),
            "plot_format": plot_format,
            "force": force,
            "version": __version__,
        }
    )


def tau_label(tau: float) -> str:
    """A tau as it appears in a column name: ``100s``, ``0.5s``."""
    return f"{tau:g}s"


def key_columns(statistic: str, key_taus: Sequence[float], judged: bool) -> list[str]:
    """The columns of the fleet table at the key taus, in order."""
    out: list[str] = []
    for tau in key_taus:
        name = f"{statistic}_{tau_label(tau)}"
        out += [name, f"{name}_low", f"{name}_high", f"noise_{tau_label(tau)}"]
        if judged:
            out.append(f"verdict_{tau_label(tau)}")
    return out


def _at(values: Sequence[float], taus: Sequence[float], tau: float) -> int | None:
    for index, measured in enumerate(taus):
        if math.isclose(float(measured), tau, rel_tol=_REL):
            return index
    return None


def _nan(value: Any) -> float:
    return math.nan if value is None else float(value)


def _row(task: FleetTask, run: AnalysisRun, judgement: Judgement | None) -> dict[str, Any]:
    """The fleet-table row and the curve of one finished analysis."""
    source, prep = run.source, run.preparation
    od = run.table.extras.get("offset_drift")
    row: dict[str, Any] = {
        "readings": int(source.n - 1 if source.kind == "frequency" else source.n),
        "tau0_s": float(run.measurement.tau0),
        "span_s": float(run.measurement.span),
        "gaps": int(prep.gaps_before),
        "outliers_removed": int(len(prep.outliers.samples)),
        "offset": _nan(getattr(od, "offset", None)),
        "u_offset": _nan(getattr(od, "u_offset", None)),
        "drift_per_day": _nan(getattr(od, "drift_per_day", None)),
        "u_drift_per_day": _nan(getattr(od, "u_drift_per_day", None)),
    }
    stat = task.statistic
    result = run.table[stat] if stat in run.table.results else None
    taus = [] if result is None else [float(t) for t in result.tau]
    for tau in task.key_taus:
        name = f"{stat}_{tau_label(tau)}"
        index = None if result is None else _at(result.deviation, taus, tau)
        if index is None or result is None:
            row.update({name: math.nan, f"{name}_low": math.nan, f"{name}_high": math.nan})
            row[f"noise_{tau_label(tau)}"] = ""
        else:
            row[name] = float(result.deviation[index])
            row[f"{name}_low"] = float(result.ci_low[index])
            row[f"{name}_high"] = float(result.ci_high[index])
            row[f"noise_{tau_label(tau)}"] = result.noise[index]
        if judgement is not None:
            check = judgement.verdict_at(tau) if judgement.statistic == stat else None
            row[f"verdict_{tau_label(tau)}"] = "" if check is None else str(check.verdict)
    noise = [] if result is None else [n for n in result.noise if n]
    row["noise"] = " ".join(dict.fromkeys(noise))
    row["verdict"] = "" if judgement is None else str(judgement.overall)
    row["worst_ratio"] = math.nan
    if judgement is not None:
        ratios = [c.deviation / c.limit for c in judgement.listed if c.limit > 0]
        ratios = [r for r in ratios if math.isfinite(r)]
        row["worst_ratio"] = max(ratios) if ratios else math.nan
    curve = (
        []
        if result is None
        else [(t, float(d)) for t, d in zip(taus, result.deviation, strict=True) if d == d]
    )
    return {"row": row, "curve": curve}


def _analyse(task: FleetTask) -> tuple[AnalysisRun, Judgement | None]:
    job = task.job
    if job.spec is None:
        run, _ = analyze_into(job.path, task.folder, job.settings, plot_format=task.plot_format)
        return run, None
    if job.info is not None:
        named = load_info(job.info).device_id
        if named != job.device:  # a record must not carry another device's id
            raise InputError(
                f"the information file is for device {named!r}, not {job.device!r}",
                path=str(job.info),
                hint="give each device its own information file (the manifest's info field)",
            )
        outcome = record_into(
            job.path,
            task.folder,
            job.spec,
            job.info,
            job.settings,
            force=task.force,
            plot_format=task.plot_format,
        )
        return outcome.run, outcome.judgement
    spec: Spec = load_spec(job.spec)
    settings = spec_settings(job.settings, spec)
    run, _ = analyze_into(job.path, task.folder, settings, plot_format=task.plot_format, spec=spec)
    return run, judge(run.table, spec)


def _unchanged(task: FleetTask, sha: str) -> bool:
    previous = task.previous
    return (
        previous is not None
        and previous.get("sha256") == sha
        and previous.get("settings_hash") == task.settings_hash
        and (task.folder / "summary.json").is_file()
    )


def run_task(task: FleetTask) -> dict[str, Any]:
    """Do one log (or find it done by an earlier run); return its result as a mapping.

    Keys: ``device``, ``file``, ``sha256``, ``status`` (``ok``, ``skipped`` for
    a log finished by an earlier run with the same input and settings, or
    ``error``), ``error`` (the one-line message), ``seconds``, ``row`` (the
    fleet-table values), ``curve`` (the statistic's (tau, deviation) pairs),
    ``worker`` (host:pid) and ``worker_peak_mb`` (that process's peak resident
    memory so far, MiB).
    Only an interruption (``KeyboardInterrupt``) is raised.
    """
    start = time.perf_counter()
    job = task.job
    out: dict[str, Any] = {
        "device": job.device,
        "file": str(job.path),
        "sha256": "",
        "status": "ok",
        "error": "",
        "settings_hash": task.settings_hash,
        "row": {},
        "curve": [],
    }
    try:
        out["sha256"] = sha256_file(job.path)
        if _unchanged(task, out["sha256"]):
            previous = task.previous or {}
            out.update(row=dict(previous.get("row", {})), curve=list(previous.get("curve", [])))
            out["status"] = "skipped"
        else:
            run, judgement = _analyse(task)
            out.update(_row(task, run, judgement))
    except StabilityError as exc:
        out.update(status="error", error=exc.one_line())
    except Exception as exc:  # a defect met on one log stays with that log
        text = " ".join(str(exc).split()) or type(exc).__name__
        out.update(status="error", error=f"{job.path}: internal error: {text}")
    out["seconds"] = time.perf_counter() - start
    # the worker process's peak resident memory so far (Linux reports KiB), for sizing a cluster
    out["worker"] = f"{os.uname().nodename}:{os.getpid()}"
    out["worker_peak_mb"] = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
    return out
