"""Power-law noise generation and the h_alpha <-> Allan variance conversions.

Power-law noise ``S_y(f) = h_alpha f^alpha`` (alpha = 2 WPM, 1 FPM, 0 WFM,
-1 FFM, -2 RWFM) is made by filtering white Gaussian noise with the
fractional-integration filter of Kasdin and Walter [1]_: for a spectrum
``S ~ f^-beta`` the impulse response is

    h_0 = 1,   h_k = h_{k-1} (beta/2 + k - 1) / k,

and the filtered series is the linear convolution of the white noise with
``h``, done with FFTs of both sequences zero-padded to 2N and keeping the
first N values [1]_. The discrete process has the one-sided spectrum

    S(f) = 2 Q_d tau0 / |2 sin(pi f tau0)|^beta  ~=  2 Q_d tau0 (2 pi f tau0)^-beta

(the approximation holds for f << 1/tau0), where Q_d is the variance of the
white-noise samples. Frequency output uses beta = -alpha; phase output uses
beta = 2 - alpha, since S_x(f) = S_y(f) / (2 pi f)^2 [2]_ [3]_.

Near the Nyquist frequency the discrete spectrum departs from the continuous
power law (and the FFM and RWFM filters are truncated at N terms), so levels
are best checked at mid-range tau [1]_.

The closed forms relating h_alpha to the Allan variance are those of NIST
SP 1065 and NIST TN 1337 (with f_h the high-frequency cut-off of the
measurement) [2]_ [4]_:

======  ===================================================
alpha   AVAR(tau)
======  ===================================================
 2      3 f_h h_2 / (4 pi^2 tau^2)
 1      h_1 [1.038 + 3 ln(2 pi f_h tau)] / (4 pi^2 tau^2)
 0      h_0 / (2 tau)
-1      2 ln 2 h_-1
-2      (2 pi^2 / 3) h_-2 tau
======  ===================================================

References
----------
.. [1] N. J. Kasdin, T. Walter, "Discrete simulation of power law noise",
   Proc. 1992 IEEE Frequency Control Symposium, pp. 274-283.
.. [2] W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST Special
   Publication 1065 (2008), sections 4.1, 5.2 and 8 (simulation).
.. [3] IEEE Std 1139-2008, *Definitions of physical quantities for fundamental
   frequency and time metrology: random instabilities*.
.. [4] D. B. Sullivan, D. W. Allan, D. A. Howe, F. L. Walls (eds.),
   *Characterization of Clocks and Oscillators*, NIST Technical Note 1337 (1990).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any, Literal

import numpy as np

from .errors import InputError
from .measurement import Measurement, Provenance
from .powerlaw import avar_kernel
from .table import NOISE_LABELS

__all__ = [
    "power_law",
    "simulate",
    "simulate_measurement",
    "avar_from_h",
    "h_from_deviation",
    "white_noise_variance",
]

Output = Literal["phase", "frequency"]

_ALPHAS = (2, 1, 0, -1, -2)
_OUTPUTS = ("phase", "frequency")
_SECONDS_PER_DAY = 86400.0


# ---------------------------------------------------------------------- validation
def _check_alpha(alpha: Any, name: str = "alpha") -> int:
    try:
        value = float(alpha)
    except (TypeError, ValueError):
        raise InputError(
            f"{name} must be one of 2, 1, 0, -1, -2, got {alpha!r}",
            hint="2 WPM, 1 FPM, 0 WFM, -1 FFM, -2 RWFM",
        ) from None
    if not math.isfinite(value) or value != round(value) or int(value) not in _ALPHAS:
        raise InputError(
            f"{name} must be one of 2, 1, 0, -1, -2, got {alpha!r}",
            hint="2 WPM, 1 FPM, 0 WFM, -1 FFM, -2 RWFM",
        )
    return int(value)


def _check_nonneg(value: Any, name: str, *, positive: bool = False) -> float:
    what = "a positive" if positive else "a non-negative"
    try:
        out = float(value)
    except (TypeError, ValueError):
        raise InputError(f"{name} must be {what} finite number, got {value!r}") from None
    if not math.isfinite(out) or out < 0 or (positive and out == 0):
        raise InputError(f"{name} must be {what} finite number, got {value!r}")
    return out


def _check_finite(value: Any, name: str) -> float:
    try:
        out = float(value)
    except (TypeError, ValueError):
        raise InputError(f"{name} must be a finite number, got {value!r}") from None
    if not math.isfinite(out):
        raise InputError(f"{name} must be a finite number, got {value!r}")
    return out


def _check_n(n: Any) -> int:
    if isinstance(n, bool) or not isinstance(n, (int, np.integer)):
        try:
            as_float = float(n)
        except (TypeError, ValueError):
            raise InputError(f"n must be a whole number of samples >= 2, got {n!r}") from None
        if not math.isfinite(as_float) or as_float != round(as_float):
            raise InputError(f"n must be a whole number of samples >= 2, got {n!r}")
        n = int(as_float)
    if int(n) < 2:
        raise InputError(f"n must be a whole number of samples >= 2, got {n!r}")
    return int(n)


def _check_output(output: Any) -> str:
    if output not in _OUTPUTS:
        raise InputError(f"output must be 'phase' or 'frequency', got {output!r}")
    return str(output)


def _check_seed(seed: Any) -> np.random.Generator:
    if isinstance(seed, np.random.Generator):
        return seed
    if seed is None:
        return np.random.default_rng()
    if isinstance(seed, bool) or not isinstance(seed, (int, np.integer)) or int(seed) < 0:
        raise InputError(
            f"seed must be None, a non-negative integer or a numpy Generator, got {seed!r}"
        )
    return np.random.default_rng(int(seed))


def _validate_power_law(
    alpha: Any, n: Any, h: Any, tau0: Any, output: Any, seed: Any
) -> tuple[int, int, float, float, str, np.random.Generator]:
    return (
        _check_alpha(alpha),
        _check_n(n),
        _check_nonneg(h, "h"),
        _check_nonneg(tau0, "tau0", positive=True),
        _check_output(output),
        _check_seed(seed),
    )


def _validate_levels(levels: Any) -> dict[int, float]:
    if not isinstance(levels, Mapping):
        raise InputError(
            f"levels must be a mapping alpha -> h_alpha, got {type(levels).__name__}",
            hint="for example {0: 1e-22} for white frequency noise",
        )
    out: dict[int, float] = {}
    for alpha, h in levels.items():
        a = _check_alpha(alpha, "levels key (alpha)")
        out[a] = _check_nonneg(h, f"levels[{a}] (h_alpha)")
    return out


def _validate_simulate(
    n: Any, tau0: Any, levels: Any, drift_per_day: Any, offset: Any, output: Any, seed: Any
) -> tuple[int, float, dict[int, float], float, float, str, np.random.Generator]:
    return (
        _check_n(n),
        _check_nonneg(tau0, "tau0", positive=True),
        _validate_levels(levels),
        _check_finite(drift_per_day, "drift_per_day"),
        _check_finite(offset, "offset"),
        _check_output(output),
        _check_seed(seed),
    )


def _validate_conversion(alpha: Any, tau: Any, f_h: Any) -> tuple[int, np.ndarray, float | None]:
    a = _check_alpha(alpha)
    try:
        t = np.asarray(tau, dtype=np.float64)
    except (TypeError, ValueError):
        raise InputError(f"tau must be positive seconds, got {tau!r}") from None
    if t.size == 0 or not np.all(np.isfinite(t)) or np.any(t <= 0):
        raise InputError(f"tau must be positive, finite seconds, got {tau!r}")
    fh: float | None = None
    if a in (1, 2):
        if f_h is None:
            raise InputError(
                f"f_h is needed for alpha = {a} (phase noise depends on the bandwidth)",
                hint="pass f_h in Hz, 1/(2 tau0) for sampled data",
            )
        fh = _check_nonneg(f_h, "f_h", positive=True)
        if a == 1 and np.any(2 * math.pi * fh * t <= 1.0):
            raise InputError(
                f"f_h * tau must be much larger than 1 for alpha = 1, got f_h = {f_h!r}",
                hint="the FPM closed form holds for 2 pi f_h tau >> 1",
            )
    return a, t, fh


# ---------------------------------------------------------------------- conversions
def _avar_per_h(alpha: int, tau: np.ndarray, f_h: float | None) -> np.ndarray:
    """AVAR for h_alpha = 1 (NIST SP 1065; NIST TN 1337); f_h only matters for alpha 2, 1."""
    return avar_kernel(alpha, tau, 1.0 if f_h is None else f_h)


def avar_from_h(alpha: int, h: float, tau: Any, f_h: float | None = None) -> Any:
    """Allan variance of power-law noise h_alpha f^alpha at averaging time tau.

    Parameters
    ----------
    alpha
        Power-law exponent of S_y(f): 2, 1, 0, -1 or -2.
    h
        Level h_alpha (units of S_y(f) / f^alpha).
    tau
        Averaging time(s) in seconds (scalar or array).
    f_h
        High-frequency cut-off in Hz, needed for alpha = 2 and 1 (1/(2 tau0)
        for sampled data); ignored otherwise.

    Returns
    -------
    float or numpy.ndarray
        AVAR (dimensionless), the closed forms of NIST SP 1065.
    """
    a, t, fh = _validate_conversion(alpha, tau, f_h)
    hv = _check_nonneg(h, "h")
    out = hv * _avar_per_h(a, t, fh)
    return float(out) if np.ndim(tau) == 0 else out


def h_from_deviation(alpha: int, deviation: Any, tau: Any, f_h: float | None = None) -> Any:
    """Level h_alpha that gives Allan deviation ``deviation`` at averaging time ``tau``.

    The inverse of :func:`avar_from_h`: ``h = deviation**2 / AVAR(h=1)``. For
    example white frequency noise at 1e-11 at 1 s is
    ``h_from_deviation(0, 1e-11, 1.0)`` = 2e-22 (SP 1065: AVAR = h0/(2 tau)).
    """
    a, t, fh = _validate_conversion(alpha, tau, f_h)
    try:
        dev = np.asarray(deviation, dtype=np.float64)
    except (TypeError, ValueError):
        raise InputError(f"deviation must be a non-negative number, got {deviation!r}") from None
    if not np.all(np.isfinite(dev)) or np.any(dev < 0):
        raise InputError(f"deviation must be a non-negative, finite number, got {deviation!r}")
    out = dev**2 / _avar_per_h(a, t, fh)
    return float(out) if out.ndim == 0 else out


def white_noise_variance(alpha: int, h: float, tau0: float, output: Output) -> float:
    """Variance Q_d of the white samples that the Kasdin-Walter filter turns into h f^alpha.

    Derivation: the filtered discrete process has the one-sided spectrum
    S(f) = 2 Q_d tau0 / |2 sin(pi f tau0)|^beta ~= 2 Q_d tau0 (2 pi f tau0)^-beta
    at f << 1/tau0 [1]_.

    * frequency output, beta = -alpha: matching 2 Q_d tau0 (2 pi tau0)^alpha f^alpha
      to h f^alpha gives Q_d = h / [2 tau0 (2 pi tau0)^alpha];
    * phase output, beta = 2 - alpha: S_x = h f^(alpha-2) / (2 pi)^2, so
      Q_d = h / [(2 pi)^2 2 tau0 (2 pi tau0)^(alpha-2)] = tau0^2 times the
      frequency value (phase is tau0 times the running sum of frequency).

    Check: WFM gives var(y) = h0 / (2 tau0) = AVAR(tau0); WPM gives
    var(x) = h2 / (8 pi^2 tau0), hence AVAR = 3 var(x) / tau^2 = 3 f_h h2 / (4 pi^2 tau^2)
    with f_h = 1/(2 tau0), the SP 1065 closed forms.
    """
    a = _check_alpha(alpha)
    hv = _check_nonneg(h, "h")
    t0 = _check_nonneg(tau0, "tau0", positive=True)
    out = _check_output(output)
    q_freq = hv / (2.0 * t0 * (2.0 * math.pi * t0) ** a)
    return q_freq * t0 * t0 if out == "phase" else q_freq


# ---------------------------------------------------------------------- generation
def _kasdin_walter(beta: float, white: np.ndarray) -> np.ndarray:
    """Filter white noise to S ~ f^-beta (Kasdin & Walter 1992, zero-padded FFT convolution)."""
    n = white.size
    if beta == 0:
        return white
    k = np.arange(1, n, dtype=np.float64)
    coef = np.empty(n)
    coef[0] = 1.0
    np.cumprod((beta / 2.0 + k - 1.0) / k, out=coef[1:])
    size = 2 * n
    spectrum = np.fft.rfft(white, size) * np.fft.rfft(coef, size)
    return np.fft.irfft(spectrum, size)[:n]


def power_law(
    alpha: int,
    n: int,
    *,
    h: float = 1.0,
    tau0: float = 1.0,
    output: Output = "frequency",
    seed: None | int | np.random.Generator = None,
) -> np.ndarray:
    """Power-law noise with one-sided spectrum S_y(f) = h f^alpha at low f.

    Parameters
    ----------
    alpha
        Exponent of S_y(f): 2 (WPM), 1 (FPM), 0 (WFM), -1 (FFM), -2 (RWFM).
    n
        Number of samples returned (at least 2).
    h
        Level h_alpha; see :func:`h_from_deviation` to set it from a deviation.
    tau0
        Sample interval in seconds.
    output
        ``"frequency"``: fractional frequency y (filter exponent beta = -alpha);
        ``"phase"``: time error x in seconds (beta = 2 - alpha).
    seed
        None, a non-negative integer, or a numpy Generator (used as given).

    Returns
    -------
    numpy.ndarray
        n float64 samples. The white-noise variance is :func:`white_noise_variance`.

    Notes
    -----
    Kasdin & Walter (1992): white Gaussian samples of variance Q_d are convolved
    with the fractional-integration filter h_k through FFTs zero-padded to 2n.
    The spectrum follows the power law for f well below 1/(2 tau0); the first
    and last octaves of tau deviate somewhat for FPM, FFM and RWFM.
    """
    a, n, hv, t0, out, rng = _validate_power_law(alpha, n, h, tau0, output, seed)
    beta = float(-a if out == "frequency" else 2 - a)
    q_d = white_noise_variance(a, hv, t0, out)
    white = rng.standard_normal(n) * math.sqrt(q_d)
    return _kasdin_walter(beta, white)


def _streams(rng: np.random.Generator, count: int) -> list[np.random.Generator]:
    """Independent child generators of ``rng`` (reproducible for a seeded rng)."""
    try:
        return list(rng.spawn(count))
    except (TypeError, ValueError, AttributeError):
        seeds = rng.integers(0, 2**63 - 1, size=count)
        return [np.random.default_rng(int(s)) for s in seeds]


def simulate(
    n: int,
    tau0: float = 1.0,
    *,
    levels: Mapping[int, float],
    drift_per_day: float = 0.0,
    offset: float = 0.0,
    output: Output = "frequency",
    seed: None | int | np.random.Generator = None,
) -> np.ndarray:
    """A mixture of power-law noises with a frequency offset and a linear frequency drift.

    Parameters
    ----------
    n
        Number of samples (at least 2).
    tau0
        Sample interval in seconds.
    levels
        Mapping alpha -> h_alpha, e.g. ``{0: 2e-22, -2: 1e-30}``.
    drift_per_day
        Linear fractional-frequency drift per day (y grows by this much each 86400 s).
    offset
        Constant fractional-frequency offset.
    output
        ``"frequency"`` (fractional frequency) or ``"phase"`` (seconds).
    seed
        None, a non-negative integer, or a numpy Generator.

    Returns
    -------
    numpy.ndarray
        n samples. Frequency sample k is at time t_k = k tau0:
        y_k = offset + D t_k + noise, D = drift_per_day / 86400 s.
        Phase sample k is x_k = offset t_k + D t_k^2 / 2 + noise (x_0 = 0 for
        the deterministic part).

    Notes
    -----
    Each noise type has its own stream, one of five children spawned from the
    seed in the fixed order alpha = 2, 1, 0, -1, -2, so a given seed gives the
    same WFM component whether or not another type is added to the mix.
    """
    n, t0, lev, drift, off, out, rng = _validate_simulate(
        n, tau0, levels, drift_per_day, offset, output, seed
    )
    streams = dict(zip(_ALPHAS, _streams(rng, len(_ALPHAS)), strict=True))
    total = np.zeros(n)
    for alpha in _ALPHAS:
        if lev.get(alpha, 0.0) > 0.0:
            total += power_law(alpha, n, h=lev[alpha], tau0=t0, output=out, seed=streams[alpha])
    t = np.arange(n, dtype=np.float64) * t0
    rate = drift / _SECONDS_PER_DAY
    if out == "frequency":
        total += off + rate * t
    else:
        total += off * t + 0.5 * rate * t * t
    return total


def _describe(levels: Mapping[int, float], tau0: float) -> str:
    parts = []
    for alpha in _ALPHAS:
        h = levels.get(alpha, 0.0)
        if h > 0.0:
            tau = 100.0 * tau0
            fh = 1.0 / (2.0 * tau0)
            dev = math.sqrt(avar_from_h(alpha, h, tau, fh))
            parts.append(f"{NOISE_LABELS[alpha]} h{alpha}={h:.3g} (ADEV {dev:.3g} at {tau:g} s)")
    return ", ".join(parts) if parts else "no noise"


def simulate_measurement(
    n: int,
    tau0: float = 1.0,
    *,
    levels: Mapping[int, float],
    drift_per_day: float = 0.0,
    offset: float = 0.0,
    output: Output = "frequency",
    seed: None | int | np.random.Generator = None,
    nominal: float | None = None,
) -> Measurement:
    """A :class:`~stability.Measurement` of simulated power-law noise (see :func:`simulate`).

    ``output="frequency"`` gives a frequency-kind measurement of n frequency
    samples (n + 1 phase points); ``output="phase"`` gives n phase samples.
    The measurement's notes say what was simulated, and its provenance records
    every setting (the seed included when it was an integer).
    """
    n, t0, lev, drift, off, out, _ = _validate_simulate(
        n, tau0, levels, drift_per_day, offset, output, seed
    )
    data = simulate(n, t0, levels=lev, drift_per_day=drift, offset=off, output=out, seed=seed)
    seed_text = seed if isinstance(seed, (int, np.integer)) else "unrecorded"
    note = (
        f"simulated {out} data, {n} samples at tau0 = {t0:g} s (Kasdin-Walter power-law "
        f"noise): {_describe(lev, t0)}; frequency offset {off:g}, drift {drift:g}/day; "
        f"seed {seed_text}"
    )
    details = {
        "levels": {int(a): float(h) for a, h in lev.items()},
        "drift_per_day": drift,
        "offset": off,
        "output": out,
        "seed": None if seed_text == "unrecorded" else int(seed_text),
        "method": "Kasdin & Walter 1992, FFT filtering zero-padded to 2N",
    }
    prov = Provenance(reader="simulated power-law noise", rows=n, details=details)
    if out == "frequency":
        return Measurement.from_frequency(data, t0, nominal=nominal, provenance=prov, notes=[note])
    return Measurement.from_phase(data, t0, nominal=nominal, provenance=prov, notes=[note])
