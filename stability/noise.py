"""Power-law noise identification at each averaging time.

The dominant power-law noise S_y(f) ~ f^alpha (alpha = 2 WPM, 1 FPM, 0 WFM,
-1 FFM, -2 RWFM) at averaging factor m selects the confidence model and the
bias correction of a stability estimate. Three published methods are used,
in the order of the usual practice [2]_:

1. **Lag-1 autocorrelation** (Riley & Greenhall [1]_), where at least 30
   points are available at that m. The series z (phase decimated by m, or
   m-averages of frequency) has its drift removed (a quadratic fit for phase,
   a linear fit for frequency); then, with r1 its lag-1 autocorrelation and
   d the number of differences taken so far::

       delta = r1 / (1 + r1)
       if d >= dmin and (delta < 0.25 or d >= dmax):  p = -2 (delta + d), stop
       else:  z = diff(z), d += 1

   alpha = round(p) for frequency data and round(p) + 2 for phase data. The
   fractionally integrated noise (2 sin(pi f))^(-2 delta) is stationary for
   delta < 0.25, where delta = r1/(1 + r1) estimates its exponent [1]_.
   dmax = 2 for the Allan, modified, total and time statistics on phase
   (alpha down to -2) and 3 for the Hadamard family, one less on frequency.
   :func:`lag1_acf_noise_id` is the published method as it stands. In
   :func:`identify` the final rounding of p is replaced by the nearest of
   the values p is expected to take for each noise type at that m and number
   of differences (:func:`expected_acf_estimate`, integrated from the
   Kasdin-Walter spectrum [4]_): decimation makes flicker phase look whiter
   and averaging makes flicker frequency look redder (p for FPM drifts from 1
   towards 1.6, for FFM from -1 towards -1.45 as m grows from 1 to a few
   hundred), so plain rounding calls FPM "WPM" at long tau about half of the
   time. White and random-walk noises are unaffected (their expectation is
   the integer alpha at every m).
2. **B1 bias ratio** (Barnes [3]_; SP 1065 section 5.6 [2]_) where fewer
   points are available: B1 = (sample variance of the K m-averaged
   frequencies) / AVAR(m tau0). Its expectation for AVAR ~ tau^mu is

       B1(K, mu) = K (1 - K^mu) / [2 (K - 1) (1 - 2^mu)],
       B1(K, 0)  = K ln K / [2 (K - 1) ln 2]            (the mu -> 0 limit),

   with mu = -2 (WPM and FPM), -1 (WFM), 0 (FFM), 1 (RWFM), i.e.
   alpha = -mu - 1 for alpha <= 0. The nearest expectation in the log domain
   is taken (the boundaries lie at the geometric means of neighbouring
   expectations). At least 4 averages are required (with K = 2 every mu
   gives B1 = 1).
3. **R(n) = MVAR / AVAR** at n = m (SP 1065 section 5.6 [2]_) splits the
   B1 answer mu = -2: R(n) = 1/n for WPM and about 3.374 / (1.038 + 3 ln(pi n))
   for FPM, compared in the log domain.

Gaps: when the phase has NaN samples or frequency gaps (segments), the lag-1
method uses the m-averaged frequencies, dropping every block that touches a
gap; B1 uses the same blocks and the gap-aware AVAR and MVAR estimators. The
blocks on either side of a dropped block are joined, which is harmless for a
noise type but not for a level.

References
----------
.. [1] W. J. Riley, C. A. Greenhall, "Power law noise identification using
   the lag 1 autocorrelation", Proc. 18th European Frequency and Time Forum
   (EFTF 2004), Guildford, pp. 576-580.
.. [2] W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST Special
   Publication 1065 (2008), section 5.6 (power-law noise identification,
   B1 and R(n) ratios, lag-1 autocorrelation).
.. [3] J. A. Barnes, "Tables of bias functions, B1 and B2, for variances based
   on finite samples of processes with power law spectral densities", NBS
   Technical Note 375 (1969).
.. [4] N. J. Kasdin, T. Walter, "Discrete simulation of power law noise",
   Proc. 1992 IEEE Frequency Control Symposium, pp. 274-283.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from .deviations.allan import mdev, oadev
from .deviations.registry import STATISTICS
from .errors import InputError
from .measurement import Measurement, index_dtype
from .noise_methods import (
    _DEGENERATE_RTOL,
    ACF_MIN_POINTS,
    B1_MIN_AVERAGES,
    _detrend,
    _lag1_loop,
    acf_neighbour,
    b1_expected,
    b1_noise_id,
    expected_acf_estimate,
    lag1_acf,
    lag1_acf_noise_id,
    rn_expected,
    rn_noise_id,
)
from .table import NOISE_LABELS

__all__ = [
    "NoiseResult",
    "identify",
    "lag1_acf",
    "lag1_acf_noise_id",
    "expected_acf_estimate",
    "b1_expected",
    "b1_noise_id",
    "rn_expected",
    "rn_noise_id",
    "ACF_MIN_POINTS",
    "ACF_MAX_POINTS",
    "B1_MIN_AVERAGES",
]

#: Most points the lag-1 method looks at (a contiguous middle stretch): with
#: 2**16 points r1 has a standard error near 0.004, far below what separates
#: the noise types, and the cost no longer grows with the record.
ACF_MAX_POINTS = 1 << 16


#: Statistics whose noise model reaches alpha = -4 on phase (third differences).
_HADAMARD = ("hdev", "ohdev", "htot")

#: Statistic identifiers known to the tool, registered or not yet registered.
_KNOWN = (
    "adev", "oadev", "mdev", "tdev", "hdev", "ohdev", "totdev", "mtot", "ttot", "htot",
    "theo1", "theobr", "theoh", "pdev", "mtie", "tie_rms",
)  # fmt: skip


# ---------------------------------------------------------------------- result
@dataclass
class NoiseResult:
    """Noise type identified at each averaging factor of one statistic.

    Attributes
    ----------
    statistic
        The statistic identifier the identification was made for.
    m
        Averaging factors (int64).
    alpha
        Power-law exponent of S_y(f) (float; NaN where not identified).
    noise
        Labels WPM, FPM, WFM, FFM, RWFM; ``""`` where not identified.
    method
        What decided each label: ``"acf"`` (lag-1 autocorrelation), ``"b1"``
        (B1 ratio), ``"rn"`` (B1 then R(n)), ``"carried"`` (copied from the
        nearest identified m, only with ``carry=True``) or ``""``; after
        :func:`stability.noise_evidence.weigh_evidence` also ``"model"`` (the
        dominant term of the fitted power-law model) and ``"monotone"`` (the
        weighted monotone fit over tau).
    estimate
        The unrounded alpha of the lag-1 method (p, or p + 2 for phase); NaN otherwise.
    uncertain
        True where the identification is weak: B1 or R(n) on a few averages, or
        a lag-1 estimate within two standard errors of the boundary between two
        types.
    neighbour
        For a lag-1 estimate near a boundary, the alpha on the other side of it
        (NaN otherwise).
    notes
        Plain sentences about what was done.
    """

    statistic: str
    m: np.ndarray
    alpha: np.ndarray
    noise: list[str]
    method: list[str]
    estimate: np.ndarray
    uncertain: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=bool))
    neighbour: np.ndarray = field(default_factory=lambda: np.zeros(0))
    notes: list[str] = field(default_factory=list)

    def __post_init__(self) -> None:
        count = len(self.m)
        if self.uncertain.size != count:
            self.uncertain = np.zeros(count, dtype=bool)
        if self.neighbour.size != count:
            self.neighbour = np.full(count, np.nan)

    def to_frame(self) -> pd.DataFrame:
        """One row per averaging factor: m, alpha, noise, noise_method, alpha_estimate."""
        return pd.DataFrame(
            {
                "m": self.m,
                "alpha": self.alpha,
                "noise": self.noise,
                "noise_method": self.method,
                "alpha_estimate": self.estimate,
            }
        )


#: Estimates already made for the data, passed to :func:`identify` as ``known``:
#: (statistic, m) -> (deviation, terms) for ``oadev`` and ``mdev``.
Known = Mapping[tuple[str, int], tuple[float, int]]


def _stat_at(
    cache: dict[Any, Any], x: np.ndarray, seg: Any, tau0: float, m: int, func: Any, drift: float
):
    """OADEV or MDEV at m, from the cache (seeded with the caller's known estimates)."""
    key = (func.__name__, int(m))
    if key not in cache:
        cache[key] = func(x, tau0, m, seg, drift=drift)
    return cache[key]


# ---------------------------------------------------------------------- identify
def _dmax_for(statistic: Any) -> tuple[str, int]:
    if not isinstance(statistic, str):
        raise InputError(f"statistic must be a name such as 'oadev', got {statistic!r}")
    name = statistic.strip().lower()
    if name in STATISTICS:
        family = STATISTICS[name].family
        return name, 3 if (family == "hadamard" or name in _HADAMARD) else 2
    if name in _KNOWN:
        return name, 3 if name in _HADAMARD else 2
    raise InputError(
        f"unknown statistic {statistic!r}",
        hint=f"choose from {', '.join(sorted(set(_KNOWN) | set(STATISTICS)))}",
    )


def _validate_identify(measurement: Any, statistic: Any, ms: Any) -> tuple[str, int, np.ndarray]:
    if not isinstance(measurement, Measurement):
        raise InputError(
            f"measurement must be a stability.Measurement, got {type(measurement).__name__}"
        )
    name, dmax = _dmax_for(statistic)
    try:
        arr = np.atleast_1d(np.asarray(ms, dtype=np.float64))
    except (TypeError, ValueError):
        raise InputError(f"ms must be positive whole averaging factors, got {ms!r}") from None
    if arr.ndim != 1 or not np.all(np.isfinite(arr)) or np.any(arr < 1):
        raise InputError(f"ms must be positive whole averaging factors, got {ms!r}")
    if np.any(arr != np.round(arr)):
        raise InputError(f"ms must be whole numbers, got {ms!r}")
    return name, dmax, arr.astype(np.int64)


#: Phase samples per block when :func:`_gap_steps` looks for gaps, and most
#: block means :func:`_block_means` forms at once.
_BLOCK = 1 << 16


def _gap_steps(x: np.ndarray, seg: np.ndarray | None) -> np.ndarray:
    """Indices k of the unknown frequency samples y_k = (x_{k+1} - x_k) / tau0.

    y_k is unknown when x_k or x_{k+1} is NaN or a frequency gap lies between
    them. Looked for in blocks: only the gaps are kept (8 B per unknown
    sample), not a frequency array or a mask of the record's length.
    """
    found = []
    index = index_dtype(x.size)
    for lo in range(0, x.size - 1, _BLOCK):
        hi = min(lo + _BLOCK, x.size - 1)
        bad = np.isnan(x[lo:hi])
        bad |= np.isnan(x[lo + 1 : hi + 1])
        if seg is not None:
            bad |= seg[lo:hi] != seg[lo + 1 : hi + 1]
        where = np.flatnonzero(bad)
        if where.size:
            found.append((where + lo).astype(index))
    return np.concatenate(found) if found else np.empty(0, dtype=index)


def _decimated(x: np.ndarray, m: int, first: int, count: int, tau0: float, drift: float):
    """Phase samples first*m, (first+1)*m, ... (``count`` of them), less drift t^2 / 2."""
    z = x[first * m : (first + count - 1) * m + 1 : m]
    if drift == 0.0:
        return z
    # as the detrended phase x - drift (k tau0)^2 / 2 of the whole record would hold
    ramp = np.arange(first, first + count, dtype=np.float64) * m
    ramp *= tau0
    ramp *= ramp
    ramp *= 0.5 * drift
    return np.subtract(z, ramp, out=ramp)


def _check_drift(drift: Any) -> float:
    try:
        value = float(drift)
    except (TypeError, ValueError):
        raise InputError(f"drift must be a number (1/s), got {drift!r}") from None
    if not math.isfinite(value):
        raise InputError(f"drift must be finite, got {drift!r}")
    return value


def _block_means(
    x: np.ndarray, gaps: np.ndarray, tau0: float, m: int, limit: int, drift: float = 0.0
) -> np.ndarray:
    """The middle ``limit`` means of consecutive blocks of m frequency samples (all when fewer).

    Blocks touching a gap (holding an index of ``gaps``, see :func:`_gap_steps`)
    are dropped. The mean of y over block j is a phase difference,
    (x_{(j+1)m} - x_{jm}) / (m tau0), so only the blocks kept are formed, from
    the phase: with the frequency of the whole record and its block means this
    took 17 B/row at 1e7 rows, now a few blocks' worth. ``drift`` is a linear
    frequency drift (1/s) taken out of the data first (phase less drift t^2 / 2).
    """
    blocks = (x.size - 1) // m
    if blocks == 0:
        return np.empty(0)
    dropped = np.unique(gaps // m)
    dropped = dropped[dropped < blocks]
    kept = blocks - dropped.size
    want = min(kept, limit)
    skip = (kept - want) // 2  # kept blocks before the middle stretch
    # the skip-th kept block: skip plus the dropped blocks before it (a dropped
    # block j has j - i kept blocks before it, i its rank among the dropped)
    j = skip + int(np.searchsorted(dropped - np.arange(dropped.size), skip, side="right"))
    out = np.empty(want)
    got = 0
    while got < want and j < blocks:
        stop = min(j + _BLOCK, blocks)
        ends = _decimated(x, m, j, stop - j + 1, tau0, drift)
        means = np.diff(ends)
        means /= m * tau0
        inside = dropped[np.searchsorted(dropped, j) : np.searchsorted(dropped, stop)]
        if inside.size:
            means = np.delete(means, inside - j)
        take = min(means.size, want - got)
        out[got : got + take] = means[:take]
        got += take
        j = stop
    out = out[:got]
    return out[np.isfinite(out)]


def _b1_rn(
    x: np.ndarray,
    seg: np.ndarray | None,
    tau0: float,
    m: int,
    yb: np.ndarray,
    cache: dict,
    drift: float,
) -> tuple[int, str] | None:
    """B1 (and R(n) for mu = -2) at averaging factor m; None when it cannot be told."""
    k = yb.size
    if k < B1_MIN_AVERAGES:
        return None
    scale = float(np.max(np.abs(yb)))
    var = float(np.var(yb, ddof=1))
    if not (math.isfinite(var) and scale > 0.0) or math.sqrt(var) <= _DEGENERATE_RTOL * scale:
        return None
    resid = _detrend(yb, 1)
    if float(np.sqrt(np.mean(resid * resid))) <= _DEGENERATE_RTOL * scale:
        return None  # exactly linear frequency (pure drift): no noise to identify
    adev_value, used = _stat_at(cache, x, seg, tau0, m, oadev, drift)
    if used == 0 or not math.isfinite(adev_value) or adev_value <= 0.0:
        return None
    avar = adev_value * adev_value
    mu = b1_noise_id(var / avar, k)
    if mu is None:
        return None
    if mu != -2:
        return -mu - 1, "b1"
    mdev_value, used = _stat_at(cache, x, seg, tau0, m, mdev, drift)
    if used == 0 or not math.isfinite(mdev_value):
        return None
    alpha = rn_noise_id(mdev_value * mdev_value / avar, m)
    return None if alpha is None else (alpha, "rn")


def _carry(alpha: np.ndarray, method: list[str], uncertain: np.ndarray) -> None:
    """Fill unidentified entries with the nearest identified one (smaller m preferred)."""
    known = np.flatnonzero(np.isfinite(alpha))
    if known.size == 0:
        return
    for i in np.flatnonzero(~np.isfinite(alpha)):
        before = known[known < i]
        src = before[-1] if before.size else known[known > i][0]
        alpha[i] = alpha[src]
        method[i] = "carried"
        uncertain[i] = True


def identify(
    measurement: Measurement,
    statistic: str,
    ms: Sequence[int] | np.ndarray,
    *,
    carry: bool = False,
    known: Known | None = None,
    drift: float = 0.0,
) -> NoiseResult:
    """Identify the dominant power-law noise at each averaging factor.

    Parameters
    ----------
    measurement
        The data.
    statistic
        Statistic identifier (``oadev``, ``mdev``, ``hdev`` ...): sets dmax of
        the lag-1 method (3 for the Hadamard family, 2 otherwise). The modified
        and time deviations use the noise type of the data at that tau.
    ms
        Averaging factors.
    carry
        Give an unidentified m the type of the nearest identified m (method
        ``"carried"``); off by default.
    known
        Estimates already made for these data, ``(statistic, m) -> (deviation,
        terms)`` for ``oadev`` and ``mdev``: B1 and R(n) reuse them instead of
        computing them again.
    drift
        A linear frequency drift (1/s) to take out of the data first: the
        types are those of the phase less drift t^2 / 2, formed only where
        the methods read it (no detrended copy of the record). ``known``
        must then hold estimates of the detrended data.

    Returns
    -------
    NoiseResult
        Never raises on short, constant or gappy data: unidentified entries are
        NaN / ``""``. Bad arguments raise :class:`~stability.InputError`.
    """
    name, dmax, m_arr = _validate_identify(measurement, statistic, ms)
    x = measurement.phase
    seg = measurement.segments
    tau0 = measurement.tau0
    count = m_arr.size
    alpha = np.full(count, np.nan)
    estimate = np.full(count, np.nan)
    uncertain = np.zeros(count, dtype=bool)
    neighbour = np.full(count, np.nan)
    method = [""] * count
    drift = _check_drift(drift)
    gaps = _gap_steps(x, seg)
    unbroken = gaps.size == 0
    notes: list[str] = []
    cache: dict[Any, Any] = dict(known or {})
    with np.errstate(all="ignore"), warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        for i, m in enumerate(int(v) for v in m_arr):
            yb = None
            if unbroken:
                # The middle stretch only: the lag-1 estimate's standard error,
                # about 1/sqrt(n), is already far below the spacing of the types.
                size = (x.size - 1) // m + 1
                take = min(size, ACF_MAX_POINTS)
                z = _decimated(x, m, (size - take) // 2, take, tau0, drift)
                data, dm = "phase", dmax
            else:  # m-averaged frequencies, the middle stretch likewise
                z = yb = _block_means(x, gaps, tau0, m, ACF_MAX_POINTS, drift)
                data, dm = "frequency", dmax - 1
            if z.size >= ACF_MIN_POINTS:
                found = _lag1_loop(z, data, 0, dm, ACF_MIN_POINTS)
                if found is None:
                    continue  # enough points but no noise left after drift removal
                p, d = found
                d_phase = d if data == "phase" else d + 1
                label, other = acf_neighbour(p, d_phase, m, z.size * m, dmax, z.size - d)
                alpha[i] = label
                estimate[i] = p
                method[i] = "acf"
                if other is not None:
                    uncertain[i] = True
                    neighbour[i] = other
                continue
            if yb is None:  # unbroken phase: a block mean of y is a phase difference
                yb = np.diff(z[: (x.size - 1) // m + 1]) / (m * tau0)
            b1 = _b1_rn(x, seg, tau0, m, yb, cache, drift)
            if b1 is not None:
                alpha[i], method[i] = float(b1[0]), b1[1]
                uncertain[i] = True  # a few averages
    if not unbroken:
        notes.append(
            "noise identification used m-averaged frequencies, dropping blocks that touch a gap"
        )
    if carry:
        _carry(alpha, method, uncertain)
    labels = [NOISE_LABELS[int(a)] if np.isfinite(a) else "" for a in alpha]
    return NoiseResult(
        statistic=name,
        m=m_arr,
        alpha=alpha,
        noise=labels,
        method=method,
        estimate=estimate,
        uncertain=uncertain,
        neighbour=neighbour,
        notes=notes,
    )
