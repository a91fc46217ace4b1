"""The three-cornered hat: the separated stability of each oscillator on a sigma-tau plot.

Each oscillator's curve is drawn with its confidence interval as asymmetric
error bars; a point below the resolution of the hat (a negative variance
estimate, see :mod:`stability.hat`) is drawn as a downward-pointing triangle
at its upper bound, the trade's way of showing "at most this" (common
practice). The pair curves (A - B, ...) the separation came from are drawn
faint and dashed behind them: no oscillator can be noisier than a pair it is
in [1]_. The pairs' names are written beside their last points where they
touch nothing else, and the legend stands outside the panels.

References
----------
.. [1] W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065
   (2008), section 5.13 (three-cornered hat).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from datetime import datetime
from typing import Any

import numpy as np
from matplotlib.axes import Axes
from matplotlib.lines import Line2D

from ..errors import InputError
from ..hat import STATUS_OK, HatResult
from .labels import check_text, tool_footer
from .placement import LabelRequest, obstacles_of, place_labels
from .style import (
    GUIDE_COLOR,
    KEY_SIZE,
    LABEL_SIZE,
    LEGEND_SIZE,
    NOTE_COLOR,
    ORDERED_COLORS,
    TAU_LABEL,
    TITLE_SIZE,
    Drawn,
    deviation_label,
    given_axes,
    log_axes,
    put_footer,
    short_name,
    style_axes,
    target_for,
)

__all__ = ["HatDrawn", "hat_figure"]

Curve = tuple[np.ndarray, np.ndarray]


@dataclass(frozen=True)
class HatDrawn(Drawn):
    """What :func:`hat_figure` drew.

    Attributes
    ----------
    figure, axes
        The figure and its panels, one per statistic.
    series
        Statistic -> oscillator -> dict of ``tau``, ``deviation``, ``ci_low``,
        ``ci_high`` (points with status ``ok``) and ``below_tau``,
        ``below_bound`` (points below resolution, at their upper bound).
    pairs
        Statistic -> pair label (``A-B``) -> (tau, deviation) of the pair curve.
    colors
        Oscillator -> colour (one per oscillator across the panels).
    """

    series: dict[str, dict[str, dict[str, np.ndarray]]]
    pairs: dict[str, dict[str, Curve]]
    colors: dict[str, str]


def _validate(results: Any, title: Any, footer: Any) -> list[HatResult]:
    items = [results] if isinstance(results, HatResult) else results
    try:
        if isinstance(items, (str, bytes, Mapping)):
            raise TypeError
        items = list(items)
    except TypeError:
        raise InputError(
            f"result must be a stability.hat.HatResult or a list of them, "
            f"got {type(results).__name__}",
            hint="build one with stability.hat.separate",
        ) from None
    if not items:
        raise InputError("result holds no HatResult to plot")
    for item in items:
        if not isinstance(item, HatResult):
            raise InputError(
                f"result must hold stability.hat.HatResult objects, got {type(item).__name__}",
                hint="build one with stability.hat.separate",
            )
    check_text(title=title, footer=footer)
    return items


def _draw_pairs(ax: Axes, item: HatResult) -> dict[str, Curve]:
    """The pair curves, faint and dashed, each labelled at its last point."""
    drawn: dict[str, Curve] = {}
    for key, pair in item.pairs.items():
        keep = np.isfinite(pair.deviation) & (pair.deviation > 0)
        label = f"{key[0]}-{key[1]}"
        drawn[label] = (pair.tau[keep].copy(), pair.deviation[keep].copy())
        ax.plot(
            *drawn[label],
            color=GUIDE_COLOR,
            linewidth=0.9,
            linestyle="--",
            alpha=0.55,
            zorder=1,
            gid="hat-pair",
        )
    return drawn


def _label_pairs(ax: Axes, pairs: dict[str, Curve]) -> None:
    """Each pair curve's name beside its last point, where it touches no data or other name.

    Placed once the panels' positions are final (:mod:`stability.figures.placement`).
    """
    requests = [
        LabelRequest(label, (tau[-1], dev[-1]), NOTE_COLOR, KEY_SIZE, gid="hat-pair-label")
        for label, (tau, dev) in pairs.items()
        if tau.size
    ]
    place_labels(ax, requests, obstacles_of(ax))


def _draw_oscillator(ax: Axes, name: str, osc: Any, color: str) -> dict[str, np.ndarray]:
    """One oscillator: line, points with error bars, triangles below resolution."""
    status = np.array(osc.status, dtype=object)
    ok = (status == STATUS_OK) & np.isfinite(osc.deviation) & (osc.deviation > 0)
    below = (status != STATUS_OK) & np.isfinite(osc.upper_bound) & (osc.upper_bound > 0)
    tau, dev = osc.tau[ok], osc.deviation[ok]
    low, high = osc.ci_low[ok], osc.ci_high[ok]
    lower = np.where(np.isfinite(low), dev - low, 0.0)
    upper = np.where(np.isfinite(high), high - dev, 0.0)
    # the line breaks where a point is below resolution (NaN there)
    ax.plot(osc.tau, np.where(ok, osc.deviation, np.nan), color=color, linewidth=1.2, zorder=3)
    ax.errorbar(
        tau,
        dev,
        yerr=np.vstack([np.clip(lower, 0.0, None), np.clip(upper, 0.0, None)]),
        color=color,
        linestyle="none",
        marker="o",
        markersize=4,
        elinewidth=0.8,
        capsize=2,
        label=name,
        zorder=3,
    )
    if below.any():
        ax.plot(
            osc.tau[below],
            osc.upper_bound[below],
            linestyle="none",
            marker="v",
            markersize=6,
            markerfacecolor="white",
            markeredgecolor=color,
            zorder=4,
            gid="hat-below",
        )
    return {
        "tau": tau.copy(),
        "deviation": dev.copy(),
        "ci_low": low.copy(),
        "ci_high": high.copy(),
        "below_tau": osc.tau[below].copy(),
        "below_bound": osc.upper_bound[below].copy(),
    }


def _hat_legend(fig: Any, ax: Axes, any_below: bool, beside: Axes | None = None) -> None:
    """One legend for the figure, outside the panels at the right (the colours are shared).

    With ``beside`` (drawing into a caller's axes) it goes at that panel's right.
    """
    handles, labels = ax.get_legend_handles_labels()
    handles.append(Line2D([], [], color=GUIDE_COLOR, linestyle="--", alpha=0.55))
    labels.append("pair curves")
    if any_below:
        triangle = {"marker": "v", "markerfacecolor": "white", "markeredgecolor": "#555555"}
        handles.append(Line2D([], [], linestyle="none", **triangle))
        labels.append("below resolution\n(upper bound)")
    if beside is not None:
        beside.legend(
            handles,
            labels,
            loc="upper left",
            bbox_to_anchor=(1.02, 1.0),
            fontsize=LEGEND_SIZE,
            frameon=False,
            borderaxespad=0.0,
        )
        return
    fig.legend(handles, labels, loc="outside right upper", fontsize=LEGEND_SIZE, frameon=False)


def hat_figure(
    result: HatResult | list[HatResult],
    *,
    title: str | None = None,
    footer: str | None = None,
    analysis_time: datetime | None = None,
    into: Any = None,
    axes: Any = None,
) -> HatDrawn:
    """The separated stability of each oscillator (three-cornered hat) on a sigma-tau plot.

    Parameters
    ----------
    result
        A :class:`stability.hat.HatResult`, or a list of them (one panel per
        statistic, side by side).
    title
        Figure title (default: "three-cornered hat: <names>").
    footer
        Footer text (default: tool version and analysis date).
    analysis_time
        Date for the default footer (default: now).
    into
        A ``Figure`` or ``SubFigure`` to draw into (no title or footer unless given).
    axes
        An ``Axes`` per result to draw the panels into, for a figure the
        caller lays out (the legend goes beside the last; no title or footer
        unless given).

    Returns
    -------
    HatDrawn
        The figure, its panels and the data as drawn.
    """
    items = _validate(result, title, footer)
    if axes is not None:
        axes = given_axes(axes, len(items), "panels (one per statistic)", into)
        fig, own = axes[0].get_figure(root=False), False
    else:
        fig, own = target_for(into, 5.8 + 4.0 * len(items), 5.4)
        axes = tuple(fig.subplots(1, len(items), squeeze=False)[0])
    series: dict[str, dict[str, dict[str, np.ndarray]]] = {}
    pairs: dict[str, dict[str, Curve]] = {}
    colors: dict[str, str] = {}
    for ax, item in zip(axes, items, strict=True):
        style_axes(ax)
        log_axes(ax)
        stat = item.statistic
        pairs[stat] = _draw_pairs(ax, item)
        drawn = {}
        for name, osc in item.oscillators.items():
            color = colors.setdefault(name, ORDERED_COLORS[len(colors) % len(ORDERED_COLORS)])
            drawn[name] = _draw_oscillator(ax, name, osc, color)
        series[stat] = drawn
        ax.set_xlabel(TAU_LABEL, fontsize=LABEL_SIZE)
        ax.set_ylabel(deviation_label([stat]), fontsize=LABEL_SIZE)
        level = 100.0 * float(item.confidence)
        ax.set_title(f"{short_name(stat)}, {level:.3g} % intervals", fontsize=LABEL_SIZE)
    below = any(d["below_tau"].size for per in series.values() for d in per.values())
    given = axes if into is None and not own else None
    _hat_legend(fig, axes[0], below, beside=None if given is None else axes[-1])
    if own or title:
        fig.suptitle(title or f"three-cornered hat: {', '.join(colors)}", fontsize=TITLE_SIZE)
    if own or footer:
        put_footer(fig, footer if footer is not None else tool_footer(analysis_time))
    root = fig.get_figure(root=True)
    root.draw_without_rendering()  # the layout places the panels; then it is kept as it is
    if own:
        fig.set_layout_engine("none")
    for ax, item in zip(axes, items, strict=True):
        _label_pairs(ax, pairs[item.statistic])
    return HatDrawn(root, tuple(axes), series=series, pairs=pairs, colors=colors)
