"""The whole job in one call: read, prepare, analyse, qualify, and write the outputs.

``run_analysis`` is what ``stability analyze`` does, as a library function::

    run = stability.run_analysis("counter.csv", nominal="10MHz", stats="oadev,mdev")
    run.table.to_frame()          # the qualified results table
    run.summary()                 # everything summary.json holds
    write_analysis(run, "out/")   # table.csv, table.md, summary.json, sigma_tau.png, series.png
"""

from __future__ import annotations

import contextlib
import os
import secrets
import sys
from dataclasses import dataclass, field
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

import numpy as np

from .analysis import analyze
from .errors import InputError
from .figures import save_figure, series_figure, stability_figure
from .ingest import read_log
from .measurement import Measurement
from .prepare import PreparationReport, prepare, require_variation
from .qualify import model_curve
from .taus import parse_taus

__all__ = [
    "AnalysisRun",
    "read_and_prepare",
    "run_analysis",
    "write_analysis",
    "analyze_into",
    "PLOT_FORMATS",
    "OUTPUT_NAMES",
]

PLOT_FORMATS = ("png", "svg", "pdf")
OUTPUT_NAMES = ("table.csv", "table.md", "summary.json", "sigma_tau", "series")

_READ_KEYS = ("kind", "column", "time_column", "tau0", "nominal", "wrap", "strict")


@dataclass
class AnalysisRun:
    """One analysis, from the data as read to the qualified table.

    Attributes
    ----------
    source
        The measurement as read (before preparation).
    measurement
        The prepared measurement the statistics were computed from.
    preparation
        What preparation did.
    table
        The qualified results table.
    settings
        Every setting of the run (reading, preparation and analysis).
    analysis_time
        When the analysis ran (UTC).
    """

    source: Measurement
    measurement: Measurement
    preparation: PreparationReport
    table: Any
    settings: dict[str, Any]
    analysis_time: datetime = field(default_factory=lambda: datetime.now(UTC))

    @property
    def sha256(self) -> str | None:
        return self.source.provenance.sha256

    def summary(self) -> dict[str, Any]:
        """The summary (the content of summary.json)."""
        from .reports.summary import build_summary

        return build_summary(
            self.table,
            preparation=self.preparation.to_dict(),
            input_report=self.source.provenance.details or None,
            analysis_time=self.analysis_time,
        )

    def model_curves(self) -> dict[str, tuple[np.ndarray, np.ndarray]]:
        """The fitted power-law model as (tau, sigma) for the Allan-type statistics."""
        model = self.table.extras.get("power_law_model")
        out = {}
        for name in ("oadev", "adev"):
            if name in self.table.results:
                out[name] = model_curve(model, self.table[name].tau)
        return {k: v for k, v in out.items() if v[0].size}

    def series_inputs(self) -> tuple[Measurement, np.ndarray | None, np.ndarray]:
        """Measurement, drift curve and outlier indices to draw the data over time."""
        return _series_inputs(self.source, self.measurement, self.preparation)


def _series_inputs(
    source: Measurement, prepared: Measurement, prep: PreparationReport
) -> tuple[Measurement, np.ndarray | None, np.ndarray]:
    if prep.average_factor == 1:
        shown = source
        outliers = np.array([o.index for o in prep.outliers.samples], dtype=np.int64)
    else:
        shown = prepared
        outliers = np.empty(0, dtype=np.int64)
    fit = prep.removed_drift if prep.removed_drift is not None else prep.linear_drift
    drift = None
    if fit is not None and fit.y_model.shape == (shown.n - 1,):
        drift = fit.y_model + (shown.frequency_offset if fit.model == "none" else 0.0)
    return shown, drift, outliers


def _split_options(options: dict[str, Any]) -> tuple[dict, dict, dict]:
    unknown = (
        set(options)
        - set(_READ_KEYS)
        - {
            "stats",
            "taus",
            "confidence",
            "outliers",
            "drift",
            "average",
            "f_h",
            "progress",
        }
    )
    if unknown:
        raise InputError(f"unknown option(s) {', '.join(sorted(unknown))} for run_analysis")
    read = {k: options[k] for k in _READ_KEYS if k in options and options[k] is not None}
    prep = {k: options[k] for k in ("outliers", "drift", "average") if k in options}
    rest = {k: options[k] for k in ("stats", "taus", "confidence", "f_h") if k in options}
    return read, prep, rest


@contextlib.contextmanager
def _computing_bar(show: bool, ana_opts: dict[str, Any]):
    """A progress bar over the statistics on an interactive terminal; nothing otherwise."""
    if not (show and sys.stderr.isatty()):
        yield None
        return
    from rich.progress import Progress

    stats = ana_opts.get("stats", "oadev,mdev")
    count = len(stats.split(",") if isinstance(stats, str) else list(stats)) + 1
    with Progress(transient=True) as bar:
        job = bar.add_task("computing", total=count)
        yield lambda label: bar.update(job, advance=1, description=f"computed {label}")


def read_and_prepare(
    log: str | os.PathLike[str] | Measurement, **options: Any
) -> tuple[Measurement, Measurement, PreparationReport]:
    """Read (unless given a Measurement) and prepare: (as read, prepared, report).

    Options: the reading hints of :func:`stability.read_log` and the
    preparation settings of :func:`stability.prepare.prepare`. A log without
    any variation (a stuck counter) is refused here, for every command.
    """
    read_opts, prep_opts, rest = _split_options(options)
    if rest:
        raise InputError(f"unknown option(s) {', '.join(sorted(rest))} for read_and_prepare")
    if isinstance(log, Measurement):
        source = log
    else:
        source = read_log(log, progress=bool(options.get("progress", False)), **read_opts)
    require_variation(source)
    prepared, report = prepare(source, **prep_opts)
    return source, prepared, report


def run_analysis(log: str | os.PathLike[str] | Measurement, **options: Any) -> AnalysisRun:
    """Read (unless given a Measurement), prepare, analyse and qualify.

    Options: the reading hints of :func:`stability.read_log` (kind, column,
    time_column, tau0, nominal, wrap, strict), the preparation settings of
    :func:`stability.prepare.prepare` (outliers, drift, average), and the
    analysis settings of :func:`stability.analyze` (stats, taus, confidence,
    f_h).
    """
    read_opts, prep_opts, ana_opts = _split_options(options)
    source, prepared, report = read_and_prepare(
        log, progress=bool(options.get("progress", False)), **read_opts, **prep_opts
    )
    return _qualified_run(source, prepared, report, options, datetime.now(UTC))


def _qualified_run(
    source: Measurement,
    prepared: Measurement,
    report: PreparationReport,
    options: dict[str, Any],
    moment: datetime,
) -> AnalysisRun:
    """The analysis part of :func:`run_analysis`, on data already read and prepared."""
    read_opts, prep_opts, ana_opts = _split_options(options)
    taus = ana_opts.get("taus", "octave")
    taus = parse_taus(taus) if isinstance(taus, str) else taus
    # Offset and drift are reported for the data before any drift removal.
    before = source if report.average_factor == 1 else None
    with _computing_bar(bool(options.get("progress", False)), ana_opts) as on_step:
        table = analyze(
            prepared,
            stats=ana_opts.get("stats", "oadev,mdev"),
            taus=taus,
            confidence=ana_opts.get("confidence", 0.683),
            f_h=ana_opts.get("f_h"),
            offset_source=before,
            on_step=on_step,
        )
    settings = {
        **{k: (str(v) if v is not None else None) for k, v in read_opts.items()},
        "outliers": prep_opts.get("outliers", 5.0),
        "drift": prep_opts.get("drift", "none"),
        "average": prep_opts.get("average", 1),
        **table.settings,
    }
    table.settings = settings
    return AnalysisRun(
        source=source,
        measurement=prepared,
        preparation=report,
        table=table,
        settings=settings,
        analysis_time=moment,
    )


def analyze_into(
    log: str | os.PathLike[str] | Measurement,
    folder: str | os.PathLike[str],
    *,
    plot_format: str = "png",
    limits: Any = None,
    limits_statistic: str | None = None,
    **options: Any,
) -> tuple[AnalysisRun, dict[str, Path]]:
    """:func:`run_analysis` and :func:`write_analysis` in one go: (run, files written).

    Every file is first written under a hidden pending name and all five are
    put in place only once the whole run has succeeded; if anything fails, no
    file of this run is left behind, and folders made for the run are removed
    again.
    """
    from .files import ensure_folder

    fmt = _check_plot_format(plot_format)
    target = Path(folder)
    made = [p for p in (target, *target.parents) if not p.exists()]  # nearest first
    pending: dict[str, Path] = {}
    try:
        run = run_analysis(log, **options)
        out = ensure_folder(target)
        finals = {name: f"{name}.{fmt}" for name in ("sigma_tau", "series")}
        finals.update({name: name for name in _TEXT_NAMES})
        pending = {name: _pending_path(out, final) for name, final in finals.items()}
        _write_outputs(run, pending, fmt, limits, limits_statistic)
        written = {name: pending[name].replace(out / finals[name]) for name in finals}
    except BaseException:
        for path in pending.values():
            path.unlink(missing_ok=True)
        for path in made:  # folders made for this run go again (when left empty)
            with contextlib.suppress(OSError):
                path.rmdir()
        raise
    return run, {name: written[name] for name in (*_TEXT_NAMES, "sigma_tau", "series")}


def _check_plot_format(plot_format: Any) -> str:
    fmt = str(plot_format).lower()
    if fmt not in PLOT_FORMATS:
        raise InputError(
            f"unknown plot format {plot_format!r}", hint=f"choose {', '.join(PLOT_FORMATS)}"
        )
    return fmt


def _pending_path(folder: Path, name: str) -> Path:
    """A hidden, unique name beside ``name`` for a file that is moved into place later."""
    return folder / f".{name}.{os.getpid()}.{secrets.token_hex(4)}.pending"


def _write_outputs(
    run: AnalysisRun,
    paths: dict[str, Path],
    fmt: str,
    limits: Any,
    limits_statistic: str | None,
) -> dict[str, Path]:
    """Write the text outputs and both figures of a run to the given paths."""
    written = _write_texts(run, {name: paths[name] for name in _TEXT_NAMES})
    plot = stability_figure(
        run.table,
        model_curve=run.model_curves(),
        limits=limits,
        limits_statistic=limits_statistic,
        analysis_time=run.analysis_time,
    )
    written["sigma_tau"] = save_figure(plot, paths["sigma_tau"], fmt)
    shown, drift, outliers = run.series_inputs()
    series = series_figure(
        shown, drift_curve=drift, outlier_indices=outliers, analysis_time=run.analysis_time
    )
    written["series"] = save_figure(series, paths["series"], fmt)
    return written


#: The text outputs of an analysis.
_TEXT_NAMES = ("table.csv", "table.md", "summary.json")


def _write_texts(run: AnalysisRun, paths: dict[str, Path]) -> dict[str, Path]:
    """Write the three text outputs to the given paths (keys: :data:`_TEXT_NAMES`)."""
    from .files import atomic_write_text
    from .reports.summary import summary_json
    from .reports.tables import table_csv, table_markdown

    texts = {
        "table.csv": lambda: table_csv(run.table),
        "table.md": lambda: table_markdown(run.table),
        "summary.json": lambda: summary_json(run.summary()),
    }
    return {name: atomic_write_text(paths[name], texts[name]()) for name in _TEXT_NAMES}


def write_analysis(
    run: AnalysisRun,
    folder: str | os.PathLike[str],
    *,
    plot_format: str = "png",
    limits: Any = None,
    limits_statistic: str | None = None,
) -> dict[str, Path]:
    """Write table.csv, table.md, summary.json and both plots into ``folder`` (atomically)."""
    from .files import ensure_folder

    fmt = _check_plot_format(plot_format)
    out = ensure_folder(folder)
    names = {name: name for name in _TEXT_NAMES}
    names.update({name: f"{name}.{fmt}" for name in ("sigma_tau", "series")})
    return _write_outputs(
        run, {key: out / name for key, name in names.items()}, fmt, limits, limits_statistic
    )
