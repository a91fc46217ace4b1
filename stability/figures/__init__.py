"""Figures: one module per figure, one style module, all drawn with matplotlib.

``style``        colours and markers per statistic, verdict colours, fonts, ticks,
                 axis wording, margins, :func:`new_figure`, the :class:`Drawn` result
``labels``       titles and footers (input SHA-256, tool version, analysis date)
``sigma_tau``    the stability plot of one analysis (:func:`stability_figure`)
``series``       the data over time as analysed (:func:`series_figure`)
``hat``          the three-cornered hat (:func:`hat_figure`)
``phase_noise``  stability from a phase-noise table (:func:`phase_noise_figure`)
``timeline``     stability over time (:func:`timeline_figure`)
``spectrum``     the Welch spectrum with its band, models and lines (:func:`spectrum_figure`)
``environment``  frequency and an auxiliary quantity (:func:`environment_figure`)
``overlay``      several analyses on one plot (:func:`overlay_figure`)
``fleet``        a fleet's curves, band and spread (:mod:`stability.figures.fleet`)
``save``         writing PNG, SVG or PDF atomically (:func:`save_figure`)
``ticks``        tick positions and plain-text tick labels (three or more on any axis)
``placement``    labels placed beside their points where they touch nothing drawn
``slope_key``    the key of power-law slopes beside a sigma-tau panel
``sigma_inputs`` the sigma-tau plot's argument checks and drawn series
``reduce``       min/max envelopes and merged gap spans of long records
``plot_methods`` the figures behind the results' ``plot`` methods (registered
                 with :mod:`stability.display` on import)
``cause_figures`` the causes study's figures as the commands draw them, and the
                 ``plot`` methods of a spectrum, a sensitivity and the causes

Every figure function validates its input, draws on a new ``Figure`` with the
Agg canvas (never pyplot's global state) and returns a frozen dataclass, a
subclass of :class:`Drawn`: the figure, its data panels and the data as
drawn. Importing this package loads matplotlib; nothing on the reading and
analysis path imports it.
"""

from .cause_figures import run_environment_figure, run_spectrum_figure
from .environment import EnvironmentDrawn, environment_figure
from .hat import HatDrawn, hat_figure
from .history import HistoryDrawn as HistoryDrawn
from .history import history_figure as history_figure
from .labels import analysis_date, column_text, default_footer, default_title, tool_footer
from .overlay import OverlayDrawn, overlay_figure, overlay_footer
from .phase_noise import PhaseNoiseDrawn, phase_noise_figure
from .plot_methods import plot_measurement as plot_measurement
from .save import FORMATS, save_figure
from .series import SeriesDrawn, envelope, run_series_figure, series_figure
from .sigma_tau import (
    SLOPES,
    StabilityDrawn,
    run_stability_figure,
    slope_key,
    stability_figure,
    stability_series,
)
from .spectrum import SpectrumDrawn, spectrum_figure
from .style import STATISTIC_STYLES, VERDICT_COLORS, Drawn, statistic_style
from .timeline import TimelineDrawn, timeline_figure

__all__ = [
    "stability_figure",
    "run_stability_figure",
    "stability_series",
    "slope_key",
    "series_figure",
    "run_series_figure",
    "envelope",
    "hat_figure",
    "phase_noise_figure",
    "timeline_figure",
    "spectrum_figure",
    "environment_figure",
    "run_spectrum_figure",
    "run_environment_figure",
    "overlay_figure",
    "overlay_footer",
    "save_figure",
    "default_footer",
    "default_title",
    "column_text",
    "tool_footer",
    "analysis_date",
    "statistic_style",
    "Drawn",
    "StabilityDrawn",
    "SeriesDrawn",
    "HatDrawn",
    "PhaseNoiseDrawn",
    "TimelineDrawn",
    "SpectrumDrawn",
    "EnvironmentDrawn",
    "OverlayDrawn",
    "FORMATS",
    "SLOPES",
    "STATISTIC_STYLES",
    "VERDICT_COLORS",
]
