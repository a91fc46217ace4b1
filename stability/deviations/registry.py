"""The registry of statistics: identifier -> everything the other layers need to know.

Every statistic the tool offers is one :class:`Statistic` entry, and the entry
is the one place that holds its rules: how to compute it (``func``, or
``derived`` from another statistic), how much data it needs (``min_points``,
``max_m``), its EDF model and bias rule (``edf``, ``bias``, from
:mod:`stability.confidence`), whose noise identification it shares
(``noise_source``), how many phase samples its terms imply
(``points_from_terms``), its labels and unit. Adding a statistic touches its
estimator module and one ``register`` call here.
"""

from __future__ import annotations

import difflib
import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..confidence import (
    ALPHAS,
    GreenhallModel,
    check_row,
    htot_bias,
    htot_edf,
    mtot_bias,
    mtot_edf,
    theo1_bias,
    theo1_edf,
    totvar_bias,
    totvar_edf,
)
from ..errors import InputError
from ..intervals import ConfidenceInterval, chi2_interval
from . import allan, hadamard, parabolic, theo, time_error, total

__all__ = [
    "Statistic",
    "STATISTICS",
    "get_statistic",
    "register",
    "statistic_names",
    "edf_for",
    "edf_many",
    "bias_factor",
]

Estimator = Callable[[np.ndarray, float, int, "np.ndarray | None"], tuple[float, int]]
#: ``model(alpha, m, n) -> edf`` for an identified alpha.
EdfModel = Callable[[int, int, int], float]
#: ``rule(alpha, m, n) -> B`` with corrected variance = raw variance / B.
BiasRule = Callable[[int, int, int], float]


@dataclass(frozen=True)
class Statistic:
    """One statistic of the registry.

    Attributes
    ----------
    name
        Identifier, the trade's abbreviation in lower case (``oadev``).
    title
        Full name for tables and axis labels ("overlapping Allan deviation").
    func
        ``func(x, tau0, m, segments) -> (value, n_terms)`` on phase in seconds.
    min_points
        Fewest phase samples for the smallest averaging factor.
    max_m
        Largest averaging factor for N phase samples.
    family
        ``allan``, ``modified``, ``hadamard``, ``total``, ``time_error``, ...
        (selects the noise-identification rules and the slope guides).
    edf
        EDF model ``edf(alpha, m, n)``; None for statistics without a
        chi-squared model (MTIE, TIE rms): no interval is given.
    bias
        Bias rule ``bias(alpha, m, n) -> B``, or None when unbiased.
    noise_source
        The statistic whose noise identification this one shares (same data and
        m; TDEV shares MDEV's), or None for its own.
    points_from_terms
        ``(terms, m) -> N``: the record length that gives ``terms`` terms (the
        inverse of the estimator's term count), so that with gaps the EDF follows
        the terms actually used; None when N is used as it is.
    derived
        ``(base, transform)``: computed from the base statistic at the same m as
        ``transform(value, m, tau0)`` (TDEV = tau MDEV / sqrt 3), so a run asking
        for both computes the base once.
    unit
        ``""`` for a fractional-frequency deviation, ``"s"`` for time statistics.
    multi
        Optional ``multi(x, tau0, ms, segments)`` computing many m in one sweep.
    tau_factor
        tau = tau_factor * m * tau0 (0.75 for the Theo family, 1 otherwise).
    m_step
        Averaging factors are multiples of this (2 for the Theo family).
    note
        Optional ``note(n, tau0, ms) -> str | None``: a remark on how the
        statistic was computed for these averaging factors.
    estimates
        The quantity the statistic estimates (``AVAR``, ``MVAR``, ``TVAR``,
        ``HVAR``, ``PVAR``, ``MTIE``, ``TIE``): figures of two statistics may be
        compared (a reference's stated stability against a measurement) only
        when they estimate the same quantity.
    unconfirmed
        What of this statistic's EDF or bias model is recalled from the
        literature rather than confirmed against the printed source, or a
        stand-in; empty when everything is confirmed or exact. Every summary
        lists these for the statistics it holds.
    """

    name: str
    title: str
    func: Estimator
    min_points: int
    max_m: Callable[[int], int]
    family: str
    edf: EdfModel | None
    bias: BiasRule | None = None
    noise_source: str | None = None
    points_from_terms: Callable[[int, int], int] | None = None
    derived: tuple[str, Callable[[float, int, float], float]] | None = None
    unit: str = ""
    multi: Callable[..., list[tuple[float, int]]] | None = None
    tau_factor: float = 1.0
    m_step: int = 1
    note: Callable[[int, float, np.ndarray], str | None] | None = None
    estimates: str = "AVAR"
    unconfirmed: str = ""

    @property
    def label(self) -> str:
        """Short label for axes and legends: the identifier in capitals (``OADEV``)."""
        return self.name.upper().replace("_", " ")

    @property
    def has_interval(self) -> bool:
        """Whether a chi-squared interval applies (False for MTIE and TIE rms)."""
        return self.edf is not None

    def allowed_m(self, n_points: int) -> int:
        """Largest averaging factor for ``n_points`` phase samples (0 when none)."""
        if n_points < self.min_points:
            return 0
        return max(0, int(self.max_m(n_points)))

    def row_points(self, m: int, terms: int, n_eff: int) -> int:
        """Record length for the EDF model of one row: never more than the terms support."""
        if self.points_from_terms is None:
            return int(n_eff)
        return int(min(n_eff, self.points_from_terms(int(terms), int(m))))

    def edf_for(self, alpha: Any, m: Any, n: Any) -> float:
        """EDF at averaging factor m for N = n phase samples.

        ``alpha`` is the identified exponent of S_y(f), -2..2, or None (or NaN)
        when the type is not known: then the smallest EDF over the five types is
        used, i.e. the widest interval. The result is at least 1 (empirical
        formulas go below 1 near the end of the record, and a variance estimate
        always has at least one degree of freedom); NaN where no model applies.
        """
        a, m, n = check_row(alpha, m, n)
        if self.edf is None:
            return math.nan
        if a is None:
            return min(self._floored(k, m, n) for k in ALPHAS)
        return self._floored(a, m, n)

    def _floored(self, alpha: int, m: int, n: int) -> float:
        value = self.edf(alpha, m, n)
        if not math.isfinite(value) or value < 1.0:
            return 1.0
        return float(value)

    def interval_over_types(
        self,
        raw_deviation: float,
        alphas: Sequence[int],
        m: int,
        n: int,
        confidence: float,
        edf_points: int | None = None,
    ) -> tuple[ConfidenceInterval, tuple[int, ...]]:
        """The union of the intervals for several plausible noise types.

        A bias correction that depends on the noise type (Theo1's changes by up to
        a factor of 3 between neighbouring types at long tau) moves the corrected
        value more than its chi-squared interval is wide when the type is missed.
        Where the identification is uncertain, the interval is taken over every
        plausible type, each with its own bias correction and EDF; the point
        estimate stays that of the identified type. ``edf_points`` is the record
        length for the EDF model (default ``n``).
        """
        lows, highs = [], []
        for a in alphas:
            dev = float(raw_deviation) / math.sqrt(self.bias_factor(a, m, n))
            edf = self.edf_for(a, m, n if edf_points is None else edf_points)
            low, high = chi2_interval(dev, edf, confidence)
            lows.append(low)
            highs.append(high)
        return ConfidenceInterval(min(lows), max(highs)), tuple(alphas)

    def bias_factor(self, alpha: Any, m: Any, n: Any) -> float:
        """Bias factor B (corrected variance = raw / B); 1 when unbiased or alpha unknown."""
        a, m, n = check_row(alpha, m, n)
        if a is None or self.bias is None:
            return 1.0
        return float(self.bias(a, m, n))


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


def get_statistic(name: Any) -> Statistic:
    """Look a statistic up by identifier; unknown names get an error listing the valid ones."""
    if not isinstance(name, str):
        raise InputError(
            f"statistic must be one of the known identifiers, got {name!r}",
            hint=f"choose from {', '.join(STATISTICS)}",
        )
    key = name.strip().lower()
    try:
        return STATISTICS[key]
    except KeyError:
        close = difflib.get_close_matches(key, STATISTICS, n=1)
        hint = f"did you mean {close[0]!r}? " if close else ""
        raise InputError(
            f"unknown statistic {name!r}",
            hint=f"{hint}choose from {', '.join(STATISTICS)}",
        ) from None


def edf_for(statistic: str, alpha: Any, m: Any, n: Any) -> float:
    """EDF of one statistic at one averaging factor (see :meth:`Statistic.edf_for`)."""
    return get_statistic(statistic).edf_for(alpha, m, n)


def bias_factor(statistic: str, alpha: Any, m: Any, n: Any) -> float:
    """Bias factor B of a statistic (see :meth:`Statistic.bias_factor`)."""
    return get_statistic(statistic).bias_factor(alpha, m, n)


def edf_many(statistic: str, alphas: Any, ms: Any, n: int) -> np.ndarray:
    """:func:`edf_for` over arrays of alphas and averaging factors (broadcast together).

    NaN entries of ``alphas`` mean "not identified".
    """
    stat = get_statistic(statistic)
    check_row(None, 1, n)
    try:
        a = np.asarray(alphas, dtype=float)
        mm = np.asarray(ms)
        a, mm = np.broadcast_arrays(a, mm)
    except (TypeError, ValueError):
        raise InputError(
            "alphas and ms must be numeric arrays of broadcastable shapes, "
            f"got shapes {np.shape(alphas)} and {np.shape(ms)}"
        ) from None
    out = np.empty(a.shape, dtype=float)
    for idx in np.ndindex(a.shape):  # one call per tau
        alpha = None if np.isnan(a[idx]) else a[idx]
        out[idx] = stat.edf_for(alpha, mm[idx].item(), n)
    return out


# Greenhall & Riley's EDF per kind of finite-difference variance (d, modified, overlapping).
_ADEV_EDF = GreenhallModel(2, modified=False, overlapping=False)
_OADEV_EDF = GreenhallModel(2, modified=False, overlapping=True)
_MDEV_EDF = GreenhallModel(2, modified=True, overlapping=True)
_HDEV_EDF = GreenhallModel(3, modified=False, overlapping=False)
_OHDEV_EDF = GreenhallModel(3, modified=False, overlapping=True)


def _tdev_from_mdev(value: float, m: int, tau0: float) -> float:
    """TDEV = tau MDEV / sqrt(3) (ITU-T G.810; NIST SP 1065 eq. 15)."""
    return m * tau0 * value / math.sqrt(3.0)


def _theoh_edf(alpha: int, m: int, n: int) -> float:
    """ThêoH rows computed as OADEV (at 0.75 m) take OADEV's model, the others Theo1's."""
    if theo.theoh_uses_allan(n, 1.0, m):
        return _OADEV_EDF(alpha, (3 * m) // 4, n)
    return theo1_edf(alpha, m, n)


def _theoh_note(n: int, tau0: float, ms: np.ndarray) -> str | None:
    allan_ms = [int(m) for m in ms if theo.theoh_uses_allan(n, tau0, int(m))]
    if not allan_ms:
        return None
    taus = ", ".join(f"{0.75 * m * tau0:g}" for m in allan_ms)
    return f"theoh: the overlapping Allan deviation at tau = {taus} s, TheoBR at the other taus"


def _half(n: int) -> int:
    return (n - 1) // 2


def _third(n: int) -> int:
    return n // 3


def _hadamard_m(n: int) -> int:
    return (n - 1) // 3


def _all_but_one(n: int) -> int:
    return n - 1


# What of a statistic's model is recalled or a stand-in (see Statistic.unconfirmed).
_TOTDEV_RECALLED = (
    "EDF b T/tau - c (WFM, FFM, RWFM) and the FFM/RWFM bias a tau/T recalled from "
    "NIST SP 1065, not checked against the printed tables (T = (N - 1) tau0 assumed);"
    " WPM/FPM models fitted to exact moments"
)
_MTOT_RECALLED = (
    "EDF b T/tau - c for m >= 2 recalled from NIST SP 1065, not checked against the printed table"
)
_HTOT_STAND_IN = "EDF: the overlapping Hadamard EDF stands in (no HTOT model confirmed)"
_THEO1_RECALLED = (
    "EDF formulas and bias coefficients recalled from Howe's papers and NIST SP 1065;"
    " the FPM EDF is a stand-in"
)
_THEOBR_RECALLED = (
    "EDF formulas recalled from Howe's papers and NIST SP 1065; the FPM EDF is a stand-in"
)
_THEOH_RECALLED = (
    "EDF formulas recalled from Howe's papers and NIST SP 1065 beyond the Allan part;"
    " the FPM EDF is a stand-in"
)
_PDEV_STAND_IN = "EDF: the modified Allan EDF stands in (recalled from Vernotte et al. 2016)"


# The record length N that gives ``terms`` terms at averaging factor m (the
# inverse of each estimator's term count).
register(
    Statistic(
        "adev",
        "Allan deviation",
        allan.adev,
        3,
        _half,
        "allan",
        edf=_ADEV_EDF,
        points_from_terms=lambda t, m: (t + 1) * m + 1,
    )
)
register(
    Statistic(
        "oadev",
        "overlapping Allan deviation",
        allan.oadev,
        3,
        _half,
        "allan",
        edf=_OADEV_EDF,
        points_from_terms=lambda t, m: t + 2 * m,
    )
)
register(
    Statistic(
        "mdev",
        "modified Allan deviation",
        allan.mdev,
        3,
        _third,
        "modified",
        edf=_MDEV_EDF,
        points_from_terms=lambda t, m: t + 3 * m - 1,
        estimates="MVAR",
    )
)
register(
    Statistic(
        "tdev",
        "time deviation",
        allan.tdev,
        3,
        _third,
        "modified",
        edf=_MDEV_EDF,
        noise_source="mdev",
        points_from_terms=lambda t, m: t + 3 * m - 1,
        derived=("mdev", _tdev_from_mdev),
        unit="s",
        estimates="TVAR",
    )
)
register(
    Statistic(
        "hdev",
        "Hadamard deviation",
        hadamard.hdev,
        4,
        _hadamard_m,
        "hadamard",
        edf=_HDEV_EDF,
        points_from_terms=lambda t, m: (t + 2) * m + 1,
        estimates="HVAR",
    )
)
register(
    Statistic(
        "ohdev",
        "overlapping Hadamard deviation",
        hadamard.ohdev,
        4,
        _hadamard_m,
        "hadamard",
        edf=_OHDEV_EDF,
        points_from_terms=lambda t, m: t + 3 * m,
        estimates="HVAR",
    )
)
register(
    Statistic(
        "totdev",
        "total deviation",
        total.totdev,
        3,
        _half,
        "total",
        edf=totvar_edf,
        bias=totvar_bias,
        points_from_terms=lambda t, m: t + 2,
        unconfirmed=_TOTDEV_RECALLED,
    )
)
register(
    Statistic(
        "mtie",
        "maximum time interval error",
        time_error.mtie,
        2,
        _all_but_one,
        "time_error",
        edf=None,
        unit="s",
        multi=time_error.mtie_many,
        estimates="MTIE",
    )
)
register(
    Statistic(
        "tie_rms",
        "TIE rms",
        time_error.tie_rms,
        2,
        _all_but_one,
        "time_error",
        edf=None,
        unit="s",
        estimates="TIE",
    )
)
register(
    Statistic(
        "mtot",
        "modified total deviation",
        total.mtot,
        3,
        _third,
        "total_modified",
        edf=mtot_edf,
        bias=mtot_bias,
        estimates="MVAR",
        unconfirmed=_MTOT_RECALLED,
    )
)
register(
    Statistic(
        "ttot",
        "time total deviation",
        total.ttot,
        3,
        _third,
        "total_modified",
        edf=mtot_edf,
        bias=mtot_bias,
        noise_source="mtot",
        unit="s",
        estimates="TVAR",
        unconfirmed=_MTOT_RECALLED,
    )
)
register(
    Statistic(
        "htot",
        "Hadamard total deviation",
        total.htot,
        4,
        _hadamard_m,
        "hadamard_total",
        edf=htot_edf,
        bias=htot_bias,
        estimates="HVAR",
        unconfirmed=_HTOT_STAND_IN,
    )
)
register(
    Statistic(
        "theo1",
        "Theo1 deviation",
        theo.theo1,
        3,
        _all_but_one,
        "theo",
        edf=theo1_edf,
        bias=theo1_bias,
        tau_factor=0.75,
        m_step=2,
        unconfirmed=_THEO1_RECALLED,
    )
)
register(
    Statistic(
        "theobr",
        "bias-removed Theo1 deviation",
        theo.theobr,
        90,
        _all_but_one,
        "theo",
        edf=theo1_edf,
        tau_factor=0.75,
        m_step=2,
        unconfirmed=_THEOBR_RECALLED,
    )
)
register(
    Statistic(
        "theoh",
        "hybrid Theo deviation (overlapping Allan deviation up to 10% of the record, "
        "bias-removed Theo1 beyond)",
        theo.theoh,
        90,
        _all_but_one,
        "theo",
        edf=_theoh_edf,
        tau_factor=0.75,
        m_step=2,
        note=_theoh_note,
        unconfirmed=_THEOH_RECALLED,
    )
)
register(
    Statistic(
        "pdev",
        "parabolic deviation",
        parabolic.pdev,
        3,
        _half,
        "parabolic",
        edf=_MDEV_EDF,
        estimates="PVAR",
        unconfirmed=_PDEV_STAND_IN,
    )
)
