"""Figures: the sigma-tau plot and the data over time (matplotlib, no pyplot state).

:func:`stability_figure` draws the stability plot: deviation against averaging
time on log-log axes [1]_, one series per statistic with its confidence
interval as asymmetric error bars, the fitted power-law model as a thin line,
the identified noise type written where it changes, and a faint key of the
slopes each power-law noise type gives [1]_ [2]_:

=====================  =====  =====  =====  =====  =====
statistic              WPM    FPM    WFM    FFM    RWFM
=====================  =====  =====  =====  =====  =====
ADEV, OADEV, HDEV ...  -1     -1     -1/2   0      +1/2
MDEV                   -3/2   -1     -1/2   0      +1/2
TDEV                   -1/2   0      +1/2   +1     +3/2
MTIE, TIE rms          0      0      +1/2   +1     +3/2
=====================  =====  =====  =====  =====  =====

TDEV = tau * MDEV / sqrt(3) [3]_, so its slopes are those of MDEV plus one.
TIE rms is the rms phase difference over tau: a constant for white phase noise,
tau^(1/2) for the random-walk phase of white FM, and tau and tau^(3/2) for the
phases of flicker and random-walk FM (common practice; MTIE follows the same
growth). A panel holding statistics of different slopes (OADEV with MDEV,
TDEV with MTIE) shows the key of its first such statistic and names it.
Fractional-frequency statistics and time statistics (seconds) never
share an axis: when both are asked for, the figure has two panels side by side.

:func:`series_figure` draws the record over time: fractional frequency with an
optional drift model, and the phase residual (the phase with its own
least-squares line removed) in two panels sharing the time axis; gaps are
shaded and removed outliers marked. Records longer than a few thousand samples
are drawn through the minimum and maximum of each pixel column, in time order,
so that every excursion stays visible while the figure stays light [4]_.

Figures are built with the object-oriented API (``Figure`` plus
``FigureCanvasAgg``) so that nothing touches pyplot's global state and the code
works headless. :func:`save_figure` writes PNG, SVG or PDF atomically.

References
----------
.. [1] W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065
   (2008), section 5.2 (sigma-tau plots) (slopes of the power-law noises).
.. [2] IEEE Std 1139-2008, *Definitions of Physical Quantities for Fundamental
   Frequency and Time Metrology - Random Instabilities*, annex (slopes of
   sigma_y(tau) and mod sigma_y(tau)).
.. [3] ITU-T Recommendation G.810 (1996), *Definitions and terminology for
   synchronization networks*, appendix II (TDEV).
.. [4] S. Steinarsson, *Downsampling Time Series for Visual Representation*,
   MSc thesis, University of Iceland (2013), section 3 (min-max per bucket).
"""

from __future__ import annotations

import math
import os
import re
import warnings
from collections.abc import Mapping, Sequence
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

import numpy as np
from matplotlib import dates as mdates
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.collections import LineCollection, PolyCollection
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.ticker import LogFormatterSciNotation, NullLocator, ScalarFormatter
from matplotlib.transforms import blended_transform_factory

from ._version import __version__
from .errors import InputError
from .files import atomic_output
from .measurement import Measurement
from .reports.labels import analysis_date as _analysis_date
from .reports.labels import default_footer
from .reports.labels import default_title as _default_title
from .reports.labels import tool_footer as _tool_footer
from .spec import Verdict
from .table import StabilityTable

__all__ = [
    "stability_figure",
    "series_figure",
    "hat_figure",
    "phase_noise_figure",
    "timeline_figure",
    "overlay_figure",
    "overlay_footer",
    "save_figure",
    "stability_series",
    "slope_key",
    "default_footer",
    "envelope",
    "FORMATS",
    "VERDICT_COLORS",
]

#: Output formats of :func:`save_figure`.
FORMATS = ("png", "svg", "pdf")

#: Calm, colour-blind-aware series colours (dark blue, burnt orange, green, purple, ...).
SERIES_COLORS = (
    "#1f5f8b",
    "#c2571a",
    "#3b7d3b",
    "#7a4e9c",
    "#8c6d1f",
    "#2a8a8a",
    "#a33b5b",
    "#555555",
)

#: Marker colours of specification limits by verdict.
VERDICT_COLORS = {
    "pass": "#2e7d4f",
    "fail": "#b23a3a",
    "inconclusive": "#d08c2a",
    "not measured": "#9a9a9a",
}

_GAP_COLOR = "#d9d9d9"
_OUTLIER_COLOR = "#b23a3a"
_GUIDE_COLOR = "#9a9a9a"
_DPI = 150

#: Slope key per kind of statistic: (slope of deviation vs tau on log-log, noise label).
SLOPES = {
    "allan": ((-1.0, "WPM/FPM"), (-0.5, "WFM"), (0.0, "FFM"), (0.5, "RWFM")),
    "modified": ((-1.5, "WPM"), (-1.0, "FPM"), (-0.5, "WFM"), (0.0, "FFM"), (0.5, "RWFM")),
    "tdev": ((-0.5, "WPM"), (0.0, "FPM"), (0.5, "WFM"), (1.0, "FFM"), (1.5, "RWFM")),
    "time_error": ((0.0, "WPM/FPM"), (0.5, "WFM"), (1.0, "FFM"), (1.5, "RWFM")),
}


# --------------------------------------------------------------------------- shared code
def _stat_info(name: str) -> tuple[str, str, str]:
    """(title, unit, family) of a statistic; unknown names get their upper-case form."""
    from .deviations import get_statistic

    try:
        stat = get_statistic(name)
    except InputError:
        return name.upper(), "", ""
    return stat.title, stat.unit, stat.family


def _short(name: str) -> str:
    return name.upper().replace("_", " ")


#: Fixed margins (inches: left, right, bottom, top) of the figures with a known
#: arrangement. A fixed layout is decided without measuring every text first,
#: which halves the drawing time of a figure, and keeps records identical in shape.
_MARGINS = (0.95, 0.25, 0.8, 0.6)


def _new_figure(
    width: float, height: float, *, fixed: bool = False, wspace: float = 0.28, hspace: float = 0.12
) -> Figure:
    """A figure on the Agg canvas; ``fixed`` uses :data:`_MARGINS`, else constrained layout."""
    if not fixed:
        fig = Figure(figsize=(width, height), dpi=_DPI, layout="constrained")
        FigureCanvasAgg(fig)
        # leave a strip at the bottom for the footer
        fig.get_layout_engine().set(rect=(0.0, 0.035, 1.0, 0.965))
        return fig
    fig = Figure(figsize=(width, height), dpi=_DPI)
    FigureCanvasAgg(fig)
    left, right, bottom, top = _MARGINS
    fig.subplots_adjust(
        left=left / width,
        right=1.0 - right / width,
        bottom=bottom / height,
        top=1.0 - top / height,
        wspace=wspace,
        hspace=hspace,
    )
    return fig


_SUPERSCRIPT = str.maketrans(
    "0123456789-", "\u2070\u00b9\u00b2\u00b3\u2074\u2075\u2076\u2077\u2078\u2079\u207b"
)
_MATH_POWER = re.compile(r"10\^\{([^{}]*)\}")


def _plain_math(label: str) -> str:
    """A tick label matplotlib writes as math (``$\\mathdefault{10^{-12}}$``) as plain text.

    Powers of ten get superscript digits (10⁻¹², 2×10⁻¹²); a label holding
    anything else of math is returned unchanged.
    """
    if len(label) < 2 or not (label.startswith("$") and label.endswith("$")):
        return label
    body = _MATH_POWER.sub(
        lambda found: "10" + found.group(1).replace("\u2212", "-").translate(_SUPERSCRIPT),
        label[1:-1],
    )
    body = body.replace("\\times", "\u00d7").replace("\\mathdefault{", "").replace("}", "")
    return label if any(c in body for c in "\\^_{$") else body


class _PowerLabels(LogFormatterSciNotation):
    """Log-axis tick labels as plain text with superscripts (10⁻¹², 2×10⁻¹²).

    The labels read as matplotlib's usual ones but need no math typesetting,
    which is the slowest part of drawing a log-log figure.
    """

    def __call__(self, x: float, pos: int | None = None) -> str:
        return _plain_math(super().__call__(x, pos))


class _PlainScalar(ScalarFormatter):
    """Linear-axis tick labels with a ×10ⁿ multiplier, as plain text."""

    def __init__(self) -> None:
        super().__init__(useMathText=True)
        self.set_scientific(True)
        self.set_powerlimits((-3, 4))

    def __call__(self, x: float, pos: int | None = None) -> str:
        return _plain_math(super().__call__(x, pos))

    def get_offset(self) -> str:
        return _plain_math(super().get_offset())


#: An axis spanning more decades than this gets its minor grid as one collection.
_MIN_DECADES_FOR_GRID = 1.5


def _minor_log_grid(ax: Any) -> None:
    """Minor grid lines at 2..9 x 10^k on a finished log-log panel, as one collection.

    Matplotlib builds several artists for every minor tick; on a panel spanning
    many decades that is most of the drawing time of the figure. The limits are
    fixed at their autoscaled values and the lines drawn for them, looking as
    the ordinary minor grid does. An axis spanning less than
    :data:`_MIN_DECADES_FOR_GRID` decades keeps matplotlib's minor ticks, which
    then carry its labels.
    """
    ax.autoscale_view()
    lines = []
    for axis, (lo, hi), vertical in (
        (ax.xaxis, ax.get_xlim(), True),
        (ax.yaxis, ax.get_ylim(), False),
    ):
        lo, hi = min(lo, hi), max(lo, hi)
        if not (lo > 0 and math.isfinite(hi)) or math.log10(hi / lo) < _MIN_DECADES_FOR_GRID:
            continue
        decades = 10.0 ** np.arange(math.floor(math.log10(lo)), math.ceil(math.log10(hi)) + 1)
        at = (np.arange(2.0, 10.0)[None, :] * decades[:, None]).ravel()
        at = at[(at > lo) & (at < hi)]
        ends = np.zeros_like(at), np.ones_like(at)
        pairs = (
            np.stack([np.column_stack([at, ends[0]]), np.column_stack([at, ends[1]])], axis=1)
            if vertical
            else np.stack([np.column_stack([ends[0], at]), np.column_stack([ends[1], at])], axis=1)
        )
        transform = (
            blended_transform_factory(ax.transData, ax.transAxes)
            if vertical
            else blended_transform_factory(ax.transAxes, ax.transData)
        )
        lines.append(
            LineCollection(
                pairs,
                transform=transform,
                colors="#e6e6e6",
                linewidths=0.4,
                alpha=0.6,
                zorder=0.9,
                gid="minor-grid",
            )
        )
        axis.set_minor_locator(NullLocator())
        (ax.set_xlim if vertical else ax.set_ylim)(lo, hi)
    for collection in lines:
        ax.add_collection(collection, autolim=False)


def _log_axes(ax: Any) -> None:
    """Log scale on both axes with plain-text power-of-ten labels."""
    ax.set_xscale("log")
    ax.set_yscale("log")
    for axis in (ax.xaxis, ax.yaxis):
        axis.set_major_formatter(_PowerLabels())
        axis.set_minor_formatter(_PowerLabels(labelOnlyBase=False))


def _style_axes(ax: Any) -> None:
    ax.grid(True, which="major", color="#cccccc", linewidth=0.5, alpha=0.8)
    ax.grid(True, which="minor", color="#e6e6e6", linewidth=0.4, alpha=0.6)
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)
    ax.tick_params(labelsize=8)


def _put_footer(fig: Figure, text: str) -> None:
    fig.text(0.01, 0.008, text, fontsize=6.5, color="#777777", ha="left", va="bottom")


def _normal_verdict(verdict: Any) -> Verdict:
    return Verdict.parse(verdict, where="limits")


# ---------------------------------------------------------------------- stability plot
def stability_series(
    table: StabilityTable,
) -> dict[str, tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]]:
    """What :func:`stability_figure` draws: statistic -> (tau, deviation, ci_low, ci_high).

    Only rows with a finite, positive deviation are drawn on log axes; the
    interval bounds are NaN where the row has none.
    """
    out = {}
    for result in table:
        keep = np.isfinite(result.deviation) & (result.deviation > 0)
        keep &= np.isfinite(result.tau) & (result.tau > 0)
        out[result.statistic] = (
            result.tau[keep].copy(),
            result.deviation[keep].copy(),
            result.ci_low[keep].copy(),
            result.ci_high[keep].copy(),
        )
    return out


def _slope_set(names: Sequence[str]) -> str:
    families = {_stat_info(n)[2] for n in names}
    if "s" in {_stat_info(n)[1] for n in names}:
        return "tdev" if "tdev" in names else "time_error"
    return "modified" if families == {"modified"} else "allan"


def slope_key(names: Sequence[str]) -> tuple[str, tuple[tuple[float, str], ...]]:
    """The slope key drawn for a panel holding these statistics: (kind, ((slope, label), ...))."""
    kind = _slope_set(list(names))
    return kind, SLOPES[kind]


def _validate_stability_args(
    table: Any, title: Any, model_curve: Any, limits: Any, limits_statistic: Any, footer: Any
) -> list[tuple[float, float, str]]:
    if not isinstance(table, StabilityTable):
        raise InputError(
            f"table must be a stability.StabilityTable, got {type(table).__name__}",
            hint="build one with stability.analyze",
        )
    if len(table) == 0:
        raise InputError("the table holds no results to plot")
    for name, value in (("title", title), ("footer", footer)):
        if value is not None and not isinstance(value, str):
            raise InputError(f"{name} must be a str or None, got {type(value).__name__}")
    if model_curve is not None:
        if not isinstance(model_curve, Mapping):
            raise InputError(
                "model_curve must map a statistic to (tau, sigma) arrays, "
                f"got {type(model_curve).__name__}"
            )
        for stat, curve in model_curve.items():
            if stat not in table.results:
                raise InputError(
                    f"model_curve names {stat!r}, which is not in the table",
                    hint=f"use one of {', '.join(table.results)}",
                )
            try:
                tau, sigma = (np.asarray(c, dtype=float) for c in curve)
            except (TypeError, ValueError):
                raise InputError(
                    f"model_curve[{stat!r}] must be a pair (tau, sigma) of number arrays"
                ) from None
            if tau.shape != sigma.shape or tau.ndim != 1:
                raise InputError(
                    f"model_curve[{stat!r}]: tau and sigma must be 1-D of one length, "
                    f"got shapes {tau.shape} and {sigma.shape}"
                )
    if limits_statistic is not None and limits_statistic not in table.results:
        raise InputError(
            f"limits_statistic {limits_statistic!r} is not in the table",
            hint=f"use one of {', '.join(table.results)}",
        )
    rows: list[tuple[float, float, str]] = []
    if limits is not None:
        try:
            items = list(limits)
        except TypeError:
            raise InputError(
                f"limits must be a list of (tau_s, max, verdict) rows, got {type(limits).__name__}"
            ) from None
        for i, item in enumerate(items):
            try:
                tau, top, *rest = item
                tau, top = float(tau), float(top)
            except (TypeError, ValueError):
                raise InputError(
                    f"limits row {i} must be (tau_s, max, verdict), got {item!r}"
                ) from None
            if len(rest) > 1:
                raise InputError(f"limits row {i} must be (tau_s, max, verdict), got {item!r}")
            if not (tau > 0 and top > 0 and math.isfinite(tau) and math.isfinite(top)):
                raise InputError(
                    f"limits row {i}: tau and max must be positive and finite, got {item!r}"
                )
            rows.append((tau, top, _normal_verdict(rest[0] if rest else None)))
    return rows


def _draw_slope_key(ax: Any, names: Sequence[str], points: np.ndarray) -> None:
    """A faint fan of slope guides in the emptiest corner of a log-log panel."""
    kind, slopes = slope_key(names)
    heading = "slopes"
    if len({_slope_set([n]) for n in names}) > 1:  # mixed kinds: say whose slopes these are
        owner = next((n for n in names if _slope_set([n]) == kind), names[0])
        heading = f"slopes ({_short(owner)})"
    ax.autoscale_view()
    (x0, x1), (y0, y1) = ax.get_xlim(), ax.get_ylim()
    lx0, lx1, ly0, ly1 = math.log10(x0), math.log10(x1), math.log10(y0), math.log10(y1)
    # give the key a little room: at least ~2 decades tall so the slopes are legible
    if ly1 - ly0 < 2.0:
        pad = (2.0 - (ly1 - ly0)) / 2
        ly0, ly1 = ly0 - pad, ly1 + pad
    if lx1 - lx0 < 1.0:
        pad = (1.0 - (lx1 - lx0)) / 2
        lx0, lx1 = lx0 - pad, lx1 + pad
    ax.set_xlim(10**lx0, 10**lx1)
    ax.set_ylim(10**ly0, 10**ly1)
    wx, wy = lx1 - lx0, ly1 - ly0
    max_slope = max(abs(s) for s, _ in slopes)
    length = min(0.14 * wx, 0.18 * wy / max(max_slope, 0.5))  # decades of tau
    box_w = length / wx + 0.1  # axes fraction, room for the labels
    box_h = 2 * max_slope * length / wy + 0.06
    # count the drawn points in each candidate corner (axes fraction)
    if points.size:
        fx = (np.log10(points[:, 0]) - lx0) / wx
        fy = (np.log10(points[:, 1]) - ly0) / wy
    else:
        fx = fy = np.empty(0)
    margin = 0.03
    corners = {
        "lower left": (margin, margin),
        "upper right": (1 - margin - box_w, 1 - margin - box_h),
        "lower right": (1 - margin - box_w, margin),
        "upper left": (margin, 1 - margin - box_h),
    }
    best, best_count = "lower left", None
    for name, (cx, cy) in corners.items():
        inside = (fx >= cx - 0.02) & (fx <= cx + box_w + 0.02)
        inside &= (fy >= cy - 0.02) & (fy <= cy + box_h + 0.02)
        count = int(inside.sum())
        if best_count is None or count < best_count:
            best, best_count = name, count
    cx, cy = corners[best]
    origin_lx = lx0 + (cx + 0.01) * wx
    origin_ly = ly0 + (cy + box_h / 2) * wy
    for slope, label in slopes:
        xs = np.array([origin_lx, origin_lx + length])
        ys = origin_ly + slope * (xs - origin_lx)
        ax.plot(
            10**xs,
            10**ys,
            color=_GUIDE_COLOR,
            linewidth=0.8,
            alpha=0.8,
            zorder=1,
            solid_capstyle="round",
            gid="slope-key",
        )
        ax.annotate(
            label,
            (10 ** xs[1], 10 ** ys[1]),
            xytext=(2, 0),
            textcoords="offset points",
            fontsize=6,
            color="#808080",
            va="center",
            ha="left",
            zorder=1,
            gid="slope-key",
        )
    ax.text(
        10**origin_lx,
        10 ** (origin_ly + max(max(s for s, _ in slopes), 0.0) * length + 0.02 * wy),
        heading,
        fontsize=6,
        color="#808080",
        va="bottom",
        ha="left",
        style="italic",
        zorder=1,
        gid="slope-key",
    )
    ax.set_xlim(10**lx0, 10**lx1)
    ax.set_ylim(10**ly0, 10**ly1)


def _panel_label(names: Sequence[str], unit: str) -> str:
    if len(names) == 1:
        title, _, _ = _stat_info(names[0])
        label = f"{title}, {_short(names[0])}"
    else:
        label = "time statistic" if unit == "s" else "fractional frequency deviation"
    return f"{label} (s)" if unit == "s" else label


def stability_figure(
    table: StabilityTable,
    *,
    title: str | None = None,
    model_curve: Mapping[str, tuple[Any, Any]] | None = None,
    limits: Sequence[tuple[float, float, str | None]] | None = None,
    limits_statistic: str | None = None,
    footer: str | None = None,
    analysis_time: datetime | None = None,
) -> Figure:
    """The sigma-tau plot of an analysis.

    Parameters
    ----------
    table
        The results, from :func:`stability.analyze`.
    title
        Figure title (default: the log's file name).
    model_curve
        Statistic -> (tau, sigma) of the fitted power-law model, drawn as a thin line.
    limits
        Specification limits as ``(tau_s, max, verdict)`` rows; verdict is
        ``"pass"``, ``"fail"``, ``"inconclusive"`` or None (not measured).
    limits_statistic
        The statistic the limits apply to (default: the table's first); they
        are drawn on its panel.
    footer
        Footer text (default: input SHA-256 prefix, tool version, analysis date).
    analysis_time
        Date for the default footer (default: now).

    Returns
    -------
    matplotlib.figure.Figure
        With the drawn data as ``fig.stability_series`` (see :func:`stability_series`),
        the panel of each statistic as ``fig.stability_axes`` and the limits as
        ``fig.stability_limits``.
    """
    limit_rows = _validate_stability_args(
        table, title, model_curve, limits, limits_statistic, footer
    )
    series = stability_series(table)
    fractional = [s for s in table.results if _stat_info(s)[1] != "s"]
    timed = [s for s in table.results if _stat_info(s)[1] == "s"]
    panels = [(names, unit) for names, unit in ((fractional, ""), (timed, "s")) if names]
    width = 8.0 if len(panels) == 1 else 12.5
    fig = _new_figure(width, 5.4, fixed=True)
    axes = fig.subplots(1, len(panels), squeeze=False)[0]
    colors = {name: SERIES_COLORS[i % len(SERIES_COLORS)] for i, name in enumerate(table.results)}
    target = limits_statistic or next(iter(table.results))
    axes_of: dict[str, Any] = {}
    for ax, (names, unit) in zip(axes, panels, strict=True):
        _log_axes(ax)
        _style_axes(ax)
        drawn: list[np.ndarray] = []
        entries = 0
        for j, name in enumerate(names):
            axes_of[name] = ax
            tau, dev, low, high = series[name]
            color = colors[name]
            stat_title, _, _ = _stat_info(name)
            ax.plot(
                tau,
                dev,
                marker="o",
                markersize=3.5,
                linewidth=1.0,
                color=color,
                label=f"{stat_title} ({_short(name)})",
                zorder=3,
            )
            entries += 1
            drawn.append(np.column_stack([tau, dev]))
            ok = np.isfinite(low) & np.isfinite(high) & (low > 0) & (high >= dev) & (low <= dev)
            if ok.any():
                yerr = np.vstack([dev[ok] - low[ok], high[ok] - dev[ok]])
                ax.errorbar(
                    tau[ok],
                    dev[ok],
                    yerr=yerr,
                    fmt="none",
                    ecolor=color,
                    elinewidth=0.8,
                    capsize=2.0,
                    alpha=0.9,
                    zorder=2,
                )
                drawn.append(np.column_stack([tau[ok], low[ok]]))
                drawn.append(np.column_stack([tau[ok], high[ok]]))
            # noise type where it changes (small text beside the points)
            noise = np.asarray(table.results[name].noise, dtype=object)
            keep = np.isfinite(table.results[name].deviation) & (table.results[name].deviation > 0)
            keep &= np.isfinite(table.results[name].tau) & (table.results[name].tau > 0)
            noise = noise[keep]
            if noise.size:
                labelled = noise != ""
                change = labelled & np.concatenate([[True], noise[1:] != noise[:-1]])
                dy = -9 if j % 2 == 0 else 6
                for i in np.flatnonzero(change):
                    ax.annotate(
                        str(noise[i]),
                        (tau[i], dev[i]),
                        xytext=(3, dy),
                        textcoords="offset points",
                        fontsize=6.5,
                        color=color,
                        zorder=4,
                        gid="noise-label",
                    )
            if model_curve is not None and name in model_curve:
                m_tau, m_sigma = (np.asarray(c, dtype=float) for c in model_curve[name])
                good = np.isfinite(m_tau) & np.isfinite(m_sigma) & (m_tau > 0) & (m_sigma > 0)
                if good.any():
                    ax.plot(
                        m_tau[good],
                        m_sigma[good],
                        color=color,
                        linewidth=0.7,
                        alpha=0.75,
                        linestyle="-",
                        label=f"{_short(name)} power-law model",
                        zorder=2,
                    )
                    entries += 1
        if limit_rows and target in names:
            l_tau = np.array([r[0] for r in limit_rows])
            l_max = np.array([r[1] for r in limit_rows])
            verdicts = [r[2] for r in limit_rows]
            order = np.argsort(l_tau, kind="stable")
            ax.plot(
                l_tau[order],
                l_max[order],
                color="#444444",
                linewidth=1.0,
                linestyle="--",
                label=f"limit ({_short(target)})",
                zorder=2,
            )
            entries += 1
            for verdict, color in VERDICT_COLORS.items():
                sel = np.array([v == verdict for v in verdicts], dtype=bool)
                if sel.any():
                    ax.plot(
                        l_tau[sel],
                        l_max[sel],
                        linestyle="none",
                        marker="s",
                        markersize=5,
                        markerfacecolor=color,
                        markeredgecolor="#333333",
                        markeredgewidth=0.5,
                        label=verdict,
                        zorder=5,
                    )
                    entries += 1
            drawn.append(np.column_stack([l_tau, l_max]))
        points = np.concatenate(drawn) if drawn else np.empty((0, 2))
        ax.set_xlabel("averaging time \u03c4 (s)", fontsize=9)
        ax.set_ylabel(_panel_label(names, unit), fontsize=9)
        if points.size:
            _draw_slope_key(ax, names, points)
        _minor_log_grid(ax)
        if entries > 1:
            ax.legend(fontsize=7, frameon=False, loc="best")
    fig.suptitle(title or _default_title(table.measurement, "stability"), fontsize=11)
    if footer is None:
        footer = default_footer(table, analysis_time=analysis_time)
    _put_footer(fig, footer)
    fig.stability_series = series
    fig.stability_axes = axes_of
    fig.stability_limits = limit_rows
    return fig


# ---------------------------------------------------------------------- data over time
def envelope(values: np.ndarray, columns: int) -> tuple[np.ndarray, np.ndarray]:
    """Indices and values of a min/max decimation of ``values`` into ``columns`` buckets.

    Each bucket of consecutive samples contributes its minimum and its maximum,
    in the order they occur, followed by a NaN break when the bucket or the
    next one holds a missing sample, so the drawn line never bridges a gap.
    The result is a subsequence of the data (plus NaN breaks): every drawn
    point is a real sample, and every bucket's full range is drawn.

    Returns
    -------
    index, value
        Float sample indices (NaN at breaks) and values, ready for plotting.
    """
    values = np.asarray(values, dtype=float)
    n = values.size
    columns = max(1, int(columns))
    block = max(1, math.ceil(n / columns))
    n_blocks = math.ceil(n / block)
    padded = np.full(n_blocks * block, np.nan)
    padded[:n] = values
    blocks = padded.reshape(n_blocks, block)
    missing = np.isnan(blocks)
    any_missing = missing.any(axis=1)
    any_missing[-1] = np.isnan(values[(n_blocks - 1) * block :]).any()
    all_missing = missing.all(axis=1)
    i_min = np.argmin(np.where(missing, np.inf, blocks), axis=1)
    i_max = np.argmax(np.where(missing, -np.inf, blocks), axis=1)
    rows = np.arange(n_blocks)
    first = np.minimum(i_min, i_max)
    second = np.maximum(i_min, i_max)
    base = rows * block
    idx = np.empty((n_blocks, 3))
    val = np.empty((n_blocks, 3))
    idx[:, 0] = base + first
    idx[:, 1] = base + second
    val[:, 0] = blocks[rows, first]
    val[:, 1] = blocks[rows, second]
    brk = any_missing | np.concatenate([any_missing[1:], [False]])
    idx[:, 2] = np.where(brk, np.nan, idx[:, 1])
    val[:, 2] = np.where(brk, np.nan, val[:, 1])
    val[all_missing, :2] = np.nan
    return idx.ravel(), val.ravel()


def _gap_runs(mask: np.ndarray, max_runs: int) -> np.ndarray:
    """(k, 2) array of [start, stop) sample ranges where ``mask`` is true."""
    if not mask.any():
        return np.empty((0, 2), dtype=np.int64)
    edges = np.diff(np.concatenate([[0], mask.astype(np.int8), [0]]))
    runs = np.column_stack([np.flatnonzero(edges == 1), np.flatnonzero(edges == -1)])
    if len(runs) > max_runs:  # too many to draw: merge per bucket of samples
        block = math.ceil(mask.size / max_runs)
        n_blocks = math.ceil(mask.size / block)
        padded = np.zeros(n_blocks * block, dtype=bool)
        padded[: mask.size] = mask
        coarse = padded.reshape(n_blocks, block).any(axis=1)
        edges = np.diff(np.concatenate([[0], coarse.astype(np.int8), [0]]))
        runs = np.column_stack([np.flatnonzero(edges == 1), np.flatnonzero(edges == -1)])
        runs = np.minimum(runs * block, mask.size)
    return runs


def _time_axis(measurement: Measurement) -> tuple[float, float, str, bool]:
    """(origin, scale, label, is_date): axis value = origin + scale * seconds from start."""
    if measurement.start is not None:
        start = measurement.start
        origin = float(mdates.date2num(start))
        if start.tzinfo is None:
            zone = "local time"
        elif start.utcoffset() == UTC.utcoffset(None):
            zone = "UTC"
        else:
            zone = str(start.tzinfo)
        return origin, 1.0 / 86400.0, f"time ({zone})", True
    span = measurement.span
    for limit, unit, factor in (
        (2 * 86400, "d", 86400.0),
        (2 * 3600, "h", 3600.0),
        (120, "min", 60.0),
    ):
        if span >= limit:
            return 0.0, 1.0 / factor, f"elapsed time ({unit})", False
    return 0.0, 1.0, "elapsed time (s)", False


def _phase_scale(values: np.ndarray) -> tuple[float, str]:
    finite = values[np.isfinite(values)]
    top = float(np.max(np.abs(finite))) if finite.size else 0.0
    for factor, unit in ((1.0, "s"), (1e-3, "ms"), (1e-6, "µs"), (1e-9, "ns"), (1e-12, "ps")):
        if top >= factor:
            return factor, unit
    return 1e-15 if top > 0 else 1.0, "fs" if top > 0 else "s"


def _phase_residual(phase: np.ndarray) -> np.ndarray:
    """Phase minus its own least-squares line (the linear frequency offset removed)."""
    k = np.arange(phase.size, dtype=float)
    good = np.isfinite(phase)
    count = int(np.count_nonzero(good))
    if count < 2:
        return phase - np.nanmean(phase)
    kk, xx = (k, phase) if count == phase.size else (k[good], phase[good])
    km = kk.mean()
    xm = xx.mean()
    dk = kk - km
    # einsum, not np.dot: 1-D dot goes to a threaded BLAS (see deviations._kernels.dot)
    slope = float(np.einsum("i,i->", dk, xx - xm) / np.einsum("i,i->", dk, dk))
    return phase - (xm + slope * (k - km))


def _validate_series_args(
    measurement: Any,
    drift_curve: Any,
    outlier_indices: Any,
    title: Any,
    footer: Any,
    max_columns: Any,
) -> tuple[np.ndarray | None, np.ndarray]:
    if not isinstance(measurement, Measurement):
        raise InputError(
            f"measurement must be a stability.Measurement, got {type(measurement).__name__}",
            hint="build one with Measurement.from_phase, Measurement.from_frequency or read_log",
        )
    for name, value in (("title", title), ("footer", footer)):
        if value is not None and not isinstance(value, str):
            raise InputError(f"{name} must be a str or None, got {type(value).__name__}")
    if not isinstance(max_columns, int) or max_columns < 10:
        raise InputError(f"max_columns must be an integer of at least 10, got {max_columns!r}")
    drift = None
    if drift_curve is not None:
        try:
            drift = np.asarray(drift_curve, dtype=float)
        except (TypeError, ValueError):
            raise InputError("drift_curve must be an array of numbers") from None
        if drift.shape != (measurement.n - 1,):
            raise InputError(
                "drift_curve must hold one value per frequency sample "
                f"({measurement.n - 1}), got shape {drift.shape}"
            )
    n_source = measurement.n - 1 if measurement.kind == "frequency" else measurement.n
    if outlier_indices is None:
        outliers = np.empty(0, dtype=np.int64)
    else:
        try:
            outliers = np.asarray(outlier_indices).astype(np.int64, casting="safe").ravel()
        except (TypeError, ValueError):
            raise InputError("outlier_indices must be whole sample indices") from None
        if outliers.size and (outliers.min() < 0 or outliers.max() >= n_source):
            raise InputError(
                f"outlier_indices must lie in 0..{n_source - 1} (source samples), "
                f"got {int(outliers.min())}..{int(outliers.max())}"
            )
    return drift, outliers


def series_figure(
    measurement: Measurement,
    *,
    drift_curve: Any = None,
    outlier_indices: Any = None,
    title: str | None = None,
    footer: str | None = None,
    analysis_time: datetime | None = None,
    max_columns: int = 2000,
) -> Figure:
    """The record over time: fractional frequency and phase residual, gaps and outliers.

    Parameters
    ----------
    measurement
        The data.
    drift_curve
        The drift model, one fractional-frequency value per frequency sample
        (``measurement.n - 1`` values), drawn over the frequency.
    outlier_indices
        Indices of removed outliers among the source samples (frequency
        samples for frequency input, phase samples for phase input), marked
        along the top of the panel of that quantity.
    title, footer
        Figure title (default: the log's file name) and footer text (default:
        input SHA-256 prefix, tool version, analysis date).
    analysis_time
        Date for the default footer (default: now).
    max_columns
        Longer records are drawn as a min/max envelope over this many buckets
        (:func:`envelope`).

    Returns
    -------
    matplotlib.figure.Figure
        With what was drawn as ``fig.series_data``: ``frequency`` and
        ``phase_residual`` (x, y as drawn, in axis units), ``drift`` (or None),
        ``gaps`` ((k, 2) axis-unit spans), ``outliers`` (axis positions),
        ``decimated`` (bool) and ``phase_unit`` (scale factor, unit).
    """
    drift, outliers = _validate_series_args(
        measurement, drift_curve, outlier_indices, title, footer, max_columns
    )
    y = measurement.frequency()
    residual = _phase_residual(np.asarray(measurement.phase, dtype=float))
    p_factor, p_unit = _phase_scale(residual)
    origin, scale, x_label, is_date = _time_axis(measurement)
    tau0 = measurement.tau0

    def axis(index: np.ndarray) -> np.ndarray:
        return origin + scale * tau0 * index

    decimate = max(y.size, residual.size) > 4 * max_columns
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        if decimate:
            y_idx, y_val = envelope(y, max_columns)
            p_idx, p_val = envelope(residual, max_columns)
        else:
            y_idx, y_val = np.arange(y.size, dtype=float), y
            p_idx, p_val = np.arange(residual.size, dtype=float), residual
    y_x, p_x = axis(y_idx), axis(p_idx)
    p_val = p_val / p_factor

    fig = _new_figure(10.0, 6.0, fixed=True)
    ax_y, ax_p = fig.subplots(2, 1, sharex=True)
    for ax in (ax_y, ax_p):
        _style_axes(ax)
        ax.grid(False, which="minor")
    ax_y.plot(y_x, y_val, color=SERIES_COLORS[0], linewidth=0.6, label="fractional frequency")
    ax_p.plot(p_x, p_val, color=SERIES_COLORS[2], linewidth=0.6, label="phase residual")

    drift_drawn = None
    if drift is not None:
        if decimate:
            d_idx = np.unique(np.linspace(0, drift.size - 1, 2 * max_columns).round()).astype(int)
        else:
            d_idx = np.arange(drift.size)
        drift_drawn = (axis(d_idx.astype(float)), drift[d_idx])
        ax_y.plot(*drift_drawn, color=SERIES_COLORS[1], linewidth=1.2, label="drift model")

    # gaps: missing frequency samples (NaN runs and segment breaks) shaded on both panels
    gap_mask = ~np.isfinite(y)
    runs = _gap_runs(gap_mask, max_columns)
    gaps = np.column_stack([axis(runs[:, 0].astype(float)), axis(runs[:, 1].astype(float))])
    if len(gaps):
        for ax in (ax_y, ax_p):
            trans = blended_transform_factory(ax.transData, ax.transAxes)
            verts = np.stack(
                [
                    np.column_stack([gaps[:, 0], np.zeros(len(gaps))]),
                    np.column_stack([gaps[:, 1], np.zeros(len(gaps))]),
                    np.column_stack([gaps[:, 1], np.ones(len(gaps))]),
                    np.column_stack([gaps[:, 0], np.ones(len(gaps))]),
                ],
                axis=1,
            )
            ax.add_collection(
                PolyCollection(
                    verts,
                    transform=trans,
                    facecolors=_GAP_COLOR,
                    edgecolors=_GAP_COLOR,
                    linewidths=0.3,
                    alpha=0.7,
                    zorder=0,
                ),
                autolim=False,
            )

    # removed outliers: a rug along the top of the panel of the source quantity
    out_x = axis(outliers.astype(float))
    if outliers.size:
        ax_out = ax_y if measurement.kind == "frequency" else ax_p
        trans = blended_transform_factory(ax_out.transData, ax_out.transAxes)
        ax_out.plot(
            out_x,
            np.full(out_x.size, 0.97),
            linestyle="none",
            marker="v",
            markersize=4,
            color=_OUTLIER_COLOR,
            transform=trans,
            label=f"removed outliers ({outliers.size})",
            zorder=5,
        )

    ax_y.set_ylabel("fractional frequency", fontsize=9)
    ax_p.set_ylabel(f"phase residual ({p_unit})", fontsize=9)
    ax_p.set_xlabel(x_label, fontsize=9)
    for ax in (ax_y, ax_p):
        ax.yaxis.set_major_formatter(_PlainScalar())
    if is_date:
        locator = mdates.AutoDateLocator()
        ax_p.xaxis.set_major_locator(locator)
        ax_p.xaxis.set_major_formatter(mdates.ConciseDateFormatter(locator))
    x_end = axis(np.array([0.0, float(measurement.n - 1)]))
    ax_p.set_xlim(x_end[0], x_end[1] if x_end[1] > x_end[0] else x_end[0] + scale * tau0)
    legend = {"fontsize": 7, "frameon": False, "loc": "lower right", "bbox_to_anchor": (1, 1)}
    handles, labels = ax_y.get_legend_handles_labels()
    if len(gaps):
        handles.append(Line2D([], [], color=_GAP_COLOR, linewidth=6, alpha=0.7))
        labels.append(f"gaps ({int(gap_mask.sum())} samples)")
    if len(handles) > 1:
        ax_y.legend(handles, labels, ncols=len(handles), **legend)
    if outliers.size and measurement.kind != "frequency":
        ax_p.legend(**legend)
    fig.suptitle(title or _default_title(measurement, "data over time"), fontsize=11)
    if footer is None:
        footer = default_footer(measurement, analysis_time=analysis_time)
    _put_footer(fig, footer)
    fig.series_data = {
        "frequency": (y_x, y_val),
        "phase_residual": (p_x, p_val),
        "drift": drift_drawn,
        "gaps": gaps,
        "outliers": out_x,
        "decimated": decimate,
        "phase_unit": (p_factor, p_unit),
    }
    return fig


# ---------------------------------------------------------------------- footers without one input
# ---------------------------------------------------------------------- three-cornered hat
def _validate_hat_args(results: Any, title: Any, footer: Any) -> list[Any]:
    from .hat import HatResult

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
    for name, value in (("title", title), ("footer", footer)):
        if value is not None and not isinstance(value, str):
            raise InputError(f"{name} must be a str or None, got {type(value).__name__}")
    return items


def hat_figure(
    result: Any,
    *,
    title: str | None = None,
    footer: str | None = None,
    analysis_time: datetime | None = None,
) -> Figure:
    """The separated stability of each oscillator (three-cornered hat) on a sigma-tau plot.

    Each oscillator's curve is drawn with its confidence interval as asymmetric
    error bars; a point below the resolution of the hat (a negative variance
    estimate, see :mod:`stability.hat`) is drawn as a downward-pointing
    triangle at its upper bound, the trade's way of showing "at most this".
    The pair curves (A - B, ...) the separation came from are drawn faint and
    dashed behind them: no oscillator can be noisier than a pair it is in.

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

    Returns
    -------
    matplotlib.figure.Figure
        With what was drawn as ``fig.hat_series``: statistic -> oscillator ->
        dict of ``tau``, ``deviation``, ``ci_low``, ``ci_high`` (points with
        status ``ok``) and ``below_tau``, ``below_bound`` (points below
        resolution, at their upper bound); and ``fig.hat_pairs``: statistic ->
        pair label (``A-B``) -> (tau, deviation) of the pair curve.
    """
    from .hat import STATUS_OK

    items = _validate_hat_args(result, title, footer)
    fig = _new_figure(4.6 + 4.0 * len(items), 5.4)
    axes = fig.subplots(1, len(items), squeeze=False)[0]
    series: dict[str, dict[str, dict[str, np.ndarray]]] = {}
    pairs_drawn: dict[str, dict[str, tuple[np.ndarray, np.ndarray]]] = {}
    names: list[str] = []
    for ax, item in zip(axes, items, strict=True):
        _style_axes(ax)
        _log_axes(ax)
        stat = item.statistic
        drawn: dict[str, dict[str, np.ndarray]] = {}
        drawn_pairs: dict[str, tuple[np.ndarray, np.ndarray]] = {}
        for key, pair in item.pairs.items():
            keep = np.isfinite(pair.deviation) & (pair.deviation > 0)
            label = f"{key[0]}-{key[1]}"
            drawn_pairs[label] = (pair.tau[keep].copy(), pair.deviation[keep].copy())
            ax.plot(
                *drawn_pairs[label],
                color=_GUIDE_COLOR,
                linewidth=0.9,
                linestyle="--",
                alpha=0.55,
                zorder=1,
                gid="hat-pair",
            )
            if keep.any():
                ax.annotate(
                    label,
                    (drawn_pairs[label][0][-1], drawn_pairs[label][1][-1]),
                    xytext=(3, 0),
                    textcoords="offset points",
                    fontsize=6,
                    color="#808080",
                    va="center",
                )
        for name, osc in item.oscillators.items():
            if name not in names:
                names.append(name)
            color = SERIES_COLORS[names.index(name) % len(SERIES_COLORS)]
            status = np.array(osc.status, dtype=object)
            ok = (status == STATUS_OK) & np.isfinite(osc.deviation) & (osc.deviation > 0)
            below = (status != STATUS_OK) & np.isfinite(osc.upper_bound) & (osc.upper_bound > 0)
            tau, dev = osc.tau[ok], osc.deviation[ok]
            low, high = osc.ci_low[ok], osc.ci_high[ok]
            lower = np.where(np.isfinite(low), dev - low, 0.0)
            upper = np.where(np.isfinite(high), high - dev, 0.0)
            # the line breaks where a point is below resolution (NaN there)
            ax.plot(
                osc.tau, np.where(ok, osc.deviation, np.nan), color=color, linewidth=1.2, zorder=3
            )
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
            drawn[name] = {
                "tau": tau.copy(),
                "deviation": dev.copy(),
                "ci_low": low.copy(),
                "ci_high": high.copy(),
                "below_tau": osc.tau[below].copy(),
                "below_bound": osc.upper_bound[below].copy(),
            }
        series[stat] = drawn
        pairs_drawn[stat] = drawn_pairs
        ax.set_xlabel("averaging time \u03c4 (s)", fontsize=9)
        ax.set_ylabel(f"{_stat_info(stat)[0]}, {_short(stat)}", fontsize=9)
        handles, labels = ax.get_legend_handles_labels()
        handles.append(Line2D([], [], color=_GUIDE_COLOR, linestyle="--", alpha=0.55))
        labels.append("pair curves")
        if any(d["below_tau"].size for d in drawn.values()):
            handles.append(
                Line2D(
                    [],
                    [],
                    linestyle="none",
                    marker="v",
                    markerfacecolor="white",
                    markeredgecolor="#555555",
                )
            )
            labels.append("below resolution (upper bound)")
        ax.legend(handles, labels, fontsize=7, frameon=False)
        level = 100.0 * float(item.confidence)
        ax.set_title(f"{_short(stat)}, {level:.3g} % intervals", fontsize=9)
    fig.suptitle(title or f"three-cornered hat: {', '.join(names)}", fontsize=11)
    if footer is None:
        footer = _tool_footer(analysis_time)
    _put_footer(fig, footer)
    fig.hat_series = series
    fig.hat_pairs = pairs_drawn
    return fig


# ---------------------------------------------------------------------- phase noise
def _validate_phase_noise_args(
    conversion: Any, table: Any, measured: Any, model: Any, title: Any, footer: Any
) -> tuple[tuple[np.ndarray, np.ndarray] | None, tuple[np.ndarray, np.ndarray] | None]:
    from .phase_noise import PhaseNoiseStability

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
    for name, value in (("title", title), ("footer", footer)):
        if value is not None and not isinstance(value, str):
            raise InputError(f"{name} must be a str or None, got {type(value).__name__}")
    curves = []
    for name, value in (("table", table), ("model", model)):
        if value is None:
            curves.append(None)
            continue
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
        curves.append((f, level))
    return curves[0], curves[1]


def phase_noise_figure(
    conversion: Any,
    *,
    table: tuple[Any, Any] | None = None,
    measured: StabilityTable | None = None,
    model: tuple[Any, Any] | None = None,
    title: str | None = None,
    footer: str | None = None,
    analysis_time: datetime | None = None,
) -> Figure:
    """Stability implied by a phase-noise table, beside the table itself.

    The left panel holds the deviations converted from L(f) (one line per
    statistic) and, when ``measured`` is given, the measured curves of a log
    with their confidence intervals, so the two can be compared on one
    sigma-tau plot. The right panel holds the L(f) table in dBc/Hz against
    offset frequency and, when given, the L(f) sketch of a power-law model
    (from :func:`stability.phase_noise.model_to_phase_noise`), dashed.

    Parameters
    ----------
    conversion
        A :class:`stability.phase_noise.PhaseNoiseStability`.
    table
        (offsets in Hz, L(f) in dBc/Hz) of the input table.
    measured
        A measured results table to draw beside the converted curves.
    model
        (offsets in Hz, L(f) in dBc/Hz) of a fitted power-law model.
    title, footer
        Figure title (default: "stability from phase noise") and footer text
        (default: tool version and analysis date).
    analysis_time
        Date for the default footer (default: now).

    Returns
    -------
    matplotlib.figure.Figure
        With what was drawn as ``fig.phase_noise_series``: ``converted``
        (statistic -> (tau, deviation)), ``measured`` (statistic -> (tau,
        deviation, ci_low, ci_high), see :func:`stability_series`, or None),
        ``table`` and ``model`` ((offsets, L) or None).
    """
    from .units import format_frequency

    table_curve, model_curve_ = _validate_phase_noise_args(
        conversion, table, measured, model, title, footer
    )
    has_spectrum = table_curve is not None or model_curve_ is not None
    fig = _new_figure(10.0 if has_spectrum else 6.4, 5.2)
    axes = fig.subplots(1, 2 if has_spectrum else 1, squeeze=False)[0]
    ax = axes[0]
    _style_axes(ax)
    _log_axes(ax)
    converted: dict[str, tuple[np.ndarray, np.ndarray]] = {}
    for i, (stat, dev) in enumerate(conversion.deviations.items()):
        keep = np.isfinite(dev) & (dev > 0)
        converted[stat] = (conversion.tau[keep].copy(), dev[keep].copy())
        ax.plot(
            *converted[stat],
            color=SERIES_COLORS[i % len(SERIES_COLORS)],
            linewidth=1.4,
            marker=".",
            markersize=4,
            label=f"{_short(stat)} from L(f)",
            zorder=3,
        )
    drawn_measured = None
    if measured is not None:
        drawn_measured = stability_series(measured)
        offset = len(converted)
        for j, (stat, (tau, dev, low, high)) in enumerate(drawn_measured.items()):
            color = SERIES_COLORS[(offset + j) % len(SERIES_COLORS)]
            lower = np.where(np.isfinite(low), dev - low, 0.0)
            upper = np.where(np.isfinite(high), high - dev, 0.0)
            ax.errorbar(
                tau,
                dev,
                yerr=np.vstack([np.clip(lower, 0.0, None), np.clip(upper, 0.0, None)]),
                color=color,
                marker="s",
                markersize=3.5,
                linewidth=0.9,
                elinewidth=0.8,
                capsize=2,
                label=f"{_short(stat)} measured",
                zorder=4,
            )
    ax.set_xlabel("averaging time \u03c4 (s)", fontsize=9)
    ax.set_ylabel("fractional frequency deviation", fontsize=9)
    if any(_stat_info(s)[1] == "s" for s in converted):
        ax.set_ylabel("deviation (TDEV in s)", fontsize=9)
    ax.legend(fontsize=7, frameon=False)
    ax.set_title(
        f"carrier {format_frequency(conversion.nominal)}, f_h {format_frequency(conversion.f_h)}",
        fontsize=9,
    )
    if has_spectrum:
        ax2 = axes[1]
        _style_axes(ax2)
        ax2.set_xscale("log")
        if table_curve is not None:
            ax2.plot(
                *table_curve,
                color="#333333",
                marker="o",
                markersize=3,
                linewidth=1.2,
                label="L(f) table",
                zorder=3,
            )
        if model_curve_ is not None:
            ax2.plot(
                *model_curve_,
                color=SERIES_COLORS[1],
                linestyle="--",
                linewidth=1.2,
                label="L(f) of the fitted model (measured log)",
                zorder=2,
            )
        ax2.axvline(conversion.f_h, color=_GUIDE_COLOR, linewidth=0.8, linestyle=":")
        ax2.annotate(
            "f_h",
            (conversion.f_h, 1.0),
            xycoords=("data", "axes fraction"),
            xytext=(2, -10),
            textcoords="offset points",
            fontsize=7,
            color="#808080",
        )
        ax2.set_xlabel("offset frequency f (Hz)", fontsize=9)
        ax2.set_ylabel(r"$\mathcal{L}(f)$ (dBc/Hz)", fontsize=9)
        ax2.legend(fontsize=7, frameon=False)
    fig.suptitle(title or "stability from phase noise", fontsize=11)
    if footer is None:
        footer = _tool_footer(analysis_time)
    _put_footer(fig, footer)
    fig.phase_noise_series = {
        "converted": converted,
        "measured": drawn_measured,
        "table": table_curve,
        "model": model_curve_,
    }
    return fig


# ---------------------------------------------------------------------- dynamic stability
def _edges(centres: np.ndarray, *, log: bool, half_width: float) -> np.ndarray:
    """Cell edges around sorted centres: midpoints (geometric on a log axis), ends mirrored."""
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


def timeline_figure(
    result: Any,
    *,
    title: str | None = None,
    footer: str | None = None,
    analysis_time: datetime | None = None,
) -> Figure:
    """Stability over time: a map of the dynamic deviation and its shortest-tau trace.

    The upper panel is a heat map over (window centre time, tau) of
    log10 of the deviation in each window (the dynamic Allan deviation of
    Galleani and Tavella [5]_ when the statistic is OADEV), tau on a log axis
    and clock time when the record has time stamps; a window with no usable
    term is left blank. The lower panel traces the deviation at the shortest
    tau over the window centres with its confidence interval as a band, so a
    warm-up transient or a change of noise level shows at the time it happened.

    Parameters
    ----------
    result
        A :class:`stability.dynamic.DynamicResult`.
    title, footer
        Figure title (default: "stability over time") and footer text
        (default: tool version and analysis date).
    analysis_time
        Date for the default footer (default: now).

    Returns
    -------
    matplotlib.figure.Figure
        With what was drawn as ``fig.timeline_data``: ``x`` (window centres in
        axis units: matplotlib date numbers or elapsed time), ``x_edges``,
        ``tau``, ``tau_edges``, ``log10_deviation`` (windows x taus, NaN where
        blank), ``shortest`` (x, deviation, ci_low, ci_high at the shortest
        tau), ``is_date`` and ``x_label``.

    References
    ----------
    .. [5] L. Galleani, P. Tavella, "The dynamic Allan variance", IEEE Trans.
       UFFC 56(3), 450-464 (2009).
    """
    from .dynamic import DynamicResult
    from .units import format_duration, format_seconds

    if not isinstance(result, DynamicResult):
        raise InputError(
            f"result must be a stability.dynamic.DynamicResult, got {type(result).__name__}",
            hint="build one with stability.dynamic.dynamic_stability",
        )
    for name, value in (("title", title), ("footer", footer)):
        if value is not None and not isinstance(value, str):
            raise InputError(f"{name} must be a str or None, got {type(value).__name__}")
    windows, taus = result.deviation.shape
    if windows == 0 or taus == 0:
        raise InputError("the dynamic result holds no window or no tau to plot")
    tau0 = float(result.tau[0] / result.m[0])
    window_s = result.window_points * tau0
    if result.time is not None:
        start = result.time[0]
        x = np.array([mdates.date2num(t) for t in result.time], dtype=float)
        half = window_s / 2.0 / 86400.0
        if start.tzinfo is None:
            zone = "local time"
        elif start.utcoffset() == UTC.utcoffset(None):
            zone = "UTC"
        else:
            zone = str(start.tzinfo)
        x_label, is_date = f"window centre ({zone})", True
    else:
        span = float(result.time_s[-1])
        factor, unit = 1.0, "s"
        if span >= 2 * 86400:
            factor, unit = 86400.0, "d"
        elif span >= 2 * 3600:
            factor, unit = 3600.0, "h"
        elif span >= 120:
            factor, unit = 60.0, "min"
        x = np.asarray(result.time_s, dtype=float) / factor
        half = window_s / 2.0 / factor
        x_label, is_date = f"window centre, elapsed time ({unit})", False
    x_edges = _edges(x, log=False, half_width=half)
    tau_edges = _edges(np.asarray(result.tau, dtype=float), log=True, half_width=0.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        logdev = np.where(result.deviation > 0, np.log10(result.deviation), np.nan)

    fig = _new_figure(10.0, 6.8)
    grid = fig.add_gridspec(2, 2, height_ratios=(2.3, 1.0), width_ratios=(1.0, 0.025))
    ax_map = fig.add_subplot(grid[0, 0])
    ax_cb = fig.add_subplot(grid[0, 1])
    ax_line = fig.add_subplot(grid[1, 0], sharex=ax_map)
    ax_pad = fig.add_subplot(grid[1, 1])
    ax_pad.set_axis_off()
    mesh = ax_map.pcolormesh(
        x_edges,
        tau_edges,
        np.ma.masked_invalid(logdev.T),
        cmap="viridis",
        shading="flat",
    )
    ax_map.set_yscale("log")
    ax_map.set_ylabel("averaging time \u03c4 (s)", fontsize=9)
    ax_map.tick_params(labelsize=8)
    ax_map.tick_params(axis="x", labelbottom=False)
    stat_title = _stat_info(result.statistic)[0]
    unit = _stat_info(result.statistic)[1]
    colorbar = fig.colorbar(mesh, cax=ax_cb)
    colorbar.set_label(
        f"log10 {_short(result.statistic)}" + (" (s)" if unit == "s" else ""), fontsize=9
    )
    colorbar.ax.tick_params(labelsize=8)
    ax_map.set_title(
        f"{stat_title} in {format_duration(window_s)} windows every "
        f"{format_duration(result.step_points * tau0)}",
        fontsize=9,
    )

    _style_axes(ax_line)
    dev = result.deviation[:, 0]
    low, high = result.ci_low[:, 0], result.ci_high[:, 0]
    band = np.isfinite(low) & np.isfinite(high)
    if band.any():
        ax_line.fill_between(
            x,
            np.where(band, low, np.nan),
            np.where(band, high, np.nan),
            color=SERIES_COLORS[0],
            alpha=0.25,
            linewidth=0,
            label=f"{100.0 * result.confidence:.3g} % interval",
        )
    ax_line.plot(
        x,
        dev,
        color=SERIES_COLORS[0],
        linewidth=1.1,
        marker=".",
        markersize=3,
        label=f"{_short(result.statistic)} at tau = {format_seconds(float(result.tau[0]))}",
    )
    if np.isfinite(dev).any() and (dev[np.isfinite(dev)] > 0).all():
        ax_line.set_yscale("log")
    ax_line.set_xlabel(x_label, fontsize=9)
    ax_line.set_ylabel(_short(result.statistic), fontsize=9)
    ax_line.legend(fontsize=7, frameon=False, loc="upper left")
    if is_date:
        locator = mdates.AutoDateLocator()
        ax_line.xaxis.set_major_locator(locator)
        ax_line.xaxis.set_major_formatter(mdates.ConciseDateFormatter(locator))
    ax_line.set_xlim(x_edges[0], x_edges[-1])
    fig.suptitle(title or "stability over time", fontsize=11)
    if footer is None:
        footer = _tool_footer(analysis_time)
    _put_footer(fig, footer)
    fig.timeline_data = {
        "x": x,
        "x_edges": x_edges,
        "tau": np.asarray(result.tau, dtype=float).copy(),
        "tau_edges": tau_edges,
        "log10_deviation": logdev,
        "shortest": (x, dev.copy(), low.copy(), high.copy()),
        "is_date": is_date,
        "x_label": x_label,
    }
    return fig


# ---------------------------------------------------------------------- saving
def save_figure(
    fig: Figure, path: str | os.PathLike[str], fmt: str | None = None, *, dpi: int = _DPI
) -> Path:
    """Write a figure as PNG (default), SVG or PDF, atomically.

    Parameters
    ----------
    fig
        The figure.
    path
        Destination file; its folder must exist.
    fmt
        ``"png"``, ``"svg"`` or ``"pdf"``; by default taken from the file
        suffix, PNG when the suffix is none of these.
    dpi
        Resolution of PNG output.

    Returns
    -------
    pathlib.Path
    """
    if not isinstance(fig, Figure):
        raise InputError(f"fig must be a matplotlib Figure, got {type(fig).__name__}")
    target = Path(path)
    if fmt is None:
        suffix = target.suffix.lower().lstrip(".")
        fmt = suffix if suffix in FORMATS else "png"
    fmt = str(fmt).lower().lstrip(".")
    if fmt not in FORMATS:
        raise InputError(
            f"unknown figure format {fmt!r}", hint=f"choose one of {', '.join(FORMATS)}"
        )
    if not isinstance(dpi, (int, float)) or not 10 <= dpi <= 1200:
        raise InputError(f"dpi must be a number between 10 and 1200, got {dpi!r}")

    software = f"stability {__version__}"
    metadata = {
        "png": {"Software": software},
        "svg": {"Creator": software},
        "pdf": {"Creator": software},
    }[fmt]
    if fig.canvas is None or not isinstance(fig.canvas, FigureCanvasAgg):
        FigureCanvasAgg(fig)
    # zlib level 3 instead of 6: a third less encoding time for files about 15 % larger
    extra = {"pil_kwargs": {"compress_level": 3}} if fmt == "png" else {}
    with atomic_output(target, "wb") as handle:
        fig.savefig(handle, format=fmt, dpi=dpi, metadata=metadata, **extra)
    return target


# ---------------------------------------------------------------------- overlay of several logs
#: Marker of each statistic in an overlay (one per statistic, in the order drawn).
OVERLAY_MARKERS = ("o", "s", "^", "D", "v", "P", "X", "*")


def _validate_overlay_args(
    tables: Any, stats: Any, title: Any, footer: Any
) -> tuple[dict[str, StabilityTable], list[str]]:
    if not isinstance(tables, Mapping) or len(tables) == 0:
        raise InputError(
            "tables must be a non-empty mapping label -> StabilityTable, "
            f"got {type(tables).__name__}"
        )
    checked: dict[str, StabilityTable] = {}
    for label, table in tables.items():
        if not isinstance(label, str) or not label.strip():
            raise InputError(f"overlay labels must be non-empty strings, got {label!r}")
        if not isinstance(table, StabilityTable):
            raise InputError(
                f"tables[{label!r}] must be a stability.StabilityTable, got {type(table).__name__}",
                hint="build one with stability.analyze",
            )
        checked[label] = table
    for name, value in (("title", title), ("footer", footer)):
        if value is not None and not isinstance(value, str):
            raise InputError(f"{name} must be a str or None, got {type(value).__name__}")
    present: list[str] = []
    for table in checked.values():
        present.extend(s for s in table.results if s not in present)
    if stats is None:
        names = present
    else:
        if isinstance(stats, str):
            stats = [s for s in stats.split(",") if s.strip()]
        try:
            names = [str(s).strip().lower() for s in stats]
        except TypeError:
            raise InputError(
                f"stats must be a list of statistic names, got {type(stats).__name__}"
            ) from None
        missing = [s for s in names if s not in present]
        if missing:
            raise InputError(
                f"statistic(s) {', '.join(missing)} are in none of the tables",
                hint=f"the tables hold {', '.join(present) or 'nothing'}",
            )
    if not names:
        raise InputError("the tables hold no results to plot")
    return checked, list(dict.fromkeys(names))


def overlay_footer(
    tables: Mapping[str, StabilityTable], *, analysis_time: datetime | None = None
) -> str:
    """Footer of an overlay: each input's SHA-256 prefix (12 hex), tool version, date."""

    parts = []
    for label, table in tables.items():
        measurement = table.measurement
        sha = measurement.provenance.sha256 if isinstance(measurement, Measurement) else None
        parts.append(f"{label} {sha[:12]}" if sha else f"{label} (no file hash)")
    return (
        f"input SHA-256: {'; '.join(parts)} · stability {__version__} · "
        f"analysed {_analysis_date(analysis_time)}"
    )


def overlay_figure(
    tables: Mapping[str, StabilityTable],
    *,
    stats: Sequence[str] | str | None = None,
    title: str | None = None,
    footer: str | None = None,
    analysis_time: datetime | None = None,
) -> Figure:
    """Several analyses on one stability plot: one series per (label, statistic).

    Each label keeps one colour and each statistic one marker, so a reader can
    follow either across the plot; every point carries its confidence interval
    as asymmetric error bars [1]_. Fractional-frequency statistics and time
    statistics (seconds) are drawn on two panels side by side, as in
    :func:`stability_figure`.

    Parameters
    ----------
    tables
        Label -> results table (from :func:`stability.analyze`), in drawing order.
    stats
        Statistics to draw (a list or a comma list); default: every statistic
        of any table. A statistic missing from one table is skipped there.
    title
        Figure title (default: the labels joined by "vs").
    footer
        Footer text (default: :func:`overlay_footer`, each input's SHA-256 prefix).
    analysis_time
        Date for the default footer (default: now).

    Returns
    -------
    matplotlib.figure.Figure
        With what was drawn as ``fig.overlay_series``: (label, statistic) ->
        (tau, deviation, ci_low, ci_high) as :func:`stability_series` gives
        them, ``fig.overlay_axes`` (label, statistic) -> panel,
        ``fig.overlay_colors`` label -> colour and ``fig.overlay_markers``
        statistic -> marker.
    """
    checked, names = _validate_overlay_args(tables, stats, title, footer)
    colors = {label: SERIES_COLORS[i % len(SERIES_COLORS)] for i, label in enumerate(checked)}
    markers = {name: OVERLAY_MARKERS[i % len(OVERLAY_MARKERS)] for i, name in enumerate(names)}
    fractional = [s for s in names if _stat_info(s)[1] != "s"]
    timed = [s for s in names if _stat_info(s)[1] == "s"]
    panels = [(group, unit) for group, unit in ((fractional, ""), (timed, "s")) if group]
    fig = _new_figure(8.5 if len(panels) == 1 else 13.0, 5.6, fixed=True)
    axes = fig.subplots(1, len(panels), squeeze=False)[0]
    drawn_series: dict[tuple[str, str], tuple[np.ndarray, ...]] = {}
    axes_of: dict[tuple[str, str], Any] = {}
    for ax, (group, unit) in zip(axes, panels, strict=True):
        _log_axes(ax)
        _style_axes(ax)
        for label, table in checked.items():
            series = stability_series(table)
            for name in group:
                if name not in series:
                    continue
                tau, dev, low, high = series[name]
                drawn_series[(label, name)] = (tau, dev, low, high)
                axes_of[(label, name)] = ax
                color = colors[label]
                ax.plot(
                    tau,
                    dev,
                    marker=markers[name],
                    markersize=4,
                    linewidth=1.0,
                    linestyle="-" if markers[name] == OVERLAY_MARKERS[0] else "--",
                    color=color,
                    label=f"{label}: {_short(name)}" if len(names) > 1 else label,
                    zorder=3,
                )
                ok = np.isfinite(low) & np.isfinite(high) & (low > 0) & (low <= dev)
                ok &= high >= dev
                if ok.any():
                    ax.errorbar(
                        tau[ok],
                        dev[ok],
                        yerr=np.vstack([dev[ok] - low[ok], high[ok] - dev[ok]]),
                        fmt="none",
                        ecolor=color,
                        elinewidth=0.8,
                        capsize=2.0,
                        alpha=0.85,
                        zorder=2,
                    )
        ax.set_xlabel("averaging time \u03c4 (s)", fontsize=9)
        if len(group) == 1:
            ax.set_ylabel(_panel_label(group, unit), fontsize=9)
        else:
            titles = ", ".join(f"{_stat_info(s)[0]} ({_short(s)})" for s in group)
            ax.set_ylabel(f"{titles} (s)" if unit == "s" else titles, fontsize=8)
        _minor_log_grid(ax)
        if any(ax is a for a in axes_of.values()):
            ax.legend(fontsize=7, frameon=False, loc="best")
    fig.suptitle(title or " vs ".join(checked), fontsize=11)
    if footer is None:
        footer = overlay_footer(checked, analysis_time=analysis_time)
    _put_footer(fig, footer)
    fig.overlay_series = drawn_series
    fig.overlay_axes = axes_of
    fig.overlay_colors = colors
    fig.overlay_markers = markers
    return fig
