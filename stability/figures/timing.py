"""Figures of a time-error analysis: TIE over time, and MTIE and TDEV against a mask.

:func:`tie_figure` draws the time interval error over the record (the time
error relative to the first sample, as MTIE sees it: after the sawtooth
correction and, when asked, the frequency-offset removal) as a min/max
envelope, with the worst MTIE window of one tau shaded. :func:`mask_figure`
draws MTIE and TDEV side by side on log-log axes with the mask's limit line;
each judged tau takes the verdict colour of the calibration record
(:data:`~stability.figures.style.VERDICT_COLORS`), and the taus the record is
too short for are drawn as open markers on the limit line. Both draw a figure
of their own, into a region of a page (``into=``, the calibration record) or
on a caller's axes (``axes=``, :meth:`TimeErrorAnalysis.plot`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..errors import InputError
from ..spec.model import Verdict
from ..timing import TimeErrorAnalysis
from ..units import format_duration, format_seconds
from .labels import check_text, tool_footer
from .reduce import envelope
from .style import (
    GAP_COLOR,
    LABEL_SIZE,
    LEGEND_SIZE,
    LIMIT_COLOR,
    NOTE_COLOR,
    NOTE_SIZE,
    PHASE_COLOR,
    TAU_LABEL,
    TITLE_SIZE,
    VERDICT_COLORS,
    Drawn,
    elapsed_unit,
    frame_for,
    given_axes,
    log_axes,
    new_figure,
    put_footer,
    statistic_style,
    style_axes,
)

__all__ = ["TieDrawn", "MaskDrawn", "tie_figure", "mask_figure", "time_scale"]

#: Columns of the TIE envelope (min/max pairs per column).
_COLUMNS = 2000


def time_scale(values: np.ndarray) -> tuple[float, str]:
    """(seconds per unit, unit) for time errors of this size: ps, ns, us or ms."""
    good = np.abs(values[np.isfinite(values)])
    top = float(good.max()) if good.size else 0.0
    for factor, unit in ((1e-3, "ms"), (1e-6, "\u00b5s"), (1e-9, "ns")):
        if top >= 2 * factor:
            return factor, unit
    return 1e-12, "ps"


@dataclass(frozen=True)
class TieDrawn(Drawn):
    """What :func:`tie_figure` drew: the envelope, its unit, and the shaded window."""

    x: np.ndarray  # elapsed time in ``x_unit``
    y: np.ndarray  # TIE in ``y_unit``
    x_unit: str
    y_unit: str
    window: tuple[float, float] | None  # shaded span in x units
    window_tau: float | None


@dataclass(frozen=True)
class MaskDrawn(Drawn):
    """What :func:`mask_figure` drew, per panel statistic: taus, values, limits, verdicts."""

    statistics: tuple[str, ...]
    tau: dict[str, np.ndarray]
    value: dict[str, np.ndarray]
    limit_tau: dict[str, np.ndarray]
    limit: dict[str, np.ndarray]
    verdict_colors: dict[str, tuple[str, ...]]


def _validate(result: Any, title: Any, footer: Any) -> None:
    if not isinstance(result, TimeErrorAnalysis):
        raise InputError(
            f"result must be a stability.timing.TimeErrorAnalysis, got {type(result).__name__}",
            hint="build one with stability.timing.analyze_time_error",
        )
    check_text(title=title, footer=footer)


def tie_figure(
    result: TimeErrorAnalysis,
    *,
    window_tau: float | None = None,
    title: str | None = None,
    footer: str | None = None,
    analysis_time: Any = None,
    into: Any = None,
    axes: Any = None,
) -> TieDrawn:
    """TIE over the record with the worst MTIE window at ``window_tau`` shaded.

    ``window_tau`` defaults to the longest tau up to a tenth of the record, so
    the stretch that sets the long-tau MTIE is visible; a window too narrow to
    see is also marked by a line at its start. ``into`` (a ``Figure`` or
    ``SubFigure``, a region of a record page) draws the whole figure there and
    ``axes`` (one ``Axes``) draws the panel on a caller's axes; either carries
    no title or footer unless given.
    """
    _validate(result, title, footer)
    te = result.te_used
    good = np.isfinite(te)
    tie = te - te[np.argmax(good)]
    factor, unit = time_scale(tie)
    index, values = envelope(tie / factor, _COLUMNS)
    xf, xunit = elapsed_unit(result.span)
    x = index * result.tau0 / xf
    own = into is None and axes is None
    if axes is not None:
        (ax,) = given_axes(axes, 1, "panel (the time interval error)", into)
        fig = ax.get_figure(root=False)
    elif into is not None:
        fig = frame_for(into, 1.0, 1.0).target
        ax = fig.subplots(gridspec_kw={"left": 0.1, "right": 0.98, "bottom": 0.13, "top": 0.9})
    else:
        fig = new_figure(8.0, 4.2, layout="fixed")
        ax = fig.add_subplot(1, 1, 1)
    style_axes(ax, minor_grid=False)
    ax.plot(x, values, color=PHASE_COLOR, linewidth=0.7)
    worst = result.mtie.worst(window_tau)
    span = None
    if worst is not None:
        tau, start, m = worst
        span = (start * result.tau0 / xf, (start + m) * result.tau0 / xf)
        ax.axvspan(*span, color=GAP_COLOR, alpha=0.7, linewidth=0)
        if span[1] - span[0] < 0.004 * (result.span / xf):
            ax.axvline(span[0], color=NOTE_COLOR, linewidth=0.8)
        value = result.mtie.value[list(result.mtie.m).index(m)]
        note = (
            f"shaded: worst window at \u03c4 = {format_duration(tau)}, MTIE {format_seconds(value)}"
        )
        if own:
            fig.text(0.99, 0.955, note, fontsize=NOTE_SIZE, color=NOTE_COLOR, ha="right", va="top")
        else:
            ax.set_title(note, fontsize=NOTE_SIZE, color=NOTE_COLOR, loc="right")
    ax.set_xlabel(f"elapsed time ({xunit})", fontsize=LABEL_SIZE)
    what = "TIE, offset removed" if result.offset is not None else "TIE"
    ax.set_ylabel(f"{what} ({unit})", fontsize=LABEL_SIZE)
    ax.set_xlim(0, result.span / xf if result.span > 0 else 1)
    if own or title:
        fig.suptitle(title or "time interval error", fontsize=TITLE_SIZE, x=0.01, ha="left")
    if own or footer:
        put_footer(fig, footer or tool_footer(analysis_time))
    return TieDrawn(
        ax.get_figure(root=True), (ax,), x, values, xunit, unit, span, worst[0] if worst else None
    )


def _panel(ax: Any, result: TimeErrorAnalysis, name: str) -> tuple[Any, ...]:
    if name == "mtie":
        tau, value = result.mtie.tau, result.mtie.value
    else:
        tau, value = result.tdev.tau, result.tdev.deviation
    keep = np.isfinite(value) & (value > 0)
    tau, value = tau[keep], value[keep]
    style = statistic_style(name)
    log_axes(ax)
    style_axes(ax)
    label = name.upper()
    if name == "mtie":
        label += ", offset removed" if result.offset is not None else ", offset kept"
    ax.plot(tau, value, color=style.color, linewidth=1.0, label=label)
    limit_tau = np.zeros(0)
    limit = np.zeros(0)
    colours: list[str] = []
    judgement = result.judgement
    curve = judgement.mask.curve(name) if judgement is not None else None
    if curve is not None:
        lo, hi = curve.tau_range
        top = hi if math.isfinite(hi) else max(lo * 10, float(tau.max()) * 3 if tau.size else lo)
        limit_tau = np.geomspace(lo, top, 200)
        limit = curve.limit_at(limit_tau)
        ax.plot(limit_tau, limit, color=LIMIT_COLOR, linewidth=1.2, label="mask")
        for check in judgement.of(name):
            colour = VERDICT_COLORS[str(check.verdict)]
            colours.append(colour)
            if check.verdict is Verdict.NOT_MEASURED:
                ax.plot(check.tau, check.limit, "o", mfc="none", mec=colour, ms=5)
            else:
                ax.plot(check.tau, check.measured, style.marker, color=colour, ms=3.5)
        verdict = judgement.verdict_of(name)
        least = judgement.least_margin(name)
        text = f"{name.upper()}: {verdict}"
        if least is not None:
            text += f", least margin {least.margin:.2f} at {format_duration(least.tau)}"
        ax.set_title(text, fontsize=LABEL_SIZE, color=VERDICT_COLORS[str(verdict)], loc="left")
    else:
        ax.plot(tau, value, style.marker, color=style.color, ms=3)
        ax.set_title(name.upper(), fontsize=LABEL_SIZE, loc="left")
    ax.set_xlabel(TAU_LABEL, fontsize=LABEL_SIZE)
    ax.set_ylabel(f"{name.upper()} (s)", fontsize=LABEL_SIZE)
    ax.legend(fontsize=LEGEND_SIZE, loc="upper left", frameon=False)
    return tau, value, limit_tau, limit, tuple(colours)


def mask_figure(
    result: TimeErrorAnalysis,
    *,
    title: str | None = None,
    footer: str | None = None,
    analysis_time: Any = None,
    into: Any = None,
    axes: Any = None,
) -> MaskDrawn:
    """MTIE and TDEV on log-log panels with the mask's limits and the verdict colours.

    ``into`` (a matplotlib ``Figure`` or ``SubFigure``, a region of a record
    page) draws the panels there, and ``axes`` (one ``Axes`` for MTIE, or two
    for MTIE then TDEV) draws them on a caller's axes; either carries no title
    or footer unless given.
    """
    _validate(result, title, footer)
    names: tuple[str, ...] = ("mtie", "tdev")
    own = into is None and axes is None
    if axes is not None:
        axes = given_axes(axes, 2, "panels (MTIE, then TDEV)", into, fewer=True)
        names = names[: len(axes)]
        fig = axes[0].get_figure(root=False)
    elif into is None:
        fig = new_figure(10.0, 4.4, layout="constrained")
        axes = fig.subplots(1, 2)
    else:
        fig = frame_for(into, 1.0, 1.0).target  # checks the region, gives its page a canvas
        axes = fig.subplots(
            1, 2, gridspec_kw={"left": 0.1, "right": 0.98, "bottom": 0.14, "top": 0.9,
                               "wspace": 0.32}
        )  # fmt: skip
    drawn = {n: _panel(ax, result, n) for n, ax in zip(names, axes, strict=True)}
    mask = result.judgement.mask.name if result.judgement is not None else None
    if own or title:
        head = title or "MTIE and TDEV"
        if mask and own:
            head += f"\nagainst {mask} (limits recalled from the Recommendation: check your copy)"
        fig.suptitle(head, fontsize=TITLE_SIZE, x=0.01, ha="left")
    if own or footer:
        put_footer(fig, footer or tool_footer(analysis_time))
    return MaskDrawn(
        fig.get_figure(root=True),
        tuple(axes),
        names,
        {n: d[0] for n, d in drawn.items()},
        {n: d[1] for n, d in drawn.items()},
        {n: d[2] for n, d in drawn.items()},
        {n: d[3] for n, d in drawn.items()},
        {n: d[4] for n, d in drawn.items()},
    )
