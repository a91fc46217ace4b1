"""Stability implied by a phase-noise table, beside the table itself.

The left panel holds the deviations converted from ℒ(f) (one line per
statistic, :func:`stability.phase_noise.phase_noise_to_stability`, after
IEEE 1139 [1]_ and NIST SP 1065 [2]_) and, when a measured results table is
given, its curves with their confidence intervals, so the two can be compared
on one sigma-tau plot; a statistic has its own colour in both. The right
panel holds the ℒ(f) table in dBc/Hz against offset frequency and, when given,
the ℒ(f) sketch of a fitted power-law model, dashed.

References
----------
.. [1] IEEE Std 1139-2008, *Definitions of Physical Quantities for Fundamental
   Frequency and Time Metrology - Random Instabilities*, annex (conversion
   between S_y(f) and sigma_y(tau)).
.. [2] W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065
   (2008), section 6 (domain conversions).
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime
from typing import Any

import numpy as np
from matplotlib.axes import Axes

from ..errors import InputError
from ..phase_noise import PhaseNoiseStability
from ..table import StabilityTable
from ..units import format_frequency
from .labels import check_text, tool_footer
from .sigma_tau import Series, stability_series
from .style import (
    DRIFT_COLOR,
    GUIDE_COLOR,
    LABEL_SIZE,
    LEGEND_SIZE,
    NOTE_COLOR,
    TAU_LABEL,
    TITLE_SIZE,
    Drawn,
    deviation_label,
    given_axes,
    log_axes,
    put_footer,
    short_name,
    statistic_style,
    style_axes,
    target_for,
)

__all__ = ["PhaseNoiseDrawn", "phase_noise_figure", "PHASE_NOISE_LABEL"]

#: The y-axis label of the phase-noise panel (single-sideband phase noise, IEEE 1139).
PHASE_NOISE_LABEL = "\u2112(f) (dBc/Hz)"

Curve = tuple[np.ndarray, np.ndarray]


@dataclass(frozen=True)
class PhaseNoiseDrawn(Drawn):
    """What :func:`phase_noise_figure` drew.

    Attributes
    ----------
    figure, axes
        The figure and its panels (sigma-tau, then ℒ(f) when a spectrum is drawn).
    converted
        Statistic -> (tau, deviation) converted from ℒ(f).
    measured
        Statistic -> (tau, deviation, ci_low, ci_high) of the measured table
        (:func:`stability.figures.stability_series`), or None.
    table, model
        (offsets in Hz, ℒ(f) in dBc/Hz) of the input table and of the model, or None.
    """

    converted: dict[str, Curve]
    measured: dict[str, Series] | None
    table: Curve | None
    model: Curve | None


def _validate(
    conversion: Any, table: Any, measured: Any, model: Any, title: Any, footer: Any
) -> tuple[Curve | None, Curve | None]:
    if not isinstance(conversion, PhaseNoiseStability):
        raise InputError(
            "conversion must be a stability.phase_noise.PhaseNoiseStability, "
            f"got {type(conversion).__name__}",
            hint="build one with stability.phase_noise.phase_noise_to_stability",
        )
    if measured is not None and not isinstance(measured, StabilityTable):
        raise InputError(
            f"measured must be a stability.StabilityTable or None, got {type(measured).__name__}",
            hint="build one with stability.analyze",
        )
    check_text(title=title, footer=footer)
    return _spectrum("table", table), _spectrum("model", model)


def _spectrum(name: str, value: Any) -> Curve | None:
    if value is None:
        return None
    try:
        f, level = (np.asarray(v, dtype=float) for v in value)
    except (TypeError, ValueError):
        raise InputError(
            f"{name} must be a pair (offsets in Hz, L(f) in dBc/Hz) of number arrays"
        ) from None
    if f.ndim != 1 or f.shape != level.shape:
        raise InputError(
            f"{name}: offsets and L(f) must be 1-D of one length, "
            f"got shapes {f.shape} and {level.shape}"
        )
    return f, level


def _draw_converted(ax: Axes, conversion: PhaseNoiseStability) -> dict[str, Curve]:
    converted: dict[str, Curve] = {}
    for stat, dev in conversion.deviations.items():
        keep = np.isfinite(dev) & (dev > 0)
        converted[stat] = (conversion.tau[keep].copy(), dev[keep].copy())
        ax.plot(
            *converted[stat],
            color=statistic_style(stat).color,
            linewidth=1.4,
            marker=".",
            markersize=4,
            label=f"{short_name(stat)} from \u2112(f)",
            zorder=3,
        )
    return converted


def _draw_measured(ax: Axes, measured: StabilityTable) -> dict[str, Series]:
    """Measured curves: the statistic's colour and marker, open, dashed, with error bars."""
    drawn = stability_series(measured)
    for stat, (tau, dev, low, high) in drawn.items():
        style = statistic_style(stat)
        lower = np.where(np.isfinite(low), dev - low, 0.0)
        upper = np.where(np.isfinite(high), high - dev, 0.0)
        ax.errorbar(
            tau,
            dev,
            yerr=np.vstack([np.clip(lower, 0.0, None), np.clip(upper, 0.0, None)]),
            color=style.color,
            marker=style.marker,
            markersize=3.5,
            markerfacecolor="white",
            linewidth=0.9,
            linestyle="--",
            elinewidth=0.8,
            capsize=2,
            label=f"{short_name(stat)} measured",
            zorder=4,
        )
    return drawn


def _draw_spectrum(
    ax: Axes, conversion: PhaseNoiseStability, table: Curve | None, model: Curve | None
) -> None:
    style_axes(ax)
    log_axes(ax, "x")
    if table is not None:
        ax.plot(
            *table,
            color="#333333",
            marker="o",
            markersize=3,
            linewidth=1.2,
            label="\u2112(f) table",
            zorder=3,
        )
    if model is not None:
        ax.plot(
            *model,
            color=DRIFT_COLOR,
            linestyle="--",
            linewidth=1.2,
            label="\u2112(f) of the fitted model (measured log)",
            zorder=2,
        )
    ax.axvline(conversion.f_h, color=GUIDE_COLOR, linewidth=0.8, linestyle=":")
    ax.annotate(
        "f_h",
        (conversion.f_h, 1.0),
        xycoords=("data", "axes fraction"),
        xytext=(2, -10),
        textcoords="offset points",
        fontsize=LEGEND_SIZE,
        color=NOTE_COLOR,
    )
    ax.set_xlabel("offset frequency f (Hz)", fontsize=LABEL_SIZE)
    ax.set_ylabel(PHASE_NOISE_LABEL, fontsize=LABEL_SIZE)
    _legend_below(ax)


def _legend_below(ax: Axes) -> None:
    """The panel's legend under its axis label, outside the data (the layout makes room)."""
    ax.legend(
        fontsize=LEGEND_SIZE,
        frameon=False,
        loc="upper center",
        bbox_to_anchor=(0.5, -0.13),
        ncols=2,
    )


def phase_noise_figure(
    conversion: PhaseNoiseStability,
    *,
    table: tuple[Any, Any] | None = None,
    measured: StabilityTable | None = None,
    model: tuple[Any, Any] | None = None,
    title: str | None = None,
    footer: str | None = None,
    analysis_time: datetime | None = None,
    into: Any = None,
    axes: Any = None,
) -> PhaseNoiseDrawn:
    """Stability implied by a phase-noise table, beside the table itself.

    Parameters
    ----------
    conversion
        A :class:`stability.phase_noise.PhaseNoiseStability`.
    table
        (offsets in Hz, ℒ(f) in dBc/Hz) of the input table.
    measured
        A measured results table to draw beside the converted curves.
    model
        (offsets in Hz, ℒ(f) in dBc/Hz) of a fitted power-law model (from
        :func:`stability.phase_noise.model_to_phase_noise`).
    title, footer
        Figure title (default: "stability from phase noise") and footer text
        (default: tool version and analysis date).
    analysis_time
        Date for the default footer (default: now).
    into
        A ``Figure`` or ``SubFigure`` to draw into (no title or footer unless given).
    axes
        An ``Axes`` (or two: the stability, then the phase-noise table) to
        draw the panels into, for a figure the caller lays out; as many
        panels are drawn as axes are given (no title or footer unless given).

    Returns
    -------
    PhaseNoiseDrawn
        The figure, its panels and the data as drawn.
    """
    table_curve, model_curve = _validate(conversion, table, measured, model, title, footer)
    has_spectrum = table_curve is not None or model_curve is not None
    count = 2 if has_spectrum else 1
    if axes is not None:
        axes = given_axes(axes, count, "panels (stability, then phase noise)", into, fewer=True)
        fig, own = axes[0].get_figure(root=False), False
    else:
        fig, own = target_for(into, 10.0 if has_spectrum else 6.4, 5.8)
        axes = tuple(fig.subplots(1, count, squeeze=False)[0])
    ax = axes[0]
    style_axes(ax)
    log_axes(ax)
    converted = _draw_converted(ax, conversion)
    drawn_measured = None if measured is None else _draw_measured(ax, measured)
    ax.set_xlabel(TAU_LABEL, fontsize=LABEL_SIZE)
    ax.set_ylabel(deviation_label(list(converted)), fontsize=LABEL_SIZE)
    _legend_below(ax)
    ax.set_title(
        f"carrier {format_frequency(conversion.nominal)}, f_h {format_frequency(conversion.f_h)}",
        fontsize=LABEL_SIZE,
    )
    if has_spectrum and len(axes) > 1:
        _draw_spectrum(axes[1], conversion, table_curve, model_curve)
    if own or title:
        fig.suptitle(title or "stability from phase noise", fontsize=TITLE_SIZE)
    if own or footer:
        put_footer(fig, footer if footer is not None else tool_footer(analysis_time))
    return PhaseNoiseDrawn(
        fig.get_figure(root=True),
        tuple(axes),
        converted=converted,
        measured=drawn_measured,
        table=table_curve,
        model=model_curve,
    )
