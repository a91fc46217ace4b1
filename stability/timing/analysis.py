"""Time-error analysis of a record: metrics, MTIE and TDEV on a dense grid, a mask verdict.

:func:`analyze_time_error` is the library's entry for timing work::

    meas = stability.read_log("gnss-pps.csv")
    result = analyze_time_error(meas, mask="g8272-prtc-a")
    result.judgement.verdict, result.metrics.max_abs_te

The time error is taken as logged (phase plus the origin the reader kept; for
a frequency log the absolute time error is unknown and the first sample is
zero). A sawtooth correction (:func:`stability.timing.metrics.apply_sawtooth`)
is applied first when given. ``remove_offset`` removes a least-squares
frequency offset before MTIE (TDEV does not see it); every output states
whether it was. MTIE comes with the worst window of each tau (its first sample),
for the figure of the time error.
"""

from __future__ import annotations

import math
import os
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..analysis import WORK_BUDGET, estimate
from ..deviations.registry import get_statistic
from ..deviations.time_error import mtie_windows
from ..display import Displayable
from ..display import plot as _plot
from ..errors import AnalysisError, InputError
from ..ingest import read_log
from ..measurement import Measurement
from ..table import StatisticResult
from ..taus import parse_taus, tau_grid
from .judging import MaskJudgement, judge_mask
from .masks import Mask, load_mask
from .metrics import (
    CTE_WINDOW,
    DTE_BANDWIDTH,
    OffsetRemoval,
    TimeErrorMetrics,
    absolute_time_error,
    apply_sawtooth,
    longest_tau,
    remove_frequency_offset,
    time_error_metrics,
)

__all__ = [
    "MtieCurve",
    "SawtoothEffect",
    "TimeErrorAnalysis",
    "analyze_time_error",
    "read_sawtooth",
]


@dataclass(frozen=True)
class MtieCurve:
    """MTIE over tau with the first sample of each tau's worst window."""

    tau: np.ndarray
    m: np.ndarray
    value: np.ndarray  # seconds
    windows: np.ndarray  # windows used per tau
    start: np.ndarray  # index of the worst window's first sample (-1: none)

    def worst(self, tau: float | None = None) -> tuple[float, int, int] | None:
        """(tau, first sample, m) of the worst window at ``tau`` (the nearest grid tau).

        Without ``tau``: the longest tau up to a tenth of the record, so the
        window is visible on a figure of the whole record. None when no tau has
        a value.
        """
        good = np.flatnonzero(np.isfinite(self.value) & (self.start >= 0))
        if not good.size:
            return None
        if tau is None:
            span = float(self.tau[-1]) if self.tau.size else 0.0
            short = good[self.tau[good] <= span / 10.0]
            i = int(short[-1]) if short.size else int(good[0])
        else:
            i = int(good[np.argmin(np.abs(np.log(self.tau[good] / float(tau))))])
        return float(self.tau[i]), int(self.start[i]), int(self.m[i])


@dataclass(frozen=True)
class SawtoothEffect:
    """What the sawtooth correction changed: short-tau statistics before and after."""

    column: str
    sign: int
    applies_to: str
    tdev_before: float  # TDEV at tau0, seconds
    tdev_after: float
    mtie_before: float  # MTIE at tau0, seconds
    mtie_after: float
    missing: int  # samples left without a correction (now gaps)

    @property
    def tdev_ratio(self) -> float:
        return self.tdev_after / self.tdev_before if self.tdev_before > 0 else math.nan

    def to_dict(self) -> dict[str, Any]:
        def plain(v: float) -> float | None:
            return float(v) if math.isfinite(v) else None

        return {
            "column": self.column,
            "sign": self.sign,
            "applies_to": self.applies_to,
            "convention": (
                "corrected TE = TE "
                f"{'-' if self.sign < 0 else '+'} sawtooth of the "
                + (
                    "previous row (the report for the next pulse)"
                    if self.applies_to == "next"
                    else "same row"
                )
            ),
            "tdev_tau0_before_s": plain(self.tdev_before),
            "tdev_tau0_after_s": plain(self.tdev_after),
            "tdev_ratio": plain(self.tdev_ratio),
            "mtie_tau0_before_s": plain(self.mtie_before),
            "mtie_tau0_after_s": plain(self.mtie_after),
            "uncorrected_samples": self.missing,
        }


@dataclass(frozen=True)
class TimeErrorAnalysis(Displayable):
    """The time-error analysis of one record (complete when built).

    It draws itself (:meth:`plot`: MTIE and TDEV against the mask, as
    ``stability time-error`` draws ``mtie_tdev.png``; ``plot(view="tie")``: the
    TIE over the record) and shows itself in a notebook (metrics, verdict,
    least margins, the caution).
    """

    tau0: float
    te: np.ndarray  # TE as logged (after any sawtooth correction), seconds
    te_used: np.ndarray  # the series MTIE was computed on (offset removed or not)
    metrics: TimeErrorMetrics
    mtie: MtieCurve
    tdev: StatisticResult
    offset: OffsetRemoval | None
    sawtooth: SawtoothEffect | None
    judgement: MaskJudgement | None
    absolute: bool  # whether TE is absolute (phase log) or relative to the first sample
    notes: tuple[str, ...] = field(default_factory=tuple)

    @property
    def span(self) -> float:
        return (self.te.size - 1) * self.tau0

    def plot(
        self, ax: Any = None, *, figure: Any = None, view: str = "plot", **options: Any
    ) -> Any:
        """Draw the MTIE and TDEV figure with the mask, as ``stability time-error`` does.

        ``ax``: one matplotlib ``Axes`` (the MTIE panel) or two (MTIE, then
        TDEV) to draw on; ``figure``: a ``Figure`` or ``SubFigure`` to draw the
        whole figure into; neither: a figure of its own (never pyplot).
        ``view="tie"`` draws the TIE over the record instead, with the worst
        MTIE window shaded (``window_tau=`` picks the tau; ``ax`` one ``Axes``).
        Other options go to :func:`stability.figures.timing.mask_figure` or
        :func:`~stability.figures.timing.tie_figure` (``title``, ``footer``).
        Returns what was drawn (``MaskDrawn`` or ``TieDrawn``).
        """
        return _plot(self, ax=ax, figure=figure, view=view, **options)

    def plot_tie(self, ax: Any = None, *, figure: Any = None, **options: Any) -> Any:
        """The TIE over the record, as ``tie.png``: ``plot(view="tie")``."""
        return _plot(self, ax=ax, figure=figure, view="tie", **options)

    def tdev_judged_to(self) -> float:
        return longest_tau("tdev", self.span)

    def rows(self) -> list[dict[str, Any]]:
        """One row per (statistic, tau): value, count, limit, margin, verdict (for tables).

        ``offset_removed`` says, on the MTIE rows, whether the frequency offset
        was removed first (empty on TDEV rows, which do not see it).
        """
        checks: dict[tuple[str, float], Any] = {}
        if self.judgement is not None:
            checks = {(c.statistic, c.tau): c for c in self.judgement.checks}
        out = []
        series = (
            ("mtie", self.mtie.tau, self.mtie.m, self.mtie.value, self.mtie.windows),
            ("tdev", self.tdev.tau, self.tdev.m, self.tdev.deviation, self.tdev.n_terms),
        )
        for name, taus, ms, values, counts in series:
            for tau, m, value, count in zip(taus, ms, values, counts, strict=True):
                check = checks.get((name, float(tau)))
                out.append(
                    {
                        "statistic": name,
                        "tau_s": float(tau),
                        "m": int(m),
                        "value_s": float(value),
                        "count": int(count),
                        "limit_s": check.limit if check else math.nan,
                        "margin": check.margin if check else math.nan,
                        "verdict": str(check.verdict) if check else "",
                        # MTIE sees a frequency offset, TDEV (second differences) does not
                        "offset_removed": (self.offset is not None) if name == "mtie" else "",
                    }
                )
        return out

    def to_dict(self) -> dict[str, Any]:
        return {
            "tau0_s": self.tau0,
            "samples": int(self.te.size),
            "span_s": self.span,
            "absolute_time_error": self.absolute,
            "offset_removed": self.offset is not None,
            "offset": None
            if self.offset is None
            else {
                "frequency_offset": self.offset.frequency_offset,
                "time_offset_s": self.offset.time_offset,
                "what": self.offset.describe(),
            },
            "metrics": self.metrics.to_dict(),
            "sawtooth": None if self.sawtooth is None else self.sawtooth.to_dict(),
            "tdev_judged_up_to_s": self.tdev_judged_to(),
            "rows": [{k: _plain(v) for k, v in r.items()} for r in self.rows()],
            "judgement": None if self.judgement is None else self.judgement.to_dict(),
            "notes": list(self.notes),
        }


def read_sawtooth(
    log: str | os.PathLike[str],
    column: str,
    read: dict[str, Any],
    measurement: Measurement,
) -> Measurement:
    """The sawtooth column of ``log``, read as time error on the measurement's grid."""
    kwargs = {**read, "column": column, "kind": "phase", "wrap": None}
    saw = read_log(log, **kwargs)
    if saw.n != measurement.n or saw.tau0 != measurement.tau0 or saw.start != measurement.start:
        raise InputError(
            f"the sawtooth column {column!r} does not lie on the time-error column's grid",
            path=str(log),
            hint="name a column of the same log, with a value on the same rows",
        )
    return saw


def _plain(value: Any) -> Any:
    """None for a non-finite float (JSON has no NaN); other values as they are."""
    return None if isinstance(value, float) and not math.isfinite(value) else value


def _grid(taus: Any, max_m: int, tau0: float) -> np.ndarray:
    grid = parse_taus(taus) if isinstance(taus, str) else [float(t) for t in taus]
    return tau_grid(grid, max_m, tau0)


def _sawtooth_effect(
    before: Measurement, after: Measurement, column: str, sign: int, applies_to: str
) -> SawtoothEffect:
    def short(meas: Measurement) -> tuple[float, float]:
        td = estimate(meas, "tdev", [meas.tau0]).deviation
        mt = mtie_windows(meas.phase, [1], meas.segments)[0].value
        return (float(td[0]) if td.size else math.nan), mt

    tb, mb = short(before)
    ta, ma = short(after)
    missing = int(np.isnan(after.phase).sum() - np.isnan(before.phase).sum())
    return SawtoothEffect(column, sign, applies_to, tb, ta, mb, ma, missing)


def analyze_time_error(
    measurement: Measurement,
    *,
    taus: Any = "dense",
    remove_offset: bool = False,
    mask: Mask | str | None = None,
    cte_window: float = CTE_WINDOW,
    bandwidth: float = DTE_BANDWIDTH,
    sawtooth: Measurement | np.ndarray | None = None,
    sawtooth_column: str = "sawtooth",
    sawtooth_sign: int = -1,
    sawtooth_applies_to: str = "next",
) -> TimeErrorAnalysis:
    """Time-error metrics, MTIE and TDEV, and a mask verdict of one record.

    Parameters
    ----------
    measurement
        The record (phase; a frequency log gives time error relative to its start).
    taus
        Tau grid of MTIE and TDEV: ``dense`` (default), ``octave``, ``decade``,
        ``all`` or taus in seconds.
    remove_offset
        Remove the least-squares frequency offset before MTIE.
    mask
        A :class:`Mask`, a bundled mask name or a mask file.
    cte_window, bandwidth
        cTE averaging window (s) and the dTE filter bandwidth (Hz).
    sawtooth
        The receiver's quantisation-error reports, one per sample (seconds):
        a Measurement read from the same log (its absolute values are used)
        or an array; see :func:`~stability.timing.metrics.apply_sawtooth`.
    """
    if not isinstance(measurement, Measurement):
        raise InputError(
            f"measurement must be a stability.Measurement, got {type(measurement).__name__}",
            hint="read one with stability.read_log",
        )
    if isinstance(mask, str):
        mask = load_mask(mask)
    elif mask is not None and not isinstance(mask, Mask):
        raise InputError(f"mask must be a Mask, a bundled name or a file, got {mask!r}")
    notes: list[str] = []
    tau0 = measurement.tau0
    te = absolute_time_error(measurement)
    absolute = measurement.kind == "phase"
    if not absolute:
        notes.append(
            "the log holds frequency: its time error is known only relative to the first "
            "sample, so max|TE| and cTE are relative to it"
        )
    base = measurement.replace(phase=te, origin=0.0, frequency_offset=0.0, kind="phase")
    effect = None
    if sawtooth is not None:
        q = sawtooth.phase + sawtooth.origin if isinstance(sawtooth, Measurement) else sawtooth
        te = apply_sawtooth(te, q, sign=sawtooth_sign, applies_to=sawtooth_applies_to)
        corrected = base.replace(phase=te, origin=0.0)
        effect = _sawtooth_effect(
            base, corrected, sawtooth_column, sawtooth_sign, sawtooth_applies_to
        )
        base = corrected
        notes.append(
            f"sawtooth correction from column {sawtooth_column!r} applied before every statistic"
        )
    te_used, offset = te, None
    if remove_offset:
        te_used, offset = remove_frequency_offset(te, tau0)
        notes.append(offset.describe())
    else:
        notes.append("frequency offset not removed before MTIE (--remove-offset to remove it)")
    metrics = time_error_metrics(te, tau0, cte_window=cte_window, bandwidth=bandwidth)
    n = te.size
    ms = _grid(taus, get_statistic("mtie").allowed_m(n), tau0)
    if float(ms.size) * n > WORK_BUDGET:
        raise AnalysisError(
            f"{taus} asks for {ms.size} MTIE windows on {n} samples, about "
            f"{float(ms.size) * n:.1e} sample-steps (hours of computing)",
            hint="use --taus dense (the default), decade or octave",
        )
    windows = mtie_windows(te_used, ms, measurement.segments)
    mtie = MtieCurve(
        tau=ms * tau0,
        m=ms,
        value=np.array([w.value for w in windows]),
        windows=np.array([w.windows for w in windows], dtype=np.int64),
        start=np.array([w.start for w in windows], dtype=np.int64),
    )
    tdev_ms = _grid(taus, get_statistic("tdev").allowed_m(n), tau0)
    tdev = estimate(base, "tdev", list(tdev_ms * tau0)) if tdev_ms.size else None
    if tdev is None:
        tdev = StatisticResult.build("tdev", [], [], [], [])
    judgement = None
    if mask is not None:
        judgement = judge_mask(
            mask,
            span=(n - 1) * tau0,
            mtie=(mtie.tau, mtie.value),
            tdev=(tdev.tau, tdev.deviation),
            max_abs_te=metrics.max_abs_te if absolute else None,
        )
    return TimeErrorAnalysis(
        tau0=tau0,
        te=te,
        te_used=te_used,
        metrics=metrics,
        mtie=mtie,
        tdev=tdev,
        offset=offset,
        sawtooth=effect,
        judgement=judgement,
        absolute=absolute,
        notes=tuple(notes),
    )
