"""``stability record LOG --spec SPEC.toml --info INFO.toml``: a calibration record with verdicts.

Runs the analysis as ``analyze`` does (the same reading, preparation and
analysis options), judges the results against the specification
(:func:`stability.spec.judge`), and writes the analysis outputs (with the
limits drawn on the stability figure) plus ``record.pdf`` and ``record.json``.
With ``--mask`` the time error of the log as read is judged against a mask
as well, or alone when ``--spec`` is left out (a time-error record); one of
the two is required. An existing record is never overwritten without ``--force``.
"""

from __future__ import annotations

from pathlib import Path
from typing import Annotated

import typer

from stability.history import history_for_record
from stability.units import parse_duration, parse_frequency
from stability.workflow import record_into

from .cause_options import CAUSES, SPECTRUM, cause_settings
from .command_options import TIMING
from .common import UsageProblem, echo
from .options import (
    ANALYSING,
    CONFIDENCE,
    JSON,
    PREPARING,
    READING,
    STABILITY_PLOT,
    WRITING,
    LogArg,
    RunOptions,
    command,
)
from .progress import ProgressDisplay, step_count
from .reporting import counter_warning, record_lines

__all__ = ["record"]

SpecOpt = Annotated[
    Path | None,
    typer.Option(
        "--spec",
        help="Specification file (TOML): statistic, confidence, limits. May be left out "
        "with --mask: a time-error record, judged against the mask alone.",
        metavar="FILE",
        show_default=False,
    ),
]
InfoOpt = Annotated[
    Path,
    typer.Option(
        "--info",
        help="Information file (TOML): device id, reference, lab, procedure.",
        metavar="FILE",
        show_default=False,
    ),
]
ForceOpt = Annotated[
    bool,
    typer.Option(
        "--force",
        help="Overwrite an existing record.pdf and record.json; with a history, replace the "
        "stored record of the same log and settings.",
    ),
]
HistoryOpt = Annotated[
    str | None,
    typer.Option(
        "--history",
        help="Also store the record in this calibration history (SQLite; default: "
        "$STABILITY_HISTORY when set; the word default names "
        "$XDG_DATA_HOME/stability/history.sqlite).",
        metavar="FILE",
        show_default=False,
    ),
]

#: ``--confidence`` of a record: the specification's own level unless given.
RECORD_CONFIDENCE = CONFIDENCE.but(
    type=str | None,
    default=None,
    help="Two-sided confidence level of the intervals, between 0 and 1 "
    "(default: the specification's own level; without --spec, 0.683).",
)


@command(
    READING,
    PREPARING,
    ANALYSING,
    WRITING,
    STABILITY_PLOT,
    TIMING,
    CAUSES,
    SPECTRUM,
    variants=(
        RECORD_CONFIDENCE,
        JSON.but(help="Print record.json to standard output instead of the verdict lines."),
    ),
)
def record(
    log: LogArg,
    info: InfoOpt,
    spec: SpecOpt = None,
    force: ForceOpt = False,
    history: HistoryOpt = None,
    *,
    opts: RunOptions,
) -> None:
    """Write a calibration record (PDF and JSON) with verdicts against a specification.

    With --mask the time error of the log as read (after --sawtooth, when
    given) is also judged against a time-error mask (bundled or a file) and
    the record carries that verdict; without --spec the record is judged
    against the mask alone (a time-error record).

    Example: stability record counter.csv --spec spec.toml --info info.toml --out rec/
    """
    folder = opts.folder(Path.cwd() / f"{log.name}-stability")
    stats = opts.settings.analysis.stats
    given = opts.given
    if spec is None and given["mask"] is None:
        raise UsageProblem(
            "a record needs --spec FILE, --mask NAME|FILE or both: what it is judged against"
        )
    if given["mask"] is None and given["sawtooth"] is not None:
        raise UsageProblem("--sawtooth applies to the time error judged against a --mask")
    causes = cause_settings(opts)
    counter_warning(causes)
    with ProgressDisplay(enabled=not opts.json) as bar:
        outcome = record_into(
            log,
            folder,
            spec,
            info,
            opts.settings,
            confidence=opts.given["confidence"],
            force=force,
            plot_format=opts.plot_format,
            title=opts.title,
            history=history_for_record(history),
            noise_labels=opts.noise_labels,
            on_progress=bar.reading(log.name),
            on_step=bar.steps(log.name, step_count(stats) + 1),
            mask=given["mask"],
            timing_options={
                "remove_offset": bool(given["remove_offset"]),
                "sawtooth": given["sawtooth"],
                "sawtooth_sign": given["sawtooth_sign"],
                "sawtooth_applies_to": given["sawtooth_row"],
                "cte_window": parse_duration(given["cte_window"], what="--cte-window"),
                "bandwidth": parse_frequency(given["dte_bandwidth"], what="--dte-bandwidth"),
            },
            causes=causes,
        )
    if opts.json:
        echo(outcome.files["record.json"].read_text(encoding="utf-8"), nl=False)
        return
    for line in record_lines(outcome):
        echo(line)
    echo(f"wrote {outcome.files['record.pdf']}, {outcome.files['record.json']} and the analysis")
    echo(f"  outputs in {folder}")
    if outcome.history is not None:
        stored = outcome.history
        what = "replaced" if stored.replaced else "stored"
        echo(
            f"{what} as record {stored.number} of {stored.device_id} in the calibration "
            f"history {history_for_record(history)}"
        )
