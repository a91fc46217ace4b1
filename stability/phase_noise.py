"""Phase noise L(f) and the time-domain stability it implies, and the way back from h_alpha.

A single-sideband phase-noise table L(f) in dBc/Hz (IEEE Std 1139 defines
L(f) = S_phi(f)/2) becomes the one-sided spectral density of fractional
frequency (reference 1; reference 2, section 9)::

    S_phi(f) = 2 * 10**(L(f)/10)            rad^2/Hz
    S_y(f)   = (f / nu0)**2 * S_phi(f)      1/Hz

and each variance is the integral of S_y against its transfer function up to
the measurement bandwidth f_h (references 2, 3, 4)::

    AVAR(tau) = 2   int_0^f_h S_y(f) sin^4(pi f tau) / (pi f tau)^2 df
    HVAR(tau) = 8/3 int_0^f_h S_y(f) sin^6(pi f tau) / (pi f tau)^2 df
    MVAR(tau) = 2   int_0^f_h S_y(f) sin^6(pi f tau) / [(pi f tau)^2 n^2 sin^2(pi f tau0)] df

The expected values of the overlapping and non-overlapping forms are equal, so
``adev`` and ``oadev`` give one curve (and ``hdev``, ``ohdev`` another). For
MVAR the samples are taken to be spaced by tau0 = 1/(2 f_h), the Nyquist
interval of the bandwidth, and n = tau/tau0 = 2 f_h tau (need not be whole);
``tdev`` is tau * MDEV / sqrt(3).

Interpolation and extrapolation. Between table rows L (in dB) is linear in
log f, i.e. S_y is a power law on every segment. Below the first offset the
first segment's slope continues down to f = 0 (the integral then converges
when S_y falls slower than f^-3, f^-5 for HVAR; otherwise an
:class:`~stability.errors.AnalysisError` says so). Above the last offset up to
f_h the table either holds its last value (``beyond="flat"``, the default: a
measured table usually ends on its white-phase floor) or continues the last
segment's slope (``beyond="slope"``).

Numerical integration. With u = pi f tau the integrand oscillates with period
pi in u. The integral is split into

* [0, u_min]: the first segment's power law, integrated in closed form;
* [u_min, 1]: composite Simpson on a logarithmic grid (64 points per decade);
* [1, P pi] (P = 500 half-periods at most): composite Simpson on a uniform
  grid of 32 intervals per half-period;
* [P pi, pi f_h tau]: the fast oscillation is replaced by its mean (3/8 for
  sin^4, 5/16 for sin^6) and the slowly varying rest is integrated by Simpson
  on a logarithmic grid split at every table offset; the partial period at
  f_h is restored by the first integration-by-parts term of each harmonic
  (sin^4 = 3/8 - cos(2u)/2 + cos(4u)/8, sin^6 = 5/16 - 15 cos(2u)/32 +
  3 cos(4u)/16 - cos(6u)/32), whose neglected remainder is O(1/u^2).

The relative error is below 1e-5 for the pure power laws of the tests.

The inverse direction, :func:`model_to_phase_noise`, turns the power-law
coefficients of S_y(f) = sum h_alpha f^alpha into L(f) = nu0^2 S_y(f)/(2 f^2).

References
----------
1. IEEE Std 1139-2008, *Definitions of physical quantities for fundamental
   frequency and time metrology - random instabilities*, sections 2-3.
2. W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065
   (2008), sections 5.2 and 9 (domain conversions, table of h_alpha relations).
3. D. B. Sullivan, D. W. Allan, D. A. Howe, F. L. Walls (eds.),
   *Characterization of Clocks and Oscillators*, NIST Technical Note 1337
   (1990), papers on the time-domain transfer functions.
4. J. Rutman, "Characterization of phase and frequency instabilities in
   precision frequency sources: fifteen years of progress", Proc. IEEE 66(9)
   (1978).
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any, Literal

import numpy as np
import pandas as pd

from .display import Displayable
from .display import plot as _plot
from .errors import AnalysisError, InputError
from .phase_noise_table import positive, read_phase_noise_table, validate_table
from .taus import GRIDS, parse_taus

__all__ = [
    "PHASE_NOISE_STATS",
    "PhaseNoiseStability",
    "phase_noise_to_stability",
    "phase_noise_to_frequency_psd",
    "frequency_psd_to_phase_noise",
    "model_to_phase_noise",
    "read_phase_noise_table",
]

#: Statistics with a frequency-domain transfer function here.
PHASE_NOISE_STATS = ("adev", "oadev", "mdev", "tdev", "hdev", "ohdev")

_VARIANCE_OF = {
    "adev": "avar",
    "oadev": "avar",
    "hdev": "hvar",
    "ohdev": "hvar",
    "mdev": "mvar",
    "tdev": "mvar",
}

# Fourier series of the fast factors: sin^4 u and sin^6 u = c0 + sum_k c_k cos(k u).
_HARMONICS = {
    4: (3.0 / 8.0, ((2, -1.0 / 2.0), (4, 1.0 / 8.0))),
    6: (5.0 / 16.0, ((2, -15.0 / 32.0), (4, 3.0 / 16.0), (6, -1.0 / 32.0))),
}

_HALF_PERIODS = 500  # uniform-grid region [1, P pi]
_PER_HALF_PERIOD = 32  # Simpson intervals per half-period there
_PER_DECADE = 64  # Simpson intervals per decade on the logarithmic grids
_U_MIN_DECADES = 8  # the log grid starts 8 decades below its upper end


# ---------------------------------------------------------------------------- conversions
def phase_noise_to_frequency_psd(offsets_hz: Any, L_dbc_hz: Any, *, nominal: float) -> np.ndarray:
    """S_y(f) = (f/nu0)^2 * 2 * 10^(L/10) at the table offsets (IEEE Std 1139).

    Parameters
    ----------
    offsets_hz, L_dbc_hz
        The phase-noise table (Hz, dBc/Hz).
    nominal
        Carrier (nominal) frequency nu0 in Hz.
    """
    f, level = validate_table(offsets_hz, L_dbc_hz)
    nu0 = positive(nominal, "nominal", "Hz")
    return (f / nu0) ** 2 * 2.0 * 10.0 ** (level / 10.0)


def frequency_psd_to_phase_noise(offsets_hz: Any, s_y: Any, *, nominal: float) -> np.ndarray:
    """L(f) = 10 log10(nu0^2 S_y(f) / (2 f^2)) in dBc/Hz (IEEE Std 1139).

    Parameters
    ----------
    offsets_hz
        Offset frequencies in Hz (positive).
    s_y
        One-sided spectral density of fractional frequency at those offsets (1/Hz, > 0).
    nominal
        Carrier (nominal) frequency nu0 in Hz.
    """
    nu0 = positive(nominal, "nominal", "Hz")
    try:
        f = np.asarray(offsets_hz, dtype=np.float64)
        s = np.asarray(s_y, dtype=np.float64)
    except (TypeError, ValueError):
        raise InputError("offsets_hz and s_y must be arrays of numbers") from None
    if f.shape != s.shape:
        raise InputError(f"offsets_hz and s_y differ in shape: {f.shape} and {s.shape}")
    if not (np.isfinite(f).all() and (f > 0).all()):
        raise InputError("offsets_hz must be positive, finite frequencies in Hz")
    if not (np.isfinite(s).all() and (s > 0).all()):
        raise InputError("s_y must be positive and finite (L(f) of zero power is -inf dBc/Hz)")
    return 10.0 * np.log10(nu0**2 * s / (2.0 * f**2))


def _validate_model(h: Any, nominal: Any, offsets: Any) -> tuple[dict[int, float], float, Any]:
    if not isinstance(h, Mapping) or not h:
        raise InputError(
            "h must be a non-empty mapping alpha -> h_alpha",
            hint="for example {0: 1e-22} for white FM",
        )
    model: dict[int, float] = {}
    for key, value in h.items():
        try:
            alpha = int(key)
        except (TypeError, ValueError):
            raise InputError(f"h: alpha must be an integer, got {key!r}") from None
        if alpha != key or alpha not in (2, 1, 0, -1, -2):
            raise InputError(f"h: alpha must be one of 2, 1, 0, -1, -2, got {key!r}")
        try:
            level = float(value)
        except (TypeError, ValueError):
            raise InputError(f"h[{alpha}] must be a number, got {value!r}") from None
        if not math.isfinite(level) or level < 0:
            raise InputError(f"h[{alpha}] must be finite and >= 0, got {value!r}")
        model[alpha] = level
    if not any(v > 0 for v in model.values()):
        raise InputError("h: at least one coefficient must be positive")
    nu0 = positive(nominal, "nominal", "Hz")
    try:
        f = np.asarray(offsets, dtype=np.float64)
    except (TypeError, ValueError):
        raise InputError("offsets must be numbers in Hz") from None
    if not (np.isfinite(f).all() and (f > 0).all()):
        raise InputError("offsets must be positive, finite frequencies in Hz")
    return model, nu0, f


def model_to_phase_noise(h: Mapping[int, float], nominal: float, offsets: Any) -> np.ndarray:
    """L(f) in dBc/Hz of the power-law model S_y(f) = sum h_alpha f^alpha.

    L(f) = S_phi(f)/2 = nu0^2 S_y(f) / (2 f^2) (IEEE Std 1139; NIST SP 1065 section 9).

    Parameters
    ----------
    h
        Power-law coefficients {alpha: h_alpha}, alpha in 2, 1, 0, -1, -2 (units 1/Hz^(alpha+1)).
    nominal
        Carrier (nominal) frequency nu0 in Hz.
    offsets
        Offset frequencies in Hz (scalar or array).

    Returns
    -------
    numpy.ndarray
        L(f) in dBc/Hz, the shape of ``offsets``.
    """
    model, nu0, f = _validate_model(h, nominal, offsets)
    s_y = np.zeros_like(f)
    for alpha, level in model.items():
        s_y = s_y + level * f**alpha
    return 10.0 * np.log10(nu0**2 * s_y / (2.0 * f**2))


# ---------------------------------------------------------------------------- S_y model
class _FrequencyPSD:
    """S_y(f) as a piecewise power law through the table, with the end rules."""

    def __init__(self, f: np.ndarray, s_y: np.ndarray, beyond: str) -> None:
        self.logf = np.log(f)
        self.logs = np.log(s_y)
        self.slope_low = (self.logs[1] - self.logs[0]) / (self.logf[1] - self.logf[0])
        self.slope_high = (
            (self.logs[-1] - self.logs[-2]) / (self.logf[-1] - self.logf[-2])
            if beyond == "slope"
            else 0.0
        )
        self.f = f

    def __call__(self, freq: np.ndarray) -> np.ndarray:
        lf = np.log(freq)
        out = np.interp(lf, self.logf, self.logs)
        low = lf < self.logf[0]
        out[low] = self.logs[0] + self.slope_low * (lf[low] - self.logf[0])
        high = lf > self.logf[-1]
        out[high] = self.logs[-1] + self.slope_high * (lf[high] - self.logf[-1])
        return np.exp(out)


# ---------------------------------------------------------------------------- quadrature
def _simpson_uniform(a: float, b: float, intervals: int) -> tuple[np.ndarray, np.ndarray]:
    """Nodes and weights of composite Simpson on [a, b] (intervals rounded up to even)."""
    k = max(2, intervals + (intervals % 2))
    u = np.linspace(a, b, k + 1)
    w = np.ones(k + 1)
    w[1:-1:2] = 4.0
    w[2:-1:2] = 2.0
    return u, w * (b - a) / (3.0 * k)


def _simpson_log(breaks: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Nodes and weights of Simpson in ln u over consecutive pieces [breaks[i], breaks[i+1]].

    int h(u) du = int h(u) u d(ln u); each piece gets _PER_DECADE intervals per decade.
    """
    nodes = []
    weights = []
    for a, b in zip(breaks[:-1], breaks[1:], strict=True):
        if not b > a:
            continue
        span = math.log(b / a)
        k = max(2, math.ceil(_PER_DECADE * span / math.log(10.0)))
        s, w = _simpson_uniform(math.log(a), math.log(b), k)
        u = np.exp(s)
        nodes.append(u)
        weights.append(w * u)
    if not nodes:
        return np.zeros(0), np.zeros(0)
    return np.concatenate(nodes), np.concatenate(weights)


def _transfer(variance: str, u: np.ndarray, n: float) -> np.ndarray:
    """The transfer function in u = pi f tau (without the overall constant)."""
    s = np.sin(u)
    if variance == "avar":
        return s**4 / u**2
    if variance == "hvar":
        return s**6 / u**2
    return s**6 / (u**2 * n**2 * np.sin(u / n) ** 2)


def _smooth(variance: str, u: np.ndarray, n: float) -> np.ndarray:
    """The slowly varying factor of the transfer function (the fast sin^k taken out)."""
    if variance == "mvar":
        return 1.0 / (u**2 * n**2 * np.sin(u / n) ** 2)
    return 1.0 / u**2


def _variance(variance: str, psd: _FrequencyPSD, tau: float, f_h: float) -> float:
    """One variance at one tau by the piecewise quadrature described in the module docstring."""
    scale = math.pi * tau  # u = scale * f
    u_h = scale * f_h
    n = 2.0 * f_h * tau
    power = 4 if variance == "avar" else 6
    low_exponent = psd.slope_low + (4.0 if variance == "hvar" else 2.0)
    if low_exponent <= -1.0:
        raise AnalysisError(
            f"the {variance.upper()} integral diverges at low offsets: S_y falls as "
            f"f^{psd.slope_low:.3g} below the first offset (L(f) slope "
            f"{10 * (psd.slope_low - 2):.3g} dB/decade)",
            hint="start the table where the noise is no steeper than random-walk FM",
        )

    def integrand(u: np.ndarray) -> np.ndarray:
        return psd(u / scale) * _transfer(variance, u, n)

    u_a = min(1.0, u_h)
    u_min = u_a * 10.0 ** (-_U_MIN_DECADES)
    inner = psd.f * scale
    inner = inner[(inner > u_min) & (inner < u_a)]
    u, w = _simpson_log(np.concatenate(([u_min], inner, [u_a])))
    total = float(np.dot(w, integrand(u)))
    # [0, u_min]: the first segment's power law u^p, integrated in closed form.
    total += float(integrand(np.array([u_min]))[0]) * u_min / (low_exponent + 1.0)
    if u_h <= u_a:
        return total
    u1 = min(u_h, _HALF_PERIODS * math.pi)
    intervals = math.ceil(_PER_HALF_PERIOD * (u1 - u_a) / math.pi)
    u, w = _simpson_uniform(u_a, u1, intervals)
    total += float(np.dot(w, integrand(u)))
    if u_h <= u1:
        return total
    mean, harmonics = _HARMONICS[power]
    inner = psd.f * scale
    inner = inner[(inner > u1) & (inner < u_h)]
    u, w = _simpson_log(np.concatenate(([u1], inner, [u_h])))
    total += mean * float(np.dot(w, psd(u / scale) * _smooth(variance, u, n)))
    # Partial period at u_h: first integration-by-parts term of each harmonic (sin(k u1) = 0).
    g_h = float(psd(np.array([f_h]))[0] * _smooth(variance, np.array([u_h]), n)[0])
    total += g_h * sum(c * math.sin(k * u_h) / k for k, c in harmonics)
    return total


_PREFACTOR = {"avar": 2.0, "mvar": 2.0, "hvar": 8.0 / 3.0}


# ---------------------------------------------------------------------------- the result
@dataclass
class PhaseNoiseStability(Displayable):
    """Deviations implied by a phase-noise table.

    Attributes
    ----------
    tau
        Averaging times in seconds.
    deviations
        Statistic identifier -> deviation at each tau.
    nominal
        Carrier frequency in Hz.
    f_h
        Measurement bandwidth (upper integration limit) in Hz.
    beyond
        How S_y was continued above the last offset (``flat`` or ``slope``).
    notes
        What was assumed, in plain sentences.
    """

    tau: np.ndarray
    deviations: dict[str, np.ndarray]
    nominal: float
    f_h: float
    beyond: str
    notes: list[str] = field(default_factory=list)

    def __getitem__(self, statistic: str) -> np.ndarray:
        return self.deviations[statistic]

    @property
    def statistics(self) -> list[str]:
        return list(self.deviations)

    def plot(self, ax: Any = None, *, figure: Any = None, **options: Any) -> Any:
        """The stability implied by the table, as ``stability phase-noise`` draws it.

        Parameters
        ----------
        ax
            A matplotlib ``Axes`` (or two: the stability, then the phase-noise
            table when ``table=`` or ``model=`` is given) to draw into, in a
            figure the caller lays out. None draws a figure of its own
            (``matplotlib.figure.Figure``, never pyplot).
        figure
            A ``Figure`` or ``SubFigure`` to draw the whole figure into instead.
        options
            Those of :func:`stability.figures.phase_noise_figure` (the input
            table, a measured table to compare, title ...).

        Returns
        -------
        stability.figures.PhaseNoiseDrawn
            The figure, its panels (``.axes``) and the data as drawn; it shows
            itself in a notebook.
        """
        return _plot(self, ax=ax, figure=figure, **options)

    def to_frame(self) -> pd.DataFrame:
        """Long format: one row per (statistic, tau) with columns statistic, tau_s, deviation."""
        frames = [
            pd.DataFrame({"statistic": name, "tau_s": self.tau, "deviation": dev})
            for name, dev in self.deviations.items()
        ]
        return pd.concat(frames, ignore_index=True)


def _validate_conversion(
    offsets_hz: Any,
    L_dbc_hz: Any,
    nominal: Any,
    f_h: Any,
    taus: Any,
    stats: Any,
    beyond: Any,
) -> tuple[np.ndarray, np.ndarray, float, float, np.ndarray, list[str], str]:
    f, level = validate_table(offsets_hz, L_dbc_hz)
    nu0 = positive(nominal, "nominal", "Hz")
    bandwidth = positive(f_h, "f_h", "Hz")
    if isinstance(taus, str):
        if taus.strip().lower() in GRIDS:
            raise InputError(
                f"taus must be a list of seconds here, got the grid name {taus!r}",
                hint="pass taus such as 0.001,0.01,0.1,1",
            )
        taus = parse_taus(taus)
    try:
        tau = np.atleast_1d(np.asarray(taus, dtype=np.float64))
    except (TypeError, ValueError):
        raise InputError(f"taus must be numbers of seconds, got {taus!r}") from None
    if tau.ndim != 1 or tau.size == 0:
        raise InputError("taus must be a non-empty list of seconds")
    if not (np.isfinite(tau).all() and (tau > 0).all()):
        raise InputError(f"taus must be positive and finite, got {tau.tolist()!r}")
    names = [s.strip() for s in stats.split(",")] if isinstance(stats, str) else list(stats)
    names = [str(s).strip().lower() for s in names if str(s).strip()]
    if not names:
        raise InputError("stats is empty", hint=f"choose from {', '.join(PHASE_NOISE_STATS)}")
    for name in names:
        if name not in PHASE_NOISE_STATS:
            raise InputError(
                f"stats: {name!r} has no frequency-domain conversion here",
                hint=f"choose from {', '.join(PHASE_NOISE_STATS)}",
            )
    names = list(dict.fromkeys(names))
    if beyond not in ("flat", "slope"):
        raise InputError(f"beyond must be 'flat' or 'slope', got {beyond!r}")
    if any(_VARIANCE_OF[s] == "mvar" for s in names):
        tau0 = 1.0 / (2.0 * bandwidth)
        short = tau[tau < tau0 * (1.0 - 1e-9)]
        if short.size:
            raise InputError(
                f"tau {short[0]:g} s is shorter than the sample interval 1/(2 f_h) = "
                f"{tau0:g} s that mdev and tdev assume",
                hint="drop the shorter taus or raise f_h",
            )
    return f, level, nu0, bandwidth, tau, names, beyond


def phase_noise_to_stability(
    offsets_hz: Any,
    L_dbc_hz: Any,
    *,
    nominal: float,
    f_h: float,
    taus: Sequence[float] | np.ndarray | str,
    stats: Sequence[str] | str = ("adev", "mdev"),
    beyond: Literal["flat", "slope"] = "flat",
) -> PhaseNoiseStability:
    """Time-domain deviations implied by a single-sideband phase-noise table.

    Parameters
    ----------
    offsets_hz
        Offset frequencies in Hz, positive and strictly increasing (two or more).
    L_dbc_hz
        L(f) in dBc/Hz at those offsets.
    nominal
        Carrier (nominal) frequency in Hz.
    f_h
        Measurement bandwidth in Hz: the upper limit of the integrals. MDEV
        and TDEV assume samples spaced by tau0 = 1/(2 f_h).
    taus
        Averaging times in seconds (a list, or a comma string such as ``"1,10,100"``).
    stats
        Statistics among :data:`PHASE_NOISE_STATS` (default adev and mdev).
    beyond
        S_y above the last offset up to f_h: ``"flat"`` holds the last value,
        ``"slope"`` continues the last segment's slope.

    Returns
    -------
    PhaseNoiseStability

    Raises
    ------
    InputError
        On a malformed table or argument.
    AnalysisError
        When a variance integral diverges at low offsets.
    """
    f, level, nu0, bandwidth, tau, names, beyond = _validate_conversion(
        offsets_hz, L_dbc_hz, nominal, f_h, taus, stats, beyond
    )
    s_y = (f / nu0) ** 2 * 2.0 * 10.0 ** (level / 10.0)
    psd = _FrequencyPSD(f, s_y, beyond)
    notes = [
        "L(f) interpolated linearly in log f; S_y = (f/nu0)^2 * 2 * 10^(L/10)",
        f"below {f[0]:g} Hz the first segment's slope (S_y ~ f^{psd.slope_low:.3g}) is continued",
    ]
    if bandwidth > f[-1]:
        rule = (
            f"its last segment's slope (S_y ~ f^{psd.slope_high:.3g})"
            if beyond == "slope"
            else "its last value"
        )
        notes.append(
            f"from {f[-1]:g} Hz to f_h = {bandwidth:g} Hz the table is continued by {rule}"
        )
    if any(_VARIANCE_OF[s] == "mvar" for s in names):
        notes.append(f"mdev/tdev assume samples spaced by tau0 = 1/(2 f_h) = {0.5 / bandwidth:g} s")
    cache: dict[str, np.ndarray] = {}
    deviations: dict[str, np.ndarray] = {}
    for name in names:
        variance = _VARIANCE_OF[name]
        if variance not in cache:
            values = np.array(
                [
                    _PREFACTOR[variance] / (math.pi * t) * _variance(variance, psd, t, bandwidth)
                    for t in tau
                ]
            )
            cache[variance] = np.sqrt(np.maximum(values, 0.0))
        dev = cache[variance]
        deviations[name] = tau * dev / math.sqrt(3.0) if name == "tdev" else dev.copy()
    return PhaseNoiseStability(
        tau=tau.copy(),
        deviations=deviations,
        nominal=nu0,
        f_h=bandwidth,
        beyond=beyond,
        notes=notes,
    )
