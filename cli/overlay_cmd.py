"""``stability overlay LOG [LOG ...]``: several logs (or statistics) on one stability plot.

Every log is analysed as ``stability analyze`` would (:func:`stability.run.run_analysis`)
with the shared options, which one log can override with a ``LOG:key=value,...``
suffix, for example ``ocxo.csv:kind=fractional,tau0=1s``. The keys are the
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

import stability
from stability.errors import InputError
from stability.figures import overlay_figure, save_figure
from stability.files import atomic_write_text, ensure_folder
from stability.reports.tables import table_csv, table_markdown, terminal_table
from stability.run import AnalysisRun, run_analysis
from stability.summary import summary_json
from stability.workflow import PLOT_FORMATS

from . import main as _app_first  # noqa: F401  (the app and analyze load first)
from .common import (
    AverageOpt,
    ColumnOpt,
    ConfidenceOpt,
    DebugOpt,
    DriftOpt,
    JsonOpt,
    KindOpt,
    NominalOpt,
    OutliersOpt,
    PlotFormatOpt,
    StrictOpt,
    Tau0Opt,
    TausOpt,
    TimeColumnOpt,
    WrapOpt,
    handle_errors,
    outliers_value,
)
from .main import app

__all__ = ["LogSpec", "parse_log_spec", "overlay", "PER_LOG_KEYS"]

#: Keys a ``LOG:key=value`` suffix may set.
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
_PAIR = re.compile(r"^\s*([A-Za-z][A-Za-z0-9_\-]*)\s*=\s*(.*?)\s*$")

LogsArg = Annotated[
    list[str],
    typer.Argument(
        help="Log files; LOG:key=value,... overrides options for that log "
        "(keys: kind, column, time_column, tau0, nominal, wrap, outliers, drift, average).",
        show_default=False,
        metavar="LOG[:key=value,...]...",
    ),
]
LabelsOpt = Annotated[
    str | None,
    typer.Option("--labels", help="Comma list of labels, one per log (default: file names)."),
]
OverlayStatsOpt = Annotated[
    str, typer.Option("--stats", help="Comma list of statistics to overlay, e.g. oadev,mdev.")
]
OverlayOutOpt = Annotated[
    Path | None,
    typer.Option("--out", help="Output folder (default: overlay-stability/ here)."),
]
TitleOpt = Annotated[str | None, typer.Option("--title", help="Title of the plot.")]


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
            return int(value)
        except ValueError:
            raise InputError(
                f"average must be a whole number of samples, got {value!r} in {argument!r}"
            ) from None
    if key == "outliers":
        return outliers_value(value)
    return value


def parse_log_spec(argument: str) -> LogSpec:
    """Split ``LOG:key=value,...`` into the path and its options.

    The split is at the last ``:`` and only when the argument is not an existing
    file and what follows reads as ``key=value`` pairs; otherwise the whole
    argument is the path. A pair with an unknown key is an error that lists the
    known keys.
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


def _validate_overlay_args(
    logs: list[str], labels: str | None, plot_format: str
) -> tuple[list[LogSpec], list[str]]:
    if not logs:
        raise InputError("give at least one log", hint="stability overlay a.csv b.csv")
    if str(plot_format).lower() not in PLOT_FORMATS:
        raise InputError(
            f"--plot-format must be one of {', '.join(PLOT_FORMATS)}, got {plot_format!r}"
        )
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


@app.command("overlay")
@handle_errors
def overlay(
    logs: LogsArg,
    labels: LabelsOpt = None,
    stats: OverlayStatsOpt = "oadev",
    kind: KindOpt = "auto",
    column: ColumnOpt = None,
    time_column: TimeColumnOpt = None,
    tau0: Tau0Opt = None,
    nominal: NominalOpt = None,
    taus: TausOpt = "octave",
    confidence: ConfidenceOpt = 0.683,
    outliers: OutliersOpt = "5",
    drift: DriftOpt = "none",
    average: AverageOpt = 1,
    wrap: WrapOpt = None,
    out: OverlayOutOpt = None,
    plot_format: PlotFormatOpt = "png",
    title: TitleOpt = None,
    strict: StrictOpt = False,
    json_out: JsonOpt = False,
    debug: DebugOpt = False,
) -> None:
    """Overlay several logs (or statistics) on one stability plot with a combined table.

    Options apply to every log; LOG:key=value,... overrides them for one log
    (keys: kind, column, time_column, tau0, nominal, wrap, outliers, drift, average).

    Example: stability overlay ocxo.csv rb.csv:kind=fractional,tau0=1s --labels ocxo,rb
    """
    specs, names = _validate_overlay_args(logs, labels, plot_format)
    shared: dict[str, Any] = {
        "kind": kind,
        "column": int(column) if column is not None and column.isdigit() else column,
        "time_column": (
            int(time_column) if time_column is not None and time_column.isdigit() else time_column
        ),
        "tau0": tau0,
        "nominal": nominal,
        "wrap": wrap,
        "outliers": outliers_value(outliers),
        "drift": drift,
        "average": average,
    }
    runs: dict[str, AnalysisRun] = {}
    for label, spec in zip(names, specs, strict=True):
        options = {**shared, **spec.options}
        runs[label] = run_analysis(
            spec.path,
            strict=strict,
            stats=stats,
            taus=taus,
            confidence=confidence,
            **options,
        )
    tables = {label: run.table for label, run in runs.items()}
    moment = datetime.now(UTC)
    folder = ensure_folder(out if out is not None else Path.cwd() / "overlay-stability")
    fmt = plot_format.lower()
    drawn = overlay_figure(tables, title=title, analysis_time=moment)
    written = [
        save_figure(drawn, folder / f"overlay.{fmt}", fmt),
        atomic_write_text(folder / "table.csv", combined_csv(tables)),
        atomic_write_text(folder / "table.md", combined_markdown(tables)),
    ]
    summary = {
        "tool": {"name": "stability", "version": stability.__version__},
        "analysis_time": moment,
        "labels": names,
        "inputs": {label: run.summary() for label, run in runs.items()},
    }
    written.append(atomic_write_text(folder / "summary.json", summary_json(summary)))
    if json_out:
        typer.echo(summary_json(summary), nl=False)
        return
    typer.echo(combined_terminal(tables))
    for label, run in runs.items():
        sha = run.sha256[:12] if run.sha256 else "n/a"
        typer.echo(f"{label}: {run.source.provenance.path}  SHA-256 {sha}")
    typer.echo(f"wrote {len(written)} files into {folder}")
