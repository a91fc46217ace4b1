"""A fleet of devices on one page: every curve, the population's band, the named outliers.

:func:`fleet_figure` draws the stability curve of every device of a fleet
faintly, the population's median and its 10-90 % band at each tau (over the
devices measured there), the specification's limit and, in colour, the
devices furthest from the population or the limit, named in the legend.
:func:`distribution_figure` shows how the devices' deviations at one tau are
spread (a histogram on a log scale), with the median and the limit at that
tau. Both take plain numbers (the fleet's own code gathers them), draw on a
new figure with the Agg canvas, into a ``Figure`` or ``SubFigure`` (``into=``)
or onto a caller's ``Axes`` (``axes=``, the legend beside it), and return what
they drew.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
from matplotlib.ticker import MaxNLocator

from ..errors import InputError
from .labels import check_text
from .style import (
    FLEET_BAND,
    FLEET_CURVE,
    FLEET_MEDIAN_COLOR,
    FLEET_NAMED_COLORS,
    LABEL_SIZE,
    LEGEND_SIZE,
    LIMIT_COLOR,
    TAU_LABEL,
    TITLE_SIZE,
    Drawn,
    deviation_label,
    frame_for,
    given_axes,
    log_axes,
    log_paper,
    put_footer,
    style_axes,
)

__all__ = ["FleetDrawn", "DistributionDrawn", "fleet_figure", "distribution_figure"]

Curve = tuple[np.ndarray, np.ndarray]
#: Panel and legend column of both figures, in inches: (left, bottom, width, height), legend x.
_WIDTH, _HEIGHT = 9.4, 5.6
_PANEL = (0.95, 0.8, 6.0, 4.1)
_SIDE_X = 7.2


@dataclass(frozen=True)
class FleetDrawn(Drawn):
    """What :func:`fleet_figure` drew.

    Attributes
    ----------
    curves
        Device -> (tau, deviation) as drawn (finite, positive values only).
    band
        (tau, median, 10 %, 90 %) of the population as drawn.
    named
        The devices drawn in colour, in legend order.
    limits
        The specification's (tau, max) as drawn (empty without one).
    """

    curves: dict[str, Curve]
    band: tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]
    named: tuple[str, ...]
    limits: tuple[tuple[float, float], ...]


@dataclass(frozen=True)
class DistributionDrawn(Drawn):
    """What :func:`distribution_figure` drew: the values, the bin edges, the counts."""

    values: dict[str, float]
    edges: np.ndarray
    counts: np.ndarray
    median: float
    limit: float | None


def _curves(curves: Any) -> dict[str, Curve]:
    if not isinstance(curves, Mapping):
        raise InputError(f"curves must be a mapping device -> (tau, deviation), got {curves!r}")
    out: dict[str, Curve] = {}
    for name, pair in curves.items():
        try:
            tau, dev = (np.asarray(v, dtype=float) for v in pair)
        except (TypeError, ValueError):
            raise InputError(f"curve of {name!r} must be (tau, deviation) arrays") from None
        if tau.shape != dev.shape or tau.ndim != 1:
            raise InputError(f"curve of {name!r}: tau and deviation differ in shape")
        ok = np.isfinite(tau) & np.isfinite(dev) & (tau > 0) & (dev > 0)
        if ok.any():
            out[str(name)] = (tau[ok], dev[ok])
    return out


def _nothing(ax: Any, text: str) -> None:
    """A panel without data says why, in its middle."""
    ax.text(
        0.5,
        0.5,
        text,
        transform=ax.transAxes,
        ha="center",
        va="center",
        fontsize=LABEL_SIZE,
        color=LIMIT_COLOR,
    )


def _limits(limits: Any) -> tuple[tuple[float, float], ...]:
    if limits is None:
        return ()
    rows = tuple((float(t), float(v)) for t, v in limits)
    return tuple(r for r in rows if r[0] > 0 and r[1] > 0)


def _panel(into: Any, axes: Any) -> tuple[Any, Any, Any]:
    """(frame or None, the data panel, where the title and footer go) of a fleet figure.

    A caller's ``axes`` (one panel) is drawn on as it is; otherwise the panel is
    placed in a figure of its own or in ``into`` as the fleet page has it.
    """
    if axes is not None:
        (ax,) = given_axes(axes, 1, "panel", into)
        return None, ax, ax.get_figure(root=False)
    frame = frame_for(into, _WIDTH, _HEIGHT)
    return frame, frame.target.add_axes(frame.rect(*_PANEL)), frame.target


def _texts(target: Any, title: str | None, footer: str | None) -> None:
    if title:
        target.suptitle(title, fontsize=TITLE_SIZE)
    if footer:
        put_footer(target, footer)


def _legend(ax: Any, frame: Any) -> None:
    if frame is None:  # a caller's axes: the legend beside the panel
        ax.legend(
            loc="upper left",
            bbox_to_anchor=(1.02, 1.0),
            fontsize=LEGEND_SIZE,
            frameon=False,
            borderaxespad=0.0,
        )
        return
    ax.legend(
        loc="upper left",
        bbox_to_anchor=frame.rect(_SIDE_X, _PANEL[1] + _PANEL[3], 0, 0)[:2],
        bbox_transform=frame.target.transSubfigure,
        fontsize=LEGEND_SIZE,
        frameon=False,
        borderaxespad=0.0,
        borderpad=0.0,
    )


def fleet_figure(
    curves: Mapping[str, Curve],
    band: tuple[Any, Any, Any, Any],
    *,
    statistic: str,
    limits: Sequence[tuple[float, float]] | None = None,
    named: Sequence[str] = (),
    title: str | None = None,
    footer: str | None = None,
    into: Any = None,
    axes: Any = None,
) -> FleetDrawn:
    """Every device's curve, the median and 10-90 % band, the limit and the named devices.

    Parameters
    ----------
    curves
        Device -> (tau, deviation) of ``statistic``.
    band
        (tau, median, 10th percentile, 90th percentile) of the population.
    statistic
        The statistic drawn (for the axis wording).
    limits
        The specification's (tau, max), drawn as the limit line; None: no limit.
    named
        Devices to draw in colour and name in the legend (at most five are named).
    title, footer
        Texts above and below the panel.
    into
        A ``Figure`` or ``SubFigure`` to draw the whole figure into.
    axes
        One ``Axes`` to draw the panel onto, in a figure the caller lays out
        (the legend beside it).
    """
    drawn = _curves(curves)
    check_text(title=title, footer=footer)
    tau_b, med, low, high = (np.asarray(v, dtype=float) for v in band)
    shown_named = tuple(n for n in named if n in drawn)[: len(FLEET_NAMED_COLORS)]
    frame, ax, target = _panel(into, axes)
    style_axes(ax)
    if not drawn:
        _nothing(ax, "no device finished with a curve to draw")
    else:
        log_axes(ax)
    for k, (tau, dev) in enumerate(drawn.values()):
        label = f"each device ({len(drawn)})" if k == 0 else None
        ax.plot(tau, dev, zorder=1, label=label, **FLEET_CURVE)
    ok = np.isfinite(low) & np.isfinite(high) & (low > 0)
    if ok.any():
        ax.fill_between(
            tau_b[ok],
            low[ok],
            high[ok],
            zorder=2,
            label="10-90 % of devices",
            linewidth=0,
            **FLEET_BAND,
        )
    good = np.isfinite(med) & (med > 0)
    if good.any():
        ax.plot(
            tau_b[good],
            med[good],
            color=FLEET_MEDIAN_COLOR,
            linewidth=1.8,
            zorder=4,
            label="median",
        )
    for name, color in zip(shown_named, FLEET_NAMED_COLORS, strict=False):
        tau, dev = drawn[name]
        ax.plot(
            tau, dev, color=color, linewidth=1.2, marker="o", markersize=2.5, zorder=5, label=name
        )
    shown_limits = _limits(limits)
    if shown_limits:
        lt, lv = zip(*shown_limits, strict=True)
        ax.plot(
            lt,
            lv,
            color=LIMIT_COLOR,
            linestyle="--",
            linewidth=1.6,
            marker="_",
            markersize=12,
            zorder=6,  # above every curve: the line the fleet is judged against
            label="specification limit",
        )
    ax.set_xlabel(TAU_LABEL, fontsize=LABEL_SIZE)
    ax.set_ylabel(deviation_label([statistic]), fontsize=LABEL_SIZE)
    if drawn:
        log_paper(ax)
        _legend(ax, frame)
    _texts(target, title, footer)
    return FleetDrawn(
        target.get_figure(root=True),
        (ax,),
        curves=drawn,
        band=(tau_b, med, low, high),
        named=shown_named,
        limits=shown_limits,
    )


def distribution_figure(
    values: Mapping[str, float],
    tau: float,
    *,
    statistic: str,
    limit: float | None = None,
    named: Sequence[str] = (),
    title: str | None = None,
    footer: str | None = None,
    into: Any = None,
    axes: Any = None,
) -> DistributionDrawn:
    """How the devices' deviations at ``tau`` are spread, with the median and the limit.

    ``values`` maps device -> deviation at ``tau`` (NaN: not measured there,
    left out); the histogram's bins are equal on a log scale. ``named``
    devices are marked under the bars in their colours. ``into`` and ``axes``
    as for :func:`fleet_figure`.
    """
    check_text(title=title, footer=footer)
    if not isinstance(values, Mapping):
        raise InputError(f"values must be a mapping device -> deviation, got {values!r}")
    kept = {str(k): float(v) for k, v in values.items() if v is not None and float(v) > 0}
    kept = {k: v for k, v in kept.items() if math.isfinite(v)}
    if not kept:
        return _empty_distribution(tau, statistic, title, footer, _panel(into, axes))
    logs = np.log10(np.fromiter(kept.values(), dtype=float))
    lo, hi = float(logs.min()), float(logs.max())
    if limit is not None and limit > 0:
        lo, hi = min(lo, math.log10(limit)), max(hi, math.log10(limit))
    pad = max(0.05, 0.05 * (hi - lo))
    bins = int(np.clip(math.ceil(math.sqrt(len(kept))) + 2, 5, 30))
    edges = 10.0 ** np.linspace(lo - pad, hi + pad, bins + 1)
    counts, _ = np.histogram(np.fromiter(kept.values(), dtype=float), bins=edges)
    median = float(np.median(np.fromiter(kept.values(), dtype=float)))
    frame, ax, target = _panel(into, axes)
    log_axes(ax, "x")
    style_axes(ax, minor_grid=False)
    ax.stairs(
        counts,
        edges,
        fill=True,
        color=FLEET_BAND["color"],
        alpha=0.8,
        zorder=2,
        label=f"devices ({len(kept)})",
    )
    ax.axvline(median, color=FLEET_MEDIAN_COLOR, linewidth=1.8, zorder=4, label="median")
    if limit is not None and limit > 0:
        ax.axvline(
            limit,
            color=LIMIT_COLOR,
            linestyle="--",
            linewidth=1.2,
            zorder=3,
            label="specification limit",
        )
    for name, color in zip([n for n in named if n in kept], FLEET_NAMED_COLORS, strict=False):
        ax.plot(
            [kept[name]],
            [0],
            linestyle="none",
            marker="^",
            markersize=7,
            color=color,
            zorder=5,
            clip_on=False,
            label=name,
        )
    ax.yaxis.set_major_locator(MaxNLocator(integer=True, min_n_ticks=3))
    ax.set_ylim(0, max(3, int(counts.max()) + 1))
    ax.set_xlabel(f"{deviation_label([statistic])} at \u03c4 = {tau:g} s", fontsize=LABEL_SIZE)
    ax.set_ylabel("devices", fontsize=LABEL_SIZE)
    _legend(ax, frame)
    _texts(target, title, footer)
    return DistributionDrawn(
        target.get_figure(root=True),
        (ax,),
        values=kept,
        edges=edges,
        counts=counts,
        median=median,
        limit=limit if limit is not None and limit > 0 else None,
    )


def _empty_distribution(
    tau: float, statistic: str, title: str | None, footer: str | None, panel: tuple
) -> DistributionDrawn:
    _, ax, target = panel
    style_axes(ax, minor_grid=False)
    _nothing(ax, f"no device was measured at \u03c4 = {tau:g} s")
    ax.set_xlabel(f"{deviation_label([statistic])} at \u03c4 = {tau:g} s", fontsize=LABEL_SIZE)
    ax.set_ylabel("devices", fontsize=LABEL_SIZE)
    _texts(target, title, footer)
    empty = np.array([], dtype=float)
    return DistributionDrawn(
        target.get_figure(root=True),
        (ax,),
        values={},
        edges=empty,
        counts=empty,
        median=math.nan,
        limit=None,
    )
