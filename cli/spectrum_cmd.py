"""``stability spectrum LOG``: where the instability sits in frequency, and what repeats.

Writes the Welch spectrum of the log's fractional frequency (with its band, the
Allan-deviation model beside the spectrum's own power-law fit, S_x and L(f) at
the nominal frequency) as ``spectrum.csv``, the figure ``spectrum.png`` and the
analysis summary ``summary.json``; prints the periodic components found and
the two views of the noise model side by side.
"""

from __future__ import annotations

from pathlib import Path

from stability.summary import summary_json
from stability.workflow import spectrum_into

from .cause_options import CAUSES, SPECTRUM, cause_settings
from .common import echo
from .options import (
    ANALYSING,
    OUT,
    PREPARING,
    READING,
    TITLE,
    WRITING,
    LogArg,
    RunOptions,
    command,
)
from .progress import ProgressDisplay
from .reporting import counter_warning, spectrum_lines

__all__ = ["spectrum_command"]


@command(
    READING,
    PREPARING,
    ANALYSING,
    WRITING,
    SPECTRUM,
    CAUSES,
    variants=(
        OUT.but(help="Output folder (default: <log name>-spectrum/ in the current folder)."),
        TITLE.but(help="Title of the spectrum figure (default: the log's file name)."),
    ),
)
def spectrum_command(log: LogArg, *, opts: RunOptions) -> None:
    """Spectrum of a log: S_y(f), S_x(f), L(f), the noise model and periodic components.

    Writes spectrum.csv, spectrum.png (or the --plot-format) and summary.json
    into the output folder.

    Example: stability spectrum counter.csv --nominal 10MHz --segments 16
    """
    folder = opts.folder(Path.cwd() / f"{log.name}-spectrum")
    causes = cause_settings(opts)
    counter_warning(causes)
    with ProgressDisplay(enabled=not opts.json) as bar:
        run, spectrum, written = spectrum_into(
            log,
            folder,
            opts.settings,
            causes,
            plot_format=opts.plot_format,
            title=opts.title,
            on_progress=bar.reading(log.name),
        )
    if opts.json:
        echo(summary_json(run.summary()), nl=False)
        return
    echo(spectrum_lines(run, spectrum))
    echo("")
    echo(f"wrote {len(written)} files into {folder}")
