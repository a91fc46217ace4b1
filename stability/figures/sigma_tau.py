"""The sigma-tau plot: deviation against averaging time on log-log axes.

:func:`stability_figure` draws one series per statistic [1]_ with its
confidence interval as asymmetric error bars, the fitted power-law model as a
thin line, the identified noise type written where it changes, specification
limits with their verdicts, the reference's stated stability when given, and
a key of the slopes each power-law noise type gives
(:mod:`stability.figures.slope_key`). Fractional-frequency statistics and
time statistics (seconds) never share an axis: when both are asked for, the
figure has two panels.

Layout. Nothing is written over the data: the legend, the confidence level
of the error bars and the slope key sit in a column beside the panels, and
the noise labels are placed beside their points where they touch no marker,
error bar, line or other label (:mod:`stability.figures.placement`); a label
with no free place is left out (:attr:`StabilityDrawn.noise_labels` says
which were written). On a panel of many statistics only the first carries
labels unless others are asked for (``noise_labels``); a noise type already
written at a tau for one statistic is not written again for another. The
figure is drawn on a figure of its own or into a region of a page (``into``,
as the calibration record does).

References
----------
.. [1] W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065
   (2008), sections 5.2 (sigma-tau plots) and 5.3 (confidence intervals).
"""

from __future__ import annotations

import math
import textwrap
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from datetime import datetime
from typing import Any

import numpy as np
from matplotlib.axes import Axes
from matplotlib.legend import Legend

from ..deviations.registry import get_statistic
from ..errors import InputError
from ..run import AnalysisRun
from ..table import StabilityTable
from .labels import default_footer, default_title
from .placement import LabelRequest, extent, obstacles_of, place_labels, renderer_of
from .sigma_inputs import (
    LimitRow,
    Series,
    curve_arrays,
    drawable,
    noise_label_statistics,
    stability_series,
    validate_stability_args,
)
from .slope_key import SLOPES, draw_slope_key, slope_key
from .style import (
    GUIDE_COLOR,
    LABEL_SIZE,
    LEGEND_SIZE,
    LIMIT_COLOR,
    NOTE_COLOR,
    NOTE_SIZE,
    TAU_LABEL,
    TITLE_SIZE,
    VERDICT_COLORS,
    Drawn,
    Frame,
    deviation_label,
    frame_for,
    given_axes,
    is_time_statistic,
    log_axes,
    log_paper,
    put_footer,
    short_name,
    statistic_style,
    style_axes,
)
from .tau_marks import Mark, draw_tau_marks, mark_lines

__all__ = [
    "SLOPES",
    "StabilityDrawn",
    "stability_figure",
    "run_stability_figure",
    "stability_series",
    "slope_key",
    "noise_label_statistics",
    "PanelLayout",
    "panel_layout",
    "legend_label",
]

#: Inches: left margin (tick labels and y label), room under a panel (tick
#: labels and x label), side column width and the gap before it, right margin.
_LEFT, _UNDER, _SIDE, _GAP, _RIGHT = 0.95, 0.55, 2.6, 0.3, 0.12
#: Height of a slope key (inches), preferred and smallest.
_KEY, _KEY_MIN = 1.25, 0.8
#: Characters per legend line before a label is wrapped.
_LEGEND_WIDTH = 40


@dataclass(frozen=True)
class StabilityDrawn(Drawn):
    """What :func:`stability_figure` drew.

    Attributes
    ----------
    figure, axes
        The figure (the root figure when drawn into a page) and its data
        panels (fractional-frequency panel first).
    series
        Statistic -> (tau, deviation, ci_low, ci_high) as drawn (:func:`stability_series`).
    panel
        Statistic -> the panel it is drawn on.
    limits
        The specification limits as ``(tau_s, max, verdict)`` rows, the verdict
        one of the words of :data:`stability.figures.style.VERDICT_COLORS`.
    keys
        The slope key of each data panel (frameless panels beside them), in
        the order of ``axes``.
    noise_labels
        Statistic -> ((tau, noise type), ...) written on the figure.
    confidence
        The confidence level of the error bars, as written on the figure.
    reference
        (tau, deviation) of the reference's stated stability as drawn, or None.
    marks
        The tau spans shaded, as ``(tau_low, tau_high, label)``.
    """

    series: dict[str, Series]
    panel: dict[str, Axes]
    limits: tuple[LimitRow, ...]
    keys: tuple[Axes, ...] = ()
    noise_labels: dict[str, tuple[tuple[float, str], ...]] | None = None
    confidence: float = math.nan
    reference: tuple[np.ndarray, np.ndarray] | None = None
    marks: tuple[Mark, ...] = ()


# ---------------------------------------------------------------------- drawing
def legend_label(name: str, corrected: bool = False) -> str:
    """ "overlapping Allan deviation (OADEV)", wrapped to the side column's width."""
    title = get_statistic(name).title.split(" (")[0]
    short = short_name(name)
    text = short if title.lower() == short.lower() else f"{title} ({short})"
    text += ", bias-corrected" if corrected else ""
    return "\n".join(textwrap.wrap(text, _LEGEND_WIDTH, break_on_hyphens=False))


def _draw_statistic(ax: Axes, name: str, drawn: Series, corrected: bool) -> bool:
    """One statistic's points and error bars; whether any error bar was drawn."""
    tau, dev, low, high = drawn
    style = statistic_style(name)
    ax.plot(
        tau,
        dev,
        marker=style.marker,
        markersize=3.5,
        linewidth=1.0,
        color=style.color,
        label=legend_label(name, corrected),
        zorder=3,
    )
    ok = np.isfinite(low) & np.isfinite(high) & (low > 0) & (high >= dev) & (low <= dev)
    if ok.any():
        ax.errorbar(
            tau[ok],
            dev[ok],
            yerr=np.vstack([dev[ok] - low[ok], high[ok] - dev[ok]]),
            fmt="none",
            ecolor=style.color,
            elinewidth=0.8,
            capsize=2.0,
            alpha=0.9,
            zorder=2,
        )
    return bool(ok.any())


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
        label=f"{short_name(name)} power-law model",
        zorder=2,
    )
    return True


def _draw_limits(ax: Axes, rows: list[LimitRow], target: str) -> None:
    """The limit line and one marker per limit in its verdict's colour."""
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


def _draw_reference(ax: Axes, curve: tuple[np.ndarray, np.ndarray]) -> tuple | None:
    tau, dev = curve
    good = np.isfinite(tau) & np.isfinite(dev) & (tau > 0) & (dev > 0)
    if not good.any():
        return None
    ax.plot(
        tau[good],
        dev[good],
        color=GUIDE_COLOR,
        linewidth=1.2,
        linestyle="-.",
        label="reference, stated stability",
        zorder=2,
    )
    return tau[good].copy(), dev[good].copy()


def _noise_requests(
    table: StabilityTable, names: list[str], series: dict[str, Series], labelled: list[str]
) -> tuple[list[LabelRequest], list[str]]:
    """The noise labels wanted on a panel, a word at a tau written once, and their owners."""
    requests, owners, seen = [], [], set()
    for name in names:
        if name not in labelled:
            continue
        noise = np.asarray(table.results[name].noise, dtype=object)[drawable(table[name])]
        tau, dev = series[name][:2]
        change = (noise != "") & np.concatenate([[True], noise[1:] != noise[:-1]])
        for i in np.flatnonzero(change):
            key = (round(math.log10(tau[i]), 6), str(noise[i]))
            if key in seen:
                continue
            seen.add(key)
            style = statistic_style(name)
            requests.append(
                LabelRequest(
                    str(noise[i]), (tau[i], dev[i]), style.color, NOTE_SIZE, gid="noise-label"
                )
            )
            owners.append(name)
    return requests, owners


@dataclass
class _Panel:
    """One data panel while it is drawn: its statistics and what goes beside it."""

    ax: Axes
    names: list[str]
    entries: int = 0
    bars: bool = False
    legend: Legend | None = None


def _draw_panel(
    ax: Axes,
    table: StabilityTable,
    names: list[str],
    series: dict[str, Series],
    extras: dict[str, Any],
) -> _Panel:
    """Every statistic of ``names``, models, limits and reference; limits fixed."""
    log_axes(ax)
    style_axes(ax)
    panel = _Panel(ax, names)
    model_curve = extras["model_curve"]
    for name in names:
        panel.bars |= _draw_statistic(ax, name, series[name], table.results[name].bias_corrected)
        panel.entries += 1
        if model_curve is not None and name in model_curve:
            panel.entries += _draw_model(ax, name, model_curve[name])
    rows, target = extras["limits"]
    if rows and target in names:
        _draw_limits(ax, rows, target)
        panel.entries += 1 + len({r[2] for r in rows})
    if extras["reference"] is not None and extras["reference_panel"] == names[0]:
        extras["reference_drawn"] = _draw_reference(ax, extras["reference"])
        panel.entries += extras["reference_drawn"] is not None
    ax.set_xlabel(TAU_LABEL, fontsize=LABEL_SIZE)
    ax.set_ylabel(deviation_label(names), fontsize=LABEL_SIZE)
    log_paper(ax)
    return panel


# ---------------------------------------------------------------------- layout
@dataclass(frozen=True)
class PanelLayout:
    """Panel rectangles and the side column (inches) of one figure."""

    panels: tuple[tuple[float, float, float, float], ...]
    column: tuple[tuple[float, float], ...]  # (bottom, top) of the column beside each block
    side_x: float


def _estimate_column(groups: list[list[str]], extras: dict[str, Any]) -> float:
    """Inches of side column the legends and keys need (an estimate made before drawing)."""
    lines = 0
    for names in groups:
        lines += sum(legend_label(n).count("\n") + 1 for n in names)
        lines += sum(1 for n in names if extras["model_curve"] and n in extras["model_curve"])
    rows = extras["limits"][0]
    lines += (1 + len({r[2] for r in rows})) if rows else 0
    lines += mark_lines(extras["marks"], _LEGEND_WIDTH)
    return 0.3 + 0.16 * lines + len(groups) * (_KEY + 0.15)


def panel_layout(frame: Frame, n: int, titled: bool, footed: bool) -> PanelLayout:
    """Rectangles (inches) of ``n`` log-log panels and of the column beside them.

    Side by side with one column at the right while each panel keeps 3.5
    inches of width, else stacked with the column beside each panel.
    """
    top = frame.height - (0.55 if titled else 0.12)
    bottom = (0.32 if footed else 0.05) + _UNDER
    side_x = frame.width - _RIGHT - _SIDE
    width = (side_x - _GAP - _LEFT - (n - 1) * (_LEFT + 0.1)) / n
    if n == 1 or width >= 3.5:  # side by side while each panel keeps 3.5 inches
        panels = tuple(
            (_LEFT + k * (width + _LEFT + 0.1), bottom, width, top - bottom) for k in range(n)
        )
        return PanelLayout(panels, ((bottom, top),), side_x)
    height = (top - bottom - (n - 1) * (_UNDER + 0.15)) / n
    panels = tuple(
        (_LEFT, top - (k + 1) * height - k * (_UNDER + 0.15), side_x - _GAP - _LEFT, height)
        for k in range(n)
    )
    return PanelLayout(panels, tuple((p[1], p[1] + p[3]) for p in panels), side_x)


def _side_column(
    frame: Frame, layout: PanelLayout, panels: list[_Panel], level: float
) -> list[Axes]:
    """Legends, the error-bar note and the slope keys beside the panels, top to bottom."""
    renderer = renderer_of(panels[0].ax)
    dpi = frame.figure.dpi
    target = frame.target
    keys = []
    per_panel = len(layout.column) == len(panels)
    regions = layout.column if per_panel else layout.column * len(panels)
    y = regions[0][1]
    if any(p.bars for p in panels):
        note = target.text(
            *frame.rect(layout.side_x, y, 0, 0)[:2],
            f"error bars: {100 * level:.3g} % confidence",
            fontsize=LEGEND_SIZE,
            color=NOTE_COLOR,
            va="top",
            ha="left",
            gid="confidence-note",
        )
        y -= extent(note, renderer).height / dpi + 0.12
    shared_bottom = regions[0][0]
    for k, panel in enumerate(panels):
        if per_panel:
            bottom, top = regions[k]
            y = min(y, top) if k == 0 else top
        if panel.entries > 1:
            panel.legend = panel.ax.legend(
                loc="upper left",
                bbox_to_anchor=frame.rect(layout.side_x, y, 0, 0)[:2],
                bbox_transform=target.transSubfigure,
                fontsize=LEGEND_SIZE,
                frameon=False,
                borderaxespad=0.0,
                borderpad=0.0,
                handlelength=1.8,
            )
            y -= extent(panel.legend, renderer).height / dpi + 0.15
        left_for_keys = len(panels) - k
        floor = regions[k][0] if per_panel else shared_bottom
        room = (y - floor) / (1 if per_panel else left_for_keys)
        height = max(_KEY_MIN, min(_KEY, room - 0.05))
        box = (layout.side_x, y - height, _SIDE - 0.05, height)
        key = target.add_axes(frame.rect(*box))
        draw_slope_key(key, panel.ax, panel.names, (box[2], box[3]), name_owner=len(panels) > 1)
        keys.append(key)
        y -= height + 0.15
    return keys


def stability_figure(
    table: StabilityTable,
    *,
    title: str | None = None,
    model_curve: Mapping[str, tuple[Any, Any]] | None = None,
    limits: Sequence[tuple[float, float, str | None]] | None = None,
    limits_statistic: str | None = None,
    reference: tuple[Any, Any] | None = None,
    noise_labels: Sequence[str] | str | None = None,
    footer: str | None = None,
    analysis_time: datetime | None = None,
    into: Any = None,
    axes: Any = None,
    marks: Sequence[Mark] = (),
) -> StabilityDrawn:
    """The sigma-tau plot of an analysis.

    Parameters
    ----------
    table
        The results, from :func:`stability.analyze`.
    title
        Figure title (default: the log's file name and value column; none
        when drawn ``into`` a page). An empty string draws no title.
    model_curve
        Statistic -> (tau, sigma) of the fitted power-law model, drawn as a thin line.
    limits
        Specification limits as ``(tau_s, max, verdict)`` rows; verdict is one
        of the words of :data:`stability.spec.VERDICTS` (``"pass"``,
        ``"fail"``, ``"inconclusive"``, ``"not measured"``) or None (not measured).
    limits_statistic
        The statistic the limits apply to (default: the table's first); they
        are drawn on its panel.
    reference
        (tau, deviation) of the reference's stated stability, drawn on the
        panel of ``limits_statistic`` (the reference is measured with the device).
    noise_labels
        Whose noise types are written: a list (or comma list) of statistics,
        ``"all"``, ``"none"``, or None for every statistic of a panel of at
        most three and the first statistic of a fuller one.
    footer
        Footer text (default: input SHA-256 prefix, tool version, analysis
        date; none when drawn ``into`` a page). An empty string draws none.
    analysis_time
        Date for the default footer (default: now).
    into
        A ``Figure`` or ``SubFigure`` (a region of a page) to draw into,
        instead of a new figure.
    axes
        An ``Axes`` (or one per panel: fractional-frequency statistics, then
        time statistics) to draw the data panels into, for a figure the
        caller lays out (a notebook's grid of plots). The panels are drawn
        as on the figure of its own; each legend goes beside its panel, at
        the right, the key of slopes is left out, and there is no title or
        footer unless given.
    marks
        Tau spans ``(low, high, label)`` shaded on the fractional panel, labelled in the legend.

    Returns
    -------
    StabilityDrawn
        The figure, its panels and the data as drawn.
    """
    rows = validate_stability_args(table, title, model_curve, limits, limits_statistic, footer)
    ref_curve = None if reference is None else curve_arrays("reference", reference)
    series = stability_series(table)
    fractional = [s for s in table.results if not is_time_statistic(s)]
    timed = [s for s in table.results if is_time_statistic(s)]
    groups = [names for names in (fractional, timed) if names]
    labelled = noise_label_statistics(groups, noise_labels)
    target = limits_statistic or next(iter(table.results))
    extras: dict[str, Any] = {
        "model_curve": model_curve,
        "limits": (rows, target),
        "reference": ref_curve,
        "reference_panel": next(g[0] for g in groups if target in g),
        "reference_drawn": None,
        "marks": list(marks),
    }
    if axes is not None:
        given = given_axes(axes, len(groups), "panels", into)
        panels = [
            _draw_panel(ax, table, names, series, extras)
            for ax, names in zip(given, groups, strict=True)
        ]
        _draw_marks(panels, marks if fractional else (), extras)
        for panel in panels:
            _legend_beside(panel, table.confidence)
        written = _write_noise_labels(panels, table, series, labelled)
        if title:
            given[0].get_figure(root=False).suptitle(title, fontsize=TITLE_SIZE)
        if footer:
            put_footer(given[0].get_figure(root=False), footer)
        root = given[0].get_figure(root=True)
        return _drawn(root, panels, series, rows, (), written, table, extras)
    height = max(5.4, 1.2 + _estimate_column(groups, extras))
    frame = frame_for(into, 9.4 if len(groups) == 1 else 14.2, height)
    if title is None and frame.own:
        title = default_title(table.measurement, "stability")
    if footer is None and frame.own:
        footer = default_footer(table, analysis_time=analysis_time)
    layout = panel_layout(frame, len(groups), bool(title), bool(footer))
    panels = []
    for rect, names in zip(layout.panels, groups, strict=True):
        ax = frame.target.add_axes(frame.rect(*rect))
        panels.append(_draw_panel(ax, table, names, series, extras))
    _draw_marks(panels, marks if fractional else (), extras)
    keys = _side_column(frame, layout, panels, table.confidence)
    written = _write_noise_labels(panels, table, series, labelled)
    if title:
        frame.target.suptitle(title, fontsize=TITLE_SIZE)
    if footer:
        put_footer(frame.target, footer)
    return _drawn(frame.figure, panels, series, rows, keys, written, table, extras)


def _draw_marks(panels: list[_Panel], marks: Sequence[Mark], extras: dict[str, Any]) -> None:
    extras["marks_drawn"] = draw_tau_marks(panels[0].ax, marks, _LEGEND_WIDTH)
    panels[0].entries += len(extras["marks_drawn"])


def _write_noise_labels(
    panels: list[_Panel], table: StabilityTable, series: dict[str, Series], labelled: list[str]
) -> dict[str, list[tuple[float, str]]]:
    """The noise labels of every panel, each where it touches nothing drawn; those written."""
    written: dict[str, list[tuple[float, str]]] = {}
    for panel in panels:
        requests, owners = _noise_requests(table, panel.names, series, labelled)
        placed = place_labels(panel.ax, requests, obstacles_of(panel.ax))
        for request, owner, label in zip(requests, owners, placed, strict=True):
            if label is not None:
                written.setdefault(owner, []).append((float(request.xy[0]), request.text))
    return written


def _legend_beside(panel: _Panel, level: float) -> None:
    """A panel's legend at its right, with the error bars' confidence (drawing into axes)."""
    if panel.entries > 1 or panel.bars:
        panel.legend = panel.ax.legend(
            loc="upper left",
            bbox_to_anchor=(1.02, 1.0),
            fontsize=LEGEND_SIZE,
            frameon=False,
            borderaxespad=0.0,
            handlelength=1.8,
            title=f"error bars: {100 * level:.3g} % confidence" if panel.bars else None,
            title_fontsize=LEGEND_SIZE,
        )


def _drawn(
    figure: Any,
    panels: list[_Panel],
    series: dict[str, Series],
    rows: list[LimitRow],
    keys: Sequence[Axes],
    written: dict[str, list[tuple[float, str]]],
    table: StabilityTable,
    extras: dict[str, Any],
) -> StabilityDrawn:
    return StabilityDrawn(
        figure,
        tuple(p.ax for p in panels),
        series=series,
        panel={name: p.ax for p in panels for name in p.names},
        limits=tuple(rows),
        keys=tuple(keys),
        noise_labels={k: tuple(v) for k, v in written.items()},
        confidence=float(table.confidence),
        reference=extras["reference_drawn"],
        marks=extras.get("marks_drawn", ()),
    )


def run_stability_figure(run: AnalysisRun, **options: Any) -> StabilityDrawn:
    """The sigma-tau plot of an analysis run, as ``stability analyze`` draws it.

    The table with its fitted power-law model, the footer dated with the run's
    analysis time; ``options`` are those of :func:`stability_figure` (limits,
    title, footer, noise labels, ``into``, ``axes`` ...). The command and
    :meth:`stability.AnalysisRun.plot` both draw through this function.
    """
    if not isinstance(run, AnalysisRun):
        raise InputError(f"run must be a stability.AnalysisRun, got {type(run).__name__}")
    options.setdefault("analysis_time", run.analysis_time)
    return stability_figure(run.table, model_curve=run.model_curves(), **options)
