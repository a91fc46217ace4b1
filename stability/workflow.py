"""Write an analysis's outputs: the tables, the summary and the two figures, all or nothing.

``analyze_into`` is what ``stability analyze`` does::

    run, files = stability.workflow.analyze_into("counter.csv", "out/", nominal="10MHz")

Every file is first written under a hidden pending name in the output folder;
the five are moved into place only once all of them exist, so a failed run
leaves no file of its own behind and changes no earlier output, and folders
made for the run are removed again. Figures are drawn in this process.
"""

from __future__ import annotations

import contextlib
import os
import secrets
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

from .errors import InputError
from .files import atomic_write_text, ensure_folder
from .measurement import Measurement
from .plots import save_figure, series_figure, stability_figure
from .reports.labels import default_footer, default_title
from .reports.tables import table_csv, table_markdown
from .run import (
    AnalysisRun,
    ReadProgress,
    StepProgress,
    analyse_prepared,
    read_and_prepare,
    resolve_settings,
)
from .settings import RunSettings
from .summary import summary_json

__all__ = ["analyze_into", "write_analysis", "PLOT_FORMATS", "OUTPUT_NAMES", "check_plot_format"]

PLOT_FORMATS = ("png", "svg", "pdf")
OUTPUT_NAMES = ("table.csv", "table.md", "summary.json", "sigma_tau", "series")

#: The text outputs of an analysis.
_TEXT_NAMES = ("table.csv", "table.md", "summary.json")


def check_plot_format(plot_format: Any) -> str:
    """A plot format name of :data:`PLOT_FORMATS` in lower case."""
    fmt = str(plot_format).lower()
    if fmt not in PLOT_FORMATS:
        raise InputError(
            f"unknown plot format {plot_format!r}", hint=f"choose {', '.join(PLOT_FORMATS)}"
        )
    return fmt


def _pending_path(folder: Path, name: str) -> Path:
    """A hidden, unique name beside ``name`` for a file that is moved into place later."""
    return folder / f".{name}.{os.getpid()}.{secrets.token_hex(4)}.pending"


def _draw_series(
    target: Path, fmt: str, run: AnalysisRun, title: str | None, footer: str | None
) -> Path:
    shown, drift, outliers = run.series_inputs()
    fig = series_figure(
        shown,
        drift_curve=drift,
        outlier_indices=outliers,
        analysis_time=run.analysis_time,
        title=title,
        footer=footer,
    )
    return save_figure(fig, target, fmt)


def _draw_stability(
    target: Path,
    fmt: str,
    run: AnalysisRun,
    limits: Any,
    limits_statistic: str | None,
    title: str | None,
    footer: str | None,
) -> Path:
    fig = stability_figure(
        run.table,
        model_curve=run.model_curves(),
        limits=limits,
        limits_statistic=limits_statistic,
        analysis_time=run.analysis_time,
        title=title,
        footer=footer,
    )
    return save_figure(fig, target, fmt)


def _write_all(
    run: AnalysisRun,
    paths: dict[str, Path],
    fmt: str,
    limits: Any,
    limits_statistic: str | None,
    titled: bool,
    title: str | None = None,
) -> None:
    """Write the five outputs to the given paths (keys: :data:`OUTPUT_NAMES`).

    ``title`` replaces the stability figure's title (the default names the log).
    """
    texts = {
        "table.csv": lambda: table_csv(run.table),
        "table.md": lambda: table_markdown(run.table),
        "summary.json": lambda: summary_json(run.summary()),
    }
    for name in _TEXT_NAMES:
        atomic_write_text(paths[name], texts[name]())
    shown = run.series_inputs()[0]
    series_title = default_title(shown, "data over time") if titled else None
    series_footer = default_footer(shown, analysis_time=run.analysis_time) if titled else None
    stab_title = default_title(run.table.measurement, "stability") if titled else None
    stab_title = title if title is not None else stab_title
    stab_footer = default_footer(run.table, analysis_time=run.analysis_time) if titled else None
    _draw_stability(paths["sigma_tau"], fmt, run, limits, limits_statistic, stab_title, stab_footer)
    _draw_series(paths["series"], fmt, run, series_title, series_footer)


def analyze_into(
    log: str | os.PathLike[str] | Measurement,
    folder: str | os.PathLike[str],
    settings: RunSettings | None = None,
    *,
    plot_format: str = "png",
    limits: Any = None,
    limits_statistic: str | None = None,
    title: str | None = None,
    on_progress: ReadProgress | None = None,
    on_step: StepProgress | None = None,
    **options: Any,
) -> tuple[AnalysisRun, dict[str, Path]]:
    """Read, prepare, analyse and write the five outputs into ``folder``: (run, files).

    ``settings`` (or keyword settings as :func:`stability.run_analysis` takes
    them) say what to do; ``title`` replaces the stability figure's title. All
    five files appear together or not at all.
    """
    fmt = check_plot_format(plot_format)
    settings = resolve_settings(settings, options)
    target = Path(folder)
    made = [p for p in (target, *target.parents) if not p.exists()]  # nearest first
    pending: dict[str, Path] = {}
    try:
        source, prepared, report = read_and_prepare(log, settings, on_progress=on_progress)
        out = ensure_folder(target)
        moment = datetime.now(UTC)
        run = analyse_prepared(source, prepared, report, settings, moment=moment, on_step=on_step)
        finals = {name: f"{name}.{fmt}" for name in ("sigma_tau", "series")}
        finals.update({name: name for name in _TEXT_NAMES})
        pending = {name: _pending_path(out, final) for name, final in finals.items()}
        _write_all(run, pending, fmt, limits, limits_statistic, titled=True, title=title)
        written = {name: pending[name].replace(out / finals[name]) for name in finals}
    except BaseException:
        for path in pending.values():
            path.unlink(missing_ok=True)
        for path in made:  # folders made for this run go again (when left empty)
            with contextlib.suppress(OSError):
                path.rmdir()
        raise
    return run, {name: written[name] for name in OUTPUT_NAMES}


def write_analysis(
    run: AnalysisRun,
    folder: str | os.PathLike[str],
    *,
    plot_format: str = "png",
    limits: Any = None,
    limits_statistic: str | None = None,
    title: str | None = None,
) -> dict[str, Path]:
    """Write table.csv, table.md, summary.json and both plots of a run into ``folder``.

    ``title`` replaces the stability figure's title.
    """
    fmt = check_plot_format(plot_format)
    out = ensure_folder(folder)
    paths = {name: out / name for name in _TEXT_NAMES}
    paths.update({name: out / f"{name}.{fmt}" for name in ("sigma_tau", "series")})
    _write_all(run, paths, fmt, limits, limits_statistic, titled=False, title=title)
    return paths
