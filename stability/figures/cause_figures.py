"""The figures of the causes study, as the commands draw them, and the plot methods behind them.

:func:`run_spectrum_figure` is the figure ``stability spectrum`` writes
(``spectrum.png``) and :func:`run_environment_figure` the one ``analyze
--regress`` writes (``environment.png``), both for a run made by
:func:`stability.causes.run_with_causes`; :mod:`stability.workflow` saves them
and :meth:`stability.causes.Causes.plot` draws them (one implementation). The
plot methods of a :class:`~stability.spectrum.Spectrum` and a
:class:`~stability.environment.Sensitivity` alone call the same figure
functions with what the result itself holds. They are registered with
:mod:`stability.display` when ``stability.figures`` is imported.
"""

from __future__ import annotations

from typing import Any

from ..causes import Causes
from ..display import register_plot
from ..environment import Sensitivity, aux_on_frequency_grid
from ..errors import AnalysisError, InputError
from ..run import AnalysisRun
from ..spectrum import Spectrum
from .environment import EnvironmentDrawn, environment_figure
from .labels import default_footer, default_title
from .spectrum import SpectrumDrawn, spectrum_figure

__all__ = [
    "run_spectrum_figure",
    "run_environment_figure",
    "spectrum_models",
    "plot_spectrum",
    "plot_sensitivity",
    "plot_causes",
    "plot_causes_environment",
]

#: The legend's names of the two views of the noise model on the spectrum figure.
ALLAN_MODEL = "model of the Allan deviation"
SPECTRUM_FIT = "fit to this spectrum"


def spectrum_models(spectrum: Spectrum, model: Any = None) -> dict[str, dict[int, float]]:
    """The power-law models the spectrum figure draws: the Allan-deviation model
    (when it has a term) and the spectrum's own fit."""
    models = {}
    if model is not None and any(v > 0 for v in model.h.values()):
        models[ALLAN_MODEL] = dict(model.h)
    if spectrum.fit is not None:
        models[SPECTRUM_FIT] = dict(spectrum.fit.h)
    return models


def _run(run: Any) -> AnalysisRun:
    if not isinstance(run, AnalysisRun) or "cause_objects" not in (run.table.extras or {}):
        raise InputError(
            "the causes figures need a run made by stability.run_with_causes",
            hint="make it with stability.run_with_causes(log, ...)",
        )
    return run


def run_spectrum_figure(
    run: AnalysisRun, *, title: str | None = None, **options: Any
) -> SpectrumDrawn:
    """The spectrum figure of a run made by :func:`stability.causes.run_with_causes`:
    the Welch spectrum, the Allan-deviation model beside the spectrum's own fit, the
    periodic components found (``options``: those of :func:`spectrum_figure`)."""
    objects = _run(run).table.extras["cause_objects"]
    spectrum, lines = objects["spectrum"], objects["lines"]
    if spectrum is None:
        raise AnalysisError(
            f"{run.measurement.n - 1} frequency samples are too few for a spectrum",
            hint="use a longer log",
        )
    own = options.get("axes") is None and options.get("into") is None
    options.setdefault("models", spectrum_models(spectrum, run.table.extras.get("power_law_model")))
    options.setdefault("lines", lines)
    if own or title is not None:
        title = title if title is not None else default_title(run.source, "spectrum")
    if own:
        options.setdefault("footer", default_footer(run.table, analysis_time=run.analysis_time))
    return spectrum_figure(spectrum, title=title, **options)


def run_environment_figure(
    run: AnalysisRun, *, title: str | None = None, **options: Any
) -> EnvironmentDrawn:
    """The environment figure of a run with a regression: the log's frequency and the
    quantity over time, and against each other (``options``: those of
    :func:`environment_figure`)."""
    fitted = _run(run).table.extras["cause_objects"]["sensitivity"]
    if fitted is None:
        raise InputError(
            "this run has no regression on an auxiliary quantity",
            hint="make it with CauseSettings(regress='temperature') or --regress",
        )
    source = run.source
    own = options.get("axes") is None and options.get("into") is None
    options.setdefault("aux_unit", source.auxiliary[fitted.quantity].unit)
    if own or title is not None:
        title = (
            title
            if title is not None
            else default_title(source, f"frequency and {fitted.quantity}")
        )
    if own:
        options.setdefault("footer", default_footer(run.table, analysis_time=run.analysis_time))
    return environment_figure(
        source.frequency(),
        aux_on_frequency_grid(source, fitted.quantity),
        source.tau0,
        fitted,
        title=title,
        **options,
    )


def plot_spectrum(
    spectrum: Spectrum, ax: Any = None, figure: Any = None, **options: Any
) -> SpectrumDrawn:
    """:meth:`Spectrum.plot`: :func:`spectrum_figure` with the spectrum's own fit."""
    options.setdefault("models", spectrum_models(spectrum))
    return spectrum_figure(spectrum, axes=ax, into=figure, **options)


def plot_sensitivity(
    sensitivity: Sensitivity, ax: Any = None, figure: Any = None, **options: Any
) -> EnvironmentDrawn:
    """:meth:`Sensitivity.plot`: :func:`environment_figure` of the series it was fitted to."""
    if sensitivity.series is None:
        raise InputError(
            "this sensitivity keeps no series to draw",
            hint="draw it with stability.figures.environment_figure(y, aux, tau0, sensitivity)",
        )
    y, aux = sensitivity.series
    return environment_figure(
        y, aux, sensitivity.tau0, sensitivity, axes=ax, into=figure, **options
    )


def plot_causes(
    causes: Causes, ax: Any = None, figure: Any = None, **options: Any
) -> SpectrumDrawn:
    """:meth:`Causes.plot`: the figure ``stability spectrum`` writes."""
    return run_spectrum_figure(causes.run, axes=ax, into=figure, **options)


def plot_causes_environment(
    causes: Causes, ax: Any = None, figure: Any = None, **options: Any
) -> EnvironmentDrawn:
    """:meth:`Causes.plot` with ``view="environment"``: the figure ``--regress`` writes."""
    return run_environment_figure(causes.run, axes=ax, into=figure, **options)


register_plot(Spectrum, plot_spectrum)
register_plot(Sensitivity, plot_sensitivity)
register_plot(Causes, plot_causes)
register_plot(Causes, plot_causes_environment, view="environment")
