"""``stability time-error LOG``: time-error metrics, MTIE and TDEV, judged against a mask.

For 1 PPS and packet-timing logs of a clock against a reference: max|TE|,
cTE, dTE, peak-to-peak, MTIE and TDEV on a dense tau grid, the sawtooth
correction of a GNSS receiver, and a verdict against an ITU-T or own mask
(:func:`stability.workflow_timing.time_error_into`).
"""

from __future__ import annotations

from pathlib import Path

from stability.reports.timing import time_error_lines
from stability.units import parse_duration, parse_frequency
from stability.workflow_timing import time_error_into

from .command_options import TIMING
from .common import echo
from .options import (
    JSON,
    READING,
    TAUS,
    WRITING,
    LogArg,
    RunOptions,
    command,
)
from .progress import ProgressDisplay

__all__ = ["time_error"]

#: ``--taus`` of a time-error analysis: dense by default (masks are judged between octaves).
TIMING_TAUS = TAUS.but(
    default="dense",
    help="Tau grid of MTIE and TDEV: dense (20 log-spaced per decade, the default), "
    "octave, decade, all (every multiple of tau0; short records only) or a comma list "
    "of taus in seconds.",
)


@command(
    READING,
    TIMING,
    TIMING_TAUS,
    WRITING,
    variants=(JSON.but(help="Print time_error.json to standard output instead of the report."),),
)
def time_error(log: LogArg, *, opts: RunOptions) -> None:
    """Time-error analysis of a 1 PPS or packet-timing log, judged against a mask.

    Writes time_error.csv, time_error.md, time_error.json, tie.png and
    mtie_tdev.png (or the --plot-format) into the output folder.

    Example: stability time-error pps.csv --mask g8272-prtc-a --sawtooth qerr_ns
    """
    given = opts.given
    folder = opts.folder(Path.cwd() / f"{log.name}-time-error")
    with ProgressDisplay(enabled=not opts.json) as bar:
        result, files = time_error_into(
            log,
            folder,
            opts.settings,
            mask=given["mask"],
            remove_offset=bool(given["remove_offset"]),
            sawtooth=given["sawtooth"],
            sawtooth_sign=given["sawtooth_sign"],
            sawtooth_applies_to=given["sawtooth_row"],
            cte_window=parse_duration(given["cte_window"], what="--cte-window"),
            bandwidth=parse_frequency(given["dte_bandwidth"], what="--dte-bandwidth"),
            taus=opts.settings.analysis.taus,
            plot_format=opts.plot_format,
            title=opts.title,
            on_progress=bar.reading(log.name),
        )
    if opts.json:
        echo(files["time_error.json"].read_text(encoding="utf-8"), nl=False)
        return
    for line in time_error_lines(result):
        echo(line)
    echo(f"wrote {len(files)} files into {folder}")
