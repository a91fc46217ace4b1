"""Typesetting A4 pages with matplotlib: text that flows down a page, and real tables.

A :class:`PageFlow` places blocks (headings, key-value lists, paragraphs,
tables, regions for figures) from the top of a page downwards, measuring each
block as matplotlib draws it, and starts a new page when a block does not fit
above the space kept at the bottom; so no two blocks overlap and nothing runs
off the page. A :class:`Table` is typeset in columns whose widths are
measured from their widest cell, numbers right-aligned, the header repeated
on every page the table runs over.

Pages are A4 portrait (ISO 216 [1]_), 210 mm x 297 mm.

References
----------
.. [1] ISO 216:2007, *Writing paper and certain classes of printed matter -
   Trimmed sizes* (A4, 210 mm x 297 mm).
"""

from __future__ import annotations

import textwrap
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field

from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure, SubFigure
from matplotlib.lines import Line2D
from matplotlib.text import Text

__all__ = ["A4", "MARGIN", "Column", "Table", "PageFlow", "new_page"]

#: A4 portrait in inches (ISO 216).
A4 = (8.27, 11.69)
#: Left and right margin (inches).
MARGIN = 0.6
_INK = "#222222"
_SOFT = "#555555"
_RULE = "#999999"


def new_page(title: str | None = None) -> Figure:
    """An empty A4 page on an Agg canvas, with a bold title at the top when given."""
    fig = Figure(figsize=A4, dpi=100)
    FigureCanvasAgg(fig)
    if title:
        fig.text(MARGIN / A4[0], 1 - 0.45 / A4[1], title, fontsize=15, weight="bold", va="top")
    return fig


@dataclass(frozen=True)
class Column:
    """A table column: header text and alignment (``"left"`` or ``"right"``)."""

    header: str
    align: str = "left"


@dataclass(frozen=True)
class Table:
    """Rows of text under column headers, typeset by :meth:`PageFlow.table`."""

    columns: tuple[Column, ...]
    rows: tuple[tuple[str, ...], ...]
    fontsize: float = 7.0
    colors: tuple[str | None, ...] | None = None  # one per row (None: ink)


@dataclass
class PageFlow:
    """Blocks placed down A4 pages, a new page when the next block does not fit.

    Parameters
    ----------
    heading
        Title of the pages this flow starts (``"... (continued)"`` after the first).
    top, bottom
        The first block's top and the lowest a block may reach (inches from the
        page bottom); ``bottom`` keeps the footer's strip free.
    first
        A page to start on (default: a new one).
    """

    heading: str
    top: float = A4[1] - 0.85
    bottom: float = 0.75
    first: Figure | None = None
    pages: list[Figure] = field(default_factory=list)
    new: Callable[[str], Figure] = new_page

    def __post_init__(self) -> None:
        self.page = self.first if self.first is not None else self.new(self.heading)
        self.pages.append(self.page)
        self.y = self.top
        self.width = A4[0] - 2 * MARGIN

    # -------------------------------------------------------------- helpers
    def _renderer(self) -> object:
        return self.page.canvas.get_renderer()

    def _height(self, artist: Text) -> float:
        box = artist.get_window_extent(self._renderer())
        return box.height / self.page.dpi

    def _width(self, artist: Text) -> float:
        return artist.get_window_extent(self._renderer()).width / self.page.dpi

    def _at(self, x: float, y: float) -> tuple[float, float]:
        return x / A4[0], y / A4[1]

    def _turn(self) -> None:
        self.page = self.new(f"{self.heading} (continued)")
        self.pages.append(self.page)
        self.y = self.top

    def room(self) -> float:
        """Inches left on the current page above ``bottom``."""
        return self.y - self.bottom

    def need(self, height: float) -> None:
        """Start a new page unless ``height`` inches fit on this one."""
        if height > self.room() and self.y < self.top:
            self._turn()

    def skip(self, height: float) -> None:
        self.y -= height

    def text(
        self, x: float, text: str, *, width: float, size: float = 8.5, **style: object
    ) -> Text:
        """Wrapped text at ``x`` (inches) on the current line, kept within ``width`` inches."""
        chars = max(12, int(width / (0.52 * size / 72.0)))
        while True:
            body = "\n".join(textwrap.wrap(text, chars)) if text else ""
            artist = self.page.text(
                *self._at(x, self.y), body, fontsize=size, va="top", ha="left", **style
            )
            if self._width(artist) <= width or chars <= 12:
                return artist
            artist.remove()
            chars = int(chars * 0.9)

    # -------------------------------------------------------------- blocks
    def title(self, text: str, size: float = 11.0) -> None:
        self.need(0.6)
        artist = self.text(MARGIN, text, width=self.width, size=size, weight="bold", color=_INK)
        self.y -= self._height(artist) + 0.08

    def paragraph(self, text: str, *, size: float = 8.5, color: str = _INK) -> None:
        probe = self.text(MARGIN, text, width=self.width, size=size, color=color)
        height = self._height(probe)
        if height > self.room():
            probe.remove()
            self._turn()
            probe = self.text(MARGIN, text, width=self.width, size=size, color=color)
        self.y -= height + 0.1

    def key_values(self, items: Sequence[tuple[str, str]], *, key_width: float = 1.75) -> None:
        """``key    value`` lines, values wrapped in their column; empty values left out."""
        value_x, value_width = MARGIN + key_width, self.width - key_width
        for key, value in items:
            if value in (None, ""):
                continue
            probe = self.text(value_x, str(value), width=value_width, size=8.5)
            height = self._height(probe)
            probe.remove()
            if height > self.room():
                self._turn()
            # the key first, so that text extracted from the page reads "key value"
            self.text(MARGIN + 0.15, key, width=key_width - 0.2, size=8.5, color=_SOFT)
            self.text(value_x, str(value), width=value_width, size=8.5)
            self.y -= height + 0.045
        self.y -= 0.1

    def region(self, height: float) -> SubFigure:
        """A sub-figure ``height`` inches tall across the text width, for a figure's panels.

        A sub-figure sits where its grid cell is by the grid's width and
        height ratios alone, so the cell is the middle of a 3 x 3 grid whose
        outer rows and columns are the space around it.
        """
        self.need(height)
        bottom = self.y - height
        side = 0.25
        grid = self.page.add_gridspec(
            3,
            3,
            width_ratios=(side, A4[0] - 2 * side, side),
            height_ratios=(A4[1] - self.y, height, max(bottom, 1e-3)),
        )
        self.y = bottom - 0.1
        return self.page.add_subfigure(grid[1, 1])

    def rule(self, x0: float, x1: float) -> None:
        self.page.add_artist(
            Line2D(
                [x0 / A4[0], x1 / A4[0]],
                [self.y / A4[1]] * 2,
                transform=self.page.transFigure,
                color=_RULE,
                linewidth=0.6,
            )
        )

    # -------------------------------------------------------------- tables
    def _widths(self, table: Table, size: float) -> list[float]:
        widths = []
        for j, column in enumerate(table.columns):
            cells = [column.header, *(row[j] for row in table.rows)]
            longest = sorted(cells, key=len)[-3:]
            measured = []
            for cell in longest:
                probe = self.page.text(0, 0, cell, fontsize=size, weight="bold")
                measured.append(self._width(probe))
                probe.remove()
            widths.append(max(measured) + 0.14)
        return widths

    def table(self, table: Table, *, rows_per_page: int | None = None) -> None:
        """Typeset ``table``: measured columns, numbers right-aligned, header on every page."""
        size = table.fontsize
        widths = self._widths(table, size)
        while sum(widths) > self.width and size > 5.0:
            size -= 0.5
            widths = self._widths(table, size)
        step = size * 1.55 / 72.0
        lefts = [MARGIN + sum(widths[:j]) for j in range(len(widths))]
        right_end = MARGIN + sum(widths)

        def header() -> None:
            for j, column in enumerate(table.columns):
                x = lefts[j] + (widths[j] - 0.1 if column.align == "right" else 0.0)
                self.page.text(
                    *self._at(x, self.y), column.header, fontsize=size, weight="bold",
                    ha=column.align, va="top", color=_INK,
                )  # fmt: skip
            self.y -= step
            self.rule(MARGIN, right_end)
            self.y -= 0.05

        self.need(3 * step)
        header()
        on_page = 0
        for i, row in enumerate(table.rows):
            full = rows_per_page is not None and on_page >= rows_per_page
            if step > self.room() or full:
                self._turn()
                header()
                on_page = 0
            color = (table.colors[i] if table.colors else None) or _INK
            for j, cell in enumerate(row):
                align = table.columns[j].align
                x = lefts[j] + (widths[j] - 0.1 if align == "right" else 0.0)
                self.page.text(
                    *self._at(x, self.y), cell, fontsize=size, ha=align, va="top", color=color
                )
            self.y -= step
            on_page += 1
        self.rule(MARGIN, right_end)
        self.y -= 0.15
