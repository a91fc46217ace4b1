"""The figures behind the results' ``plot`` methods, registered with :mod:`stability.display`.

A result type lives floors below the figures, so its ``plot`` method looks its
drawer up in :mod:`stability.display`; this module fills that registry when
``stability.figures`` is imported. Each drawer is a thin call of the figure
function the command line uses (one implementation): ``ax`` goes to the
function's ``axes`` (the data panels, in a figure the caller lays out),
``figure`` to its ``into`` (the whole figure in a ``Figure`` or ``SubFigure``),
and with neither it draws a figure of its own, never through pyplot.

A new figure registers its result type here (or in its own module, imported by
the package) with :func:`stability.display.register_plot`.
"""

from __future__ import annotations

from typing import Any

from ..display import register_plot
from ..dynamic import DynamicResult
from ..errors import InputError
from ..hat import HatResult
from ..measurement import Measurement
from ..phase_noise import PhaseNoiseStability
from ..qualify import model_curves
from ..run import AnalysisRun
from ..spec import Judgement
from ..table import StabilityTable
from ..timing import TimeErrorAnalysis
from .hat import HatDrawn, hat_figure
from .phase_noise import PhaseNoiseDrawn, phase_noise_figure
from .series import SeriesDrawn, run_series_figure, series_figure
from .sigma_tau import StabilityDrawn, run_stability_figure, stability_figure
from .timeline import TimelineDrawn, timeline_figure
from .timing import MaskDrawn, TieDrawn, mask_figure, tie_figure

__all__ = [
    "plot_measurement",
    "plot_table",
    "plot_run",
    "plot_run_series",
    "plot_hat",
    "plot_phase_noise",
    "plot_dynamic",
    "plot_time_error",
    "plot_tie",
]


def _judged(options: dict[str, Any]) -> dict[str, Any]:
    """``judgement=`` (a :class:`~stability.spec.Judgement`) as the limits the record draws."""
    judgement = options.pop("judgement", None)
    if judgement is None:
        return options
    if not isinstance(judgement, Judgement):
        raise InputError(
            f"judgement must be a stability.spec.Judgement, got {type(judgement).__name__}",
            hint="make one with stability.spec.judge(table, spec)",
        )
    if "limits" in options:
        raise InputError("give either judgement or limits, not both")
    options["limits"] = judgement.plot_limits()
    options.setdefault("limits_statistic", judgement.statistic)
    return options


def plot_measurement(
    measurement: Measurement, ax: Any = None, figure: Any = None, **options: Any
) -> SeriesDrawn:
    """:meth:`Measurement.plot`: :func:`series_figure` of the measurement."""
    return series_figure(measurement, axes=ax, into=figure, **options)


def plot_table(
    table: StabilityTable, ax: Any = None, figure: Any = None, **options: Any
) -> StabilityDrawn:
    """:meth:`StabilityTable.plot`: :func:`stability_figure` with the table's power-law model.

    ``judgement=`` draws a judgement's limits and verdicts, as the record does.
    """
    options = _judged(options)
    options.setdefault("model_curve", model_curves(table) if len(table) else None)
    return stability_figure(table, axes=ax, into=figure, **options)


def plot_run(
    run: AnalysisRun, ax: Any = None, figure: Any = None, **options: Any
) -> StabilityDrawn:
    """:meth:`AnalysisRun.plot`: the command's sigma-tau figure (:func:`run_stability_figure`)."""
    return run_stability_figure(run, axes=ax, into=figure, **_judged(options))


def plot_run_series(
    run: AnalysisRun, ax: Any = None, figure: Any = None, **options: Any
) -> SeriesDrawn:
    """:meth:`AnalysisRun.plot_series`: the command's series figure (:func:`run_series_figure`)."""
    return run_series_figure(run, axes=ax, into=figure, **options)


def plot_hat(result: HatResult, ax: Any = None, figure: Any = None, **options: Any) -> HatDrawn:
    """:meth:`HatResult.plot`: :func:`hat_figure` of the one result."""
    return hat_figure(result, axes=ax, into=figure, **options)


def plot_phase_noise(
    result: PhaseNoiseStability, ax: Any = None, figure: Any = None, **options: Any
) -> PhaseNoiseDrawn:
    """:meth:`PhaseNoiseStability.plot`: :func:`phase_noise_figure`."""
    return phase_noise_figure(result, axes=ax, into=figure, **options)


def plot_dynamic(
    result: DynamicResult, ax: Any = None, figure: Any = None, **options: Any
) -> TimelineDrawn:
    """:meth:`DynamicResult.plot`: :func:`timeline_figure`."""
    return timeline_figure(result, axes=ax, into=figure, **options)


def plot_time_error(
    result: TimeErrorAnalysis, ax: Any = None, figure: Any = None, **options: Any
) -> MaskDrawn:
    """:meth:`TimeErrorAnalysis.plot`: :func:`mask_figure`, MTIE and TDEV against the mask."""
    return mask_figure(result, axes=ax, into=figure, **options)


def plot_tie(
    result: TimeErrorAnalysis, ax: Any = None, figure: Any = None, **options: Any
) -> TieDrawn:
    """``TimeErrorAnalysis.plot(view="tie")``: :func:`tie_figure`, the TIE over the record."""
    return tie_figure(result, axes=ax, into=figure, **options)


register_plot(Measurement, plot_measurement)
register_plot(StabilityTable, plot_table)
register_plot(AnalysisRun, plot_run)
register_plot(AnalysisRun, plot_run_series, view="series")
register_plot(HatResult, plot_hat)
register_plot(PhaseNoiseStability, plot_phase_noise)
register_plot(DynamicResult, plot_dynamic)
register_plot(TimeErrorAnalysis, plot_time_error)
register_plot(TimeErrorAnalysis, plot_tie, view="tie")
