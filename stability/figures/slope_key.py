"""The key of power-law slopes beside a sigma-tau panel.

A faint fan of short lines, one per power-law noise type, each with the
slope that noise gives a statistic on log-log axes [1]_ [2]_:

=====================  =====  =====  =====  =====  =====
statistic              WPM    FPM    WFM    FFM    RWFM
=====================  =====  =====  =====  =====  =====
ADEV, OADEV, HDEV ...  -1     -1     -1/2   0      +1/2
MDEV                   -3/2   -1     -1/2   0      +1/2
TDEV                   -1/2   0      +1/2   +1     +3/2
MTIE, TIE rms          0      0      +1/2   +1     +3/2
=====================  =====  =====  =====  =====  =====

TDEV = tau * MDEV / sqrt(3) [3]_, so its slopes are those of MDEV plus one.
TIE rms is the rms phase difference over tau: a constant for white phase
noise, tau^(1/2) for the random-walk phase of white FM, and tau and tau^(3/2)
for the phases of flicker and random-walk FM (common practice; MTIE follows
the same growth). A panel holding statistics of different slopes (OADEV with
MDEV, TDEV with MTIE) shows the key of its first such statistic and names it.

The key is drawn outside the data, in a small frameless log-log panel of its
own (:func:`draw_slope_key`) whose decades have the same size in inches as
the data panel's, so each guide rises at exactly the angle a noise of that
type draws on the data panel. The guides' names are spread apart vertically
where the lines end too close together to write them side by side.

References
----------
.. [1] W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065
   (2008), section 5.2 (sigma-tau plots) (slopes of the power-law noises).
.. [2] IEEE Std 1139-2008, *Definitions of Physical Quantities for Fundamental
   Frequency and Time Metrology - Random Instabilities*, annex (slopes of
   sigma_y(tau) and mod sigma_y(tau)).
.. [3] ITU-T Recommendation G.810 (1996), *Definitions and terminology for
   synchronization networks*, appendix II (TDEV).
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np
from matplotlib.axes import Axes
from matplotlib.ticker import NullLocator

from ..deviations.registry import get_statistic
from .style import GUIDE_COLOR, KEY_SIZE, NOTE_COLOR, is_time_statistic, short_name

__all__ = ["SLOPES", "slope_key", "slope_heading", "draw_slope_key", "spread"]

#: Slope key per kind of statistic: (slope of deviation vs tau on log-log, noise label).
SLOPES = {
    "allan": ((-1.0, "WPM/FPM"), (-0.5, "WFM"), (0.0, "FFM"), (0.5, "RWFM")),
    "modified": ((-1.5, "WPM"), (-1.0, "FPM"), (-0.5, "WFM"), (0.0, "FFM"), (0.5, "RWFM")),
    "tdev": ((-0.5, "WPM"), (0.0, "FPM"), (0.5, "WFM"), (1.0, "FFM"), (1.5, "RWFM")),
    "time_error": ((0.0, "WPM/FPM"), (0.5, "WFM"), (1.0, "FFM"), (1.5, "RWFM")),
}

#: Room kept for the guides' names to the right of the fan (inches).
_NAME_ROOM = 0.62
#: Height of the heading line (inches).
_HEADING = 0.22


def _slope_set(names: Sequence[str]) -> str:
    if any(is_time_statistic(n) for n in names):
        return "tdev" if "tdev" in names else "time_error"
    families = {get_statistic(n).family for n in names}
    return "modified" if families == {"modified"} else "allan"


def slope_key(names: Sequence[str]) -> tuple[str, tuple[tuple[float, str], ...]]:
    """The slope key drawn for a panel holding these statistics: (kind, ((slope, label), ...))."""
    kind = _slope_set(list(names))
    return kind, SLOPES[kind]


def slope_heading(names: Sequence[str], *, name_owner: bool = False) -> str:
    """ "slopes", or "slopes (OADEV)" naming whose slopes they are.

    The owner is named on a panel mixing statistics of different slopes, and
    always with ``name_owner`` (a figure of several panels, whose keys stand
    side by side).
    """
    kind = _slope_set(list(names))
    if name_owner or len({_slope_set([n]) for n in names}) > 1:
        owner = next((n for n in names if _slope_set([n]) == kind), names[0])
        return f"slopes ({short_name(owner)})"
    return "slopes"


def spread(wanted: np.ndarray, step: float, low: float, high: float) -> np.ndarray:
    """Positions near ``wanted`` (ascending) at least ``step`` apart, within [low, high]."""
    at = np.clip(np.asarray(wanted, dtype=float), low, high)
    for i in range(1, at.size):
        at[i] = max(at[i], at[i - 1] + step)
    if at.size and at[-1] > high:
        at[-1] = high
        for i in range(at.size - 2, -1, -1):
            at[i] = min(at[i], at[i + 1] - step)
    return at


def _decades_per_inch(panel: Axes) -> tuple[float, float]:
    """Inches per decade of the panel's x and y axes (from its limits and size)."""
    fig = panel.get_figure(root=True)
    width, height = panel.bbox.width / fig.dpi, panel.bbox.height / fig.dpi
    (x0, x1), (y0, y1) = panel.get_xlim(), panel.get_ylim()
    return width / abs(math.log10(x1 / x0)), height / abs(math.log10(y1 / y0))


def draw_slope_key(
    key: Axes,
    panel: Axes,
    names: Sequence[str],
    size: tuple[float, float],
    *,
    name_owner: bool = False,
) -> None:
    """Draw the slope key of ``panel`` into the frameless panel ``key`` of ``size`` inches.

    The key's decades match the data panel's, so the guides have the slopes
    of :data:`SLOPES` both in data units and to the eye.
    """
    _, slopes = slope_key(names)
    width, height = size
    ipd_x, ipd_y = _decades_per_inch(panel)
    key.set_xscale("log")
    key.set_yscale("log")
    key.set_xlim(1.0, 10.0 ** (width / ipd_x))
    key.set_ylim(1.0, 10.0 ** (height / ipd_y))
    key.set_axis_off()
    for axis in (key.xaxis, key.yaxis):
        axis.set_major_locator(NullLocator())
        axis.set_minor_locator(NullLocator())
    low_s, high_s = min(s for s, _ in slopes), max(s for s, _ in slopes)
    bottom, top = 0.06, height - _HEADING - 0.04
    run = min((width - _NAME_ROOM - 0.1) / ipd_x, (top - bottom) / ((high_s - low_s) * ipd_y))
    ox = 0.04
    oy = bottom + max(0.0, -low_s) * run * ipd_y
    ends = []
    for slope, _ in slopes:
        xs = np.array([ox, ox + run * ipd_x])
        ys = np.array([oy, oy + slope * run * ipd_y])
        key.plot(
            10.0 ** (xs / ipd_x),
            10.0 ** (ys / ipd_y),
            color=GUIDE_COLOR,
            linewidth=0.8,
            solid_capstyle="round",
            gid="slope-key",
        )
        ends.append(ys[1])
    order = np.argsort(ends, kind="stable")
    step = 1.3 * KEY_SIZE / 72.0
    placed = spread(np.asarray(ends)[order], step, bottom + step / 2, top - step / 2)
    name_x = (ox + run * ipd_x + 0.05) / width
    for rank, index in enumerate(order):
        key.text(
            name_x,
            placed[rank] / height,
            slopes[index][1],
            transform=key.transAxes,
            fontsize=KEY_SIZE,
            color=NOTE_COLOR,
            va="center",
            ha="left",
            gid="slope-key",
        )
    key.text(
        0.0,
        1.0,
        slope_heading(names, name_owner=name_owner),
        transform=key.transAxes,
        fontsize=KEY_SIZE,
        color=NOTE_COLOR,
        va="top",
        ha="left",
        style="italic",
        gid="slope-key",
    )
