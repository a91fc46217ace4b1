"""Tick positions and tick text of the figures: enough labels on any range, compact text.

Log axes (:class:`LogTicks` with :class:`PowerLabels`)
    The labelled ticks are chosen from the view and the room the axis has.
    A view holding three decades or more is labelled at its decades (every
    second or third decade when they would crowd). A view holding fewer is
    labelled also between its decades, at the densest of the usual sets
    (2-9, 2-3-4-5-6-8, 2-3-5, 2-5, 5 times each decade) whose labels fit side
    by side without touching, so that every axis carries at least three
    labels; these go on the minor ticks. Where not even that gives three
    labels (a view of a fraction of a decade) the ticks are evenly spaced
    round numbers, written with one common power of ten at the axis end
    ("9.6  9.8  10  10.2" and "×10⁻¹²"), never as long mantissas.
Text
    Powers of ten are plain text with superscripts (10⁻¹², 2×10⁻¹²), no math
    typesetting. Axes whose labelled values all lie between 10⁻³ and 10⁴ and
    that are labelled between decades are written as plain numbers (1, 2, 5,
    10, 20 s), which read faster than 2×10⁰.
Linear axes (:class:`PlainScalar`)
    Matplotlib's rules for its scalar labels (common practice): a common
    multiplier ×10ⁿ and, for ticks sharing four or more leading digits, an
    offset, both in plain text.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from matplotlib.axis import Axis
from matplotlib.font_manager import FontProperties
from matplotlib.textpath import text_to_path
from matplotlib.ticker import Formatter, Locator, MaxNLocator

__all__ = [
    "power_of_ten",
    "scaled_text",
    "plain_number",
    "LogTicks",
    "PowerLabels",
    "PlainScalar",
    "TickPlan",
    "plan_log_ticks",
]

_SUPERSCRIPT = str.maketrans("0123456789-", "⁰¹²³⁴⁵⁶⁷⁸⁹⁻")

#: Sets of multiples of a decade tried between decades, densest first.
_SUBSETS = ((2, 3, 4, 5, 6, 7, 8, 9), (2, 3, 4, 5, 6, 8), (2, 3, 5), (2, 5), (5,))
#: At most this many labels on one axis.
_MAX_LABELS = 10
#: Values written as plain numbers when every label lies in this range.
_PLAIN_RANGE = (1e-3, 1e4)


def power_of_ten(exponent: int) -> str:
    """10 to an integer power as plain text: ``power_of_ten(-12) == "10⁻¹²"``."""
    return "10" + str(int(exponent)).translate(_SUPERSCRIPT)


def scaled_text(value: float) -> str:
    """A positive number as plain text in powers of ten: 10⁻¹², 2×10⁻¹², 2.5×10⁻¹²."""
    exponent = math.floor(math.log10(value) + 1e-9)
    coefficient = round(value / 10.0**exponent, 10)
    if coefficient >= 10.0:
        coefficient, exponent = coefficient / 10.0, exponent + 1
    power = power_of_ten(exponent)
    return power if coefficient == 1.0 else f"{coefficient:g}\u00d7{power}"


def plain_number(value: float) -> str:
    """A number as short plain text: 1, 20, 0.5, 1500 (up to four significant digits)."""
    text = f"{value:.4g}"
    return text if "e" not in text else f"{value:.0f}"


def _decimals(values: np.ndarray) -> int:
    """Fewest decimals that tell the values apart and write each exactly (to 1e-9)."""
    for places in range(0, 7):
        if np.all(np.abs(values - np.round(values, places)) < 1e-9 * np.max(np.abs(values))):
            return places
    return 6


@dataclass(frozen=True)
class TickPlan:
    """Which ticks of a log axis are drawn and labelled, and how.

    Attributes
    ----------
    major
        Tick positions of the major ticks (labelled).
    minor
        Tick positions of the minor ticks (grid and tick marks).
    labelled_minor
        The minor ticks that carry a label.
    mode
        ``"power"`` (10⁻¹², 2×10⁻¹²), ``"plain"`` (1, 2, 5, 10) or ``"scaled"``
        (evenly spaced values over one common power of ten, ``exponent``).
    exponent
        The common power of ten of the ``"scaled"`` mode.
    """

    major: np.ndarray
    minor: np.ndarray
    labelled_minor: np.ndarray
    mode: str = "power"
    exponent: int = 0

    def text(self, value: float) -> str:
        """The label of a tick at ``value`` under this plan."""
        if self.mode == "plain":
            return plain_number(value)
        if self.mode == "scaled":
            shown = self.scaled_values()
            places = _decimals(shown) if shown.size else 1
            return f"{value / 10.0**self.exponent:.{places}f}"
        return scaled_text(value)

    def scaled_values(self) -> np.ndarray:
        return np.asarray(self.major, dtype=float) / 10.0**self.exponent

    def offset(self) -> str:
        """The common multiplier written at the axis end (``"×10⁻¹²"``), or ``""``."""
        return "\u00d7" + power_of_ten(self.exponent) if self.mode == "scaled" else ""


def _inside(values: np.ndarray, lo: float, hi: float) -> np.ndarray:
    tol = 1e-9 * (hi - lo)
    return values[(values >= lo - tol) & (values <= hi + tol)]


def _fits(values: np.ndarray, texts: list[str], lo: float, hi: float, room: Room) -> bool:
    """Whether labels at ``values`` fit along an axis of ``room`` without touching."""
    if values.size < 2:
        return True
    span = math.log10(hi / lo)
    at = (np.log10(values) - math.log10(lo)) / span * room.length
    sizes = np.array([room.size(t) for t in texts])
    need = (sizes[1:] + sizes[:-1]) / 2.0 + room.gap
    return bool(np.all(np.diff(at) >= need))


@dataclass(frozen=True)
class Room:
    """The room of an axis: its length and the size of a label along it (display units)."""

    length: float
    font_px: float
    along_width: bool
    measure: object = None

    @property
    def gap(self) -> float:
        return 0.4 * self.font_px

    def size(self, text: str) -> float:
        if not self.along_width:
            return 1.2 * self.font_px
        if self.measure is not None:
            return float(self.measure(text))  # type: ignore[operator]
        return 0.62 * self.font_px * len(text)


def _text_mode(values: np.ndarray, between: bool) -> str:
    low, high = _PLAIN_RANGE
    plain = between and values.size and np.all((values >= low) & (values <= high))
    return "plain" if plain else "power"


def plan_log_ticks(lo: float, hi: float, room: Room) -> TickPlan:
    """The tick plan of a log axis viewing ``lo`` to ``hi`` (see the module docstring)."""
    lo, hi = sorted((float(lo), float(hi)))
    if not (lo > 0 and math.isfinite(hi) and hi > lo):
        return TickPlan(np.empty(0), np.empty(0), np.empty(0))
    k0, k1 = math.floor(math.log10(lo) + 1e-12), math.ceil(math.log10(hi) - 1e-12)
    decades_all = 10.0 ** np.arange(k0, k1 + 1)
    decades = _inside(decades_all, lo, hi)
    multiples = (np.arange(2.0, 10.0)[None, :] * 10.0 ** np.arange(k0, k1 + 1)[:, None]).ravel()
    minor_all = _inside(multiples, lo, hi)
    if decades.size >= 3:
        for stride in range(1, decades.size + 1):
            kept = decades[(np.round(np.log10(decades)) % stride) == 0]
            texts = [scaled_text(v) for v in kept]
            if kept.size <= _MAX_LABELS and _fits(kept, texts, lo, hi, room):
                break
        if kept.size >= 3:
            return TickPlan(kept, minor_all, np.empty(0))
    for subs in _SUBSETS:
        picked = _inside(
            (np.array(subs, dtype=float)[None, :] * 10.0 ** np.arange(k0, k1 + 1)[:, None]).ravel(),
            lo,
            hi,
        )
        labelled = np.sort(np.concatenate([decades, picked]))
        if labelled.size < 3 or labelled.size > _MAX_LABELS:
            continue
        mode = _text_mode(labelled, between=True)
        texts = [plain_number(v) if mode == "plain" else scaled_text(v) for v in labelled]
        if _fits(labelled, texts, lo, hi, room):
            return TickPlan(decades, minor_all, picked, mode=mode)
    return _scaled_plan(lo, hi, room)


def _scaled_plan(lo: float, hi: float, room: Room) -> TickPlan:
    """Evenly spaced round values over one power of ten, for a view of part of a decade."""
    for bins in (7, 5, 4, 3):
        ticks = MaxNLocator(nbins=bins, steps=[1, 2, 2.5, 5, 10], min_n_ticks=3).tick_values(lo, hi)
        ticks = _inside(ticks[ticks > 0], lo, hi)
        if ticks.size < 3:
            continue
        if _text_mode(ticks, between=True) == "plain":
            plan = TickPlan(ticks, np.empty(0), np.empty(0), mode="plain")
        else:
            options = {math.floor(math.log10(ticks.min())), math.floor(math.log10(ticks.max()))}
            plans = [TickPlan(ticks, np.empty(0), np.empty(0), "scaled", e) for e in options]
            plan = min(plans, key=lambda p: sum(len(p.text(v)) for v in ticks))
        if _fits(ticks, [plan.text(v) for v in ticks], lo, hi, room) or bins == 3:
            return plan
    return TickPlan(np.array([lo, hi]), np.empty(0), np.empty(0), mode="power")


def _room(axis: Axis) -> Room:
    """The room of a drawn axis, in display pixels (label widths from the font's outlines)."""
    axes = axis.axes
    box = axes.bbox
    vertical = axis.axis_name == "y"
    size = float(axis.get_major_ticks(1)[0].label1.get_fontsize())
    scale = axes.get_figure(root=True).dpi / 72.0
    prop = FontProperties(size=size)

    def measure(text: str) -> float:
        return 1.05 * scale * text_to_path.get_text_width_height_descent(text, prop, False)[0]

    return Room(box.height if vertical else box.width, size * scale, not vertical, measure)


class _Planned:
    """Shared part of the locator and formatter: the plan of the axis's current view."""

    axis: Axis | None

    def plan(self) -> TickPlan:
        assert self.axis is not None
        lo, hi = self.axis.get_view_interval()
        room = _room(self.axis)
        key = (float(lo), float(hi), round(room.length, 1))
        cached = getattr(self.axis, "_stability_plan", None)
        if cached is not None and cached[0] == key:
            return cached[1]
        plan = plan_log_ticks(lo, hi, room)
        self.axis._stability_plan = (key, plan)  # type: ignore[attr-defined]
        return plan


class LogTicks(_Planned, Locator):
    """Tick positions of a log axis by :func:`plan_log_ticks` (major or minor ticks).

    Parameters
    ----------
    minor
        True for the minor ticks.
    labelled_only
        For the minor ticks: only those that carry a label (the grid between
        decades is then drawn otherwise, as :func:`stability.figures.style.log_paper` does).
    """

    def __init__(self, *, minor: bool = False, labelled_only: bool = False) -> None:
        self.minor = minor
        self.labelled_only = labelled_only

    def __call__(self) -> Sequence[float]:
        plan = self.plan()
        if not self.minor:
            return list(plan.major)
        return list(plan.labelled_minor if self.labelled_only else plan.minor)

    def tick_values(self, vmin: float, vmax: float) -> Sequence[float]:
        return self()


class PowerLabels(_Planned, Formatter):
    """Tick text of a log axis by :func:`plan_log_ticks`: 10⁻¹², 2×10⁻¹², 2, 20, or 9.6 ×10⁻¹².

    Parameters
    ----------
    minor
        True for the formatter of the minor ticks (labelled where the plan says so).
    """

    def __init__(self, *, minor: bool = False) -> None:
        self.minor = minor

    def __call__(self, x: float, pos: int | None = None) -> str:
        if not (x > 0 and math.isfinite(x)) or self.axis is None:
            return ""
        plan = self.plan()
        if self.minor:
            hit = plan.labelled_minor
            if not hit.size or not np.any(np.isclose(hit, x, rtol=1e-9, atol=0.0)):
                return ""
        return plan.text(x)

    def get_offset(self) -> str:
        return "" if self.minor or self.axis is None else self.plan().offset()


class PlainScalar(Formatter):
    """Linear-axis tick labels in plain text, with a common multiplier (×10⁻⁹) and offset.

    The rules are matplotlib's for its scalar labels (common practice):
    values outside 10⁻³ .. 10⁴ are scaled by a power of ten written once at
    the axis end; ticks that share four or more leading digits are written
    relative to that shared part, given as "+3×10⁻⁶" beside the multiplier;
    labels carry as many decimals as tell the ticks apart.
    """

    _POWER_LIMITS = (-3, 4)
    _OFFSET_DIGITS = 4

    def __init__(self) -> None:
        self._ticks = np.empty(0)
        self._order = 0
        self._offset = 0.0
        self._decimals = 1

    def set_locs(self, locs: Sequence[float]) -> None:
        ticks = np.asarray(locs, dtype=float)
        if self.axis is not None:
            low, high = sorted(self.axis.get_view_interval())
            ticks = ticks[(ticks >= low) & (ticks <= high)]
        self._ticks = ticks[np.isfinite(ticks)]
        self._offset = self._common_part()
        self._order = self._power()
        self._decimals = self._places()

    def _common_part(self) -> float:
        """The leading digits every tick shares, when they are at least four digits."""
        if self._ticks.size < 2:
            return 0.0
        low, high = float(self._ticks.min()), float(self._ticks.max())
        if low == high or low <= 0.0 <= high:
            return 0.0
        small, large = sorted((abs(low), abs(high)))
        step = 10.0 ** math.floor(math.log10(large - small))  # first digit that differs
        common = math.copysign((large // (10 * step)) * 10 * step, low)
        shared = math.floor(math.log10(abs(common))) - math.floor(math.log10(step)) if common else 0
        return common if shared >= self._OFFSET_DIGITS else 0.0

    def _power(self) -> int:
        values = np.abs(self._ticks - self._offset)
        top = float(values.max()) if values.size else 0.0
        if top == 0.0:
            return 0
        order = math.floor(math.log10(top))
        return order if not self._POWER_LIMITS[0] < order < self._POWER_LIMITS[1] else 0

    def _places(self) -> int:
        scaled = (self._ticks - self._offset) / 10.0**self._order
        if scaled.size < 2:
            return 1
        spread = float(np.ptp(scaled)) or float(np.max(np.abs(scaled))) or 1.0
        places = max(0, 3 - math.floor(math.log10(spread)))
        tolerance = 1e-3 * 10.0 ** math.floor(math.log10(spread))
        while places > 0 and np.abs(scaled - np.round(scaled, places - 1)).max() < tolerance:
            places -= 1
        return places

    def __call__(self, x: float, pos: int | None = None) -> str:
        value = (x - self._offset) / 10.0**self._order
        return self.fix_minus(f"{value:.{self._decimals}f}")

    def get_offset(self) -> str:
        text = "\u00d7" + power_of_ten(self._order) if self._order else ""
        if self._offset:
            text += ("+" if self._offset > 0 else "\u2212") + scaled_text(abs(self._offset))
        return text
