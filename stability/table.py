"""Result types: one :class:`StatisticResult` per statistic, gathered in a :class:`StabilityTable`.

The table has one row per (statistic, tau) with the columns, in order, of
:data:`COLUMNS`. The confidence interval of every row can be asked again at
another level without recomputing the estimates (:meth:`StatisticResult.interval`).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, NamedTuple

import numpy as np
import pandas as pd

__all__ = ["COLUMNS", "NOISE_LABELS", "ConfidenceInterval", "StatisticResult", "StabilityTable"]

#: Results-table columns, in this order.
COLUMNS = (
    "statistic",
    "tau_s",
    "m",
    "n_terms",
    "deviation",
    "ci_low",
    "ci_high",
    "edf",
    "alpha",
    "noise",
    "noise_method",
)

#: Power-law exponent alpha of S_y(f) -> the usual label (IEEE 1139; NIST SP 1065).
NOISE_LABELS = {2: "WPM", 1: "FPM", 0: "WFM", -1: "FFM", -2: "RWFM"}


class ConfidenceInterval(NamedTuple):
    """Lower and upper bounds of a confidence interval (arrays or floats)."""

    low: Any
    high: Any


def _nan(n: int) -> np.ndarray:
    return np.full(n, np.nan)


@dataclass
class StatisticResult:
    """The estimates of one statistic over its taus, with their qualification.

    Arrays all have one entry per tau. ``alpha`` is a float array with NaN
    where no noise type was identified; ``noise`` and ``noise_method`` hold
    empty strings there.
    """

    statistic: str
    tau: np.ndarray
    m: np.ndarray
    n_terms: np.ndarray
    deviation: np.ndarray
    edf: np.ndarray = None  # type: ignore[assignment]
    alpha: np.ndarray = None  # type: ignore[assignment]
    noise: list[str] = None  # type: ignore[assignment]
    noise_method: list[str] = None  # type: ignore[assignment]
    ci_low: np.ndarray = None  # type: ignore[assignment]
    ci_high: np.ndarray = None  # type: ignore[assignment]
    confidence: float = 0.683
    bias_corrected: bool = False
    raw_deviation: np.ndarray | None = None
    notes: list[str] = field(default_factory=list)

    def __post_init__(self) -> None:
        n = len(self.tau)
        self.tau = np.asarray(self.tau, dtype=float)
        self.m = np.asarray(self.m, dtype=np.int64)
        self.n_terms = np.asarray(self.n_terms, dtype=np.int64)
        self.deviation = np.asarray(self.deviation, dtype=float)
        for name in ("edf", "alpha", "ci_low", "ci_high"):
            value = getattr(self, name)
            setattr(self, name, _nan(n) if value is None else np.asarray(value, dtype=float))
        if self.noise is None:
            self.noise = [""] * n
        if self.noise_method is None:
            self.noise_method = [""] * n

    def __len__(self) -> int:
        return len(self.tau)

    def interval(self, confidence: float | None = None) -> ConfidenceInterval:
        """Chi-squared interval of the deviation at ``confidence`` from the stored EDF.

        Rows without an EDF get NaN bounds. With no argument, the stored
        bounds are returned.
        """
        if confidence is None or confidence == self.confidence:
            return ConfidenceInterval(self.ci_low.copy(), self.ci_high.copy())
        from .confidence import chi2_interval

        return chi2_interval(self.deviation, self.edf, confidence)

    def to_frame(self) -> pd.DataFrame:
        """The rows of this statistic with the columns of :data:`COLUMNS`."""
        alpha = pd.array([None if np.isnan(a) else int(a) for a in self.alpha], dtype="Int64")
        return pd.DataFrame(
            {
                "statistic": [self.statistic] * len(self),
                "tau_s": self.tau,
                "m": self.m,
                "n_terms": self.n_terms,
                "deviation": self.deviation,
                "ci_low": self.ci_low,
                "ci_high": self.ci_high,
                "edf": self.edf,
                "alpha": alpha,
                "noise": list(self.noise),
                "noise_method": list(self.noise_method),
            },
            columns=list(COLUMNS),
        )


@dataclass
class StabilityTable:
    """All statistics of one analysis, with what produced them.

    Attributes
    ----------
    results
        Statistic identifier -> :class:`StatisticResult`, in the order asked.
    confidence
        Two-sided confidence level of the stored intervals.
    settings
        The analysis settings (statistics, tau grid, confidence, ...).
    measurement
        The measurement that was analysed.
    extras
        Further results of the qualification layer (offset and drift, the
        power-law model), keyed by name.
    """

    results: dict[str, StatisticResult]
    confidence: float
    settings: dict[str, Any] = field(default_factory=dict)
    measurement: Any = None
    extras: dict[str, Any] = field(default_factory=dict)

    def __getitem__(self, name: str) -> StatisticResult:
        return self.results[name]

    def __iter__(self):
        return iter(self.results.values())

    def __len__(self) -> int:
        return sum(len(r) for r in self.results.values())

    @property
    def statistics(self) -> list[str]:
        return list(self.results)

    def to_frame(self) -> pd.DataFrame:
        """One row per (statistic, tau) with the columns of :data:`COLUMNS`."""
        frames = [r.to_frame() for r in self.results.values() if len(r)]
        if not frames:
            return pd.DataFrame(columns=list(COLUMNS))
        return pd.concat(frames, ignore_index=True)
