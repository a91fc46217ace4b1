"""The registry of statistics: identifier -> estimator and what it needs.

Every statistic the tool offers is one :class:`Statistic` entry. The entry
says how to compute it (``func``), how much data it needs (``min_points``),
the largest averaging factor allowed for N phase samples (``max_m``), and
what the confidence machinery needs to know (``family``, ``edf_model``).
"""

from __future__ import annotations

import difflib
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from . import allan, hadamard, parabolic, theo, time_error, total

__all__ = ["Statistic", "STATISTICS", "get_statistic", "register", "statistic_names"]

Estimator = Callable[[np.ndarray, float, int, "np.ndarray | None"], tuple[float, int]]


@dataclass(frozen=True)
class Statistic:
    """One statistic of the registry.

    Attributes
    ----------
    name
        Identifier, the trade's abbreviation in lower case (``oadev``).
    title
        Full name for plot axes and tables.
    func
        ``func(x, tau0, m, segments) -> (value, n_terms)`` on phase in seconds.
    min_points
        Fewest phase samples for the smallest averaging factor.
    max_m
        Largest averaging factor for N phase samples.
    family
        ``allan``, ``modified``, ``hadamard``, ``total``, ``time_error``, ...
        (selects the EDF model and the noise-identification rules).
    overlapping
        Whether the estimator uses every possible term (S = m in Greenhall's
        EDF algorithm) or non-overlapping terms (S = 1).
    unit
        ``""`` for a fractional-frequency deviation, ``"s"`` for time statistics.
    multi
        Optional ``multi(x, tau0, ms, segments)`` computing many m in one sweep.
    tau_factor
        tau = tau_factor * m * tau0 (0.75 for Theo1, 1 otherwise).
    """

    name: str
    title: str
    func: Estimator
    min_points: int
    max_m: Callable[[int], int]
    family: str
    overlapping: bool = True
    unit: str = ""
    multi: Callable[..., list[tuple[float, int]]] | None = None
    tau_factor: float = 1.0
    m_step: int = 1

    def allowed_m(self, n_points: int) -> int:
        """Largest averaging factor for ``n_points`` phase samples (0 when none)."""
        if n_points < self.min_points:
            return 0
        return max(0, int(self.max_m(n_points)))


STATISTICS: dict[str, Statistic] = {}


def register(stat: Statistic) -> Statistic:
    """Add a statistic to the registry (its name must be new)."""
    if stat.name in STATISTICS:
        raise ValueError(f"statistic {stat.name!r} is registered already")
    STATISTICS[stat.name] = stat
    return stat


def statistic_names() -> list[str]:
    """The identifiers of every registered statistic, in registry order."""
    return list(STATISTICS)


def get_statistic(name: str) -> Statistic:
    """Look a statistic up by identifier; unknown names get an error listing the valid ones."""
    key = str(name).strip().lower()
    try:
        return STATISTICS[key]
    except KeyError:
        close = difflib.get_close_matches(key, STATISTICS, n=1)
        hint = f"did you mean {close[0]!r}? " if close else ""
        raise InputError(
            f"unknown statistic {name!r}",
            hint=f"{hint}choose from {', '.join(STATISTICS)}",
        ) from None


register(
    Statistic(
        "adev", "Allan deviation", allan.adev, 3, lambda n: (n - 1) // 2, "allan", overlapping=False
    )
)
register(
    Statistic(
        "oadev", "overlapping Allan deviation", allan.oadev, 3, lambda n: (n - 1) // 2, "allan"
    )
)
register(Statistic("mdev", "modified Allan deviation", allan.mdev, 3, lambda n: n // 3, "modified"))
register(Statistic("tdev", "time deviation", allan.tdev, 3, lambda n: n // 3, "modified", unit="s"))
register(
    Statistic(
        "hdev",
        "Hadamard deviation",
        hadamard.hdev,
        4,
        lambda n: (n - 1) // 3,
        "hadamard",
        overlapping=False,
    )
)
register(
    Statistic(
        "ohdev",
        "overlapping Hadamard deviation",
        hadamard.ohdev,
        4,
        lambda n: (n - 1) // 3,
        "hadamard",
    )
)
register(Statistic("totdev", "total deviation", total.totdev, 3, lambda n: (n - 1) // 2, "total"))
register(
    Statistic(
        "mtie",
        "maximum time interval error",
        time_error.mtie,
        2,
        lambda n: n - 1,
        "time_error",
        unit="s",
        multi=time_error.mtie_many,
    )
)
register(
    Statistic("tie_rms", "TIE rms", time_error.tie_rms, 2, lambda n: n - 1, "time_error", unit="s")
)
register(
    Statistic("mtot", "modified total deviation", total.mtot, 3, lambda n: n // 3, "total_modified")
)
register(
    Statistic(
        "ttot", "time total deviation", total.ttot, 3, lambda n: n // 3, "total_modified", unit="s"
    )
)
register(
    Statistic(
        "htot", "Hadamard total deviation", total.htot, 4, lambda n: (n - 1) // 3, "hadamard_total"
    )
)
register(
    Statistic(
        "theo1",
        "Theo1 deviation",
        theo.theo1,
        3,
        lambda n: n - 1,
        "theo",
        tau_factor=0.75,
        m_step=2,
    )
)
register(
    Statistic(
        "theobr",
        "bias-removed Theo1 deviation",
        theo.theobr,
        90,
        lambda n: n - 1,
        "theo",
        tau_factor=0.75,
        m_step=2,
    )
)
register(
    Statistic(
        "theoh",
        "hybrid Theo deviation (overlapping Allan deviation up to 10% of the record, "
        "bias-removed Theo1 beyond)",
        theo.theoh,
        90,
        lambda n: n - 1,
        "theo",
        tau_factor=0.75,
        m_step=2,
    )
)
register(
    Statistic("pdev", "parabolic deviation", parabolic.pdev, 3, lambda n: (n - 1) // 2, "parabolic")
)
