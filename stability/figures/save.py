"""Writing a figure to a file: PNG, SVG or PDF, atomically, with the tool named inside.

The file is written through :func:`stability.files.atomic_output` (a
temporary file renamed into place), so an interrupted write never leaves a
half-written figure where a previous one was (DESIGN: outputs are written
atomically).
"""

from __future__ import annotations

import os
from pathlib import Path

from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure

from .._version import __version__
from ..errors import InputError
from ..files import atomic_output
from .style import DPI, Drawn

__all__ = ["FORMATS", "save_figure"]

#: Output formats of :func:`save_figure`.
FORMATS = ("png", "svg", "pdf")


def _format_of(target: Path, fmt: str | None) -> str:
    if fmt is None:
        suffix = target.suffix.lower().lstrip(".")
        return suffix if suffix in FORMATS else "png"
    fmt = str(fmt).lower().lstrip(".")
    if fmt not in FORMATS:
        raise InputError(
            f"unknown figure format {fmt!r}", hint=f"choose one of {', '.join(FORMATS)}"
        )
    return fmt


def save_figure(
    fig: Figure | Drawn,
    path: str | os.PathLike[str],
    fmt: str | None = None,
    *,
    dpi: int = DPI,
) -> Path:
    """Write a figure as PNG (default), SVG or PDF, atomically.

    Parameters
    ----------
    fig
        The figure, or what a figure function returned (its ``figure`` is written).
    path
        Destination file; its folder must exist.
    fmt
        ``"png"``, ``"svg"`` or ``"pdf"``; by default taken from the file
        suffix, PNG when the suffix is none of these.
    dpi
        Resolution of PNG output.

    Returns
    -------
    pathlib.Path
    """
    figure = fig.figure if isinstance(fig, Drawn) else fig
    if not isinstance(figure, Figure):
        raise InputError(
            f"fig must be a matplotlib Figure or a drawn figure, got {type(fig).__name__}"
        )
    target = Path(path)
    fmt = _format_of(target, fmt)
    if not isinstance(dpi, (int, float)) or not 10 <= dpi <= 1200:
        raise InputError(f"dpi must be a number between 10 and 1200, got {dpi!r}")
    software = f"stability {__version__}"
    metadata = {"Software": software} if fmt == "png" else {"Creator": software}
    if not isinstance(figure.canvas, FigureCanvasAgg):
        FigureCanvasAgg(figure)
    # zlib level 3 instead of 6: a third less encoding time for files about 15 % larger
    extra = {"pil_kwargs": {"compress_level": 3}} if fmt == "png" else {}
    with atomic_output(target, "wb") as handle:
        figure.savefig(handle, format=fmt, dpi=dpi, metadata=metadata, **extra)
    return target
