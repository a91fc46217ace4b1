"""``stability analyze LOG``: the main job, from a raw log to a qualified table and plots."""

from __future__ import annotations

from pathlib import Path

from stability.reports.tables import terminal_table
from stability.summary import summary_json
from stability.workflow import analyze_into

from .cause_options import CAUSES, SPECTRUM, cause_settings
from .common import echo
from .options import (
    ANALYSING,
    PREPARING,
    READING,
    STABILITY_PLOT,
    WRITING,
    LogArg,
    RunOptions,
    command,
)
from .progress import ProgressDisplay, step_count
from .reporting import counter_warning, summary_block

__all__ = ["analyze"]


@command(READING, PREPARING, ANALYSING, WRITING, STABILITY_PLOT, CAUSES, SPECTRUM)
def analyze(log: LogArg, *, opts: RunOptions) -> None:
    """Analyse a counter or time-interval log: table, summary and plots.

    Writes table.csv, table.md, summary.json, sigma_tau.png and series.png
    (or the --plot-format) into the output folder; with --regress also
    environment.png. A periodic component found in the spectrum is noted in
    the summary and its taus are shaded on the stability plot.

    Example: stability analyze counter.csv --nominal 10MHz --stats oadev,mdev
    """
    folder = opts.folder(Path.cwd() / f"{log.name}-stability")
    causes = cause_settings(opts)
    counter_warning(causes)
    with ProgressDisplay(enabled=not opts.json) as bar:
        run, written = analyze_into(
            log,
            folder,
            opts.settings,
            plot_format=opts.plot_format,
            title=opts.title,
            noise_labels=opts.noise_labels,
            on_progress=bar.reading(log.name),
            on_step=bar.steps(log.name, step_count(opts.settings.analysis.stats)),
            causes=causes,
        )
    if opts.json:
        echo(summary_json(run.summary()), nl=False)
        return
    echo(terminal_table(run.table))
    echo("")
    echo(summary_block(run))
    echo("")
    echo(f"wrote {len(written)} files into {folder}")
