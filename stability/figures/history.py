"""A device's calibration history: the offset over the records with the aging model, and the
deviation at the key taus.

The upper panel shows the fractional frequency offset stated by each
calibration with its standard uncertainty, the fitted aging model
(:mod:`stability.aging`) with the confidence band of the fitted mean over the
records, and from the last calibration to the next due date the prediction
interval of the offset a next calibration would state; the tolerance, when
given, as two lines. The lower panel shows the deviation at each listed tau of
the specification over the records, with its interval and limit, a failed
check ringed in the verdict colour.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from datetime import datetime, timedelta
from typing import Any

import numpy as np
from matplotlib import dates as mdates
from matplotlib.axes import Axes

from ..aging import AgingFit, Calibration
from ..errors import InputError
from ..units import format_seconds
from .labels import check_text, tool_footer
from .style import (
    DRIFT_COLOR,
    FREQUENCY_COLOR,
    LABEL_SIZE,
    LEGEND_SIZE,
    LIMIT_COLOR,
    NOTE_COLOR,
    NOTE_SIZE,
    ORDERED_COLORS,
    TITLE_SIZE,
    VERDICT_COLORS,
    Drawn,
    PlainScalar,
    given_axes,
    log_axes,
    put_footer,
    short_name,
    statistic_style,
    style_axes,
    target_for,
)

__all__ = ["HistoryDrawn", "history_figure"]

#: Points on the drawn model curve and prediction.
_CURVE_POINTS = 200


@dataclass(frozen=True)
class HistoryDrawn(Drawn):
    """What :func:`history_figure` drew (times as matplotlib date numbers).

    Attributes
    ----------
    figure, axes
        The figure and its two data panels (offset above, key taus below).
    x, offset, u_offset
        The calibrations with an offset (error bars are +-u_offset; NaN where none).
    model
        (x, mean, band_low, band_high) of the fitted model over the records, or None.
    forecast
        (x, mean, low, high) of the prediction from the last calibration to the due
        date, or None.
    due
        The due date drawn, or None.
    tolerance
        The tolerance drawn, or None.
    key_taus
        (statistic, tau_s) -> (x, deviation, ci_low, ci_high, limit).
    """

    x: np.ndarray
    offset: np.ndarray
    u_offset: np.ndarray
    model: tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray] | None
    forecast: tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray] | None
    due: float | None
    tolerance: float | None
    key_taus: dict[tuple[str, float], tuple[np.ndarray, ...]]


def _validate(
    calibrations: Any, fit: Any, due: Any, tolerance: Any, title: Any, footer: Any
) -> list[Calibration]:
    if isinstance(calibrations, Calibration) or not isinstance(calibrations, Sequence):
        raise InputError(
            "calibrations must be a sequence of stability.aging.Calibration, "
            f"got {type(calibrations).__name__}"
        )
    items = list(calibrations)
    if not items or not all(isinstance(c, Calibration) for c in items):
        raise InputError("calibrations must hold at least one stability.aging.Calibration")
    if fit is not None and not isinstance(fit, AgingFit):
        raise InputError(
            f"fit must be a stability.aging.AgingFit or None, got {type(fit).__name__}"
        )
    if due is not None and not isinstance(due, datetime):
        raise InputError(f"due must be a datetime or None, got {type(due).__name__}")
    if tolerance is not None and (
        not isinstance(tolerance, int | float) or not math.isfinite(tolerance) or tolerance <= 0
    ):
        raise InputError(f"tolerance must be a positive number or None, got {tolerance!r}")
    check_text(title=title, footer=footer)
    return sorted(items, key=lambda c: c.when)


def _plain(value: float) -> str:
    """3 significant digits without a padded exponent: 3e-9, 2.5e-10."""
    mantissa, _, exponent = f"{value:.3g}".partition("e")
    return f"{mantissa}e{int(exponent)}" if exponent else mantissa


def _num(moment: datetime) -> float:
    return float(mdates.date2num(moment))


def _offset_points(ax: Axes, items: list[Calibration]) -> tuple[np.ndarray, ...]:
    shown = [c for c in items if c.offset is not None]
    x = np.array([_num(c.when) for c in shown])
    y = np.array([c.offset for c in shown], dtype=float)
    u = np.array([np.nan if c.u_offset is None else c.u_offset for c in shown], dtype=float)
    if x.size:
        ax.errorbar(
            x,
            y,
            yerr=np.where(np.isfinite(u), u, 0.0),
            fmt="o",
            color=FREQUENCY_COLOR,
            markersize=4,
            capsize=2.5,
            linewidth=0.9,
            label="offset at calibration, \u00b1u",
            zorder=3,
        )
    return x, y, u


def _model_curves(
    ax: Axes, fit: AgingFit, due: datetime | None, confidence: float
) -> tuple[tuple[np.ndarray, ...], tuple[np.ndarray, ...] | None]:
    t_last = float(fit.t_days[-1])
    t = np.linspace(float(fit.t_days[0]), t_last, _CURVE_POINTS)
    pred = fit.predict(t, confidence)
    x = np.array([_num(fit.origin + timedelta(days=float(d))) for d in t])
    level = f"{100 * confidence:.3g} %"
    ax.plot(x, pred.mean, color=DRIFT_COLOR, linewidth=1.2, label=f"{fit.model} aging model")
    if np.isfinite(pred.band_low).any():
        ax.fill_between(
            x,
            pred.band_low,
            pred.band_high,
            color=DRIFT_COLOR,
            alpha=0.18,
            linewidth=0,
            label=f"{level} band of the fitted model",
        )
    model = (x, pred.mean, pred.band_low, pred.band_high)
    if due is None or fit.days(due) <= t_last:
        return model, None
    ahead = np.linspace(t_last, fit.days(due), _CURVE_POINTS)
    future = fit.predict(ahead, confidence)
    xf = np.array([_num(fit.origin + timedelta(days=float(d))) for d in ahead])
    ax.plot(xf, future.mean, color=DRIFT_COLOR, linewidth=1.0, linestyle="--")
    if np.isfinite(future.low).any():
        for edge, label in (
            (future.low, f"{level} prediction to the due date"),
            (future.high, None),
        ):
            ax.plot(xf, edge, color=DRIFT_COLOR, linewidth=0.9, linestyle=":", label=label)
    return model, (xf, future.mean, future.low, future.high)


def _offset_limits(
    ax: Axes, drawn: list[np.ndarray], tolerance: float | None, toward: float
) -> None:
    """Offset axis from the data and curves drawn, and the tolerance line the offset heads to.

    The other tolerance line is left out of the view unless the data come near it,
    so that the aging stays readable.
    """
    values = np.concatenate([np.ravel(v) for v in drawn if np.size(v)] or [np.zeros(1)])
    values = values[np.isfinite(values)]
    if tolerance is not None:
        values = np.append(values, math.copysign(tolerance, toward if toward else 1.0))
    if not values.size:
        return
    low, high = float(values.min()), float(values.max())
    pad = 0.08 * (high - low) if high > low else max(abs(high), 1e-12) * 0.1
    ax.set_ylim(low - pad, high + pad)


def _tolerance_and_due(ax: Axes, tolerance: float | None, due: datetime | None) -> None:
    if tolerance is not None:
        for sign in (1.0, -1.0):
            ax.axhline(
                sign * tolerance,
                color=LIMIT_COLOR,
                linewidth=0.9,
                linestyle="--",
                label=f"tolerance \u00b1{_plain(tolerance)}" if sign > 0 else None,
            )
    if due is not None:
        ax.axvline(_num(due), color=NOTE_COLOR, linewidth=0.9, linestyle="-.")
        ax.annotate(
            f"due {due:%Y-%m-%d}",
            xy=(_num(due), 1.0),
            xycoords=("data", "axes fraction"),
            xytext=(-3, -3),
            textcoords="offset points",
            ha="right",
            va="top",
            fontsize=NOTE_SIZE,
            color=NOTE_COLOR,
        )


def _key_tau_series(items: list[Calibration]) -> dict[tuple[str, float], list[tuple[Any, ...]]]:
    series: dict[tuple[str, float], list[tuple[Any, ...]]] = {}
    for c in items:
        for k in c.key_taus:
            if k.deviation is None:
                continue
            series.setdefault((k.statistic, float(k.tau_s)), []).append(
                (_num(c.when), k.deviation, k.ci_low, k.ci_high, k.limit, k.verdict)
            )
    return dict(sorted(series.items(), key=lambda kv: (kv[0][0], kv[0][1])))


def _draw_key_taus(ax: Axes, items: list[Calibration]) -> dict[tuple[str, float], tuple]:
    drawn: dict[tuple[str, float], tuple[np.ndarray, ...]] = {}
    for i, (key, rows) in enumerate(_key_tau_series(items).items()):
        statistic, tau = key
        color = ORDERED_COLORS[i % len(ORDERED_COLORS)]
        x, dev, low, high, limit = (
            np.array([np.nan if r[j] is None else r[j] for r in rows], dtype=float)
            for j in range(5)
        )
        below = np.where(np.isfinite(low), dev - low, 0.0)
        above = np.where(np.isfinite(high), high - dev, 0.0)
        label = f"{short_name(statistic)} at {format_seconds(tau)}"
        ax.errorbar(
            x,
            dev,
            yerr=np.vstack([below, above]),
            fmt=statistic_style(statistic).marker,
            color=color,
            markersize=4,
            capsize=2.5,
            linewidth=0.9,
            linestyle="-",
            label=label,
        )
        if np.isfinite(limit).any():
            ax.plot(x, limit, color=color, linewidth=0.8, linestyle="--", drawstyle="steps-mid")
        failed = np.array([r[5] == "fail" for r in rows])
        if failed.any():
            ax.plot(
                x[failed],
                dev[failed],
                linestyle="none",
                marker="o",
                markersize=9,
                markerfacecolor="none",
                markeredgecolor=VERDICT_COLORS["fail"],
            )
        drawn[key] = (x, dev, low, high, limit)
    if drawn:
        log_axes(ax, "y")
        ax.legend(fontsize=LEGEND_SIZE, frameon=False, loc="best", ncols=min(3, len(drawn)))
        ax.set_ylabel("deviation at the key taus\n(dashed: limit)", fontsize=LABEL_SIZE)
    else:
        ax.text(
            0.5,
            0.5,
            "no judged key tau in these records",
            transform=ax.transAxes,
            ha="center",
            fontsize=LABEL_SIZE,
            color=NOTE_COLOR,
        )
    return drawn


def history_figure(
    calibrations: Sequence[Calibration],
    fit: AgingFit | None = None,
    *,
    due: datetime | None = None,
    tolerance: float | None = None,
    confidence: float = 0.95,
    title: str | None = None,
    footer: str | None = None,
    analysis_time: datetime | None = None,
    into: Any = None,
    axes: Any = None,
) -> HistoryDrawn:
    """Draw a device's calibration history (module docstring).

    Parameters
    ----------
    calibrations
        The device's :class:`stability.aging.Calibration` records.
    fit
        The aging fit to draw (:func:`stability.aging.fit_calibrations`), or None.
    due
        The next due date: the prediction is drawn up to it.
    tolerance
        The offset tolerance, drawn as +-tolerance.
    confidence
        Level of the band and of the prediction interval.
    title, footer
        Figure title (default "calibration history") and footer (default: tool
        version and date).
    analysis_time
        Date for the default footer (default: now).
    into
        A ``Figure`` or ``SubFigure`` to draw into (no title or footer unless given).
    axes
        An ``Axes`` (or two: the offsets, then the key taus) to draw the
        panels into, for a figure the caller lays out; as many panels are
        drawn as axes are given (no title or footer unless given).

    Returns
    -------
    HistoryDrawn
    """
    items = _validate(calibrations, fit, due, tolerance, title, footer)
    if axes is not None:
        given = given_axes(axes, 2, "panels (offsets, then key taus)", into, fewer=True)
        fig, own = given[0].get_figure(root=False), False
        ax_off, ax_tau = given[0], (given[1] if len(given) > 1 else None)
        if ax_tau is not None and not ax_tau.get_shared_x_axes().joined(ax_tau, ax_off):
            ax_tau.sharex(ax_off)
    else:
        fig, own = target_for(into, 9.0, 7.0)
        grid = fig.add_gridspec(2, 1, height_ratios=(1.6, 1.0))
        ax_off = fig.add_subplot(grid[0, 0])
        ax_tau = fig.add_subplot(grid[1, 0], sharex=ax_off)
    panels = (ax_off,) if ax_tau is None else (ax_off, ax_tau)
    for ax in panels:
        style_axes(ax)
    x, y, u = _offset_points(ax_off, items)
    model = forecast = None
    if fit is not None:
        model, forecast = _model_curves(ax_off, fit, due, confidence)
    _tolerance_and_due(ax_off, tolerance, due)
    curves = [] if model is None else list(model[1:])
    curves += [] if forecast is None else list(forecast[1:])
    shown = [y - np.nan_to_num(u), y + np.nan_to_num(u), *curves]
    toward = (
        float(forecast[1][-1]) if forecast is not None else float(np.nanmean(y) if y.size else 0)
    )
    _offset_limits(ax_off, shown, tolerance, toward)
    ax_off.yaxis.set_major_formatter(PlainScalar())
    ax_off.set_ylabel("fractional frequency offset", fontsize=LABEL_SIZE)
    ax_off.tick_params(axis="x", labelbottom=ax_tau is None)
    ax_off.legend(fontsize=LEGEND_SIZE, frameon=False, loc="best")
    key_taus = {} if ax_tau is None else _draw_key_taus(ax_tau, items)
    locator = mdates.AutoDateLocator()
    panels[-1].xaxis.set_major_locator(locator)
    panels[-1].xaxis.set_major_formatter(mdates.ConciseDateFormatter(locator))
    panels[-1].set_xlabel("calibration date (UTC)", fontsize=LABEL_SIZE)
    if own or title:
        fig.suptitle(title or "calibration history", fontsize=TITLE_SIZE)
    if own or footer:
        put_footer(fig, footer if footer is not None else tool_footer(analysis_time))
    return HistoryDrawn(
        fig.get_figure(root=True),
        panels,
        x=x,
        offset=y,
        u_offset=u,
        model=model,
        forecast=forecast,
        due=None if due is None else _num(due),
        tolerance=None if tolerance is None else float(tolerance),
        key_taus=key_taus,
    )
