"""Stability over time: a map of the dynamic deviation and its shortest-tau trace.

The upper panel is a heat map over (window centre time, tau) of log10 of the
deviation in each window (the dynamic Allan deviation of Galleani and
Tavella [1]_ when the statistic is OADEV), tau on a log axis and clock time
when the record has time stamps; a window with no usable term is left blank.
The lower panel traces the deviation at the shortest tau over the window
centres with its confidence interval as a band, so a warm-up transient or a
change of noise level shows at the time it happened.

References
----------
.. [1] L. Galleani, P. Tavella, "The dynamic Allan variance", IEEE Trans.
   UFFC 56(3), 450-464 (2009).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from datetime import datetime
from typing import Any

import numpy as np
from matplotlib import dates as mdates
from matplotlib.axes import Axes
from matplotlib.colorbar import Colorbar
from matplotlib.colors import LogNorm
from matplotlib.ticker import FixedLocator, FuncFormatter, NullLocator

from ..deviations.registry import get_statistic
from ..dynamic import DynamicResult
from ..errors import InputError
from ..units import format_duration, format_seconds
from .labels import check_text, tool_footer
from .style import (
    LABEL_SIZE,
    LEGEND_SIZE,
    TAU_LABEL,
    TICK_SIZE,
    TITLE_SIZE,
    Drawn,
    clock_label,
    deviation_label,
    elapsed_unit,
    given_axes,
    log_axes,
    log_ticks,
    put_footer,
    short_name,
    statistic_style,
    style_axes,
    target_for,
)
from .ticks import plain_number, scaled_text

__all__ = ["TimelineDrawn", "timeline_figure", "cell_edges"]


@dataclass(frozen=True)
class TimelineDrawn(Drawn):
    """What :func:`timeline_figure` drew.

    Attributes
    ----------
    figure, axes
        The figure and its two data panels (map above, shortest-tau trace below).
    x, x_edges
        Window centres and cell edges in axis units (matplotlib date numbers
        or elapsed time).
    tau, tau_edges
        The taus and their cell edges.
    log10_deviation
        Windows x taus, NaN where blank.
    shortest
        (x, deviation, ci_low, ci_high) at the shortest tau.
    is_date
        Whether the time axis is clock time.
    x_label
        The time axis label.
    """

    x: np.ndarray
    x_edges: np.ndarray
    tau: np.ndarray
    tau_edges: np.ndarray
    log10_deviation: np.ndarray
    shortest: tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]
    is_date: bool
    x_label: str


def cell_edges(centres: np.ndarray, *, log: bool, half_width: float) -> np.ndarray:
    """Cell edges around sorted centres: midpoints (geometric on a log axis), ends mirrored.

    A single centre gets a cell of ``half_width`` either side (a factor of
    sqrt(2) either side on a log axis).
    """
    values = np.log(centres) if log else centres
    if values.size == 1:
        width = math.log(2.0) / 2.0 if log else half_width
        edges = np.array([values[0] - width, values[0] + width])
    else:
        mid = (values[1:] + values[:-1]) / 2.0
        edges = np.concatenate(
            ([values[0] - (mid[0] - values[0])], mid, [values[-1] + (values[-1] - mid[-1])])
        )
    return np.exp(edges) if log else edges


def _validate(result: Any, title: Any, footer: Any) -> None:
    if not isinstance(result, DynamicResult):
        raise InputError(
            f"result must be a stability.dynamic.DynamicResult, got {type(result).__name__}",
            hint="build one with stability.dynamic.dynamic_stability",
        )
    check_text(title=title, footer=footer)
    windows, taus = result.deviation.shape
    if windows == 0 or taus == 0:
        raise InputError("the dynamic result holds no window or no tau to plot")


def _window_axis(result: DynamicResult, window_s: float) -> tuple[np.ndarray, float, str, bool]:
    """(window centres in axis units, half a window in axis units, label, is_date)."""
    if result.time is not None:
        x = np.array([mdates.date2num(t) for t in result.time], dtype=float)
        return x, window_s / 2.0 / 86400.0, clock_label(result.time[0], "window centre"), True
    factor, unit = elapsed_unit(float(result.time_s[-1]))
    x = np.asarray(result.time_s, dtype=float) / factor
    return x, window_s / 2.0 / factor, f"window centre, elapsed time ({unit})", False


def _draw_map(
    fig: Any,
    ax_map: Axes,
    ax_cb: Axes | None,
    edges: tuple[np.ndarray, np.ndarray],
    dev: np.ndarray,
) -> Colorbar:
    """The heat map of the deviation (log colour scale) over (window centre, tau), its colour bar.

    The tau axis is labelled at the taus of the cells; the colour bar carries
    the deviation itself on log ticks, written as every other axis is.
    """
    good = dev[np.isfinite(dev) & (dev > 0)]
    low, high = (float(good.min()), float(good.max())) if good.size else (1.0, 10.0)
    if high <= low:
        low, high = low / 1.1, high * 1.1
    mesh = ax_map.pcolormesh(
        *edges,
        np.ma.masked_invalid(np.where(dev > 0, dev, np.nan).T),
        cmap="viridis",
        shading="flat",
        norm=LogNorm(vmin=low, vmax=high),
    )
    ax_map.set_yscale("log")
    taus = np.sqrt(edges[1][1:] * edges[1][:-1])
    if taus.size >= 3:  # labelled at the cells' taus; fewer cells get ordinary log ticks
        stride = max(1, math.ceil(taus.size / 12))
        ax_map.yaxis.set_major_locator(FixedLocator(taus[::stride]))
        ax_map.yaxis.set_major_formatter(FuncFormatter(lambda v, _: _tau_text(v)))
        ax_map.yaxis.set_minor_locator(NullLocator())
    else:
        log_ticks(ax_map.yaxis)
    ax_map.set_ylabel(TAU_LABEL, fontsize=LABEL_SIZE)
    ax_map.tick_params(which="both", labelsize=TICK_SIZE)
    ax_map.tick_params(axis="x", labelbottom=False)
    # beside a caller's axes the colour bar takes its room from the map panel
    colorbar = fig.colorbar(mesh, cax=ax_cb) if ax_cb is not None else fig.colorbar(mesh, ax=ax_map)
    log_ticks(colorbar.ax.yaxis)
    colorbar.ax.tick_params(which="both", labelsize=TICK_SIZE)
    return colorbar


def _tau_text(value: float) -> str:
    """A tau of the map in plain numbers (0.5, 2, 1024) or powers of ten beyond."""
    return plain_number(value) if 1e-3 <= value < 1e5 else scaled_text(value)


def _draw_trace(ax: Axes, result: DynamicResult, x: np.ndarray, x_label: str) -> None:
    """The deviation at the shortest tau over time, its interval as a band."""
    style_axes(ax)
    color = statistic_style(result.statistic).color
    dev = result.deviation[:, 0]
    low, high = result.ci_low[:, 0], result.ci_high[:, 0]
    band = np.isfinite(low) & np.isfinite(high)
    if band.any():
        ax.fill_between(
            x,
            np.where(band, low, np.nan),
            np.where(band, high, np.nan),
            color=color,
            alpha=0.25,
            linewidth=0,
            label=f"{100.0 * result.confidence:.3g} % interval",
        )
    ax.plot(
        x,
        dev,
        color=color,
        linewidth=1.1,
        marker=".",
        markersize=3,
        label=f"{short_name(result.statistic)} at \u03c4 = {format_seconds(float(result.tau[0]))}",
    )
    if np.isfinite(dev).any() and (dev[np.isfinite(dev)] > 0).all():
        log_axes(ax, "y")
    ax.set_xlabel(x_label, fontsize=LABEL_SIZE)
    ax.set_ylabel(deviation_label([result.statistic]), fontsize=LABEL_SIZE)
    ax.legend(
        fontsize=LEGEND_SIZE,
        frameon=False,
        loc="lower right",
        bbox_to_anchor=(1.0, 1.0),
        ncols=2,
        borderaxespad=0.15,
    )


def timeline_figure(
    result: DynamicResult,
    *,
    title: str | None = None,
    footer: str | None = None,
    analysis_time: datetime | None = None,
    into: Any = None,
    axes: Any = None,
) -> TimelineDrawn:
    """Stability over time: a map of the dynamic deviation and its shortest-tau trace.

    Parameters
    ----------
    result
        A :class:`stability.dynamic.DynamicResult`.
    title, footer
        Figure title (default: "stability over time") and footer text
        (default: tool version and analysis date).
    analysis_time
        Date for the default footer (default: now).
    into
        A ``Figure`` or ``SubFigure`` to draw into (no title or footer unless given).
    axes
        An ``Axes`` (or two: the map, then the trace) to draw the panels into,
        for a figure the caller lays out; the colour bar takes its room from
        the map panel (no title or footer unless given).

    Returns
    -------
    TimelineDrawn
        The figure, its two data panels and the data as drawn.
    """
    _validate(result, title, footer)
    tau0 = float(result.tau[0] / result.m[0])
    window_s = result.window_points * tau0
    x, half, x_label, is_date = _window_axis(result, window_s)
    x_edges = cell_edges(x, log=False, half_width=half)
    tau_edges = cell_edges(np.asarray(result.tau, dtype=float), log=True, half_width=0.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        logdev = np.where(result.deviation > 0, np.log10(result.deviation), np.nan)

    ax_cb: Axes | None = None
    if axes is not None:
        given = given_axes(axes, 2, "panels (map, then trace)", into, fewer=True)
        fig, own = given[0].get_figure(root=False), False
        ax_map, ax_line = given[0], (given[1] if len(given) > 1 else None)
        if ax_line is not None and not ax_line.get_shared_x_axes().joined(ax_line, ax_map):
            ax_line.sharex(ax_map)
    else:
        fig, own = target_for(into, 10.0, 7.4)
        grid = fig.add_gridspec(2, 2, height_ratios=(1.7, 1.2), width_ratios=(1.0, 0.025))
        ax_map = fig.add_subplot(grid[0, 0])
        ax_cb = fig.add_subplot(grid[0, 1])
        ax_line = fig.add_subplot(grid[1, 0], sharex=ax_map)
        fig.add_subplot(grid[1, 1]).set_axis_off()
    colorbar = _draw_map(fig, ax_map, ax_cb, (x_edges, tau_edges), result.deviation)
    colorbar.set_label(deviation_label([result.statistic]), fontsize=LABEL_SIZE)
    ax_map.set_title(
        f"{get_statistic(result.statistic).title} in {format_duration(window_s)} windows every "
        f"{format_duration(result.step_points * tau0)}",
        fontsize=LABEL_SIZE,
    )
    if ax_line is not None:
        _draw_trace(ax_line, result, x, x_label)
    if ax_cb is None:  # on a caller's axes the map carries its own time axis
        ax_map.tick_params(axis="x", labelbottom=True)
        ax_map.set_xlabel(x_label, fontsize=LABEL_SIZE)
    bottom = ax_map if ax_line is None else ax_line
    if is_date:
        locator = mdates.AutoDateLocator()
        bottom.xaxis.set_major_locator(locator)
        bottom.xaxis.set_major_formatter(mdates.ConciseDateFormatter(locator))
    bottom.set_xlim(x_edges[0], x_edges[-1])
    if own or title:
        fig.suptitle(title or "stability over time", fontsize=TITLE_SIZE)
    if own or footer:
        put_footer(fig, footer if footer is not None else tool_footer(analysis_time))
    return TimelineDrawn(
        fig.get_figure(root=True),
        (ax_map,) if ax_line is None else (ax_map, ax_line),
        x=x,
        x_edges=x_edges,
        tau=np.asarray(result.tau, dtype=float).copy(),
        tau_edges=tau_edges,
        log10_deviation=logdev,
        shortest=(x, *(a[:, 0].copy() for a in (result.deviation, result.ci_low, result.ci_high))),
        is_date=is_date,
        x_label=x_label,
    )
