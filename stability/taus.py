"""Tau grids: which averaging factors m (tau = m * tau0) a table reports.

``octave``  m = 1, 2, 4, 8, ...
``decade``  m = 1, 2, 5, 10, 20, 50, ... (the 1-2-5 sequence)
``dense``   about 20 log-spaced m per decade (1, 2, 3, ..., 11, 13, 14, 16, ...): the
            grid of time-error work, where a mask is judged between octaves
``all``     every m from 1 up
a list      explicit taus in seconds, each a whole multiple of tau0

Every grid is capped at the largest m the statistic allows for the record.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Sequence

import numpy as np

from .errors import InputError
from .units import parse_duration

__all__ = ["GRIDS", "MAX_FACTOR", "tau_grid", "parse_taus"]

GRIDS = ("octave", "decade", "dense", "all")

#: Averaging factors per decade of the ``dense`` grid.
DENSE_PER_DECADE = 20

#: Relative tolerance for "a whole multiple of tau0".
_MULTIPLE_RTOL = 1e-6

#: Largest averaging factor any grid may ask for (far beyond any record; keeps
#: the factors inside int64).
MAX_FACTOR = 2**53


def parse_taus(spec: str | Sequence[float]) -> str | list[float]:
    """Turn a command-line tau specification into a grid name or a list of seconds."""
    if not isinstance(spec, str):
        return [float(t) for t in spec]
    text = spec.strip().lower()
    if text in GRIDS:
        return text
    out = []
    for part in text.split(","):
        part = part.strip()
        if not part:
            continue
        out.append(parse_duration(part, what="tau"))
    if not out:
        raise InputError(
            f"no taus in {spec!r}", hint="use octave, decade, dense, all or a list such as 1,10,100"
        )
    return out


def _multiples(taus: Iterable[float], tau0: float) -> list[int]:
    ms = []
    for tau in taus:
        if not math.isfinite(tau) or tau <= 0:
            raise InputError(f"tau must be a positive number of seconds, got {tau!r}")
        ratio = tau / tau0
        if not math.isfinite(ratio) or ratio > MAX_FACTOR:
            raise InputError(
                f"tau {tau:g} s is far longer than any record at tau0 {tau0:g} s",
                hint="choose taus up to the record length, or use --taus octave",
            )
        m = round(ratio)
        if m < 1 or abs(ratio - m) > _MULTIPLE_RTOL * max(1.0, ratio):
            raise InputError(
                f"tau {tau:g} s is not a whole multiple of the sample interval {tau0:g} s",
                hint="choose taus that are multiples of tau0, or use --taus octave",
            )
        ms.append(int(m))
    return ms


def tau_grid(
    grid: str | Sequence[float],
    max_m: int,
    tau0: float = 1.0,
    *,
    step: int = 1,
) -> np.ndarray:
    """Averaging factors of a grid, capped at ``max_m`` (int64 array, ascending, unique).

    Parameters
    ----------
    grid
        ``"octave"``, ``"decade"``, ``"dense"``, ``"all"`` or a sequence of taus in seconds.
    max_m
        Largest averaging factor allowed (from the statistic and N).
    tau0
        Sample interval in seconds (for explicit taus).
    step
        Only multiples of ``step`` are kept (Theo1 needs even m).
    """
    if max_m < 1:
        return np.zeros(0, dtype=np.int64)
    if isinstance(grid, str):
        name = grid.strip().lower()
        if name == "octave":
            ms = 2 ** np.arange(int(math.log2(max_m)) + 1)
        elif name == "decade":
            decades = 10 ** np.arange(int(math.log10(max_m)) + 1)
            ms = (decades[:, None] * np.array([1, 2, 5])).ravel()
        elif name == "dense":
            top = math.log10(max_m)
            steps = np.arange(int(math.floor(top * DENSE_PER_DECADE)) + 1) / DENSE_PER_DECADE
            ms = np.unique(np.round(10.0**steps).astype(np.int64))
            ms = np.append(ms, max_m)  # the longest window the record allows
        elif name == "all":
            ms = np.arange(1, max_m + 1)
        else:
            raise InputError(
                f"unknown tau grid {grid!r}",
                hint="choose octave, decade, dense, all or a list of taus in seconds",
            )
        ms = np.asarray(ms, dtype=np.int64)
        if step > 1:
            ms = ms * step if name != "all" else ms[ms % step == 0]
    else:
        ms = np.asarray(_multiples(grid, tau0), dtype=np.int64)
        if step > 1:
            ms = ms[ms % step == 0]
    ms = ms[(ms >= 1) & (ms <= max_m)]
    return np.unique(ms)
