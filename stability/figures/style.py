"""Every style decision of the figures in one place.

Colours and markers
    Each statistic identifier has one fixed colour and marker
    (:data:`STATISTIC_STYLES`), looked up by name, so that a statistic looks
    the same in every figure whatever else is drawn beside it. The colours are
    taken from the colour-blind-safe palette of Okabe and Ito [1]_, leaving out
    its yellow (too light on white) and the hues of the verdict colours
    (green, red, amber; :data:`VERDICT_COLORS`), so that a specification
    limit's verdict is never mistaken for a statistic. With four hues for
    sixteen statistics, each statistic's (colour, marker) pair is its own.
    Things that are not statistics (the oscillators of a three-cornered hat,
    the quantities of the data-over-time figure) take the whole palette.
Type and layout
    Font sizes, grid lines (on log-log panels the minor grid is one line
    collection, :func:`log_paper`, since matplotlib's minor ticks are several
    artists each), the fixed margins of the figures with a known arrangement,
    the resolution, and the footer strip (:func:`new_figure`, :func:`put_footer`).
Ticks
    Tick positions and text come from :mod:`stability.figures.ticks`: every
    axis carries at least three labels whatever its range (labels between
    decades when a log view holds fewer than three decades, evenly spaced
    values over one power of ten for part of a decade), in plain text with
    superscript powers of ten (:class:`PowerLabels`, :class:`PlainScalar`).
Axis wording
    The averaging-time label, the deviation label of a panel from the
    statistics registry's titles and units (:func:`deviation_label`), and the
    time axes of records (:func:`clock_label`, :func:`elapsed_unit`).

Figures are built with the object-oriented API (``Figure`` plus
``FigureCanvasAgg``): nothing touches pyplot's global state and the code works
headless. Each figure function returns a :class:`Drawn` (or a subclass):
the figure, its data panels and the data as drawn.

References
----------
.. [1] M. Okabe, K. Ito, *Color Universal Design (CUD): how to make figures and
   presentations that are friendly to colorblind people* (2002), the
   eight-colour palette.
"""

from __future__ import annotations

import io
import math
import zlib
from collections.abc import Sequence
from dataclasses import dataclass
from datetime import UTC, datetime
from typing import Any, Literal

import numpy as np
from matplotlib.axes import Axes
from matplotlib.backend_bases import FigureCanvasBase
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.collections import LineCollection
from matplotlib.figure import Figure, SubFigure
from matplotlib.transforms import blended_transform_factory

from ..deviations.registry import get_statistic
from ..errors import InputError
from .ticks import LogTicks, PlainScalar, PowerLabels, power_of_ten

__all__ = [
    "Drawn",
    "StatisticStyle",
    "OKABE_ITO",
    "STATISTIC_STYLES",
    "VERDICT_COLORS",
    "ORDERED_COLORS",
    "LABEL_LINES",
    "FREQUENCY_COLOR",
    "PHASE_COLOR",
    "DRIFT_COLOR",
    "OUTLIER_COLOR",
    "GAP_COLOR",
    "GUIDE_COLOR",
    "NOTE_COLOR",
    "LIMIT_COLOR",
    "FLEET_CURVE",
    "FLEET_MEDIAN_COLOR",
    "FLEET_BAND",
    "FLEET_NAMED_COLORS",
    "TITLE_SIZE",
    "LABEL_SIZE",
    "SMALL_LABEL_SIZE",
    "TICK_SIZE",
    "LEGEND_SIZE",
    "NOTE_SIZE",
    "KEY_SIZE",
    "DPI",
    "MARGINS",
    "TAU_LABEL",
    "statistic_style",
    "short_name",
    "is_time_statistic",
    "deviation_label",
    "clock_label",
    "elapsed_unit",
    "power_of_ten",
    "PowerLabels",
    "PlainScalar",
    "new_figure",
    "Frame",
    "frame_for",
    "given_axes",
    "target_for",
    "style_axes",
    "log_axes",
    "log_paper",
    "log_ticks",
    "put_footer",
]


@dataclass(frozen=True)
class Drawn:
    """What a figure function drew: the figure and its data panels.

    Each figure function returns a subclass that adds the data as drawn
    (in axis units), so that a caller or a test reads what is on the figure
    without looking into matplotlib's artists.

    Attributes
    ----------
    figure
        The figure, on an Agg canvas, ready for :func:`stability.figures.save_figure`.
    axes
        The panels holding data, left to right and top to bottom.
    """

    figure: Figure
    axes: tuple[Axes, ...]

    def _repr_png_(self) -> bytes | None:
        """The figure as PNG for a notebook; None for a pyplot figure (pyplot shows those)."""
        if getattr(self.figure.canvas, "manager", None) is not None:
            return None
        buffer = io.BytesIO()
        self.figure.savefig(buffer, format="png")
        return buffer.getvalue()

    def _repr_pretty_(self, printer: Any, cycle: bool) -> None:
        width, height = self.figure.get_size_inches()
        printer.text(
            f"<{type(self).__name__}: {len(self.axes)} panel(s) on a "
            f"{width:.1f} x {height:.1f} in figure>"
        )


# ---------------------------------------------------------------------- colours
#: The palette of Okabe and Ito [1]_, by colour name.
OKABE_ITO = {
    "black": "#000000",
    "orange": "#e69f00",
    "sky blue": "#56b4e9",
    "bluish green": "#009e73",
    "yellow": "#f0e442",
    "blue": "#0072b2",
    "vermillion": "#d55e00",
    "reddish purple": "#cc79a7",
}


@dataclass(frozen=True)
class StatisticStyle:
    """Colour (hex) and marker (matplotlib code) of one statistic."""

    color: str
    marker: str


def _styles(*rows: tuple[str, str, str]) -> dict[str, StatisticStyle]:
    return {name: StatisticStyle(OKABE_ITO[color], marker) for name, color, marker in rows}


#: Colour and marker of every statistic identifier. The statistics usually drawn
#: together (OADEV, MDEV, HDEV, ADEV; TDEV, MTIE, TIE rms) differ in colour.
STATISTIC_STYLES = _styles(
    ("oadev", "blue", "o"),
    ("mdev", "reddish purple", "s"),
    ("hdev", "black", "D"),
    ("adev", "sky blue", "o"),
    ("ohdev", "black", "^"),
    ("totdev", "blue", "s"),
    ("mtot", "reddish purple", "D"),
    ("htot", "black", "s"),
    ("theo1", "sky blue", "^"),
    ("theobr", "blue", "^"),
    ("theoh", "reddish purple", "^"),
    ("pdev", "sky blue", "s"),
    ("tdev", "blue", "v"),
    ("mtie", "black", "v"),
    ("tie_rms", "reddish purple", "v"),
    ("ttot", "sky blue", "v"),
)

#: Fallback pairs for a statistic registered later than this table was written.
_SPARE_STYLES = tuple(
    StatisticStyle(OKABE_ITO[c], m)
    for m in ("P", "X", "*", "h")
    for c in ("blue", "reddish purple", "black", "sky blue")
)

#: Marker colours of specification limits by verdict word (the words of stability.spec).
VERDICT_COLORS = {
    "pass": "#2e7d4f",
    "fail": "#b23a3a",
    "inconclusive": "#d08c2a",
    "not measured": "#9a9a9a",
}

#: A fleet figure: every device's curve faint, the population's median and 10-90 % band,
#: and the colours of the devices it names (furthest from the population or the limit).
FLEET_CURVE = {"color": "#8c8c8c", "linewidth": 0.6, "alpha": 0.35}
FLEET_MEDIAN_COLOR = OKABE_ITO["blue"]
FLEET_BAND = {"color": OKABE_ITO["sky blue"], "alpha": 0.3}
FLEET_NAMED_COLORS = tuple(
    OKABE_ITO[c] for c in ("vermillion", "orange", "reddish purple", "bluish green", "black")
)

#: Colours of series that are not statistics (the oscillators of a hat), in drawing order.
ORDERED_COLORS = tuple(
    OKABE_ITO[c]
    for c in ("blue", "vermillion", "bluish green", "reddish purple", "sky blue", "orange", "black")
)

#: Line style and marker fill of each log in an overlay, in drawing order (the
#: colour and marker say which statistic a line is).
LABEL_LINES = (
    ("-", "full"),
    ("--", "none"),
    (":", "full"),
    ("-.", "none"),
    ("-", "none"),
    ("--", "full"),
    (":", "none"),
    ("-.", "full"),
)

FREQUENCY_COLOR = OKABE_ITO["blue"]
PHASE_COLOR = OKABE_ITO["bluish green"]
DRIFT_COLOR = OKABE_ITO["vermillion"]
OUTLIER_COLOR = "#b23a3a"
GAP_COLOR = "#d9d9d9"
#: Shading of the taus a periodic component affects (sigma-tau plot), and of the
#: band of a spectrum; lines found in a spectrum are marked in LINE_COLOR.
MARK_COLOR = "#e8dcc0"
BAND_ALPHA = 0.35
LINE_COLOR = OKABE_ITO["reddish purple"]
AUX_COLOR = OKABE_ITO["orange"]
GUIDE_COLOR = "#9a9a9a"
NOTE_COLOR = "#808080"
LIMIT_COLOR = "#444444"
_FOOTER_COLOR = "#777777"
_MAJOR_GRID = {"color": "#cccccc", "linewidth": 0.5, "alpha": 0.8}
_MINOR_GRID = {"color": "#e6e6e6", "linewidth": 0.4, "alpha": 0.6}

# ---------------------------------------------------------------------- type and layout
TITLE_SIZE = 11
LABEL_SIZE = 9
SMALL_LABEL_SIZE = 8
TICK_SIZE = 8
LEGEND_SIZE = 7
NOTE_SIZE = 6.5
KEY_SIZE = 6

#: Resolution of drawn and saved figures (dots per inch).
DPI = 150

#: Fixed margins (inches: left, right, bottom, top) of the figures with a known
#: arrangement (sigma-tau, series, overlay): they keep the same shape from one
#: record to the next; the others use constrained layout.
MARGINS = (0.95, 0.25, 0.8, 0.6)

#: Height of the strip kept for the footer under a constrained layout (figure fraction).
_FOOTER_STRIP = 0.035


def new_figure(
    width: float,
    height: float,
    *,
    layout: Literal["fixed", "constrained"] = "constrained",
    wspace: float = 0.28,
    hspace: float = 0.12,
) -> Figure:
    """A figure of ``width`` x ``height`` inches on the Agg canvas.

    ``layout="fixed"`` places the panels inside :data:`MARGINS` (``wspace``
    and ``hspace`` between panels); ``"constrained"`` lets matplotlib fit
    them, above a strip kept for the footer.
    """
    if layout == "constrained":
        fig = Figure(figsize=(width, height), dpi=DPI, layout="constrained")
        FigureCanvasAgg(fig)
        fig.get_layout_engine().set(rect=(0.0, _FOOTER_STRIP, 1.0, 1.0 - _FOOTER_STRIP))
        return fig
    fig = Figure(figsize=(width, height), dpi=DPI)
    FigureCanvasAgg(fig)
    left, right, bottom, top = MARGINS
    fig.subplots_adjust(
        left=left / width,
        right=1.0 - right / width,
        bottom=bottom / height,
        top=1.0 - top / height,
        wspace=wspace,
        hspace=hspace,
    )
    return fig


@dataclass(frozen=True)
class Frame:
    """Where a figure draws: a figure of its own, or a region of a page (a ``SubFigure``).

    Attributes
    ----------
    target
        The figure or sub-figure the panels and texts go into.
    width, height
        Its size in inches.
    own
        True for a figure of its own (which carries a title and a footer by
        default); False for a region of a larger page, which has its own.
    """

    target: Figure | SubFigure
    width: float
    height: float
    own: bool

    @property
    def figure(self) -> Figure:
        """The figure at the root (the one that is saved)."""
        return self.target.get_figure(root=True)

    def rect(self, left: float, bottom: float, width: float, height: float) -> tuple:
        """A rectangle given in inches from the lower left, as fractions of the target."""
        return (left / self.width, bottom / self.height, width / self.width, height / self.height)


def frame_for(into: Any, width: float, height: float) -> Frame:
    """A new figure of ``width`` x ``height`` inches, or the region ``into`` of a page.

    ``into`` is a matplotlib ``Figure`` or ``SubFigure`` (for example one cell
    of ``page.subfigures``), whose root figure has an Agg canvas.
    """
    if into is None:
        fig = Figure(figsize=(width, height), dpi=DPI)
        FigureCanvasAgg(fig)
        return Frame(fig, width, height, True)
    if not isinstance(into, (Figure, SubFigure)):
        raise InputError(
            f"into must be a matplotlib Figure or SubFigure, got {type(into).__name__}"
        )
    root = into.get_figure(root=True)
    if not isinstance(root.canvas, FigureCanvasAgg):
        FigureCanvasAgg(root)
    return Frame(into, into.bbox.width / root.dpi, into.bbox.height / root.dpi, False)


def given_axes(axes: Any, count: int, what: str, into: Any = None, *, fewer: bool = False) -> tuple:
    """The ``Axes`` a caller gave a figure function to draw its ``count`` data panels into.

    ``axes`` is one ``Axes`` or a sequence of them, one per panel in the
    figure's order; with ``fewer`` the first panels are drawn into as many
    as are given. The root figure gets an Agg canvas when it has none that
    can measure text (a bare ``Figure()``); a pyplot figure keeps its own.
    """
    if into is not None:
        raise InputError("give either into (a whole figure) or axes (its panels), not both")
    given = (axes,) if isinstance(axes, Axes) else axes
    try:
        given = tuple(given)
    except TypeError:
        raise InputError(
            f"ax must be a matplotlib Axes or a list of them, got {type(axes).__name__}"
        ) from None
    if not given or not all(isinstance(a, Axes) for a in given):
        raise InputError("ax must be a matplotlib Axes or a list of them, one per panel")
    if len(given) > count or (len(given) < count and not fewer):
        raise InputError(
            f"this figure has {count} {what}; {len(given)} axes given",
            hint=f"pass {count} axes, or none for a figure of its own",
        )
    root = given[0].get_figure(root=True)
    if type(root.canvas) is FigureCanvasBase:
        FigureCanvasAgg(root)
    return given


def target_for(into: Any, width: float, height: float) -> tuple[Figure | SubFigure, bool]:
    """(where to draw, whether it is a figure of its own) for a constrained-layout figure.

    A new :func:`new_figure` of ``width`` x ``height`` inches, or the
    ``Figure`` or ``SubFigure`` ``into`` (checked as :func:`frame_for` does),
    which carries no title or footer unless they are given.
    """
    if into is None:
        return new_figure(width, height), True
    return frame_for(into, width, height).target, False


def style_axes(ax: Axes, *, minor_grid: bool = True) -> None:
    """Grid lines, open top and right sides, tick label size."""
    ax.grid(True, which="major", **_MAJOR_GRID)
    if minor_grid:
        ax.grid(True, which="minor", **_MINOR_GRID)
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)
    ax.tick_params(which="both", labelsize=TICK_SIZE)


def log_axes(ax: Axes, which: Literal["xy", "x", "y"] = "xy") -> None:
    """Log scale on the named axes, ticks and their text by :mod:`stability.figures.ticks`."""
    for name in which:
        getattr(ax, f"set_{name}scale")("log")
        log_ticks(getattr(ax, f"{name}axis"))


def log_ticks(axis: Any) -> None:
    """:class:`LogTicks` and :class:`PowerLabels` on the major and minor ticks of a log axis."""
    axis.set_major_locator(LogTicks())
    axis.set_minor_locator(LogTicks(minor=True))
    axis.set_major_formatter(PowerLabels())
    axis.set_minor_formatter(PowerLabels(minor=True))


#: An axis spanning more decades than this gets its minor grid as one line collection.
_GRID_DECADES = 1.5


def log_paper(ax: Axes) -> None:
    """Minor grid lines at 2..9 x 10^k on a finished log-log panel, drawn as one collection.

    Matplotlib builds several artists for every minor tick, which on a panel
    spanning many decades is most of the drawing time of the figure. The
    limits are fixed at their autoscaled values and the lines drawn for them,
    looking as the ordinary minor grid does, without minor tick marks. An
    axis spanning less than 1.5 decades keeps matplotlib's minor ticks, which
    then carry labels (:class:`PowerLabels`). Call it after everything else
    is drawn on the panel.
    """
    ax.autoscale_view()
    for axis, vertical in ((ax.xaxis, True), (ax.yaxis, False)):
        lo, hi = sorted(ax.get_xlim() if vertical else ax.get_ylim())
        if not (lo > 0 and math.isfinite(hi)) or math.log10(hi / lo) < _GRID_DECADES:
            continue
        decades = 10.0 ** np.arange(math.floor(math.log10(lo)), math.ceil(math.log10(hi)) + 1)
        at = (np.arange(2.0, 10.0)[None, :] * decades[:, None]).ravel()
        at = at[(at > lo) & (at < hi)]
        ends = np.zeros_like(at), np.ones_like(at)
        if vertical:
            pairs = np.stack([np.column_stack([at, ends[0]]), np.column_stack([at, ends[1]])], 1)
            transform = blended_transform_factory(ax.transData, ax.transAxes)
        else:
            pairs = np.stack([np.column_stack([ends[0], at]), np.column_stack([ends[1], at])], 1)
            transform = blended_transform_factory(ax.transAxes, ax.transData)
        axis.set_minor_locator(LogTicks(minor=True, labelled_only=True))
        axis.grid(False, which="minor")
        (ax.set_xlim if vertical else ax.set_ylim)(lo, hi)
        grid = LineCollection(
            pairs,
            transform=transform,
            colors=_MINOR_GRID["color"],
            linewidths=_MINOR_GRID["linewidth"],
            alpha=_MINOR_GRID["alpha"],
            zorder=0.9,
            gid="minor-grid",
        )
        ax.add_collection(grid, autolim=False)


def put_footer(fig: Figure, text: str) -> None:
    """The footer line (input, tool version, date) at the bottom left of a figure."""
    fig.text(0.01, 0.008, text, fontsize=NOTE_SIZE, color=_FOOTER_COLOR, ha="left", va="bottom")


# ---------------------------------------------------------------------- statistics
def statistic_style(name: str) -> StatisticStyle:
    """The colour and marker of a statistic, by its identifier (never by drawing order).

    A statistic missing from :data:`STATISTIC_STYLES` (registered later) gets a
    spare pair chosen from its name, so it too looks the same everywhere.
    """
    style = STATISTIC_STYLES.get(name)
    if style is None:
        style = _SPARE_STYLES[zlib.crc32(name.encode("utf-8")) % len(_SPARE_STYLES)]
    return style


def short_name(name: str) -> str:
    """The abbreviation a figure shows for a statistic identifier (``tie_rms`` -> ``TIE RMS``)."""
    return name.upper().replace("_", " ")


def is_time_statistic(name: str) -> bool:
    """Whether a statistic is a time (seconds) rather than a fractional-frequency statistic."""
    return get_statistic(name).unit == "s"


# ---------------------------------------------------------------------- axis wording
#: The averaging-time axis of every sigma-tau panel.
TAU_LABEL = "averaging time \u03c4 (s)"


def deviation_label(names: Sequence[str], *, several: Literal["kind", "titles"] = "kind") -> str:
    """The y-axis label of a panel holding these statistics (titles from the registry).

    One statistic: its title and abbreviation, "modified Allan deviation, MDEV",
    with " (s)" for a time statistic. Several: the kind of quantity
    ("fractional frequency deviation", "time statistic (s)"), or with
    ``several="titles"`` every title with its abbreviation. A panel mixing the
    two kinds names its time statistics: "deviation (TDEV in s)".
    """
    timed = [n for n in names if is_time_statistic(n)]
    seconds = " (s)" if timed else ""
    if timed and len(timed) < len(names):
        return f"deviation ({', '.join(short_name(n) for n in timed)} in s)"
    if len(names) == 1:
        return f"{get_statistic(names[0]).title}, {short_name(names[0])}{seconds}"
    if several == "titles":
        titles = ", ".join(f"{get_statistic(n).title} ({short_name(n)})" for n in names)
        return f"{titles}{seconds}"
    return "time statistic (s)" if timed else "fractional frequency deviation"


def clock_label(start: datetime, what: str) -> str:
    """``what`` with the time zone of ``start``: "time (UTC)", "window centre (local time)"."""
    if start.tzinfo is None:
        zone = "local time"
    elif start.utcoffset() == UTC.utcoffset(None):
        zone = "UTC"
    else:
        zone = str(start.tzinfo)
    return f"{what} ({zone})"


def elapsed_unit(span: float) -> tuple[float, str]:
    """(seconds per unit, unit) of an elapsed-time axis spanning ``span`` seconds."""
    for limit, unit, factor in ((2 * 86400, "d", 86400.0), (2 * 3600, "h", 3600.0)):
        if span >= limit:
            return factor, unit
    return (60.0, "min") if span >= 120 else (1.0, "s")
