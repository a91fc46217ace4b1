"""Result types: one :class:`StatisticResult` per statistic, gathered in a :class:`StabilityTable`.

The table has one row per (statistic, tau) with the columns, in order, of
:data:`COLUMNS`. Results are complete when built and are not changed afterwards:
a later layer that adds something (the qualification adds noise types, EDF,
bias corrections and intervals) returns a new object. The confidence interval of
every row can be asked again at another level without recomputing the estimates
(:meth:`StatisticResult.interval`).
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from .display import Displayable
from .display import plot as _plot
from .intervals import ConfidenceInterval, chi2_interval

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
    "raw_deviation",
    "bias_factor",
)

#: Power-law exponent alpha of S_y(f) -> the usual label (IEEE 1139; NIST SP 1065).
NOISE_LABELS = {2: "WPM", 1: "FPM", 0: "WFM", -1: "FFM", -2: "RWFM"}


def _floats(values: Any, n: int, fill: float) -> np.ndarray:
    if values is None:
        return np.full(n, fill)
    out = np.asarray(values, dtype=float)
    if out.shape != (n,):
        raise ValueError(f"expected {n} values, got shape {out.shape}")
    return out


def _texts(values: Iterable[str] | None, n: int) -> tuple[str, ...]:
    out = ("",) * n if values is None else tuple(str(v) for v in values)
    if len(out) != n:
        raise ValueError(f"expected {n} labels, got {len(out)}")
    return out


@dataclass(frozen=True)
class StatisticResult:
    """The estimates of one statistic over its taus, with their qualification.

    Arrays all have one entry per tau. ``alpha`` is a float array with NaN
    where no noise type was identified; ``noise`` and ``noise_method`` hold
    empty strings there. ``raw_deviation`` is the estimator's output and
    ``bias_factor`` the factor applied to it, ``deviation = raw_deviation *
    bias_factor`` (1 where no correction applies; for a variance bias B of the
    literature, biased = B x unbiased, the factor is 1/sqrt(B)). An
    unqualified result (from :func:`stability.estimate`) has NaN EDF and
    bounds. Build one with :meth:`build`, which fills the optional columns.
    """

    statistic: str
    tau: np.ndarray
    m: np.ndarray
    n_terms: np.ndarray
    deviation: np.ndarray
    edf: np.ndarray
    alpha: np.ndarray
    noise: tuple[str, ...]
    noise_method: tuple[str, ...]
    ci_low: np.ndarray
    ci_high: np.ndarray
    raw_deviation: np.ndarray
    bias_factor: np.ndarray
    confidence: float = 0.683
    notes: tuple[str, ...] = ()

    @classmethod
    def build(
        cls,
        statistic: str,
        tau: Any,
        m: Any,
        n_terms: Any,
        deviation: Any,
        *,
        edf: Any = None,
        alpha: Any = None,
        noise: Sequence[str] | None = None,
        noise_method: Sequence[str] | None = None,
        ci_low: Any = None,
        ci_high: Any = None,
        raw_deviation: Any = None,
        bias_factor: Any = None,
        confidence: float = 0.683,
        notes: Iterable[str] = (),
    ) -> StatisticResult:
        """A result with every column filled: NaN, empty labels, the deviation as raw, B = 1."""
        tau = np.asarray(tau, dtype=float)
        n = tau.size
        dev = _floats(deviation, n, np.nan)
        return cls(
            statistic=str(statistic),
            tau=tau,
            m=np.asarray(m, dtype=np.int64),
            n_terms=np.asarray(n_terms, dtype=np.int64),
            deviation=dev,
            edf=_floats(edf, n, np.nan),
            alpha=_floats(alpha, n, np.nan),
            noise=_texts(noise, n),
            noise_method=_texts(noise_method, n),
            ci_low=_floats(ci_low, n, np.nan),
            ci_high=_floats(ci_high, n, np.nan),
            raw_deviation=dev.copy() if raw_deviation is None else _floats(raw_deviation, n, 0),
            bias_factor=_floats(bias_factor, n, 1.0),
            confidence=float(confidence),
            notes=tuple(notes),
        )

    def __len__(self) -> int:
        return len(self.tau)

    @property
    def bias_corrected(self) -> bool:
        """Whether any row carries a bias correction (a factor other than 1)."""
        return bool(np.any(self.bias_factor != 1.0))

    def interval(self, confidence: float | None = None) -> ConfidenceInterval:
        """Chi-squared interval of the deviation at ``confidence`` from the stored EDF.

        Rows without an EDF get NaN bounds. With no argument, the stored
        bounds are returned.
        """
        if confidence is None or confidence == self.confidence:
            return ConfidenceInterval(self.ci_low.copy(), self.ci_high.copy())
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
                "raw_deviation": self.raw_deviation,
                "bias_factor": self.bias_factor,
            },
            columns=list(COLUMNS),
        )


@dataclass(frozen=True, repr=False)
class StabilityTable(Displayable):
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
        Further results of the qualification layer, keyed by name:
        ``power_law_model`` (the fitted model or None), ``offset_drift`` (the
        frequency offset and drift with uncertainties) and ``bias_corrected``
        (the statistics that carry a bias correction).
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

    def __repr__(self) -> str:
        source = getattr(getattr(self.measurement, "provenance", None), "path", None)
        return (
            f"StabilityTable({', '.join(self.results) or 'no statistics'}: {len(self)} rows, "
            f"confidence={self.confidence:g}, source={source or 'memory'!r})"
        )

    def plot(self, ax: Any = None, *, figure: Any = None, **options: Any) -> Any:
        """The sigma-tau plot, as ``stability analyze`` draws it in ``sigma_tau.png``.

        Intervals as error bars, the identified noise types, the fitted
        power-law model of the Allan-type statistics and the key of slopes.

        Parameters
        ----------
        ax
            A matplotlib ``Axes`` to draw the data into (a list of two when
            the table holds both fractional-frequency and time statistics,
            which never share an axis); the legend then goes inside the
            panel and the key of slopes is left out. None draws a figure of
            its own (``matplotlib.figure.Figure``, never pyplot).
        figure
            A ``Figure`` or ``SubFigure`` to draw the whole figure into instead.
        options
            Those of :func:`stability.figures.stability_figure` (limits,
            reference, noise_labels, title, footer ...).

        Returns
        -------
        stability.figures.StabilityDrawn
            The figure, its panels (``.axes``) and the data as drawn; it shows
            itself in a notebook.
        """
        return _plot(self, ax=ax, figure=figure, **options)
