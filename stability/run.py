"""One analysis as a value: read, prepare, analyse and qualify, kept with its settings.

``run_analysis`` is what ``stability analyze`` computes, as a library function::

    run = stability.run_analysis("counter.csv", nominal="10MHz", stats="oadev,mdev")
    run.table.to_frame()          # the qualified results table
    run.summary()                 # everything summary.json holds

The :class:`AnalysisRun` sits below the presentation layers (figures, tables,
the record), which take it as input; writing its files is
:mod:`stability.workflow`'s job.
"""

from __future__ import annotations

import os
from collections.abc import Callable
from dataclasses import dataclass, field
from datetime import UTC, datetime
from typing import Any

import numpy as np

from .analysis import analyze
from .display import Displayable
from .display import plot as _plot
from .errors import InputError
from .ingest import read_log
from .measurement import Measurement
from .prepare import PreparationReport, prepare, require_variation
from .qualify import model_curves
from .settings import RunSettings
from .summary import build_summary
from .table import StabilityTable
from .taus import parse_taus

__all__ = [
    "AnalysisRun",
    "read_and_prepare",
    "run_analysis",
    "analyse_prepared",
    "resolve_settings",
]

#: Called with (bytes read, bytes in all) while a log is read.
ReadProgress = Callable[[int, int], None]
#: Called with a short label after each statistic and after the qualification.
StepProgress = Callable[[str], None]


@dataclass(frozen=True)
class AnalysisRun(Displayable):
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
        Every setting of the run (reading, preparation and analysis), flat.
    analysis_time
        When the analysis ran (UTC).
    """

    source: Measurement
    measurement: Measurement
    preparation: PreparationReport
    table: StabilityTable
    settings: dict[str, Any]
    analysis_time: datetime = field(default_factory=lambda: datetime.now(UTC))

    @property
    def sha256(self) -> str | None:
        return self.source.provenance.sha256

    def summary(self) -> dict[str, Any]:
        """The summary (the content of summary.json)."""
        # the input section is the log as read; the reader's report is its "details"
        return build_summary(
            self.table,
            preparation=self.preparation.to_dict(),
            analysis_time=self.analysis_time,
            source=self.source,
        )

    def model_curves(self) -> dict[str, tuple[np.ndarray, np.ndarray]]:
        """The fitted power-law model as (tau, sigma) for the Allan-type statistics."""
        return model_curves(self.table)

    def plot(self, ax: Any = None, *, figure: Any = None, **options: Any) -> Any:
        """The sigma-tau plot exactly as ``stability analyze`` draws it in ``sigma_tau.png``.

        ``ax``, ``figure`` and ``options`` as for :meth:`StabilityTable.plot`;
        the footer carries this run's analysis date. Returns the
        :class:`stability.figures.StabilityDrawn`.
        """
        return _plot(self, ax=ax, figure=figure, **options)

    def plot_series(self, ax: Any = None, *, figure: Any = None, **options: Any) -> Any:
        """The data over time as ``stability analyze`` draws it in ``series.png``.

        The drift curve, outliers and phase steps of this run's preparation
        over the prepared data; ``ax``, ``figure`` and ``options`` as for
        :meth:`Measurement.plot`. Returns the :class:`stability.figures.SeriesDrawn`.
        """
        return _plot(self, ax=ax, figure=figure, view="series", **options)


def resolve_settings(settings: RunSettings | None, options: dict[str, Any]) -> RunSettings:
    """The run's settings: ``settings`` with any keyword settings applied on top."""
    if settings is not None and not isinstance(settings, RunSettings):
        raise InputError(
            f"settings must be a stability.RunSettings, got {type(settings).__name__}",
            hint="build one with RunSettings.from_options(...) or pass keyword settings",
        )
    if settings is None:
        return RunSettings.from_options(**options)
    return settings.replace(**options) if options else settings


def read_and_prepare(
    log: str | os.PathLike[str] | Measurement,
    settings: RunSettings | None = None,
    *,
    on_progress: ReadProgress | None = None,
    **options: Any,
) -> tuple[Measurement, Measurement, PreparationReport]:
    """Read (unless given a Measurement) and prepare: (as read, prepared, report).

    ``settings`` (or the keyword names of :meth:`RunSettings.from_options`) say
    how to read and prepare. A log without any variation (a stuck counter) is
    refused here, for every command.
    """
    settings = resolve_settings(settings, options)
    if isinstance(log, Measurement):
        source = log
    else:
        source = read_log(log, **settings.read.as_kwargs(), on_progress=on_progress)
    require_variation(source)
    prepared, report = prepare(source, **settings.prepare.as_kwargs())
    return source, prepared, report


def analyse_prepared(
    source: Measurement,
    prepared: Measurement,
    report: PreparationReport,
    settings: RunSettings,
    *,
    moment: datetime | None = None,
    on_step: StepProgress | None = None,
) -> AnalysisRun:
    """The analysis part of :func:`run_analysis`, on data already read and prepared."""
    spec = settings.analysis
    taus = parse_taus(spec.taus) if isinstance(spec.taus, str) else spec.taus
    # Offset and drift are reported for the data before any drift removal.
    before = source if report.average_factor == 1 else None
    table = analyze(
        prepared,
        stats=spec.stats,
        taus=taus,
        confidence=spec.confidence,
        f_h=spec.f_h,
        bias_correction=spec.bias_correction,
        offset_source=before,
        on_step=on_step,
    )
    flat = {
        **settings.read.describe(),
        "outliers": settings.prepare.outliers,
        "drift": settings.prepare.drift,
        "average": settings.prepare.average,
        **table.settings,
    }
    table = StabilityTable(
        results=table.results,
        confidence=table.confidence,
        settings=flat,
        measurement=table.measurement,
        extras=table.extras,
    )
    return AnalysisRun(
        source=source,
        measurement=prepared,
        preparation=report,
        table=table,
        settings=flat,
        analysis_time=moment or datetime.now(UTC),
    )


def run_analysis(
    log: str | os.PathLike[str] | Measurement,
    settings: RunSettings | None = None,
    *,
    on_progress: ReadProgress | None = None,
    on_step: StepProgress | None = None,
    **options: Any,
) -> AnalysisRun:
    """Read (unless given a Measurement), prepare, analyse and qualify.

    Parameters
    ----------
    log
        A log file or a :class:`Measurement`.
    settings
        A :class:`RunSettings`; or give the settings by keyword instead: the
        reading hints of :func:`stability.read_log` (kind, column, time_column,
        tau0, nominal, wrap, strict), the preparation (outliers, drift,
        average) and the analysis (stats, taus, confidence, f_h).
    on_progress, on_step
        Progress callbacks for reading (bytes) and for the statistics.
    """
    settings = resolve_settings(settings, options)
    source, prepared, report = read_and_prepare(log, settings, on_progress=on_progress)
    return analyse_prepared(source, prepared, report, settings, on_step=on_step)
