"""The spectrum of a log: S_y(f) with its band, the power-law models, and L(f) or S_x(f).

The left panel holds the Welch estimate of S_y(f) (:mod:`stability.spectrum`)
with its chi-squared band shaded, the power-law model that ``analyze`` fitted to
the Allan deviation (dashed) and the model fitted to the spectrum itself
(dotted): two views of one model [1]_. Periodic components found above the
local background (:mod:`stability.periodic`) are marked at their frequency. The
right panel holds L(f) in dBc/Hz when the nominal frequency is known, else
S_x(f) in s^2/Hz.

References
----------
.. [1] IEEE Std 1139-2008 (S_y, S_x and L(f)); W. J. Riley, NIST SP 1065 (2008),
   section 6.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from datetime import datetime
from typing import Any

import numpy as np
from matplotlib.axes import Axes

from ..errors import InputError
from ..periodic import Line
from ..spectrum import Spectrum
from .labels import check_text, tool_footer
from .style import (
    BAND_ALPHA,
    DRIFT_COLOR,
    FREQUENCY_COLOR,
    LABEL_SIZE,
    LEGEND_SIZE,
    LINE_COLOR,
    NOTE_COLOR,
    TITLE_SIZE,
    Drawn,
    given_axes,
    log_axes,
    put_footer,
    style_axes,
    target_for,
)

__all__ = ["SpectrumDrawn", "spectrum_figure", "SY_LABEL", "SX_LABEL", "LF_LABEL", "F_LABEL"]

SY_LABEL = "S_y(f) (1/Hz)"
SX_LABEL = "S_x(f) (s\u00b2/Hz)"
LF_LABEL = "\u2112(f) (dBc/Hz)"
F_LABEL = "Fourier frequency f (Hz)"


@dataclass(frozen=True)
class SpectrumDrawn(Drawn):
    """What :func:`spectrum_figure` drew.

    Attributes
    ----------
    figure, axes
        The figure and its two panels (S_y, then L(f) or S_x).
    f, s_y, low, high
        The spectrum and its band as drawn.
    models
        Label -> S_y of each model drawn at ``f``.
    lines
        (frequency, S_y at it) of each periodic component marked.
    right
        ``"L(f)"`` or ``"S_x"``: what the right panel holds (``""`` when only the
        S_y panel was drawn, on one given axis).
    """

    f: np.ndarray
    s_y: np.ndarray
    low: np.ndarray
    high: np.ndarray
    models: dict[str, np.ndarray]
    lines: tuple[tuple[float, float], ...]
    right: str


def _validate(spectrum: Any, models: Any, lines: Any, title: Any, footer: Any) -> None:
    if not isinstance(spectrum, Spectrum):
        raise InputError(
            f"spectrum must be a stability.spectrum.Spectrum, got {type(spectrum).__name__}",
            hint="build one with stability.spectrum.welch_spectrum",
        )
    if models is not None and not isinstance(models, dict):
        raise InputError(f"models must be a mapping label -> h_alpha, got {type(models).__name__}")
    if lines is not None and not all(isinstance(x, Line) for x in lines):
        raise InputError("lines must be periodic components (stability.periodic.Line)")
    check_text(title=title, footer=footer)


def _model_sy(h: dict[int, float], f: np.ndarray) -> np.ndarray:
    return sum((c * f**a for a, c in h.items() if c > 0), np.zeros_like(f))


def _legend_below(ax: Axes) -> None:
    ax.legend(
        fontsize=LEGEND_SIZE,
        frameon=False,
        loc="upper center",
        bbox_to_anchor=(0.5, -0.14),
        ncols=2,
    )


def _right_panel(right: Axes, spectrum: Spectrum) -> str:
    """L(f) at the nominal frequency, else S_x(f); which one it drew."""
    f = spectrum.f
    style_axes(right)
    lf = spectrum.phase_noise()
    if lf is not None:
        log_axes(right, "x")
        right.plot(f, lf, color=FREQUENCY_COLOR, linewidth=0.9, label="\u2112(f) from the log")
        right.set_ylabel(LF_LABEL, fontsize=LABEL_SIZE)
        what = "L(f)"
        right.set_title(f"carrier {spectrum.nominal:g} Hz", fontsize=LABEL_SIZE, color=NOTE_COLOR)
    else:
        log_axes(right)
        right.plot(
            f, spectrum.s_x, color=FREQUENCY_COLOR, linewidth=0.9, label="S_x(f) from the log"
        )
        right.set_ylabel(SX_LABEL, fontsize=LABEL_SIZE)
        what = "S_x"
        right.set_title("no nominal frequency: phase PSD", fontsize=LABEL_SIZE, color=NOTE_COLOR)
    right.set_xlabel(F_LABEL, fontsize=LABEL_SIZE)
    _legend_below(right)
    return what


def spectrum_figure(
    spectrum: Spectrum,
    *,
    models: dict[str, dict[int, float]] | None = None,
    lines: Sequence[Line] = (),
    title: str | None = None,
    footer: str | None = None,
    analysis_time: datetime | None = None,
    into: Any = None,
    axes: Any = None,
) -> SpectrumDrawn:
    """Draw a Welch spectrum, its band, power-law models and periodic components.

    Parameters
    ----------
    spectrum
        From :func:`stability.spectrum.welch_spectrum`.
    models
        Label -> h_alpha mapping of each power-law model to draw (e.g. the model
        of ``analyze`` and the spectrum's own fit).
    lines
        Periodic components to mark.
    title, footer, analysis_time
        Title (default "spectrum"), footer (default tool version and date).
    into
        A ``Figure`` or ``SubFigure`` to draw into (no title or footer unless given).
    axes
        One or two ``Axes`` to draw the panels into (S_y, then L(f) or S_x), for a
        figure the caller lays out; as many panels are drawn as axes are given
        (no title or footer unless given).
    """
    _validate(spectrum, models, lines, title, footer)
    f = spectrum.f
    if axes is not None:
        axes = given_axes(axes, 2, "panels (S_y, then L(f) or S_x)", into, fewer=True)
        fig, own = axes[0].get_figure(root=False), False
    else:
        fig, own = target_for(into, 11.0, 5.6)
        axes = tuple(fig.subplots(1, 2, squeeze=False)[0])
    ax = axes[0]
    style_axes(ax)
    log_axes(ax)
    ax.fill_between(
        f,
        spectrum.low,
        spectrum.high,
        color=FREQUENCY_COLOR,
        alpha=BAND_ALPHA,
        linewidth=0,
        label=f"{100 * spectrum.confidence:.3g} % band ({spectrum.edf:.3g} dof)",
    )
    ax.plot(f, spectrum.s_y, color=FREQUENCY_COLOR, linewidth=0.9, label="Welch estimate")
    drawn_models: dict[str, np.ndarray] = {}
    for (label, h), style in zip(
        (models or {}).items(), (("--", DRIFT_COLOR), (":", "#333333")), strict=False
    ):
        curve = _model_sy(h, f)
        if np.any(curve > 0):
            ax.plot(f, curve, linestyle=style[0], color=style[1], linewidth=1.3, label=label)
            drawn_models[label] = curve
    marked = []
    for line in lines:
        k = int(np.argmin(np.abs(f - line.frequency)))
        level = float(spectrum.high[max(0, k - 2) : k + 3].max()) * 1.6
        ax.plot(
            [line.frequency],
            [level],
            marker="v",
            color=LINE_COLOR,
            linestyle="none",
            markersize=7,
            label=line.describe(),
        )
        marked.append((line.frequency, float(spectrum.s_y[k])))
    ax.set_xlabel(F_LABEL, fontsize=LABEL_SIZE)
    ax.set_ylabel(SY_LABEL, fontsize=LABEL_SIZE)
    ax.set_title(
        f"Welch, Hann, {spectrum.segments_used} segments of "
        f"{spectrum.segment_length * spectrum.tau0:g} s",
        fontsize=LABEL_SIZE,
        color=NOTE_COLOR,
    )
    _legend_below(ax)
    what = ""
    if len(axes) > 1:
        what = _right_panel(axes[1], spectrum)
    if own or title:
        fig.suptitle(title or "spectrum", fontsize=TITLE_SIZE)
    if own or footer:
        put_footer(fig, footer if footer is not None else tool_footer(analysis_time))
    return SpectrumDrawn(
        fig.get_figure(root=True),
        tuple(axes),
        f=f,
        s_y=spectrum.s_y,
        low=spectrum.low,
        high=spectrum.high,
        models=drawn_models,
        lines=tuple(marked),
        right=what,
    )
