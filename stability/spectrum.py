"""The spectrum of a log: S_y(f), S_x(f) and L(f) by Welch's method, with a chi-squared band.

The fractional-frequency series y of a measurement is cut into segments of L
samples that overlap by half; each segment is Hann-windowed, its mean removed,
and its one-sided periodogram formed as :func:`scipy.signal.welch` forms it (one
segment at a time, by :func:`scipy.fft.rfft`); the estimate is the
average over the segments [1]_. Segments that hold a gap (a
missing reading, or a frequency gap between phase segments) are left out and
counted: no value is invented to fill them.

Each averaged ordinate is taken as S(f) chi^2_nu / nu. For K segments with
window overlap correlations rho(j) (the correlation of the squared window with
itself shifted by j segment steps), the equivalent degrees of freedom are

    nu = 2 K^2 / sum_{i, k} rho(|i - k|)^2

over the kept segments i, k (Percival & Walden [2]_, eq. 292b; for an unbroken
record of Hann segments at 50 % overlap rho(1)^2 = 1/36 and nu ~ 1.89 K). The
band is [nu S / chi^2_{1-p/2}(nu), nu S / chi^2_{p/2}(nu)] at two-sided level p.
Neighbouring ordinates of a Hann periodogram are correlated (|rho| = 2/3 for the
next bin, 1/6 for the one after, [2]_ section 6.6); uncertainties of quantities
fitted over many bins are inflated by the factor 1 + 2 sum rho^2 accordingly.

From S_y: S_x(f) = S_y(f) / (2 pi f)^2 and, at the nominal frequency nu0,
L(f) = 10 log10(nu0^2 S_y(f) / (2 f^2)) dBc/Hz (IEEE 1139 [3]_; NIST SP 1065
[4]_ section 6). The power-law model S_y = sum h_alpha f^alpha is fitted to the
ordinates by iteratively reweighted non-negative least squares (each ordinate's
variance 2 S^2 / nu at the model's value), so it can be set beside the model that
``analyze`` fits to the Allan deviation: two views of one model.

References
----------
.. [1] P. D. Welch, "The use of fast Fourier transform for the estimation of power
   spectra", IEEE Trans. Audio Electroacoustics 15, 70-73 (1967).
.. [2] D. B. Percival, A. T. Walden, *Spectral Analysis for Physical Applications*,
   Cambridge University Press (1993), sections 6.6 and 6.17.
.. [3] IEEE Std 1139-2008, *Definitions of physical quantities for fundamental
   frequency and time metrology: random instabilities*.
.. [4] W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065 (2008).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from .display import Displayable
from .display import plot as _plot
from .errors import AnalysisError, InputError
from .intervals import check_confidence
from .measurement import Measurement
from .powerlaw import ALPHAS, PowerLawModel, nonnegative_least_squares

__all__ = ["Spectrum", "SpectrumFit", "welch_spectrum", "fit_spectrum", "WINDOW"]

#: The segment window (scipy.signal name) and the overlap of adjacent segments.
WINDOW = "hann"
OVERLAP = 0.5
#: Default number of half-overlapping segments in an unbroken record.
DEFAULT_SEGMENTS = 16
#: Fewest samples per segment.
MIN_SEGMENT = 16
#: Lowest ordinates left out of fits and line searches: the segment mean is removed
#: and the window leaks, so the first bins do not follow the power law.
LOW_BINS = 2
#: Fraction of the Nyquist frequency above which the sampled spectrum departs from
#: the continuous power law (aliasing of the discrete process); not fitted.
HIGH_FRACTION = 0.25
_REWEIGHT_STEPS = 12
#: Frequency samples scanned at a time for gaps (a block of y, 8 MB).
_SCAN = 1 << 20
#: Bands per decade in which ordinates are averaged before the power-law fit.
BANDS_PER_DECADE = 40
#: A fitted term is kept only when its coefficient is this many standard
#: uncertainties above zero (backward elimination, weakest term first).
_KEEP_Z = 2.0


@dataclass(frozen=True)
class SpectrumFit(Displayable):
    """h_alpha fitted to a spectrum.

    Attributes
    ----------
    h, u_h
        alpha -> coefficient and standard uncertainty (NaN where not fitted).
    f_range
        (lowest, highest) frequency of the ordinates fitted, Hz.
    bins
        Ordinates fitted.
    """

    h: dict[int, float]
    u_h: dict[int, float]
    f_range: tuple[float, float]
    bins: int

    def sy(self, f: Any) -> np.ndarray:
        f = np.asarray(f, dtype=float)
        return sum((h * f**a for a, h in self.h.items() if h > 0), np.zeros_like(f))

    def to_dict(self) -> dict[str, Any]:
        return {
            "h": {str(a): self.h.get(a, 0.0) for a in ALPHAS},
            "u_h": {
                str(a): (None if not math.isfinite(self.u_h.get(a, math.nan)) else self.u_h[a])
                for a in ALPHAS
            },
            "f_range_hz": list(self.f_range),
            "bins": self.bins,
        }


@dataclass(frozen=True)
class Spectrum(Displayable):
    """A Welch spectrum of fractional frequency with its chi-squared band.

    Attributes
    ----------
    f
        Frequencies in Hz (zero and the Nyquist frequency left out).
    s_y
        One-sided PSD of fractional frequency, 1/Hz.
    low, high
        The band at ``confidence`` for S_y (properties: S_y scaled by nu over the
        chi-squared quantiles, made on access so that a long record's spectrum
        holds two arrays, f and S_y).
    edf
        Equivalent degrees of freedom of every ordinate.
    confidence
        Two-sided level of the band.
    tau0
        Sample interval of y, s.
    segment_length
        Samples per segment (L); the resolution is 1 / (L tau0).
    segments_used, segments_left_out
        Segments averaged, and segments left out because they hold a gap.
    nominal
        Nominal frequency in Hz for L(f), or None.
    fit
        The power-law model fitted to the spectrum, or None.
    bin_correlation
        1 + 2 sum rho^2 of neighbouring ordinates (the inflation of fitted
        uncertainties).
    """

    f: np.ndarray
    s_y: np.ndarray
    edf: float
    confidence: float
    tau0: float
    segment_length: int
    segments_used: int
    segments_left_out: int
    nominal: float | None = None
    fit: SpectrumFit | None = None
    bin_correlation: float = 1.0
    notes: list[str] = field(default_factory=list)

    def __repr__(self) -> str:
        fit = "" if self.fit is None else f", fit of {self.fit.bins} ordinates"
        return (
            f"Spectrum({self.f.size} frequencies {self.f[0]:.4g} to {self.f[-1]:.4g} Hz, "
            f"{self.segments_used} segments of {self.segment_length} samples, "
            f"{self.edf:.3g} dof{fit})"
        )

    def _quantiles(self) -> tuple[float, float]:
        """chi^2_nu quantiles with upper-tail probabilities (1 - p)/2 and (1 + p)/2."""
        from scipy.special import chdtri  # scipy.special loads on first use

        tail = (1.0 - self.confidence) / 2.0
        return float(chdtri(self.edf, tail)), float(chdtri(self.edf, 1.0 - tail))

    @property
    def low(self) -> np.ndarray:
        """Lower end of the band: nu S_y / chi^2 at upper-tail probability (1 - p)/2."""
        return self.edf * self.s_y / self._quantiles()[0]

    @property
    def high(self) -> np.ndarray:
        """Upper end of the band: nu S_y / chi^2 at upper-tail probability (1 + p)/2."""
        return self.edf * self.s_y / self._quantiles()[1]

    @property
    def s_x(self) -> np.ndarray:
        """One-sided PSD of phase (time error), s^2/Hz: S_y / (2 pi f)^2."""
        return self.s_y / (2.0 * math.pi * self.f) ** 2

    def phase_noise(self) -> np.ndarray | None:
        """L(f) in dBc/Hz at the nominal frequency, or None without one."""
        if self.nominal is None:
            return None
        return 10.0 * np.log10(self.nominal**2 * self.s_y / (2.0 * self.f**2))

    @property
    def resolution(self) -> float:
        return 1.0 / (self.segment_length * self.tau0)

    def plot(self, ax: Any = None, *, figure: Any = None, **options: Any) -> Any:
        """The spectrum as ``stability spectrum`` draws it: S_y with its band, then L(f) or S_x.

        Parameters
        ----------
        ax
            One or two matplotlib ``Axes`` (S_y, then L(f) or S_x) to draw into,
            in a figure the caller lays out. None draws a figure of its own
            (``matplotlib.figure.Figure``, never pyplot).
        figure
            A ``Figure`` or ``SubFigure`` to draw the whole figure into instead.
        options
            Those of :func:`stability.figures.spectrum_figure`: ``lines`` (periodic
            components to mark, :func:`stability.periodic.find_lines`), ``models``
            (default: the spectrum's own power-law fit), title, footer.

        Returns
        -------
        stability.figures.SpectrumDrawn
            The figure, its panels (``.axes``) and the data as drawn.
        """
        return _plot(self, ax=ax, figure=figure, **options)

    def fit_mask(self) -> np.ndarray:
        """Ordinates that follow the power law (used by fits and line searches)."""
        nyquist = 0.5 / self.tau0
        mask = np.zeros(self.f.size, dtype=bool)  # ordinate k = index + 1 > LOW_BINS
        np.less_equal(self.f[LOW_BINS:], HIGH_FRACTION * nyquist, out=mask[LOW_BINS:])
        return mask

    def to_frame(self) -> pd.DataFrame:
        data = {
            "f_hz": self.f,
            "s_y_per_hz": self.s_y,
            "s_y_low": self.low,
            "s_y_high": self.high,
            "s_x_s2_per_hz": self.s_x,
        }
        lf = self.phase_noise()
        if lf is not None:
            data["L_dbc_hz"] = lf
        return pd.DataFrame(data)

    def describe(self) -> dict[str, Any]:
        """The settings and counts, for a summary."""
        return {
            "method": "Welch (Hann window, scipy.fft)",
            "window": WINDOW,
            "overlap": OVERLAP,
            "segment_length": self.segment_length,
            "segment_s": self.segment_length * self.tau0,
            "resolution_hz": self.resolution,
            "segments_used": self.segments_used,
            "segments_left_out_for_gaps": self.segments_left_out,
            "edf": self.edf,
            "confidence": self.confidence,
            "nominal_hz": self.nominal,
            "fit": None if self.fit is None else self.fit.to_dict(),
            "notes": list(self.notes),
        }


def _overlap_rho(window: np.ndarray, step: int, lags: int) -> np.ndarray:
    """rho(j): correlation of the squared window with itself shifted by j steps."""
    w2 = window**2
    total = float(w2.sum())
    out = np.zeros(lags + 1)
    for j in range(lags + 1):
        shift = j * step
        if shift >= window.size:
            break
        out[j] = float(np.dot(window[: window.size - shift], window[shift:])) / total
    return out


def _bin_correlation(window: np.ndarray) -> float:
    """1 + 2 sum_j |rho_j|^2 of neighbouring periodogram ordinates (j = 1, 2, 3)."""
    spectrum = np.fft.rfft(window**2)  # rho_j = |sum_t w_t^2 e^(-2 pi i j t / n)| / sum w^2
    rho = np.abs(spectrum[1:4]) / spectrum[0].real
    return 1.0 + 2.0 * float(np.sum(rho * rho))


def _edf(kept: np.ndarray, rho: np.ndarray) -> float:
    """nu = 2 K^2 / sum_{i,k} rho(|i - k|)^2 over kept segment indices (P&W eq. 292b)."""
    k = kept.size
    total = float(k)
    for j in range(1, rho.size):
        if rho[j] == 0.0:
            break
        pairs = np.count_nonzero(np.isin(kept + j, kept))
        total += 2.0 * pairs * rho[j] ** 2
    return 2.0 * k * k / total


def _smooth_below(n: int) -> int:
    """The largest 2^a 3^b 5^c <= n (fast Fourier transforms), n itself below 16."""
    if n < MIN_SEGMENT:
        return n
    best = 1
    p2 = 1
    while p2 <= n:
        p3 = p2
        while p3 <= n:
            p5 = p3
            while p5 <= n:
                best = max(best, p5)
                p5 *= 5
            p3 *= 3
        p2 *= 2
    return best


def _segments_holding_gaps(
    measurement: Measurement, count: int, length: int, step: int
) -> np.ndarray:
    """Which of the ``count`` segments (segment i is y[i step : i step + length]) hold a
    non-finite y, found block by block from the phase: no array of the record's length.

    A non-finite y[j] lies in segments ceil((j - length + 1) / step) to floor(j / step);
    each marks the start and the end of its range in a difference array over segments.
    """
    marks = np.zeros(count + 1, dtype=np.int64)
    for first, _, y in measurement.frequency_blocks(_SCAN, reuse=True):
        bad = np.flatnonzero(~np.isfinite(y)) + first
        del y
        low = np.maximum(-((length - 1 - bad) // step), 0)
        high = np.minimum(bad // step, count - 1)
        inside = low <= high
        np.add.at(marks, low[inside], 1)
        np.add.at(marks, high[inside] + 1, -1)
    return np.cumsum(marks[:count]) > 0


def _validate(measurement: Any, segments: Any, confidence: Any) -> tuple[int, float]:
    if not isinstance(measurement, Measurement):
        raise InputError(
            f"measurement must be a stability.Measurement, got {type(measurement).__name__}"
        )
    if isinstance(segments, bool) or not isinstance(segments, int | np.integer) or segments < 1:
        raise InputError(f"segments must be a whole number >= 1, got {segments!r}")
    return int(segments), check_confidence(confidence)


def welch_spectrum(
    measurement: Measurement,
    *,
    segments: int = DEFAULT_SEGMENTS,
    confidence: float = 0.683,
    nominal: float | None = None,
    fit: bool = True,
) -> Spectrum:
    """Welch spectrum of a measurement's fractional frequency.

    Parameters
    ----------
    measurement
        The data; gaps are honoured (segments holding one are left out).
    segments
        Number of half-overlapping segments an unbroken record of the same
        length would give: the segment length is floor(2 M / (segments + 1))
        for M frequency samples, rounded down to a product of 2, 3 and 5 (for
        fast transforms), so a few more segments may fit.
    confidence
        Two-sided level of the band.
    nominal
        Nominal frequency in Hz for L(f) (default: the measurement's).
    fit
        Fit the power-law model to the spectrum.
    """
    from scipy.fft import rfft, rfftfreq

    count, p = _validate(measurement, segments, confidence)
    samples = measurement.n - 1  # frequency samples
    length = _smooth_below(int(2 * samples // (count + 1)))
    if length < MIN_SEGMENT:
        raise AnalysisError(
            f"{samples} frequency samples are too few for {count} segments of at least "
            f"{MIN_SEGMENT} samples",
            hint="ask for fewer segments (--segments) or use a longer log",
        )
    step = max(1, int(round(length * (1.0 - OVERLAP))))
    starts = np.arange(0, samples - length + 1, step)
    holds_gap = _segments_holding_gaps(measurement, starts.size, length, step)
    kept = np.flatnonzero(~holds_gap)
    if kept.size == 0:
        raise AnalysisError(
            f"every segment of {length} samples holds a gap: no spectrum can be formed",
            hint="ask for more, shorter segments (--segments)",
        )
    window = hann_window(length)
    rho = _overlap_rho(window, step, lags=int(math.ceil(length / step)))
    correlation = _bin_correlation(window)
    # Welch's estimate: the mean over the gap-free segments of |rfft(w (y - mean y))|^2,
    # scaled to a density by 1/(fs sum w^2) and doubled except at 0 and Nyquist, as
    # scipy.signal.welch forms it (its detrend="constant", scaling="density"; the tests
    # compare the two). welch itself, and scipy.signal.ShortTimeFFT reused on blocks of
    # segments, hold the segments' padded, detrended, windowed and transformed copies
    # at once: 28.7 and 7.5 B/row above entry at 10^7 rows. One segment at a time, in a
    # buffer made from the phase, holds one segment and its transform: 3 B/row.
    scale = measurement.tau0 / float(np.einsum("i,i->", window, window))
    total = np.zeros(length // 2 + 1)
    buffer = np.empty(length)
    for segment in kept:
        first = int(starts[segment])
        y = measurement.frequency(first, first + length, out=buffer)
        y -= y.mean()
        y *= window
        transform = rfft(y)
        power = np.abs(transform)
        del transform
        power *= power
        total += power
        del power
    del buffer, window
    total *= scale
    total[1 : -1 if length % 2 == 0 else None] *= 2.0  # one-sided: both signs of f
    s_y = np.divide(total, kept.size, out=total)
    f = rfftfreq(length, measurement.tau0)
    inner = slice(1, f.size - 1 if length % 2 == 0 else f.size)
    f, s_y = f[inner], s_y[inner]
    nu = _edf(kept, rho)
    notes = [
        f"Welch spectrum: {kept.size} Hann-windowed segments of {length} samples "
        f"({length * measurement.tau0:g} s) at 50 % overlap, {nu:.1f} degrees of freedom"
    ]
    if holds_gap.any():
        notes.append(f"{int(holds_gap.sum())} segment(s) holding a gap were left out")
    spec = Spectrum(
        f=f,
        s_y=s_y,
        edf=nu,
        confidence=p,
        tau0=measurement.tau0,
        segment_length=length,
        segments_used=int(kept.size),
        segments_left_out=int(holds_gap.sum()),
        nominal=measurement.nominal if nominal is None else float(nominal),
        bin_correlation=correlation,
        notes=notes,
    )
    if not fit:
        return spec
    return Spectrum(**{**spec.__dict__, "fit": fit_spectrum(spec)})


def hann_window(length: int) -> np.ndarray:
    """The periodic Hann window of ``length`` points, as ``scipy.signal.get_window("hann",
    length)`` builds it (0.5 + 0.5 cos over length + 1 points from -pi to pi, the last
    dropped). Formed here because importing scipy.signal costs about a second of every
    analyze (scipy 1.17), for a window of one line."""
    fac = np.linspace(-np.pi, np.pi, length + 1)[:-1]
    return 0.5 + 0.5 * np.cos(fac)


def _bands(f: np.ndarray, s: np.ndarray, alphas: list[int]) -> tuple[np.ndarray, ...]:
    """Ordinates averaged in log-spaced bands (BANDS_PER_DECADE): (design, mean, count).

    The design holds the band mean of f^alpha, so the band mean of S_y has the
    model's expectation exactly; a band of n ordinates has n times their degrees of
    freedom (less their correlation, carried by the caller).
    """
    edges = np.exp(
        np.arange(math.log(f[0]), math.log(f[-1]) + 1e-12, math.log(10) / BANDS_PER_DECADE)
    )
    band = np.searchsorted(edges, f, side="right")
    _, index, count = np.unique(band, return_inverse=True, return_counts=True)
    mean = np.bincount(index, weights=s) / count
    design = np.column_stack([np.bincount(index, weights=f**a) / count for a in alphas])
    return design, mean, count.astype(float)


def _reweighted(
    f: np.ndarray, s: np.ndarray, terms: list[int], spectrum: Spectrum
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Non-negative IRLS fit of the terms; (coefficients, covariance, model at the bands)."""
    design, mean, count = _bands(f, s, terms)
    root = np.sqrt(count)
    model = mean.copy()
    coef = np.zeros(len(terms))
    for _ in range(_REWEIGHT_STEPS):
        w = root / np.maximum(model, 1e-300)
        scale = np.linalg.norm(design * w[:, None], axis=0)
        scale = np.where(scale > 0, scale, 1.0)
        coef = nonnegative_least_squares(design * w[:, None] / scale, mean * w) / scale
        new = np.maximum(design @ coef, 1e-300)
        done = np.all(np.abs(new - model) <= 1e-6 * np.abs(model))
        model = new
        if done:
            break
    sub = design * (root / model)[:, None]
    cov = np.linalg.pinv(sub.T @ sub) * (2.0 / spectrum.edf) * spectrum.bin_correlation
    return coef, cov, model


def fit_spectrum(
    spectrum: Spectrum,
    alphas: tuple[int, ...] = ALPHAS,
    *,
    mask: np.ndarray | None = None,
) -> SpectrumFit | None:
    """Fit S_y = sum h_alpha f^alpha to the ordinates that follow the power law.

    The ordinates are first averaged in bands of 1/40 decade (a band of n
    ordinates has about n nu degrees of freedom); then weighted non-negative least
    squares, the weights the inverse standard deviation sqrt(n nu / 2) / S at the
    model's own value (reweighted until it settles). The weakest term is dropped
    while it is less than two standard uncertainties above zero, and the rest
    refitted; the uncertainties carry the correlation of neighbouring ordinates.
    """
    use = spectrum.fit_mask() if mask is None else mask
    f, s = spectrum.f[use], spectrum.s_y[use]
    if f.size < 3:
        return None
    terms = list(alphas)
    while True:
        coef, cov, model = _reweighted(f, s, terms, spectrum)
        z = {
            a: c / math.sqrt(cov[j, j]) if cov[j, j] > 0 else math.inf
            for j, (a, c) in enumerate(zip(terms, coef, strict=True))
        }
        weakest = min(terms, key=lambda a: z[a])
        if len(terms) == 1 or z[weakest] >= _KEEP_Z:
            break
        terms.remove(weakest)
    h = {a: 0.0 for a in alphas}
    u = {a: math.nan for a in alphas}
    for j, a in enumerate(terms):
        h[a] = float(coef[j])
        u[a] = float(math.sqrt(max(cov[j, j], 0.0)))
    return SpectrumFit(h=h, u_h=u, f_range=(float(f.min()), float(f.max())), bins=int(f.size))


def compare_models(fit: SpectrumFit | None, model: PowerLawModel | None) -> list[dict[str, Any]]:
    """h_alpha of the spectrum fit beside the Allan-deviation model, with the difference in
    combined standard uncertainties (None where either lacks the term's uncertainty)."""
    rows: list[dict[str, Any]] = []
    if fit is None or model is None:
        return rows
    for a in ALPHAS:
        hs, ha = fit.h.get(a, 0.0), model.h.get(a, 0.0)
        if hs <= 0 and ha <= 0:
            continue
        us, ua = fit.u_h.get(a, math.nan), model.u_h.get(a, math.nan)
        comb = math.hypot(us if math.isfinite(us) else 0.0, ua if math.isfinite(ua) else 0.0)
        rows.append(
            {
                "alpha": a,
                "h_spectrum": hs,
                "u_spectrum": us if math.isfinite(us) else None,
                "h_allan": ha,
                "u_allan": ua if math.isfinite(ua) else None,
                "z": (hs - ha) / comb if comb > 0 else None,
            }
        )
    return rows
