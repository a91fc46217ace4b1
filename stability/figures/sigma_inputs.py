"""What the sigma-tau plot takes: its inputs checked, and the data it draws.

:func:`stability_series` gives the rows of a results table that a log-log
plot can show; the checks of :func:`stability.figures.stability_figure`'s
arguments (model curves, specification limits and their verdict words, the
statistics whose noise types are written) live here, each with one message
naming the argument, what it must be and what it was.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np

from ..errors import InputError
from ..table import StabilityTable
from .labels import check_text
from .style import VERDICT_COLORS

__all__ = [
    "Series",
    "LimitRow",
    "stability_series",
    "drawable",
    "noise_label_statistics",
    "validate_stability_args",
    "curve_arrays",
]

Series = tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]
LimitRow = tuple[float, float, str]

#: A panel holding more statistics than this labels only its first by default.
AUTO_LABELS = 3


def stability_series(table: StabilityTable) -> dict[str, Series]:
    """What :func:`stability_figure` draws: statistic -> (tau, deviation, ci_low, ci_high).

    Only rows with a finite, positive deviation and tau are drawn on log axes;
    the interval bounds are NaN where the row has none.
    """
    out = {}
    for result in table:
        keep = drawable(result)
        out[result.statistic] = (
            result.tau[keep].copy(),
            result.deviation[keep].copy(),
            result.ci_low[keep].copy(),
            result.ci_high[keep].copy(),
        )
    return out


def drawable(result: Any) -> np.ndarray:
    keep = np.isfinite(result.deviation) & (result.deviation > 0)
    return keep & np.isfinite(result.tau) & (result.tau > 0)


def noise_label_statistics(groups: Sequence[Sequence[str]], asked: Any) -> list[str]:
    """The statistics whose noise types are written: ``asked`` by name, "all", "none", or auto.

    Auto (None): every statistic of a panel holding at most three, else the
    first of the panel.
    """
    every = [n for group in groups for n in group]
    if asked is None:
        return [n for g in groups for n in (g if len(g) <= AUTO_LABELS else g[:1])]
    if isinstance(asked, str):
        word = asked.strip().lower()
        if word == "all":
            return every
        if word == "none":
            return []
        asked = [part for part in word.split(",") if part.strip()]
    try:
        names = [str(n).strip().lower() for n in asked]
    except TypeError:
        raise InputError(
            f"noise_labels must be a list of statistics, all, none or None, "
            f"got {type(asked).__name__}"
        ) from None
    unknown = [n for n in names if n not in every]
    if unknown:
        raise InputError(
            f"noise_labels names {', '.join(unknown)}, not in the table",
            hint=f"use all, none or some of {', '.join(every)}",
        )
    return names


# ---------------------------------------------------------------------- validation
def validate_stability_args(
    table: Any, title: Any, model_curve: Any, limits: Any, limits_statistic: Any, footer: Any
) -> list[LimitRow]:
    """Check the arguments of the sigma-tau plot; the limits as ``(tau_s, max, verdict)`` rows."""
    if not isinstance(table, StabilityTable):
        raise InputError(
            f"table must be a stability.StabilityTable, got {type(table).__name__}",
            hint="build one with stability.analyze",
        )
    if len(table) == 0:
        raise InputError("the table holds no results to plot")
    check_text(title=title, footer=footer)
    if model_curve is not None:
        _validate_model(table, model_curve)
    if limits_statistic is not None and limits_statistic not in table.results:
        raise InputError(
            f"limits_statistic {limits_statistic!r} is not in the table",
            hint=f"use one of {', '.join(table.results)}",
        )
    return [] if limits is None else _limit_rows(limits)


def curve_arrays(what: str, curve: Any) -> tuple[np.ndarray, np.ndarray]:
    try:
        tau, sigma = (np.asarray(c, dtype=float) for c in curve)
    except (TypeError, ValueError):
        raise InputError(f"{what} must be a pair (tau, sigma) of number arrays") from None
    if tau.shape != sigma.shape or tau.ndim != 1:
        raise InputError(
            f"{what}: tau and sigma must be 1-D of one length, "
            f"got shapes {tau.shape} and {sigma.shape}"
        )
    return tau, sigma


def _validate_model(table: StabilityTable, model_curve: Any) -> None:
    if not isinstance(model_curve, Mapping):
        raise InputError(
            "model_curve must map a statistic to (tau, sigma) arrays, "
            f"got {type(model_curve).__name__}"
        )
    for stat, curve in model_curve.items():
        if stat not in table.results:
            raise InputError(
                f"model_curve names {stat!r}, which is not in the table",
                hint=f"use one of {', '.join(table.results)}",
            )
        curve_arrays(f"model_curve[{stat!r}]", curve)


def _limit_rows(limits: Any) -> list[LimitRow]:
    try:
        items = list(limits)
    except TypeError:
        raise InputError(
            f"limits must be a list of (tau_s, max, verdict) rows, got {type(limits).__name__}"
        ) from None
    rows = []
    for i, item in enumerate(items):
        try:
            tau, top, *rest = item
            tau, top = float(tau), float(top)
        except (TypeError, ValueError):
            raise InputError(
                f"limits row {i} must be (tau_s, max, verdict), got {item!r}"
            ) from None
        if len(rest) > 1:
            raise InputError(f"limits row {i} must be (tau_s, max, verdict), got {item!r}")
        if not (tau > 0 and top > 0 and math.isfinite(tau) and math.isfinite(top)):
            raise InputError(
                f"limits row {i}: tau and max must be positive and finite, got {item!r}"
            )
        rows.append((tau, top, _verdict_word(rest[0] if rest else None, i)))
    return rows


def _verdict_word(verdict: Any, row: int) -> str:
    """The verdict word of a limits row: one of the spec layer's words exactly, or None."""
    if verdict is None:
        return "not measured"
    for word in VERDICT_COLORS:  # by equality, so a str-valued verdict member matches its word
        if isinstance(verdict, str) and verdict == word:
            return word
    raise InputError(
        f"unknown verdict {verdict!r} in limits row {row}",
        hint="use pass, fail, inconclusive, not measured or None (not measured)",
    )
