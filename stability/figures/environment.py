"""Frequency and an auxiliary quantity: over time, and against each other.

The left panel holds the fractional frequency (left axis) and the auxiliary
quantity (right axis, its own colour) over elapsed time, each averaged into
about a thousand bins so a long log stays readable; the right panel the
frequency against the quantity as the oscillator saw it through the fitted
thermal lag, with the fitted sensitivity drawn as a line
(:mod:`stability.environment`).
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime
from typing import Any

import numpy as np

from ..environment import Sensitivity, lagged
from ..errors import InputError
from .labels import check_text, tool_footer
from .style import (
    AUX_COLOR,
    DRIFT_COLOR,
    FREQUENCY_COLOR,
    LABEL_SIZE,
    LEGEND_SIZE,
    NOTE_COLOR,
    TITLE_SIZE,
    Drawn,
    PlainScalar,
    elapsed_unit,
    given_axes,
    put_footer,
    style_axes,
    target_for,
)

__all__ = ["EnvironmentDrawn", "environment_figure", "BINS"]

#: Bins the series are averaged into for drawing.
BINS = 1000


@dataclass(frozen=True)
class EnvironmentDrawn(Drawn):
    """What :func:`environment_figure` drew.

    Attributes
    ----------
    figure, axes
        The figure, the time panel (with its twin axis) and the scatter panel.
    t, y, aux
        Elapsed time (s), binned frequency and quantity over time as drawn.
    lagged_aux, fitted
        The quantity through the lag and the fitted frequency, as in the scatter.
    """

    t: np.ndarray
    y: np.ndarray
    aux: np.ndarray
    lagged_aux: np.ndarray
    fitted: np.ndarray


def _binned(values: np.ndarray, bins: int) -> np.ndarray:
    n = values.size
    if n <= bins:
        return values
    edges = np.linspace(0, n, bins + 1).astype(int)
    sums = np.add.reduceat(np.nan_to_num(values), edges[:-1])
    counts = np.add.reduceat(np.isfinite(values).astype(float), edges[:-1])
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(counts > 0, sums / np.maximum(counts, 1), np.nan)


def _against(
    ax_s: Any, ulb: np.ndarray, yb: np.ndarray, sensitivity: Sensitivity, unit: str, mean: float
) -> tuple[np.ndarray, np.ndarray]:
    """Frequency against the lagged quantity, with the fitted line: (x, fitted) as drawn."""
    style_axes(ax_s)
    ax_s.plot(ulb, yb, linestyle="none", marker=".", markersize=2.5, color=FREQUENCY_COLOR)
    order = np.argsort(ulb[np.isfinite(ulb)])
    xs = ulb[np.isfinite(ulb)][order]
    ys = yb[np.isfinite(ulb)]
    offset = float(np.nanmean(ys) - sensitivity.coefficient * np.nanmean(xs)) if xs.size else 0.0
    fitted = offset + sensitivity.coefficient * xs
    ax_s.plot(
        xs,
        fitted,
        color=DRIFT_COLOR,
        linewidth=1.4,
        label=f"{sensitivity.coefficient:.3g} \u00b1 {sensitivity.uncertainty:.2g} "
        f"per {sensitivity.unit}",
    )
    ax_s.set_xlabel(
        f"{sensitivity.quantity} through a lag of {sensitivity.lag:.4g} s ({unit})",
        fontsize=LABEL_SIZE,
    )
    ax_s.set_ylabel(f"fractional frequency less {mean:.4g}", fontsize=LABEL_SIZE)
    ax_s.yaxis.set_major_formatter(PlainScalar())
    ax_s.xaxis.set_major_formatter(PlainScalar())
    ax_s.set_title(
        "standard uncertainty, correlated noise included", fontsize=LABEL_SIZE, color=NOTE_COLOR
    )
    ax_s.legend(
        fontsize=LEGEND_SIZE, frameon=False, loc="upper center", bbox_to_anchor=(0.5, -0.14)
    )
    return xs, fitted


def environment_figure(
    y: Any,
    aux: Any,
    tau0: float,
    sensitivity: Sensitivity,
    *,
    aux_unit: str | None = None,
    title: str | None = None,
    footer: str | None = None,
    analysis_time: datetime | None = None,
    into: Any = None,
    axes: Any = None,
) -> EnvironmentDrawn:
    """Draw frequency and the auxiliary quantity over time, and against each other.

    Parameters
    ----------
    y
        Fractional frequency, one value per sample.
    aux
        The auxiliary quantity at the same samples.
    tau0
        Sample interval, s.
    sensitivity
        The fitted sensitivity (:func:`stability.environment.regress`).
    aux_unit
        The unit of ``aux`` as read (default: the sensitivity's unit), e.g.
        ``degC`` for a coefficient per kelvin.
    title, footer, analysis_time
        Title (default "frequency and <quantity>"), footer (default tool version
        and date).
    into
        A ``Figure`` or ``SubFigure`` to draw into (no title or footer unless given).
    axes
        One or two ``Axes`` to draw the panels into (over time, then frequency
        against the quantity), for a figure the caller lays out; as many panels
        are drawn as axes are given (no title or footer unless given).
    """
    yy = np.asarray(y, dtype=float)
    uu = np.asarray(aux, dtype=float)
    if not isinstance(sensitivity, Sensitivity):
        raise InputError(
            f"sensitivity must be a stability.environment.Sensitivity, "
            f"got {type(sensitivity).__name__}"
        )
    if yy.ndim != 1 or yy.shape != uu.shape or yy.size < 2:
        raise InputError(
            f"y and aux must be 1-D of one length (>= 2), got shapes {yy.shape} and {uu.shape}"
        )
    check_text(title=title, footer=footer)
    unit = aux_unit or sensitivity.unit
    mean = float(np.nanmean(yy))
    yy = yy - mean
    if axes is not None:
        given = given_axes(
            axes, 2, "panels (over time, then against the quantity)", into, fewer=True
        )
        fig, own = given[0].get_figure(root=False), False
    else:
        fig, own = target_for(into, 11.0, 5.2)
        given = tuple(fig.subplots(1, 2, squeeze=True))
    ax_t = given[0]
    t = np.arange(yy.size) * float(tau0)
    factor, t_unit = elapsed_unit(float(t[-1]) if t.size else 0.0)
    tb, yb, ub = (_binned(v, BINS) for v in (t, yy, uu))
    style_axes(ax_t)
    ax_t.plot(tb / factor, yb, color=FREQUENCY_COLOR, linewidth=0.9, label="fractional frequency")
    ax_t.set_xlabel(f"elapsed time ({t_unit})", fontsize=LABEL_SIZE)
    ax_t.set_ylabel(f"fractional frequency less {mean:.4g}", fontsize=LABEL_SIZE)
    ax_t.yaxis.set_major_formatter(PlainScalar())
    twin = ax_t.twinx()
    twin.plot(tb / factor, ub, color=AUX_COLOR, linewidth=0.9, label=sensitivity.quantity)
    twin.set_ylabel(f"{sensitivity.quantity} ({unit})", fontsize=LABEL_SIZE)
    twin.yaxis.set_major_formatter(PlainScalar())
    twin.tick_params(axis="y", colors=AUX_COLOR, labelsize=8)
    handles = ax_t.get_legend_handles_labels()
    more = twin.get_legend_handles_labels()
    ax_t.legend(
        handles[0] + more[0],
        handles[1] + more[1],
        fontsize=LEGEND_SIZE,
        frameon=False,
        loc="upper center",
        bbox_to_anchor=(0.5, -0.14),
        ncols=2,
    )
    filled = np.where(np.isfinite(uu), uu, np.nanmean(uu))
    ul = lagged(filled, float(tau0), sensitivity.lag)
    ulb = _binned(np.where(np.isfinite(uu), ul, np.nan), BINS)
    xs, fitted = np.sort(ulb[np.isfinite(ulb)]), np.array([])  # the scatter panel not drawn
    if len(given) > 1:
        xs, fitted = _against(given[1], ulb, yb, sensitivity, unit, mean)
    if own or title:
        fig.suptitle(title or f"frequency and {sensitivity.quantity}", fontsize=TITLE_SIZE)
    if own or footer:
        put_footer(fig, footer if footer is not None else tool_footer(analysis_time))
    return EnvironmentDrawn(
        fig.get_figure(root=True), tuple(given), t=tb, y=yb, aux=ub, lagged_aux=xs, fitted=fitted
    )
