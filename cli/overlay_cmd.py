"""``stability overlay LOG [LOG ...]``: several logs (or statistics) on one stability plot.

Every log is analysed as ``stability analyze`` would (:func:`stability.run.run_analysis`)
with the shared options, which one log can override with a ``LOG:key=value,...``
suffix (checked like the options themselves: a value of the wrong form is a
usage error), for example ``ocxo.csv:kind=fractional,tau0=1s``. The keys are the
reading options (kind, column, time_column, tau0, nominal, wrap) and the
preparation options (outliers, drift, average). The suffix is split off at the
last ``:`` only when what follows reads as ``key=value`` pairs and the whole
argument is not an existing file, so Windows drive letters (``C:\\logs\\a.csv``)
and colons in file names are left alone.

Outputs in ``--out`` (default ``overlay-stability/``): ``overlay.png`` (or
``--plot-format``), ``table.csv`` (a leading ``label`` column, then the results
columns of NIST SP 1065 style tables [1]_), ``table.md`` and ``summary.json``
(each input's summary: SHA-256, settings, preparation, table).

References
----------
.. [1] W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065
   (2008), sections 5.2 (sigma-tau plots) and 5.3 (confidence intervals).
"""

from __future__ import annotations

import csv
import io
import re
from dataclasses import dataclass, field
from datetime import UTC, datetime
from pathlib import Path
from typing import Annotated, Any

import typer

from stability._version import __version__
from stability.errors import InputError
from stability.figures import overlay_figure, save_figure
from stability.outputs import OutputSet
from stability.reports.tables import table_csv, table_markdown, terminal_table
from stability.run import AnalysisRun, run_analysis
from stability.summary import summary_json

from .common import command_line_checks, echo
from .options import (
    ANALYSING,
    OUT,
    PREPARING,
    READING,
    TITLE,
    WRITING,
    OptionSpec,
    RunOptions,
    command,
    stats_option,
)
from .progress import ProgressDisplay, step_count

__all__ = [
    "LogSpec",
    "parse_log_spec",
    "overlay",
    "PER_LOG_KEYS",
    "combined_csv",
    "combined_markdown",
    "combined_terminal",
]

#: Keys a ``LOG:key=value`` suffix may set: the reading and preparation options.
PER_LOG_KEYS = (
    "kind",
    "column",
    "time_column",
    "tau0",
    "nominal",
    "wrap",
    "outliers",
    "drift",
    "average",
)
_CHECKS: dict[str, OptionSpec] = {o.name: o for o in READING + PREPARING}
_PAIR = re.compile(r"^\s*([A-Za-z][A-Za-z0-9_\-]*)\s*=\s*(.*?)\s*$")

LogsArg = Annotated[
    list[str],
    typer.Argument(
        help="Log files; LOG:key=value,... overrides options for that log "
        "(keys: kind, column, time_column, tau0, nominal, wrap, outliers, drift, average).",
        show_default=False,
        metavar="LOG[:key=value,...]",
    ),
]
LabelsOpt = Annotated[
    str | None,
    typer.Option(
        "--labels",
        help="Comma list of labels, one per log (default: file names).",
        metavar="LIST",
    ),
]


@dataclass
class LogSpec:
    """One log argument: its path and the options it overrides."""

    path: Path
    options: dict[str, Any] = field(default_factory=dict)
    text: str = ""


def _pairs(text: str) -> list[tuple[str, str]] | None:
    """``key=value,key=value`` as pairs, or None when the text is not of that form."""
    pairs = []
    for piece in text.split(","):
        match = _PAIR.match(piece)
        if not match:
            return None
        pairs.append((match.group(1).lower().replace("-", "_"), match.group(2)))
    return pairs or None


def _option_value(key: str, value: str, argument: str) -> Any:
    if value == "":
        raise InputError(f"empty value for {key} in {argument!r}", hint=f"write {key}=VALUE")
    if key in ("column", "time_column"):
        return int(value) if value.isdigit() else value
    if key == "average":
        try:
            number = int(value)
        except ValueError:
            number = 0
        if number < 1:
            raise InputError(
                f"average must be a whole number of samples, got {value!r} in {argument!r}"
            )
        return number
    check = _CHECKS[key].check
    if check is None:
        return value
    try:
        return check(value)
    except InputError as exc:
        raise InputError(f"{exc.one_line()} in {argument!r}") from None


def parse_log_spec(argument: str) -> LogSpec:
    """Split ``LOG:key=value,...`` into the path and its options.

    The split is at the last ``:`` and only when the argument is not an existing
    file and what follows reads as ``key=value`` pairs; otherwise the whole
    argument is the path. A pair with an unknown key is an error that lists the
    known keys; each value is checked as its option's value is.
    """
    text = str(argument)
    head, sep, tail = text.rpartition(":")
    if not sep or Path(text).exists() or not head:
        return LogSpec(Path(text), {}, text)
    pairs = _pairs(tail)
    if pairs is None:
        return LogSpec(Path(text), {}, text)
    options: dict[str, Any] = {}
    for key, value in pairs:
        if key not in PER_LOG_KEYS:
            raise InputError(
                f"unknown per-log option {key!r} in {text!r}",
                hint=f"use {', '.join(PER_LOG_KEYS)}",
            )
        options[key] = _option_value(key, value, text)
    return LogSpec(Path(head), options, text)


def _validate_overlay_args(logs: list[str], labels: str | None) -> tuple[list[LogSpec], list[str]]:
    if not logs:
        raise InputError("give at least one log", hint="stability overlay a.csv b.csv")
    specs = [parse_log_spec(a) for a in logs]
    if labels is not None:
        names = [s.strip() for s in labels.split(",")]
        if len(names) != len(specs) or any(not n for n in names):
            raise InputError(
                f"--labels must give one non-empty label per log ({len(specs)}), "
                f"got {len(names)}: {labels!r}"
            )
    else:
        names = [s.path.name for s in specs]
        if len(set(names)) != len(names):
            names = [str(s.path) for s in specs]
    if len(set(names)) != len(names):
        raise InputError(f"labels must differ, got {', '.join(names)}", hint="pass --labels")
    return specs, names


def combined_csv(tables: dict[str, Any]) -> str:
    """The results tables of every label as one CSV with a leading ``label`` column."""
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    header_written = False
    for label, table in tables.items():
        rows = list(csv.reader(io.StringIO(table_csv(table))))
        if not header_written:
            writer.writerow(["label", *rows[0]])
            header_written = True
        for row in rows[1:]:
            writer.writerow([label, *row])
    return buffer.getvalue()


def combined_markdown(tables: dict[str, Any]) -> str:
    """One Markdown table of every label (the label as the first column)."""
    out: list[str] = []
    for label, table in tables.items():
        lines = table_markdown(table).splitlines()
        if not out:
            out.append("| label " + lines[0])
            out.append("|:---" + lines[1])
        cell = label.replace("|", "\\|")
        out.extend(f"| {cell} " + line for line in lines[2:])
    return "\n".join(out) + "\n"


def combined_terminal(tables: dict[str, Any]) -> str:
    """The terminal tables of every label stacked, with the label as the first column."""
    width = max(len("label"), *(len(label) for label in tables))
    out: list[str] = []
    for label, table in tables.items():
        lines = terminal_table(table).rstrip("\n").splitlines()
        if not out:
            out.append("label".ljust(width) + "  " + lines[0])
            out.append("-" * width + "  " + lines[1])
        else:
            out.append("")
        for line in lines[2:]:
            out.append((label.ljust(width) + "  " + line) if line else "")
    return "\n".join(out) + "\n"


@command(
    READING,
    PREPARING,
    ANALYSING,
    WRITING,
    variants=(
        stats_option("oadev"),
        OUT.but(help="Output folder (default: overlay-stability/ in the current folder)."),
        TITLE.but(help="Title of the overlay figure (default: none)."),
    ),
)
def overlay(logs: LogsArg, labels: LabelsOpt = None, *, opts: RunOptions) -> None:
    """Overlay several logs (or statistics) on one stability plot with a combined table.

    Options apply to every log; LOG:key=value,... overrides them for one log
    (keys: kind, column, time_column, tau0, nominal, wrap, outliers, drift, average).

    Example: stability overlay ocxo.csv rb.csv:kind=fractional,tau0=1s --labels ocxo,rb
    """
    with command_line_checks():
        specs, names = _validate_overlay_args(logs, labels)
    steps = step_count(opts.settings.analysis.stats)
    runs: dict[str, AnalysisRun] = {}
    with ProgressDisplay(enabled=not opts.json) as bar:
        for label, spec in zip(names, specs, strict=True):
            settings = opts.settings.replace(**spec.options) if spec.options else opts.settings
            runs[label] = run_analysis(
                spec.path,
                settings,
                on_progress=bar.reading(label),
                on_step=bar.steps(label, steps),
            )
    tables = {label: run.table for label, run in runs.items()}
    moment = datetime.now(UTC)
    folder = opts.folder(Path.cwd() / "overlay-stability")
    fmt = opts.plot_format
    drawn = overlay_figure(tables, title=opts.title, analysis_time=moment)
    summary = {
        "tool": {"name": "stability", "version": __version__},
        "analysis_time": moment,
        "labels": names,
        "inputs": {label: run.summary() for label, run in runs.items()},
    }
    names_out = [f"overlay.{fmt}", "table.csv", "table.md", "summary.json"]
    with OutputSet(folder, names_out, inputs=[s.path for s in specs]) as out:
        save_figure(drawn, out.path(f"overlay.{fmt}"), fmt)
        out.write_text("table.csv", combined_csv(tables))
        out.write_text("table.md", combined_markdown(tables))
        out.write_text("summary.json", summary_json(summary))
        written = list(out.commit().values())
    if opts.json:
        echo(summary_json(summary), nl=False)
        return
    echo(combined_terminal(tables))
    for label, run in runs.items():
        sha = run.sha256[:12] if run.sha256 else "n/a"
        echo(f"{label}: {run.source.provenance.path}  SHA-256 {sha}")
    echo(f"wrote {len(written)} files into {folder}")
