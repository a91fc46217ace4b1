"""Three-cornered hat: the stability of each oscillator from measurements of pairs.

Each pair measurement (A, B) holds A - B. For independent oscillators the
variance of a difference is the sum of the two variances, for every member of
the Allan family (the statistics are quadratic forms of linear filters of the
phase), so with sigma_AB^2 the variance measured on pair (A, B) (reference 1)::

    sigma_A^2 = (sigma_AB^2 + sigma_CA^2 - sigma_BC^2) / 2      and cyclically.

With four or more oscillators and enough pairs, the system
sigma_ij^2 = s_i^2 + s_j^2 (one equation per pair) is solved by least squares
(reference 2, section 9.2); the solution is a fixed linear combination
s_i^2 = sum_k c_ik v_k of the pair variances v_k and reduces to the closed
form above (c = +-1/2) for three oscillators.

Intervals. Every pair curve is qualified as a single measurement would be:
noise type identified, equivalent degrees of freedom nu_k from
:mod:`stability.confidence` (Greenhall's algorithm). The pair estimates share
oscillators and are correlated; the variance of the combination follows
from the pair EDFs with those correlations (Isserlis' theorem, reference 4),
and :mod:`stability.hat_intervals` gives the details.

Resolution. When an oscillator is much better than the others, or the record
is short, the combination is dominated by the scatter of the other
oscillators' estimates and can even come out negative (reference 1). The
scatter that the estimate of a noiseless oscillator would have is the
resolution of the hat at that tau. An estimate above three times the
resolution (a little more with few degrees of freedom, see
:mod:`stability.hat_intervals`) is reported with ``status = "ok"`` and the
chi-squared interval with the equivalent degrees of freedom of the
combination (Satterthwaite, reference 3). Any other estimate is reported
with ``status = "below resolution"``, ``deviation`` NaN, and an upper bound
from the normal distribution of the difference of the pair estimates (the
interval is [0, upper bound]), never from a chi-squared law with a fraction
of a degree of freedom, whose lower bound collapses onto the estimate.

Cap. No oscillator is noisier than a difference it takes part in, so every
upper bound (``ci_high`` of an ``ok`` point, and the bound of a point below
resolution) is capped at the smallest upper interval bound of the pairs that
contain the oscillator (their deviation when they have no interval). For
points with status ``"ok"``, ``upper_bound`` repeats ``ci_high``.

Alignment. Pair logs are aligned in time before the statistics
(:func:`align`): with time stamps, sample k of a log is at start + k tau0;
every log must share tau0 and a common sample grid, and all are trimmed to
the common span. Without time stamps the logs must have equal lengths and
are taken as simultaneous.

References
----------
1. J. E. Gray, D. W. Allan, "A method for estimating the frequency stability
   of an individual oscillator", Proc. 28th Annual Symposium on Frequency
   Control (1974), pp. 243-246.
2. W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065
   (2008), section 9.2 (three-cornered hat).
3. F. E. Satterthwaite, "An approximate distribution of estimates of variance
   components", Biometrics Bulletin 2(6), 110-114 (1946).
4. L. Isserlis, "On a formula for the product-moment coefficient of any
   order of a normal frequency distribution in any number of variables",
   Biometrika 12, 134-139 (1918).
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from datetime import timedelta
from typing import Any

import numpy as np
import pandas as pd

from .analysis import estimate
from .deviations.registry import get_statistic
from .display import Displayable
from .display import plot as _plot
from .errors import AnalysisError, InputError
from .hat_intervals import difference_matrix, hat_intervals
from .intervals import check_confidence
from .measurement import Measurement
from .qualify import qualify_result
from .table import StatisticResult

__all__ = [
    "STATUS_OK",
    "STATUS_BELOW",
    "OscillatorStability",
    "HatResult",
    "align",
    "hat_coefficients",
    "hat_variances",
    "separate",
]

STATUS_OK = "ok"
STATUS_BELOW = "below resolution"

#: Relative tolerance on equal tau0 and on whole-sample time offsets.
_TAU0_RTOL = 1e-9
_GRID_TOL = 1e-3  # of a sample interval

Pair = tuple[str, str]


# ---------------------------------------------------------------------------- validation
def _validate_pairs(pairs: Any) -> tuple[dict[Pair, Measurement], list[str]]:
    if not isinstance(pairs, Mapping) or not pairs:
        raise InputError(
            "pairs must be a non-empty mapping (A, B) -> Measurement of A - B",
            hint="for example {('A', 'B'): m_ab, ('B', 'C'): m_bc, ('C', 'A'): m_ca}",
        )
    out: dict[Pair, Measurement] = {}
    names: list[str] = []
    seen: set[frozenset[str]] = set()
    for key, value in pairs.items():
        if not (isinstance(key, tuple) and len(key) == 2 and all(isinstance(k, str) for k in key)):
            raise InputError(f"pairs: each key must be a tuple of two names, got {key!r}")
        a, b = key
        if a == b:
            raise InputError(f"pairs: an oscillator cannot be paired with itself, got {key!r}")
        if frozenset(key) in seen:
            raise InputError(
                f"pairs: the pair {a}, {b} is given twice",
                hint="give each pair once; (A, B) and (B, A) have the same variance",
            )
        seen.add(frozenset(key))
        if not isinstance(value, Measurement):
            raise InputError(
                f"pairs[{key!r}] must be a stability.Measurement, got {type(value).__name__}",
                hint="build one with Measurement.from_phase or Measurement.from_frequency",
            )
        out[(a, b)] = value
        for name in key:
            if name not in names:
                names.append(name)
    return out, names


def _validate_separate(
    pairs: Any, stat: Any, confidence: Any
) -> tuple[dict[Pair, Measurement], list[str], Any, float]:
    checked, names = _validate_pairs(pairs)
    if len(names) < 3:
        raise InputError(
            f"pairs name {len(names)} oscillators; the hat needs at least 3",
            hint="measure three oscillators against each other: (A, B), (B, C), (C, A)",
        )
    statistic = get_statistic(stat)
    if statistic.name == "mtie":
        raise InputError(
            "stat 'mtie' is a maximum, not a variance, and does not separate",
            hint="choose a variance-based statistic such as oadev, mdev or hdev",
        )
    return checked, names, statistic, check_confidence(confidence)


# ---------------------------------------------------------------------------- alignment
def _label(pair: Pair) -> str:
    return f"{pair[0]}-{pair[1]}"


def _trim(meas: Measurement, lo: int, hi: int) -> Measurement:
    """Phase samples [lo, hi) of a measurement, with its segments, lines and start."""
    if lo == 0 and hi == meas.n:
        return meas
    segments = None if meas.segments is None else meas.segments[lo:hi]
    lines = None
    if meas.lines is not None:
        size = hi - lo if meas.lines.size == meas.n else hi - lo - 1
        lines = meas.lines[lo : lo + size] if meas.lines.size >= lo + size else None
    start = None if meas.start is None else meas.start + timedelta(seconds=lo * meas.tau0)
    trimmed = meas.replace(phase=meas.phase[lo:hi], segments=segments, lines=lines, start=start)
    trimmed.notes.append(
        f"trimmed to phase samples {lo}..{hi - 1} of {meas.n} (common span of the pair logs)"
    )
    return trimmed


def align(pairs: Mapping[Pair, Measurement]) -> dict[Pair, Measurement]:
    """Align pair measurements in time and trim them to their common span.

    Parameters
    ----------
    pairs
        (A, B) -> Measurement of A - B.

    Returns
    -------
    dict
        The same keys, each measurement trimmed to the common span (the
        measurement itself when nothing had to be cut). All have equal length.

    Raises
    ------
    InputError
        When the sample intervals differ, the sample grids are offset by a
        fraction of tau0, some logs have time stamps and others do not, or
        logs without time stamps differ in length.
    AnalysisError
        When the logs overlap by fewer than 3 samples.
    """
    checked, _ = _validate_pairs(pairs)
    keys = list(checked)
    first = checked[keys[0]]
    tau0 = first.tau0
    for key in keys[1:]:
        other = checked[key].tau0
        if abs(other - tau0) > _TAU0_RTOL * tau0:
            raise InputError(
                f"pair {_label(key)} has tau0 {other:g} s but pair {_label(keys[0])} "
                f"has {tau0:g} s; the hat needs one sample interval",
                hint="decimate the faster logs to a common tau0 first",
            )
    starts = [checked[k].start for k in keys]
    if all(s is None for s in starts):
        lengths = {checked[k].n for k in keys}
        if len(lengths) > 1:
            detail = ", ".join(f"{_label(k)}: {checked[k].n}" for k in keys)
            raise InputError(
                f"pair logs without time stamps must have equal lengths ({detail})",
                hint="give the logs time stamps (start) or trim them to the same samples",
            )
        return dict(checked)
    if any(s is None for s in starts):
        missing = [_label(k) for k, s in zip(keys, starts, strict=True) if s is None]
        raise InputError(
            f"pair logs {', '.join(missing)} have no start time while others do",
            hint="give every pair log a start time, or none",
        )
    try:
        earliest = min(starts)
        offsets = np.array([(s - earliest).total_seconds() / tau0 for s in starts])
    except TypeError:
        aware = [_label(k) for k, s in zip(keys, starts, strict=True) if s.tzinfo is not None]
        naive = [_label(k) for k, s in zip(keys, starts, strict=True) if s.tzinfo is None]
        raise InputError(
            f"pair start times mix time-zone-aware ({', '.join(aware)}) and naive "
            f"({', '.join(naive)}) times",
            hint="give every log's time stamps a time zone, or none",
        ) from None
    pos = np.rint(offsets).astype(np.int64)
    off_grid = np.abs(offsets - pos) > _GRID_TOL
    if off_grid.any():
        k = int(np.flatnonzero(off_grid)[0])
        raise InputError(
            f"pair {_label(keys[k])} is sampled {offsets[k] - pos[k]:+.3g} sample intervals "
            "off the common grid",
            hint="resample the logs onto common time stamps",
        )
    lengths = np.array([checked[k].n for k in keys])
    lo = int(pos.max())
    hi = int((pos + lengths).min())
    if hi - lo < 3:
        raise AnalysisError(
            f"the pair logs overlap for {max(hi - lo, 0)} sample(s); at least 3 are needed",
            hint="check the start times of the logs",
        )
    return {k: _trim(checked[k], lo - int(p), hi - int(p)) for k, p in zip(keys, pos, strict=True)}


# ---------------------------------------------------------------------------- the solution
def hat_coefficients(pairs: Sequence[Pair], names: Sequence[str] | None = None) -> np.ndarray:
    """Coefficients c_ik with s_i^2 = sum_k c_ik v_k (least squares of v_ij = s_i^2 + s_j^2).

    Parameters
    ----------
    pairs
        The pairs, in the order of the pair variances v_k.
    names
        Oscillator order of the rows (default: order of first appearance).

    Returns
    -------
    numpy.ndarray
        Shape (oscillators, pairs). For three oscillators the entries are +-1/2
        (Gray & Allan 1974).

    Raises
    ------
    AnalysisError
        When the pairs do not determine every oscillator (the design matrix
        is rank-deficient, e.g. a missing side of a triangle).
    """
    pairs = [tuple(p) for p in pairs]
    if names is None:
        names = list(dict.fromkeys(n for p in pairs for n in p))
    index = {n: i for i, n in enumerate(names)}
    design = np.zeros((len(pairs), len(names)))
    for k, (a, b) in enumerate(pairs):
        design[k, index[a]] = 1.0
        design[k, index[b]] = 1.0
    if np.linalg.matrix_rank(design) < len(names):
        raise AnalysisError(
            f"the pairs {', '.join(_label(p) for p in pairs)} do not determine each of "
            f"{', '.join(names)}",
            hint="measure every oscillator in a closed triangle of pairs",
        )
    coefs, *_ = np.linalg.lstsq(design, np.eye(len(pairs)), rcond=None)
    return coefs


def hat_variances(pair_variances: Mapping[Pair, Any]) -> dict[str, np.ndarray]:
    """Individual variance estimates from pair variances (may be negative).

    Parameters
    ----------
    pair_variances
        (A, B) -> variance of A - B (a number or an array over tau).

    Returns
    -------
    dict
        Oscillator name -> least-squares variance estimate (numpy.linalg.lstsq);
        the closed form of Gray & Allan for three oscillators.
    """
    keys = list(pair_variances)
    names = list(dict.fromkeys(n for p in keys for n in p))
    values = np.array([np.asarray(pair_variances[k], dtype=float) for k in keys])
    coefs = hat_coefficients(keys, names)
    solved = np.tensordot(coefs, values, axes=(1, 0))
    return {n: solved[i] for i, n in enumerate(names)}


# ---------------------------------------------------------------------------- results
@dataclass
class OscillatorStability:
    """The separated stability of one oscillator.

    Arrays have one entry per tau. ``variance`` is the signed estimate of
    the oscillator's variance (it can be negative below resolution);
    ``deviation`` its square root, NaN only where ``status`` is
    ``"below resolution"``, in which case ``upper_bound`` holds the bound
    described in the module docstring and the interval is
    [0, ``upper_bound``]. ``resolution`` is the standard deviation a
    noiseless oscillator's variance estimate would have at that tau (a
    variance); ``edf`` is NaN below resolution.
    """

    name: str
    statistic: str
    tau: np.ndarray
    m: np.ndarray
    variance: np.ndarray
    deviation: np.ndarray
    ci_low: np.ndarray
    ci_high: np.ndarray
    edf: np.ndarray
    status: list[str]
    upper_bound: np.ndarray
    resolution: np.ndarray

    def to_frame(self) -> pd.DataFrame:
        """One row per tau."""
        return pd.DataFrame(
            {
                "oscillator": [self.name] * len(self.tau),
                "statistic": [self.statistic] * len(self.tau),
                "tau_s": self.tau,
                "m": self.m,
                "deviation": self.deviation,
                "ci_low": self.ci_low,
                "ci_high": self.ci_high,
                "edf": self.edf,
                "status": list(self.status),
                "upper_bound": self.upper_bound,
                "variance": self.variance,
                "resolution": self.resolution,
            }
        )


@dataclass
class HatResult(Displayable):
    """Separated stabilities of every oscillator and the pair curves they come from.

    Attributes
    ----------
    statistic
        Statistic identifier (e.g. ``oadev``).
    confidence
        Two-sided confidence level of the intervals.
    oscillators
        Name -> :class:`OscillatorStability`.
    pairs
        (A, B) -> qualified :class:`~stability.table.StatisticResult` of A - B.
    coefficients
        The c_ik of s_i^2 = sum_k c_ik v_k (oscillators x pairs).
    notes
        What alignment and qualification did.
    """

    statistic: str
    confidence: float
    oscillators: dict[str, OscillatorStability]
    pairs: dict[Pair, StatisticResult]
    coefficients: np.ndarray
    notes: list[str] = field(default_factory=list)

    def __getitem__(self, name: str) -> OscillatorStability:
        return self.oscillators[name]

    @property
    def names(self) -> list[str]:
        return list(self.oscillators)

    def to_frame(self) -> pd.DataFrame:
        """One row per (oscillator, tau): oscillator, statistic, tau_s, m, deviation,
        ci_low, ci_high, edf, status, upper_bound, variance, resolution."""
        return pd.concat([o.to_frame() for o in self.oscillators.values()], ignore_index=True)

    def plot(self, ax: Any = None, *, figure: Any = None, **options: Any) -> Any:
        """The separated stability of each oscillator, as ``stability separate`` draws it.

        Parameters
        ----------
        ax
            A matplotlib ``Axes`` (one panel) to draw into, in a figure the
            caller lays out. None draws a figure of its own
            (``matplotlib.figure.Figure``, never pyplot).
        figure
            A ``Figure`` or ``SubFigure`` to draw the whole figure into instead.
        options
            Those of :func:`stability.figures.hat_figure` (title, footer).

        Returns
        -------
        stability.figures.HatDrawn
            The figure, its panels (``.axes``) and the data as drawn; it shows
            itself in a notebook.
        """
        return _plot(self, ax=ax, figure=figure, **options)

    def pairs_frame(self) -> pd.DataFrame:
        """The pair curves: a ``pair`` column (``A-B``) followed by the results-table columns."""
        frames = []
        for key, result in self.pairs.items():
            frame = result.to_frame()
            frame.insert(0, "pair", _label(key))
            frames.append(frame)
        return pd.concat(frames, ignore_index=True)


# ---------------------------------------------------------------------------- separate
def _qualify_pairs(
    results: dict[Pair, StatisticResult],
    aligned: dict[Pair, Measurement],
    confidence: float,
) -> dict[Pair, StatisticResult]:
    """Noise type, EDF and interval of each pair curve."""
    with np.errstate(all="ignore"), warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        return {
            key: qualify_result(result, aligned[key], confidence) for key, result in results.items()
        }


def _pair_cap(pair_high: np.ndarray, variances: np.ndarray, members: np.ndarray) -> np.ndarray:
    """Smallest upper bound (or, without intervals, deviation) of the pairs of each oscillator.

    No oscillator is noisier than a difference it takes part in.
    """
    pair_cap = np.where(np.isfinite(pair_high), pair_high, np.sqrt(variances))  # (pair, tau)
    member_cap = np.where(members[:, :, None], pair_cap[None, :, :], np.inf)
    return member_cap.min(axis=1)


def separate(
    pairs: Mapping[Pair, Measurement],
    *,
    stat: str = "oadev",
    taus: str | Sequence[float] = "octave",
    confidence: float = 0.683,
) -> HatResult:
    """Separate the stability of each oscillator from measurements of pairs (three-cornered hat).

    Parameters
    ----------
    pairs
        (A, B) -> Measurement of A - B, for at least three oscillators whose
        pairs determine every oscillator (a triangle, or for four or more
        oscillators any set of pairs with a full-rank design, e.g. all pairs).
    stat
        A variance-based statistic of the registry (default ``oadev``).
    taus
        ``"octave"``, ``"decade"``, ``"all"`` or taus in seconds.
    confidence
        Two-sided confidence level of the intervals (default 0.683).

    Returns
    -------
    HatResult

    Raises
    ------
    InputError
        On malformed pairs or arguments, or logs that cannot be aligned.
    AnalysisError
        When the pairs do not determine each oscillator or the common span is too short.
    """
    checked, names, statistic, level = _validate_separate(pairs, stat, confidence)
    keys = list(checked)
    coefs = hat_coefficients(keys, names)
    aligned = align(checked)
    notes: list[str] = []
    if any(aligned[k] is not checked[k] for k in keys):
        notes.append(f"pair logs trimmed to their common span of {aligned[keys[0]].n} samples")
    results = {k: estimate(aligned[k], statistic, taus) for k in keys}
    common = set(results[keys[0]].m.tolist())
    for k in keys[1:]:
        common &= set(results[k].m.tolist())
    if not common:
        raise AnalysisError(f"no tau has {statistic.name} terms in every pair log")
    ms = np.array(sorted(common), dtype=np.int64)
    for k in keys:
        r = results[k]
        dropped = sorted(set(r.m.tolist()) - common)
        if dropped:
            notes.append(
                f"m = {', '.join(map(str, dropped))} dropped: no usable terms in every pair"
            )
        keep = np.isin(r.m, ms)
        results[k] = StatisticResult.build(
            r.statistic, r.tau[keep], r.m[keep], r.n_terms[keep], r.deviation[keep], notes=r.notes
        )
    results = _qualify_pairs(results, aligned, level)
    variances = np.array([results[k].deviation ** 2 for k in keys])  # (pair, tau)
    edfs = np.array([results[k].edf for k in keys])
    members = np.array([[n in k for k in keys] for n in names])
    cap = _pair_cap(np.array([results[k].ci_high for k in keys]), variances, members)
    found = hat_intervals(coefs, difference_matrix(keys, names), variances, edfs, cap, level)
    tau = results[keys[0]].tau
    oscillators = {}
    for i, name in enumerate(names):
        status = [STATUS_OK if r else STATUS_BELOW for r in found.resolved[i]]
        oscillators[name] = OscillatorStability(
            name=name,
            statistic=statistic.name,
            tau=tau.copy(),
            m=ms.copy(),
            variance=found.estimate[i],
            deviation=found.deviation[i],
            ci_low=found.ci_low[i],
            ci_high=found.ci_high[i],
            edf=found.edf[i],
            status=status,
            upper_bound=found.upper_bound[i],
            resolution=found.resolution[i],
        )
        below = int(sum(s == STATUS_BELOW for s in status))
        if below:
            notes.append(
                f"{name}: {below} of {len(status)} taus below the resolution of the hat "
                "(estimate not clearly above the scatter a noiseless oscillator's "
                "estimate would have); an upper bound is given"
            )
    if not math.isfinite(float(np.nansum(variances))):
        raise AnalysisError("the pair variances are not finite; check the data for huge values")
    return HatResult(
        statistic=statistic.name,
        confidence=level,
        oscillators=oscillators,
        pairs=results,
        coefficients=coefs,
        notes=notes,
    )
