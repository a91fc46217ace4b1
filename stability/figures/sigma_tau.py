"""The sigma-tau plot: deviation against averaging time on log-log axes.

:func:`stability_figure` draws one series per statistic [1]_ with its
confidence interval as asymmetric error bars, the fitted power-law model as a
thin line, the identified noise type written where it changes, specification
limits with their verdicts, and a faint key of the slopes each power-law noise
type gives [1]_ [2]_:

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
Fractional-frequency statistics and time statistics (seconds) never share an
axis: when both are asked for, the figure has two panels side by side.

References
----------
.. [1] W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065
   (2008), section 5.2 (sigma-tau plots) (slopes of the power-law noises).
.. [2] IEEE Std 1139-2008, *Definitions of Physical Quantities for Fundamental
   Frequency and Time Metrology - Random Instabilities*, annex (slopes of
   sigma_y(tau) and mod sigma_y(tau)).
.. [3] ITU-T Recommendation G.810 (1996), *Definitions and terminology for
   synchronization networks*, appendix II (TDEV).
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from datetime import datetime
from typing import Any

import numpy as np
from matplotlib.axes import Axes

from ..deviations.registry import get_statistic
from ..errors import InputError
from ..table import StabilityTable
from .labels import check_text, default_footer, default_title
from .style import (
    GUIDE_COLOR,
    KEY_SIZE,
    LABEL_SIZE,
    LEGEND_SIZE,
    LIMIT_COLOR,
    NOTE_COLOR,
    NOTE_SIZE,
    TAU_LABEL,
    TITLE_SIZE,
    VERDICT_COLORS,
    Drawn,
    deviation_label,
    is_time_statistic,
    log_axes,
    log_paper,
    new_figure,
    put_footer,
    short_name,
    statistic_style,
    style_axes,
)

__all__ = ["SLOPES", "StabilityDrawn", "stability_figure", "stability_series", "slope_key"]

#: Slope key per kind of statistic: (slope of deviation vs tau on log-log, noise label).
SLOPES = {
    "allan": ((-1.0, "WPM/FPM"), (-0.5, "WFM"), (0.0, "FFM"), (0.5, "RWFM")),
    "modified": ((-1.5, "WPM"), (-1.0, "FPM"), (-0.5, "WFM"), (0.0, "FFM"), (0.5, "RWFM")),
    "tdev": ((-0.5, "WPM"), (0.0, "FPM"), (0.5, "WFM"), (1.0, "FFM"), (1.5, "RWFM")),
    "time_error": ((0.0, "WPM/FPM"), (0.5, "WFM"), (1.0, "FFM"), (1.5, "RWFM")),
}

Series = tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]
LimitRow = tuple[float, float, str]


@dataclass(frozen=True)
class StabilityDrawn(Drawn):
    """What :func:`stability_figure` drew.

    Attributes
    ----------
    figure, axes
        The figure and its panels (fractional-frequency panel first).
    series
        Statistic -> (tau, deviation, ci_low, ci_high) as drawn (:func:`stability_series`).
    panel
        Statistic -> the panel it is drawn on.
    limits
        The specification limits as ``(tau_s, max, verdict)`` rows, the verdict
        one of the words of :data:`stability.figures.style.VERDICT_COLORS`.
    """

    series: dict[str, Series]
    panel: dict[str, Axes]
    limits: tuple[LimitRow, ...]


# ---------------------------------------------------------------------- data and slopes
def stability_series(table: StabilityTable) -> dict[str, Series]:
    """What :func:`stability_figure` draws: statistic -> (tau, deviation, ci_low, ci_high).

    Only rows with a finite, positive deviation and tau are drawn on log axes;
    the interval bounds are NaN where the row has none.
    """
    out = {}
    for result in table:
        keep = _drawable(result)
        out[result.statistic] = (
            result.tau[keep].copy(),
            result.deviation[keep].copy(),
            result.ci_low[keep].copy(),
            result.ci_high[keep].copy(),
        )
    return out


def _drawable(result: Any) -> np.ndarray:
    keep = np.isfinite(result.deviation) & (result.deviation > 0)
    return keep & np.isfinite(result.tau) & (result.tau > 0)


def _slope_set(names: Sequence[str]) -> str:
    if any(is_time_statistic(n) for n in names):
        return "tdev" if "tdev" in names else "time_error"
    families = {get_statistic(n).family for n in names}
    return "modified" if families == {"modified"} else "allan"


def slope_key(names: Sequence[str]) -> tuple[str, tuple[tuple[float, str], ...]]:
    """The slope key drawn for a panel holding these statistics: (kind, ((slope, label), ...))."""
    kind = _slope_set(list(names))
    return kind, SLOPES[kind]


# ---------------------------------------------------------------------- validation
def _validate(
    table: Any, title: Any, model_curve: Any, limits: Any, limits_statistic: Any, footer: Any
) -> list[LimitRow]:
    if not isinstance(table, StabilityTable):
        raise InputError(
            f"table must be a stability.StabilityTable, got {type(table).__name__}",
            hint="build one with stability.analyze",
        )
    if len(table) == 0:
        raise InputError("the table holds no results to plot")
    check_text(title=title, footer=footer)
    if model_curve is not None:
        _validate_model(table, model_curve)
    if limits_statistic is not None and limits_statistic not in table.results:
        raise InputError(
            f"limits_statistic {limits_statistic!r} is not in the table",
            hint=f"use one of {', '.join(table.results)}",
        )
    return [] if limits is None else _limit_rows(limits)


def _validate_model(table: StabilityTable, model_curve: Any) -> None:
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


_ROW = "(tau_s, max, verdict)"


def _limit_rows(limits: Any) -> list[LimitRow]:
    try:
        items = list(limits)
    except TypeError:
        raise InputError(
            f"limits must be a list of (tau_s, max, verdict) rows, got {type(limits).__name__}"
        ) from None
    rows = []
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
        rows.append((tau, top, _verdict_word(rest[0] if rest else None, i)))
    return rows


def _verdict_word(verdict: Any, row: int) -> str:
    """The verdict word of a limits row: one of the spec layer's words exactly, or None."""
    if verdict is None:
        return "not measured"
    for word in VERDICT_COLORS:  # by equality, so a str-valued verdict member matches its word
        if isinstance(verdict, str) and verdict == word:
            return word
    raise InputError(
        f"unknown verdict {verdict!r} in limits row {row}",
        hint="use pass, fail, inconclusive, not measured or None (not measured)",
    )


# ---------------------------------------------------------------------- drawing
def _draw_statistic(
    ax: Axes, name: str, drawn: Series, noise: np.ndarray, j: int, corrected: bool = False
) -> list:
    """One statistic's points, error bars and noise labels; returns the drawn (x, y) points.

    A bias-corrected statistic says so in its legend entry.
    """
    tau, dev, low, high = drawn
    style = statistic_style(name)
    label = f"{get_statistic(name).title} ({short_name(name)})"
    if corrected:
        label += ", bias-corrected"
    ax.plot(
        tau,
        dev,
        marker=style.marker,
        markersize=3.5,
        linewidth=1.0,
        color=style.color,
        label=label,
        zorder=3,
    )
    points = [np.column_stack([tau, dev])]
    ok = np.isfinite(low) & np.isfinite(high) & (low > 0) & (high >= dev) & (low <= dev)
    if ok.any():
        yerr = np.vstack([dev[ok] - low[ok], high[ok] - dev[ok]])
        ax.errorbar(
            tau[ok],
            dev[ok],
            yerr=yerr,
            fmt="none",
            ecolor=style.color,
            elinewidth=0.8,
            capsize=2.0,
            alpha=0.9,
            zorder=2,
        )
        points += [np.column_stack([tau[ok], low[ok]]), np.column_stack([tau[ok], high[ok]])]
    _draw_noise_labels(ax, tau, dev, noise, style.color, dy=-9 if j % 2 == 0 else 6)
    return points


def _draw_noise_labels(
    ax: Axes, tau: np.ndarray, dev: np.ndarray, noise: np.ndarray, color: str, dy: float
) -> None:
    """The noise type written beside the first point of each run of one type."""
    if not noise.size:
        return
    change = (noise != "") & np.concatenate([[True], noise[1:] != noise[:-1]])
    for i in np.flatnonzero(change):
        ax.annotate(
            str(noise[i]),
            (tau[i], dev[i]),
            xytext=(3, dy),
            textcoords="offset points",
            fontsize=NOTE_SIZE,
            color=color,
            zorder=4,
            gid="noise-label",
        )


def _draw_model(ax: Axes, name: str, curve: tuple[Any, Any]) -> bool:
    """The fitted power-law model of a statistic as a thin line; whether one was drawn."""
    m_tau, m_sigma = (np.asarray(c, dtype=float) for c in curve)
    good = np.isfinite(m_tau) & np.isfinite(m_sigma) & (m_tau > 0) & (m_sigma > 0)
    if not good.any():
        return False
    ax.plot(
        m_tau[good],
        m_sigma[good],
        color=statistic_style(name).color,
        linewidth=0.7,
        alpha=0.75,
        linestyle="-",
        label=f"{short_name(name)} power-law model",
        zorder=2,
    )
    return True


def _draw_limits(ax: Axes, rows: list[LimitRow], target: str) -> int:
    """The limit line and one marker per limit in its verdict's colour; legend entries made."""
    l_tau = np.array([r[0] for r in rows])
    l_max = np.array([r[1] for r in rows])
    verdicts = [r[2] for r in rows]
    order = np.argsort(l_tau, kind="stable")
    ax.plot(
        l_tau[order],
        l_max[order],
        color=LIMIT_COLOR,
        linewidth=1.0,
        linestyle="--",
        label=f"limit ({short_name(target)})",
        zorder=2,
    )
    entries = 1
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
    return entries


def _draw_panel(
    ax: Axes,
    table: StabilityTable,
    names: list[str],
    series: dict[str, Series],
    model_curve: Mapping[str, tuple[Any, Any]] | None,
    limits: tuple[list[LimitRow], str],
) -> None:
    """One panel: every statistic of ``names``, models, limits, slope key and legend."""
    log_axes(ax)
    style_axes(ax)
    points: list[np.ndarray] = []
    entries = 0
    for j, name in enumerate(names):
        noise = np.asarray(table.results[name].noise, dtype=object)[_drawable(table[name])]
        corrected = table.results[name].bias_corrected
        points += _draw_statistic(ax, name, series[name], noise, j, corrected)
        entries += 1
        if model_curve is not None and name in model_curve:
            entries += _draw_model(ax, name, model_curve[name])
    rows, target = limits
    if rows and target in names:
        entries += _draw_limits(ax, rows, target)
        points.append(np.array([r[:2] for r in rows]))
    ax.set_xlabel(TAU_LABEL, fontsize=LABEL_SIZE)
    ax.set_ylabel(deviation_label(names), fontsize=LABEL_SIZE)
    drawn = np.concatenate(points) if points else np.empty((0, 2))
    if drawn.size:
        _draw_slope_key(ax, names, drawn)
    log_paper(ax)
    if entries > 1:
        ax.legend(fontsize=LEGEND_SIZE, frameon=False, loc="best")


def stability_figure(
    table: StabilityTable,
    *,
    title: str | None = None,
    model_curve: Mapping[str, tuple[Any, Any]] | None = None,
    limits: Sequence[tuple[float, float, str | None]] | None = None,
    limits_statistic: str | None = None,
    footer: str | None = None,
    analysis_time: datetime | None = None,
) -> StabilityDrawn:
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
        Specification limits as ``(tau_s, max, verdict)`` rows; verdict is one
        of the words of :data:`stability.spec.VERDICTS` (``"pass"``,
        ``"fail"``, ``"inconclusive"``, ``"not measured"``) or None (not measured).
    limits_statistic
        The statistic the limits apply to (default: the table's first); they
        are drawn on its panel.
    footer
        Footer text (default: input SHA-256 prefix, tool version, analysis date).
    analysis_time
        Date for the default footer (default: now).

    Returns
    -------
    StabilityDrawn
        The figure, its panels and the data as drawn.
    """
    rows = _validate(table, title, model_curve, limits, limits_statistic, footer)
    series = stability_series(table)
    fractional = [s for s in table.results if not is_time_statistic(s)]
    timed = [s for s in table.results if is_time_statistic(s)]
    groups = [names for names in (fractional, timed) if names]
    fig = new_figure(8.0 if len(groups) == 1 else 12.5, 5.4, layout="fixed")
    axes = tuple(fig.subplots(1, len(groups), squeeze=False)[0])
    target = limits_statistic or next(iter(table.results))
    for ax, names in zip(axes, groups, strict=True):
        _draw_panel(ax, table, names, series, model_curve, (rows, target))
    fig.suptitle(title or default_title(table.measurement, "stability"), fontsize=TITLE_SIZE)
    put_footer(
        fig, footer if footer is not None else default_footer(table, analysis_time=analysis_time)
    )
    panel = {name: ax for ax, names in zip(axes, groups, strict=True) for name in names}
    return StabilityDrawn(fig, axes, series=series, panel=panel, limits=tuple(rows))


# ---------------------------------------------------------------------- slope key
def _key_view(ax: Axes) -> tuple[float, float, float, float]:
    """The panel's limits in decades, widened so the key is legible (2 decades tall, 1 wide)."""
    ax.autoscale_view()
    (x0, x1), (y0, y1) = ax.get_xlim(), ax.get_ylim()
    lx0, lx1, ly0, ly1 = math.log10(x0), math.log10(x1), math.log10(y0), math.log10(y1)
    if ly1 - ly0 < 2.0:
        pad = (2.0 - (ly1 - ly0)) / 2
        ly0, ly1 = ly0 - pad, ly1 + pad
    if lx1 - lx0 < 1.0:
        pad = (1.0 - (lx1 - lx0)) / 2
        lx0, lx1 = lx0 - pad, lx1 + pad
    return lx0, lx1, ly0, ly1


def _emptiest_corner(
    points: np.ndarray, view: tuple[float, float, float, float], box: tuple[float, float]
) -> tuple[float, float]:
    """Lower-left corner (axes fraction) of the candidate key box covering fewest points."""
    lx0, lx1, ly0, ly1 = view
    box_w, box_h = box
    fx = (np.log10(points[:, 0]) - lx0) / (lx1 - lx0)
    fy = (np.log10(points[:, 1]) - ly0) / (ly1 - ly0)
    margin = 0.03
    corners = (
        (margin, margin),
        (1 - margin - box_w, 1 - margin - box_h),
        (1 - margin - box_w, margin),
        (margin, 1 - margin - box_h),
    )
    counts = []
    for cx, cy in corners:
        inside = (fx >= cx - 0.02) & (fx <= cx + box_w + 0.02)
        inside &= (fy >= cy - 0.02) & (fy <= cy + box_h + 0.02)
        counts.append(int(inside.sum()))
    return corners[int(np.argmin(counts))]


def _draw_slope_key(ax: Axes, names: Sequence[str], points: np.ndarray) -> None:
    """A faint fan of slope guides in the emptiest corner of a log-log panel."""
    kind, slopes = slope_key(names)
    heading = "slopes"
    if len({_slope_set([n]) for n in names}) > 1:  # mixed kinds: say whose slopes these are
        owner = next((n for n in names if _slope_set([n]) == kind), names[0])
        heading = f"slopes ({short_name(owner)})"
    view = _key_view(ax)
    lx0, lx1, ly0, ly1 = view
    wx, wy = lx1 - lx0, ly1 - ly0
    max_slope = max(abs(s) for s, _ in slopes)
    length = min(0.14 * wx, 0.18 * wy / max(max_slope, 0.5))  # decades of tau
    box = (length / wx + 0.1, 2 * max_slope * length / wy + 0.06)
    cx, cy = _emptiest_corner(points, view, box)
    origin_lx = lx0 + (cx + 0.01) * wx
    origin_ly = ly0 + (cy + box[1] / 2) * wy
    for slope, label in slopes:
        xs = np.array([origin_lx, origin_lx + length])
        ys = origin_ly + slope * (xs - origin_lx)
        ax.plot(
            10**xs,
            10**ys,
            color=GUIDE_COLOR,
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
            fontsize=KEY_SIZE,
            color=NOTE_COLOR,
            va="center",
            ha="left",
            zorder=1,
            gid="slope-key",
        )
    top = origin_ly + max(max(s for s, _ in slopes), 0.0) * length + 0.02 * wy
    ax.text(
        10**origin_lx,
        10**top,
        heading,
        fontsize=KEY_SIZE,
        color=NOTE_COLOR,
        va="bottom",
        ha="left",
        style="italic",
        zorder=1,
        gid="slope-key",
    )
    ax.set_xlim(10**lx0, 10**lx1)
    ax.set_ylim(10**ly0, 10**ly1)
