"""What a figure drew, as plain data: for tests that compare two drawings of one figure."""

from __future__ import annotations

import numpy as np
from matplotlib.collections import Collection
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.text import Text

__all__ = ["artists", "plain"]


def plain(values) -> list:
    """Numbers as nested lists, NaN written as None (NaN never equals itself)."""
    arr = np.asarray(values, dtype=float)
    return np.where(np.isnan(arr), None, arr).tolist()


def artists(figure: Figure) -> list[tuple]:
    """Every line, collection and text of a figure: kind, data and words, in drawing order.

    The figure is drawn first, as saving it did (axis labels find their place then).
    """
    figure.canvas.draw()
    out = []
    for artist in figure.findobj(lambda a: isinstance(a, (Line2D, Collection, Text))):
        if isinstance(artist, Line2D):
            x, y = (np.asarray(v, dtype=float) for v in artist.get_data())
            out.append(("line", artist.get_label(), artist.get_color(), plain(x), plain(y)))
        elif isinstance(artist, Text):
            out.append(("text", artist.get_text(), tuple(np.round(artist.get_position(), 9))))
        else:
            paths = [plain(p.vertices) for p in artist.get_paths()]
            out.append(("collection", type(artist).__name__, artist.get_gid(), paths))
    return out
