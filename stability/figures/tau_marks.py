"""Spans of averaging time shaded on a sigma-tau panel, each named in the legend.

A periodic component affects the taus of the first lobe of its Allan-deviation
signature (:mod:`stability.periodic`); :func:`stability.figures.stability_figure`
shades them behind the data of the fractional-frequency panel with
:func:`draw_tau_marks`, in the colour of :data:`stability.figures.style.MARK_COLOR`.
"""

from __future__ import annotations

import textwrap
from collections.abc import Sequence

from matplotlib.axes import Axes

from .style import MARK_COLOR

__all__ = ["draw_tau_marks", "mark_lines"]

Mark = tuple[float, float, str]


def mark_lines(marks: Sequence[Mark], width: int) -> int:
    """Legend lines the marks' labels take when wrapped to ``width`` characters."""
    return sum(textwrap.fill(m[2], width).count("\n") + 1 for m in marks)


def draw_tau_marks(ax: Axes, marks: Sequence[Mark], width: int) -> tuple[Mark, ...]:
    """Shade each ``(tau_low, tau_high, label)`` span (clipped to the panel) behind the
    data, its label wrapped to ``width`` for the legend; the axis limits are kept.
    Returns the spans drawn."""
    lo_x, hi_x = ax.get_xlim()
    drawn = []
    for low, high, label in marks:
        low, high = max(float(low), lo_x), min(float(high), hi_x)
        if high > low:
            text = textwrap.fill(label, width)
            ax.axvspan(low, high, color=MARK_COLOR, lw=0, zorder=0, label=text)
            drawn.append((low, high, label))
    ax.set_xlim(lo_x, hi_x)
    return tuple(drawn)
