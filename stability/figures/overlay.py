"""Several analyses on one stability plot: one series per (log label, statistic).

Each statistic keeps its own colour and marker (the ones it has in every
figure, :func:`stability.figures.style.statistic_style`), and each log its own
line style and marker fill (:data:`stability.figures.style.LABEL_LINES`), so a
reader can follow either across the plot; every point carries its confidence
interval as asymmetric error bars [1]_. Fractional-frequency statistics and
time statistics (seconds) are drawn on two panels side by side, as in
:func:`stability.figures.stability_figure`, with the same axis wording and
the legends in a column beside the panels, never over the data.

References
----------
.. [1] W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065
   (2008), sections 5.2 (sigma-tau plots) and 5.3 (confidence intervals).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from datetime import datetime
from typing import Any

import numpy as np
from matplotlib.axes import Axes

from .._version import __version__
from ..errors import InputError
from ..measurement import Measurement
from ..table import StabilityTable
from .labels import analysis_date, check_text
from .sigma_tau import Series, panel_layout, stability_series
from .style import (
    LABEL_LINES,
    LABEL_SIZE,
    LEGEND_SIZE,
    NOTE_COLOR,
    TAU_LABEL,
    TITLE_SIZE,
    Drawn,
    deviation_label,
    frame_for,
    is_time_statistic,
    log_axes,
    log_paper,
    put_footer,
    short_name,
    statistic_style,
    style_axes,
)

__all__ = ["OverlayDrawn", "overlay_figure", "overlay_footer"]


@dataclass(frozen=True)
class OverlayDrawn(Drawn):
    """What :func:`overlay_figure` drew.

    Attributes
    ----------
    figure, axes
        The figure and its panels (fractional-frequency panel first).
    series
        (label, statistic) -> (tau, deviation, ci_low, ci_high) as
        :func:`stability.figures.stability_series` gives them.
    panel
        (label, statistic) -> the panel it is drawn on.
    lines
        Label -> (line style, marker fill) of that log's series.
    """

    series: dict[tuple[str, str], Series]
    panel: dict[tuple[str, str], Axes]
    lines: dict[str, tuple[str, str]]


def _validate(
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
    check_text(title=title, footer=footer)
    return checked, _statistics(checked, stats)


def _statistics(tables: dict[str, StabilityTable], stats: Any) -> list[str]:
    """The statistics to draw: those asked for (each in some table), else every one present."""
    present: list[str] = []
    for table in tables.values():
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
    return list(dict.fromkeys(names))


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
        f"analysed {analysis_date(analysis_time)}"
    )


def _draw_series(
    ax: Axes, name: str, drawn: Series, lines: tuple[str, str], legend_label: str
) -> None:
    """One (log, statistic) series: the statistic's colour and marker, the log's line style."""
    tau, dev, low, high = drawn
    style = statistic_style(name)
    linestyle, fill = lines
    ax.plot(
        tau,
        dev,
        marker=style.marker,
        markersize=4,
        fillstyle=fill,
        linewidth=1.0,
        linestyle=linestyle,
        color=style.color,
        label=legend_label,
        zorder=3,
    )
    ok = np.isfinite(low) & np.isfinite(high) & (low > 0) & (low <= dev) & (high >= dev)
    if ok.any():
        ax.errorbar(
            tau[ok],
            dev[ok],
            yerr=np.vstack([dev[ok] - low[ok], high[ok] - dev[ok]]),
            fmt="none",
            ecolor=style.color,
            elinewidth=0.8,
            capsize=2.0,
            alpha=0.85,
            zorder=2,
        )


def overlay_figure(
    tables: Mapping[str, StabilityTable],
    *,
    stats: Sequence[str] | str | None = None,
    title: str | None = None,
    footer: str | None = None,
    analysis_time: datetime | None = None,
) -> OverlayDrawn:
    """Several analyses on one stability plot: one series per (label, statistic).

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
    OverlayDrawn
        The figure, its panels and the data as drawn.
    """
    checked, names = _validate(tables, stats, title, footer)
    lines = {label: LABEL_LINES[i % len(LABEL_LINES)] for i, label in enumerate(checked)}
    fractional = [s for s in names if not is_time_statistic(s)]
    timed = [s for s in names if is_time_statistic(s)]
    groups = [group for group in (fractional, timed) if group]
    entries = sum(len(checked) * len(g) for g in groups)
    frame = frame_for(None, 9.4 if len(groups) == 1 else 14.2, max(5.6, 1.6 + 0.17 * entries))
    title = title or " vs ".join(checked)
    if footer is None:
        footer = overlay_footer(checked, analysis_time=analysis_time)
    layout = panel_layout(frame, len(groups), bool(title), bool(footer))
    renderer = frame.figure.canvas.get_renderer()
    series: dict[tuple[str, str], Series] = {}
    panel: dict[tuple[str, str], Axes] = {}
    top = layout.column[0][1]
    levels = {f"{100 * float(t.confidence):.3g} %" for t in checked.values()}
    note = frame.target.text(
        *frame.rect(layout.side_x, top, 0, 0)[:2],
        f"error bars: {', '.join(sorted(levels))} confidence",
        fontsize=LEGEND_SIZE,
        color=NOTE_COLOR,
        va="top",
        gid="confidence-note",
    )
    top -= note.get_window_extent(renderer).height / frame.figure.dpi + 0.15
    for k, (rect, group) in enumerate(zip(layout.panels, groups, strict=True)):
        ax = frame.target.add_axes(frame.rect(*rect))
        log_axes(ax)
        style_axes(ax)
        for label, table in checked.items():
            drawn = stability_series(table)
            for name in (n for n in group if n in drawn):
                series[(label, name)], panel[(label, name)] = drawn[name], ax
                legend = f"{label}: {short_name(name)}" if len(names) > 1 else label
                _draw_series(ax, name, drawn[name], lines[label], legend)
        ax.set_xlabel(TAU_LABEL, fontsize=LABEL_SIZE)
        ax.set_ylabel(deviation_label(group), fontsize=LABEL_SIZE)
        log_paper(ax)
        if any(ax is a for a in panel.values()):
            if len(layout.column) > 1:
                top = layout.column[k][1]
            shown = ax.legend(
                loc="upper left",
                bbox_to_anchor=frame.rect(layout.side_x, top, 0, 0)[:2],
                bbox_transform=frame.target.transSubfigure,
                fontsize=LEGEND_SIZE,
                frameon=False,
                borderaxespad=0.0,
                borderpad=0.0,
            )
            top -= shown.get_window_extent(renderer).height / frame.figure.dpi + 0.2
    fig = frame.figure
    axes = tuple(dict.fromkeys(panel.values()))
    fig.suptitle(title, fontsize=TITLE_SIZE)
    put_footer(fig, footer)
    return OverlayDrawn(fig, axes, series=series, panel=panel, lines=lines)
