"""Placing text where nothing else is drawn: labels beside points, without collisions.

A label that belongs to a point (the noise type written beside a deviation)
is tried at a short list of positions around the point, nearest first, and
put at the first one where its box lies inside the panel and touches no data
marker, error bar, data line or earlier label; a label with no free position
is left out rather than printed over something, and the caller is told. This
is the greedy placement of point-feature labels by candidate positions of
Christensen, Marks and Shieber [1]_ (the first free candidate in order of
preference, the usual first step of their methods).

Everything is measured in display units (pixels of the drawn figure) after
the panel's limits are fixed: marker boxes from the marker size, error bars
and lines as segments, text boxes from the font's outlines.

References
----------
.. [1] J. Christensen, J. Marks, S. Shieber, "An empirical study of algorithms
   for point-feature label placement", ACM Transactions on Graphics 14(3),
   203-232 (1995).
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass, field

import numpy as np
from matplotlib.axes import Axes
from matplotlib.collections import LineCollection
from matplotlib.font_manager import FontProperties
from matplotlib.lines import Line2D
from matplotlib.text import Annotation
from matplotlib.textpath import text_to_path

__all__ = [
    "Box",
    "Obstacles",
    "LabelRequest",
    "obstacles_of",
    "place_labels",
    "text_size",
    "extent",
    "renderer_of",
]

#: Candidate offsets (points) and alignments around a point, in order of preference.
_CANDIDATES = tuple(
    (dx * r, dy * r, ha, va)
    for r in (1.0, 2.0, 3.2)
    for dx, dy, ha, va in (
        (4, -4, "left", "top"),
        (4, 4, "left", "bottom"),
        (-4, -4, "right", "top"),
        (-4, 4, "right", "bottom"),
        (6, 0, "left", "center"),
        (-6, 0, "right", "center"),
        (0, -6, "center", "top"),
        (0, 6, "center", "bottom"),
    )
)


@dataclass(frozen=True)
class Box:
    """An axis-aligned box in display units."""

    x0: float
    y0: float
    x1: float
    y1: float

    def overlaps(self, other: Box) -> bool:
        return (
            self.x0 < other.x1 and other.x0 < self.x1 and self.y0 < other.y1 and other.y0 < self.y1
        )

    def inside(self, other: Box) -> bool:
        return (
            self.x0 >= other.x0
            and self.x1 <= other.x1
            and self.y0 >= other.y0
            and self.y1 <= other.y1
        )

    @property
    def width(self) -> float:
        return self.x1 - self.x0

    @property
    def height(self) -> float:
        return self.y1 - self.y0

    def grown(self, pad: float) -> Box:
        return Box(self.x0 - pad, self.y0 - pad, self.x1 + pad, self.y1 + pad)

    def crosses(self, segments: np.ndarray) -> bool:
        """Whether any of the (k, 2, 2) segments passes through the box (Liang-Barsky)."""
        if not len(segments):
            return False
        p, q = segments[:, 0, :], segments[:, 1, :]
        d = q - p
        t0 = np.zeros(len(segments))
        t1 = np.ones(len(segments))
        ok = np.ones(len(segments), dtype=bool)
        for axis, low, high in ((0, self.x0, self.x1), (1, self.y0, self.y1)):
            for num, den in ((p[:, axis] - low, -d[:, axis]), (high - p[:, axis], d[:, axis])):
                parallel = den == 0
                ok &= ~(parallel & (num < 0))
                with np.errstate(divide="ignore", invalid="ignore"):
                    t = num / den
                entering = ~parallel & (den < 0)
                leaving = ~parallel & (den > 0)
                t0 = np.where(entering, np.maximum(t0, t), t0)
                t1 = np.where(leaving, np.minimum(t1, t), t1)
        return bool(np.any(ok & (t0 <= t1)))


@dataclass
class Obstacles:
    """What a label must not touch: boxes (markers, texts) and segments (lines, error bars)."""

    boxes: list[Box] = field(default_factory=list)
    segments: np.ndarray = field(default_factory=lambda: np.empty((0, 2, 2)))

    def hit(self, box: Box) -> bool:
        return any(box.overlaps(b) for b in self.boxes) or box.crosses(self.segments)

    def add_segments(self, segments: np.ndarray) -> None:
        if len(segments):
            self.segments = np.concatenate([self.segments, segments.reshape(-1, 2, 2)])


def text_size(text: str, fontsize: float, dpi: float) -> tuple[float, float]:
    """(width, height) of one line of text in display units, from the font's outlines."""
    width, height, descent = text_to_path.get_text_width_height_descent(
        text, FontProperties(size=fontsize), False
    )
    scale = dpi / 72.0
    return 1.05 * width * scale, max(height, 0.9 * fontsize) * scale


def _line_obstacles(line: Line2D, into: Obstacles, dpi: float) -> None:
    xy = line.get_transform().transform(np.column_stack([line.get_xdata(), line.get_ydata()]))
    xy = xy[np.all(np.isfinite(xy), axis=1)]
    if not xy.size:
        return
    marker = line.get_marker()
    if marker not in (None, "None", "none", "", " "):
        half = 0.5 * line.get_markersize() * dpi / 72.0 + 0.5 * line.get_markeredgewidth()
        into.boxes.extend(Box(x - half, y - half, x + half, y + half) for x, y in xy)
    if line.get_linestyle() not in ("None", "none", "", " ") and len(xy) > 1:
        into.add_segments(np.stack([xy[:-1], xy[1:]], axis=1))


def obstacles_of(ax: Axes, *, skip_gids: Iterable[str] = ("minor-grid",)) -> Obstacles:
    """The data of a panel as obstacles: markers, lines, error bars and texts already placed."""
    skip = set(skip_gids)
    out = Obstacles()
    dpi = ax.get_figure(root=True).dpi
    for line in ax.lines:
        if line.get_visible() and line.get_gid() not in skip:
            _line_obstacles(line, out, dpi)
    for collection in ax.collections:
        if isinstance(collection, LineCollection) and collection.get_gid() not in skip:
            transform = collection.get_transform()
            for seg in collection.get_segments():
                if len(seg) > 1:
                    xy = transform.transform(seg)
                    out.add_segments(np.stack([xy[:-1], xy[1:]], axis=1))
    return out


@dataclass(frozen=True)
class LabelRequest:
    """A label wanted beside the point ``xy`` (data coordinates of the panel)."""

    text: str
    xy: tuple[float, float]
    color: str
    fontsize: float
    gid: str = "label"


def renderer_of(ax: Axes) -> object:
    """The renderer of the figure holding ``ax`` (its canvas is an Agg canvas)."""
    return ax.get_figure(root=True).canvas.get_renderer()


def extent(artist: object, renderer: object) -> Box:
    """The display box of a drawn text or legend."""
    return Box(*artist.get_window_extent(renderer).extents)  # type: ignore[attr-defined]


def place_labels(
    ax: Axes, requests: list[LabelRequest], obstacles: Obstacles, *, pad: float = 1.5
) -> list[Annotation | None]:
    """Put each label at its first free candidate position; None where none is free.

    Each candidate is measured as matplotlib draws it. Placed labels become
    obstacles for the later ones (they are added to ``obstacles``). The
    panel's limits must be final.
    """
    renderer = renderer_of(ax)
    frame = Box(*ax.bbox.extents).grown(-2.0)
    placed: list[Annotation | None] = []
    for request in requests:
        label = ax.annotate(
            request.text,
            request.xy,
            xytext=(0.0, 0.0),
            textcoords="offset points",
            fontsize=request.fontsize,
            color=request.color,
            zorder=4,
            gid=request.gid,
            annotation_clip=False,
        )
        chosen = None
        for dx, dy, ha, va in _CANDIDATES:
            label.xyann = (dx, dy)
            label.set_horizontalalignment(ha)
            label.set_verticalalignment(va)
            box = extent(label, renderer)
            if box.inside(frame) and not obstacles.hit(box.grown(pad)):
                chosen = box
                break
        if chosen is None:
            label.remove()
            placed.append(None)
            continue
        obstacles.boxes.append(chosen)
        placed.append(label)
    return placed
