"""``stability timeline LOG --window 4h --step 15min``: stability over time (dynamic deviation).

Reads and prepares the log as ``analyze`` does, computes the deviation in a
window sliding along the record with :func:`stability.dynamic.dynamic_stability`
(the dynamic Allan deviation of Galleani & Tavella, IEEE UFFC 56(3), 2009),
and writes ``timeline.csv`` (one row per window and tau) and ``timeline.png``
(or the ``--plot-format``: a map over time and tau, and the shortest tau over
time with its interval).
"""

from __future__ import annotations

import json
import math
import warnings
from datetime import UTC, datetime
from pathlib import Path
from typing import Annotated, Any

import numpy as np
import typer

from stability._version import __version__
from stability.dynamic import DYNAMIC_STATS, DynamicResult, dynamic_stability
from stability.errors import InputError, StabilityWarning
from stability.figures import save_figure, timeline_figure
from stability.files import jsonable
from stability.outputs import OutputSet
from stability.reports.tables import format_tau, format_value
from stability.run import read_and_prepare
from stability.taus import parse_taus
from stability.units import format_duration, parse_duration

from .common import echo
from .option_checks import checked, duration_check
from .options import (
    ANALYSING,
    PREPARING,
    READING,
    TITLE,
    WRITING,
    LogArg,
    RunOptions,
    command,
    stats_option,
)
from .progress import ProgressDisplay
from .reporting import footer

__all__ = ["timeline_command", "timeline_csv", "timeline_summary"]

WindowOpt = Annotated[
    str,
    typer.Option(
        "--window",
        help="Window length, e.g. 4h or 3600s.",
        metavar="DURATION",
        show_default=False,
        callback=checked(duration_check("--window")),
    ),
]
StepOpt = Annotated[
    str | None,
    typer.Option(
        "--step",
        help="Distance between windows, e.g. 15min (default: a quarter of the window).",
        metavar="DURATION",
        callback=checked(duration_check("--step")),
    ),
]


def _noise(value: str) -> str:
    word = str(value).strip().lower()
    if word not in ("window", "record"):
        raise InputError(f"--noise must be window or record, got {value!r}")
    return word


NoiseOpt = Annotated[
    str,
    typer.Option(
        "--noise",
        help="Identify the noise type in each window (window) or once for the record (record).",
        metavar="window|record",
        callback=checked(_noise),
    ),
]

#: ``--stats`` of timeline: one statistic that a sliding window can compute.
ONE_STAT = stats_option("oadev", DYNAMIC_STATS, one=True)


def timeline_csv(result: DynamicResult) -> str:
    """The long table (one row per window and tau) as CSV: full-precision floats, ISO times."""
    frame = result.to_frame()
    times = [t.isoformat() if t is not None else "" for t in (result.time or [])]
    if times:
        frame["time"] = np.repeat(np.array(times, dtype=object), result.deviation.shape[1])
    else:
        frame["time"] = ""
    lines = [",".join(frame.columns)]
    for row in frame.itertuples(index=False):
        cells = []
        for value in row:
            if isinstance(value, (float, np.floating)):
                cells.append(repr(float(value)) if math.isfinite(value) else "")
            else:
                cells.append(str(value))
        lines.append(",".join(cells))
    return "\n".join(lines) + "\n"


def _when(result: DynamicResult, index: int) -> str:
    if result.time is not None:
        return result.time[index].isoformat(sep=" ", timespec="seconds")
    return f"{format_duration(float(result.time_s[index]))} from the start"


def _spread(ratio: float) -> str:
    """How far the largest deviation is above the smallest, in words that never read "1"."""
    if ratio < 2.0:
        return f"max {100.0 * (ratio - 1.0):.2g} % above min"
    return f"max {ratio:.3g} times min"


def timeline_summary(result: DynamicResult) -> list[str]:
    """A short text summary: windows, taus, smallest and largest deviation at the shortest tau."""
    tau0 = float(result.tau[0] / result.m[0])
    lines = [
        f"statistic   {result.statistic}",
        f"windows     {result.deviation.shape[0]} of {format_duration(result.window_points * tau0)}"
        f", every {format_duration(result.step_points * tau0)}",
        f"taus        {', '.join(format_tau(float(t)) for t in result.tau)}",
    ]
    dev = result.deviation[:, 0]
    good = np.isfinite(dev)
    if good.any():
        unit = "s" if result.statistic == "tdev" else ""
        lo = int(np.nanargmin(dev))
        hi = int(np.nanargmax(dev))
        shortest = format_tau(float(result.tau[0]))
        lines.append(
            f"at {shortest:<8} min {format_value(float(dev[lo]), unit)} at {_when(result, lo)}"
        )
        lines.append(
            f"{'':11} max {format_value(float(dev[hi]), unit)} at {_when(result, hi)}"
            + (f"  ({_spread(dev[hi] / dev[lo])})" if dev[lo] > 0 else "")
        )
    else:
        lines.append("no window has a usable term at the shortest tau")
    return lines


@command(
    READING,
    PREPARING,
    ANALYSING,
    WRITING,
    variants=(
        ONE_STAT,
        TITLE.but(help="Title of the figure (default: stability over time: <log name>)."),
    ),
)
def timeline_command(
    log: LogArg,
    window: WindowOpt,
    step: StepOpt = None,
    noise: NoiseOpt = "window",
    *,
    opts: RunOptions,
) -> None:
    """Stability over time: the deviation in a sliding window (dynamic Allan deviation).

    Example: stability timeline counter.csv --nominal 10MHz --window 4h --step 15min
    """
    spec = opts.settings.analysis
    window_s = parse_duration(window, what="--window")
    step_s = window_s / 4.0 if step is None else parse_duration(step, what="--step")
    with ProgressDisplay(enabled=not opts.json) as bar:
        source, prepared, report = read_and_prepare(
            log, opts.settings, on_progress=bar.reading(log.name)
        )
    if step is None:
        step_s = max(step_s, prepared.tau0)
    with warnings.catch_warnings():
        # the result's notes carry every warning; they are printed below
        warnings.simplefilter("ignore", StabilityWarning)
        result = dynamic_stability(
            prepared,
            window=window_s,
            step=step_s,
            taus=parse_taus(spec.taus),
            stat=str(spec.stats),
            confidence=spec.confidence,
            noise=noise,
        )
    moment = datetime.now(UTC)
    folder = opts.folder(Path.cwd() / f"{log.name}-stability")
    sha = source.provenance.sha256
    fig = timeline_figure(
        result,
        title=opts.title or f"stability over time: {log.name}",
        footer=footer([sha], moment),
    )
    fmt = opts.plot_format
    with OutputSet(folder, ["timeline.csv", f"timeline.{fmt}"], inputs=[log]) as out:
        out.write_text("timeline.csv", timeline_csv(result))
        save_figure(fig, out.path(f"timeline.{fmt}"), fmt)
        written = list(out.commit().values())
    summary = timeline_summary(result)
    drift = opts.settings.prepare.drift
    removed = "no drift removed" if drift == "none" else f"{report.drift_model} drift removed"
    summary.append(
        f"prepared    {len(report.outliers.samples)} outliers removed, {removed}, "
        f"{report.gaps_after} gap samples"
    )
    if opts.json:
        document: dict[str, Any] = {
            "input": {"path": str(log), "sha256": sha},
            "settings": {
                "stat": result.statistic,
                "window_s": result.window_points * prepared.tau0,
                "step_s": result.step_points * prepared.tau0,
                "taus": str(spec.taus),
                "confidence": spec.confidence,
                "noise": noise,
                "preparation": report.to_dict(),
            },
            "tool": f"stability {__version__}",
            "analysis_time": moment,
            "summary": summary,
            "notes": result.notes,
        }
        echo(json.dumps(jsonable(document), indent=2))
        return
    for line in summary:
        echo(line)
    for note in result.notes:
        echo(f"note: {note}")
    echo("")
    echo(f"wrote {len(written)} files into {folder}")
