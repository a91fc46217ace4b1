"""Periodic disturbances: spectral lines above the local power-law background.

A periodic frequency modulation (an air-conditioning cycle, a supply ripple)
puts a line in the Welch spectrum of fractional frequency. Each ordinate is
divided by the power-law model fitted to the spectrum, and the ratio by the
mean ratio of its 12 neighbours on each side (the line's own ordinate and its
next two neighbours on each side excluded): the local background. Under the
hypothesis of no line the ordinate is S chi^2_nu / nu and the background an
average of about n nu / c such variables (c the correlation factor of
neighbouring ordinates), so the ratio follows about an F(nu, n nu / c) law
[1]_. An ordinate is a line when its upper-tail probability is below
``false_alarm / tested``: the Bonferroni bound keeps the chance of one or more
false lines in the whole spectrum at most ``false_alarm`` [2]_.

For a line, the excess power over the background, summed over the line's
ordinates (a Hann window spreads a sinusoid over about three), is the power
A^2 / 2 of a sinusoid of amplitude A in fractional frequency; the period is the
reciprocal of the peak frequency, interpolated between ordinates.

Signature in the Allan deviation: the Allan variance is the integral of S_y
against the transfer function 2 sin^4(pi f tau) / (pi f tau)^2 (NIST TN 1337
[3]_, NIST SP 1065 [4]_ section 5.2.10), so a sinusoid of amplitude A and period
T contributes

    sigma_y(tau) = A sin^2(pi tau / T) / (pi tau / T),

which peaks where tan u = 2u, u = pi tau / T = 1.1656, i.e. at tau = 0.371 T with
the value 0.7246 A, and falls to zero at tau = T, 2T, ... (derived here from the
transfer function of [3]_; the bump near 0.37 T is the trade's rule of thumb).

References
----------
.. [1] D. B. Percival, A. T. Walden, *Spectral Analysis for Physical Applications*,
   Cambridge University Press (1993), section 10.9 (tests for periodicity against
   a coloured background).
.. [2] C. E. Bonferroni, "Teoria statistica delle classi e calcolo delle
   probabilita", Pubbl. R. Ist. Sup. Sci. Econ. Comm. Firenze 8 (1936); see any
   text on multiple testing.
.. [3] D. B. Sullivan, D. W. Allan, D. A. Howe, F. L. Walls (eds.),
   *Characterization of Clocks and Oscillators*, NIST Technical Note 1337 (1990).
.. [4] W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065 (2008).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from .display import Displayable
from .errors import InputError
from .spectrum import Spectrum, fit_spectrum

__all__ = [
    "Line",
    "find_lines",
    "sinusoid_adev",
    "PEAK_U",
    "PEAK_TAU_RATIO",
    "PEAK_VALUE",
    "affected_taus",
]

#: Default chance of reporting one or more lines in a spectrum of pure noise.
FALSE_ALARM = 0.01
#: Ordinates on each side of a tested one that make its local background.
NEIGHBOURS = 12
#: Ordinates on each side of a tested one left out of its background.
GUARD = 2
#: Fewest ordinates in a background window.
MIN_BACKGROUND = 8
#: The root of tan u = 2 u: where sin^2(u) / u peaks.
PEAK_U = 1.1655611852072114
PEAK_TAU_RATIO = PEAK_U / math.pi
PEAK_VALUE = math.sin(PEAK_U) ** 2 / PEAK_U


@dataclass(frozen=True)
class Line(Displayable):
    """A periodic component found in the spectrum.

    Attributes
    ----------
    frequency, period
        Hz and s (the peak, interpolated between ordinates).
    amplitude
        Amplitude A of the fractional-frequency sinusoid.
    p_value
        Upper-tail probability of the strongest ordinate against its background
        (not corrected for the number tested).
    threshold
        The probability it had to fall below (false_alarm / tested).
    resolution
        Ordinate spacing in Hz (the frequency's uncertainty is about a third of it).
    adev_peak_tau, adev_peak
        Where its Allan-deviation bump peaks (0.371 T) and its height (0.7246 A).
    """

    frequency: float
    period: float
    amplitude: float
    p_value: float
    threshold: float
    resolution: float
    adev_peak_tau: float
    adev_peak: float

    def to_dict(self) -> dict[str, Any]:
        return {
            "frequency_hz": self.frequency,
            "period_s": self.period,
            "amplitude": self.amplitude,
            "p_value": self.p_value,
            "threshold": self.threshold,
            "resolution_hz": self.resolution,
            "adev_peak_tau_s": self.adev_peak_tau,
            "adev_peak": self.adev_peak,
        }

    def describe(self) -> str:
        """The neutral one-line note, e.g. 'periodic component, period 1 210 s, ...'."""
        return (
            f"periodic component, period {_grouped(self.period)} s, amplitude {self.amplitude:.2g}"
        )


def _grouped(value: float) -> str:
    """A duration in whole seconds with thin groups of three digits (1 210, 86 400)."""
    text = f"{value:,.0f}" if value >= 10 else f"{value:.3g}"
    return text.replace(",", " ")


def sinusoid_adev(tau: Any, amplitude: float, period: float) -> np.ndarray:
    """sigma_y(tau) = A sin^2(pi tau / T) / (pi tau / T) of a sinusoidal FM (TN 1337)."""
    u = math.pi * np.asarray(tau, dtype=float) / float(period)
    return float(amplitude) * np.sin(u) ** 2 / u


def affected_taus(line: Line, tau: Any, share: float = 0.5) -> np.ndarray:
    """Which taus of a grid lie in the line's first Allan-deviation lobe above
    ``share`` of its peak (a boolean mask)."""
    t = np.asarray(tau, dtype=float)
    sig = sinusoid_adev(t, line.amplitude, line.period)
    return (t < line.period) & (sig >= share * line.adev_peak)


def _check(spectrum: Any, false_alarm: Any) -> float:
    if not isinstance(spectrum, Spectrum):
        raise InputError(
            f"spectrum must be a stability.spectrum.Spectrum, got {type(spectrum).__name__}"
        )
    try:
        p = float(false_alarm)
    except (TypeError, ValueError):
        raise InputError(f"false_alarm must be a number in (0, 1), got {false_alarm!r}") from None
    if not 0.0 < p < 1.0:
        raise InputError(f"false_alarm must lie strictly between 0 and 1, got {false_alarm!r}")
    return p


def _background(ratio: np.ndarray, usable: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Mean of the neighbours' ratios within NEIGHBOURS ordinates, the guard bins left out.

    The window of ordinate i is [i - NEIGHBOURS, i + NEIGHBOURS] less [i - GUARD, i + GUARD],
    cut at the ends; its sum is a difference of running sums, read as shifted slices of
    the running sums padded with their end values (no index arrays).
    """
    n = ratio.size
    pad = NEIGHBOURS + 1

    def padded(values: np.ndarray) -> np.ndarray:
        """c[t + pad] = sum(values[:clip(t, 0, n)]) for t in [-pad, n + pad)."""
        out = np.zeros(n + 2 * pad, dtype=values.dtype)
        np.cumsum(values, out=out[pad + 1 : pad + 1 + n])
        out[pad + 1 + n :] = out[pad + n]
        return out

    def window(c: np.ndarray, before: int, after: int) -> np.ndarray:
        """sum over [clip(i - before), clip(i + after + 1)) for every i."""
        return c[pad + after + 1 : pad + after + 1 + n] - c[pad - before : pad - before + n]

    csum = padded(np.where(usable, ratio, 0.0))
    total = window(csum, NEIGHBOURS, NEIGHBOURS)
    total -= window(csum, GUARD, GUARD)
    del csum
    ccount = padded(usable.astype(np.int64))
    count = window(ccount, NEIGHBOURS, NEIGHBOURS)
    count -= window(ccount, GUARD, GUARD)
    del ccount
    with np.errstate(invalid="ignore", divide="ignore"):
        mean = np.where(count > 0, total / np.maximum(count, 1), np.nan)
    return mean, count


def _peak_frequency(spectrum: Spectrum, k: int) -> float:
    """Frequency of the peak near ordinate k: the parabola through the logarithms of
    the highest ordinate and its two neighbours (a Hann line's log shape is close to
    a parabola; Percival & Walden section 10.9 discuss such refinements)."""
    s = spectrum.s_y
    top = k
    for j in (k - 1, k + 1):
        if 0 <= j < s.size and s[j] > s[top]:
            top = j
    if top == 0 or top == s.size - 1:
        return float(spectrum.f[top])
    a, b, c = np.log(s[top - 1 : top + 2])
    denom = a - 2.0 * b + c
    delta = 0.5 * (a - c) / denom if denom < 0 else 0.0
    return float(spectrum.f[top] + np.clip(delta, -0.5, 0.5) * spectrum.resolution)


def find_lines(spectrum: Spectrum, *, false_alarm: float = FALSE_ALARM) -> list[Line]:
    """Spectral lines standing above the local power-law background.

    Parameters
    ----------
    spectrum
        A Welch spectrum (:func:`stability.spectrum.welch_spectrum`).
    false_alarm
        Chance of one or more false lines in a spectrum of pure power-law noise
        (Bonferroni over the ordinates tested).

    Returns
    -------
    list of Line
        Strongest first.
    """
    # the F distribution's upper tail, as scipy.stats.f.sf computes it; scipy.stats
    # itself is not loaded for it (its import costs about 0.4 s of every analyze)
    from scipy.special import fdtrc

    alpha_fa = _check(spectrum, false_alarm)
    mask = spectrum.fit_mask()
    fit = spectrum.fit if spectrum.fit is not None else fit_spectrum(spectrum)
    if fit is None or mask.sum() < MIN_BACKGROUND:
        return []
    # every ordinate tested or in a background lies in the mask (the lowest quarter of
    # the spectrum), so the search works on that stretch and GUARD ordinates either
    # side (for a line's power), not the whole spectrum: at 10^7 rows 8.1 -> 1.3 B/row
    where = np.flatnonzero(mask)
    start = max(0, int(where[0]) - GUARD)
    stop = min(spectrum.f.size, int(where[-1]) + GUARD + 1)
    del where
    s_y = spectrum.s_y[start:stop]
    model = fit.sy(spectrum.f[start:stop])
    usable = mask[start:stop] & (model > 0)
    del mask
    ratio = np.where(usable, s_y / np.where(model > 0, model, 1.0), np.nan)
    background, count = _background(ratio, usable)
    tested = usable & (count >= MIN_BACKGROUND) & np.isfinite(background) & (background > 0)
    n_tested = int(tested.sum())
    if n_tested == 0:
        return []
    nu = spectrum.edf
    pval = np.ones(s_y.size)
    pval[tested] = fdtrc(
        nu,
        np.maximum(count[tested] * nu / spectrum.bin_correlation, 1.0),
        ratio[tested] / background[tested],
    )
    threshold = alpha_fa / n_tested
    hits = np.flatnonzero(pval < threshold)
    lines: list[Line] = []
    df = spectrum.resolution
    taken = np.zeros(s_y.size, dtype=bool)
    for k in hits[np.argsort(pval[hits])]:
        if taken[k]:
            continue
        lo, hi = max(0, k - GUARD), min(s_y.size, k + GUARD + 1)
        taken[lo:hi] = True
        base = background[k] * model[lo:hi]
        excess = np.clip(s_y[lo:hi] - base, 0.0, None)
        power = float(excess.sum() * df)
        if power <= 0:
            continue
        centre = _peak_frequency(spectrum, start + int(k))
        amp = math.sqrt(2.0 * power)
        period = 1.0 / centre
        lines.append(
            Line(
                frequency=centre,
                period=period,
                amplitude=amp,
                p_value=float(pval[k]),
                threshold=threshold,
                resolution=df,
                adev_peak_tau=PEAK_TAU_RATIO * period,
                adev_peak=PEAK_VALUE * amp,
            )
        )
    return lines
