"""Environmental sensitivity: the fractional frequency regressed on an auxiliary quantity.

The model is y(t) = c + d t + beta u_lag(t) + noise, where u is the auxiliary
quantity (temperature, pressure, humidity, supply voltage) and u_lag its response
through a first-order thermal lag of time constant tc (u_lag follows u as
du_lag/dt = (u - u_lag) / tc; tc = 0 is no lag), searched over a stated range.

The noise of an oscillator is not white: flicker and random-walk FM put most of
their power at low frequencies, where the environment also varies, so the
ordinary least-squares standard error of beta is far too small. The regression is
therefore done in the frequency domain with weights from the noise model
(generalised least squares in the form of Hannan's efficient regression, [1]_
[2]_): the discrete Fourier transforms of y and of the regressors at the Fourier
frequencies f_k are weighted by 1 / sqrt(S(f_k)), where S = sum h_alpha f^alpha
is the power-law model fitted (:mod:`stability.spectrum`) to the Welch spectrum
of the residuals of a first pass. The constant is the zero frequency, which is
left out. The residual scale is estimated from the weighted residuals, so the
model need only have the right shape. The lag is found by minimising the weighted
residual sum of squares (profile likelihood); its interval is where that sum
rises by one residual variance (Delta chi^2 = 1), and the standard uncertainty
of beta combines its uncertainty at the lag found with half the spread of beta
over that interval, so it includes the uncertainty of the lag [3]_.

Missing samples of y or u are filled by straight lines between their neighbours
for the Fourier transforms only, and counted; a series with more than
``MAX_FILLED`` of its samples missing is refused.

References
----------
.. [1] E. J. Hannan, "Regression for time series", in M. Rosenblatt (ed.), *Time
   Series Analysis*, Wiley (1963), pp. 17-37.
.. [2] D. B. Percival, A. T. Walden, *Spectral Analysis for Physical Applications*,
   Cambridge University Press (1993), section 6.
.. [3] JCGM 100:2008 (GUM), section 5 (combining standard uncertainties through
   sensitivity coefficients of a linearised model).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from .display import Displayable
from .display import plot as _plot
from .errors import AnalysisError, InputError
from .measurement import Measurement
from .spectrum import fit_spectrum, welch_spectrum

__all__ = ["Sensitivity", "regress", "lagged", "remove_effect", "aux_on_frequency_grid"]

#: Largest share of samples that may be missing (filled for the transforms only).
MAX_FILLED = 0.2
#: Time constants tried between the ends of the searched range (log-spaced).
LAG_GRID = 28
#: Default searched range of the thermal time constant, s.
DEFAULT_LAG_RANGE = (0.0, 3600.0)


@dataclass(frozen=True)
class Sensitivity(Displayable):
    """The fitted sensitivity of fractional frequency to an auxiliary quantity.

    Attributes
    ----------
    quantity, unit
        What was regressed on (e.g. ``temperature``, ``K``).
    coefficient, uncertainty
        beta per unit of the quantity, and its standard uncertainty from the
        generalised least squares (correlated noise and the lag's uncertainty
        included).
    white_uncertainty
        The ordinary least-squares standard error that treats the noise as white,
        for comparison (not to be used).
    lag, lag_interval
        The thermal time constant found, s, and its interval (Delta chi^2 = 1).
    lag_range
        The range searched, s.
    drift
        Linear frequency drift fitted alongside, per second.
    samples, filled
        Frequency samples used and those filled for the transforms.
    noise_model
        alpha -> h_alpha of the noise model that weights the regression.
    tau0
        Sample interval of the frequency series, s.
    series
        (fractional frequency as regressed, the quantity at its samples), missing
        values left as NaN, for :meth:`plot`; None when not kept.
    """

    quantity: str
    unit: str
    coefficient: float
    uncertainty: float
    white_uncertainty: float
    lag: float
    lag_interval: tuple[float, float]
    lag_range: tuple[float, float]
    drift: float
    samples: int
    filled: int
    noise_model: dict[int, float]
    notes: list[str] = field(default_factory=list)
    tau0: float = math.nan
    series: tuple[np.ndarray, np.ndarray] | None = field(default=None, repr=False, compare=False)

    def to_dict(self) -> dict[str, Any]:
        return {
            "quantity": self.quantity,
            "unit": self.unit,
            "coefficient_per_unit": self.coefficient,
            "uncertainty": self.uncertainty,
            "white_noise_uncertainty": self.white_uncertainty,
            "lag_s": self.lag,
            "lag_interval_s": list(self.lag_interval),
            "lag_range_s": list(self.lag_range),
            "drift_per_s": self.drift,
            "samples": self.samples,
            "filled": self.filled,
            "noise_model_h": {str(a): h for a, h in self.noise_model.items()},
            "method": "frequency-domain generalised least squares weighted by the fitted "
            "power-law noise model, first-order lag searched",
            "notes": list(self.notes),
        }

    def plot(self, ax: Any = None, *, figure: Any = None, **options: Any) -> Any:
        """Frequency and the quantity over time, and against each other (``--regress``).

        Draws the series the regression was fitted to with
        :func:`stability.figures.environment_figure`, the figure ``stability
        analyze --regress`` writes as ``environment.png``.

        Parameters
        ----------
        ax
            One or two matplotlib ``Axes`` (over time, then frequency against the
            quantity) to draw into. None draws a figure of its own (never pyplot).
        figure
            A ``Figure`` or ``SubFigure`` to draw the whole figure into instead.
        options
            Those of :func:`~stability.figures.environment_figure` (aux_unit,
            title, footer).
        """
        return _plot(self, ax=ax, figure=figure, **options)

    def describe(self) -> str:
        return (
            f"{self.quantity} sensitivity {self.coefficient:.3g} +- {self.uncertainty:.2g} "
            f"per {self.unit} (standard uncertainty), thermal lag {self.lag:.4g} s"
        )


def lagged(u: Any, tau0: float, tc: float) -> np.ndarray:
    """u through a first-order lag of time constant tc (exact for u constant over a sample)."""
    from scipy.signal import lfilter  # loaded on first use

    u = np.asarray(u, dtype=float)
    if tc <= 0:
        return u.copy()
    a = 1.0 - math.exp(-tau0 / tc)
    out, _ = lfilter([a], [1.0, -(1.0 - a)], u, zi=[(1.0 - a) * u[0]])
    return out


def _filled(values: np.ndarray, name: str) -> tuple[np.ndarray, int]:
    good = np.isfinite(values)
    missing = int(values.size - good.sum())
    if good.sum() < 2:
        raise AnalysisError(f"{name} holds fewer than two readings: nothing to regress")
    if missing > MAX_FILLED * values.size:
        raise AnalysisError(
            f"{name} misses {missing} of {values.size} samples, more than "
            f"{MAX_FILLED:.0%}: the regression would rest on filled values",
            hint="regress a stretch of the log with fewer gaps",
        )
    if missing == 0:
        return values, 0
    idx = np.arange(values.size)
    return np.interp(idx, idx[good], values[good]), missing


def aux_on_frequency_grid(measurement: Measurement, name: str) -> np.ndarray:
    """The auxiliary series ``name`` at the measurement's frequency samples (n - 1).

    Frequency logs carry one auxiliary value per reading; phase logs one per phase
    sample, and the mean of the two ends is taken for each frequency interval.
    """
    aux = measurement.auxiliary or {}
    if name not in aux:
        known = ", ".join(aux) or "none"
        raise InputError(
            f"the log has no auxiliary column {name!r} (auxiliary columns: {known})",
            hint="name it with --aux NAME=COLUMN or give the column a header such as "
            "'temperature_C'",
        )
    values = np.asarray(aux[name].values, dtype=float)
    n_y = measurement.n - 1
    if values.size == n_y:
        return values
    if values.size == measurement.n:
        return 0.5 * (values[1:] + values[:-1])
    raise AnalysisError(
        f"auxiliary column {name!r} has {values.size} values for {n_y} frequency samples",
        hint="averaging (--average) changes the grid; regress without it",
    )


class _Problem:
    """The Fourier-domain pieces of one regression."""

    def __init__(self, y: np.ndarray, u: np.ndarray, tau0: float) -> None:
        self.n = y.size
        self.tau0 = tau0
        self.u = u
        self.t = np.arange(self.n) * tau0
        self.f = np.fft.rfftfreq(self.n, tau0)[1 : (self.n - 1) // 2 + 1]
        self.keep = slice(1, self.f.size + 1)
        self.Y = self.transform(y)
        self.T = self.transform(self.t)
        self.weight = np.ones(self.f.size)

    def set_model(self, h: dict[int, float]) -> None:
        s = sum((c * self.f**a for a, c in h.items() if c > 0), np.zeros_like(self.f))
        if not np.all(s > 0):
            s = np.ones_like(self.f)
        self.weight = 1.0 / np.sqrt(s)

    def transform(self, v: np.ndarray) -> np.ndarray:
        """Tapered transform of v less its mean, at the kept Fourier frequencies."""
        return np.fft.rfft(v - v.mean())[self.keep]

    def columns(self, tc: float) -> np.ndarray:
        return self.transform(lagged(self.u, self.tau0, tc))

    def solve(self, cols: list[np.ndarray]) -> tuple[np.ndarray, float, np.ndarray]:
        """(coefficients, residual sum of squares, unscaled covariance) of weighted LS.

        The real and imaginary parts of the weighted transforms are the rows; with
        two or three columns the normal equations (columns scaled to unit length)
        cost O(N), where a general least-squares solver would cost far more.
        """
        w2 = self.weight**2
        gram = np.array([[np.sum(w2 * (ci.conj() * cj).real) for cj in cols] for ci in cols])
        rhs = np.array([np.sum(w2 * (ci.conj() * self.Y).real) for ci in cols])
        scale = np.sqrt(np.diag(gram))
        scale = np.where(scale > 0, scale, 1.0)
        inverse = np.linalg.pinv(gram / np.outer(scale, scale)) / np.outer(scale, scale)
        coef = inverse @ rhs
        yy = float(np.sum(w2 * (self.Y.conj() * self.Y).real))
        rss = max(yy - float(coef @ rhs), 0.0)
        return coef, rss, inverse

    def rss(self, tc: float) -> float:
        return self.solve([self.columns(tc), self.T])[1]


def _lag_grid(lo: float, hi: float, tau0: float) -> np.ndarray:
    start = max(lo, tau0)
    grid = list(np.geomspace(start, hi, LAG_GRID)) if hi > start else [start]
    return np.array(([0.0] if lo <= 0 else []) + grid)


def _search(problem: _Problem, grid: np.ndarray, bounds: tuple[float, float]) -> float:
    from scipy.optimize import minimize_scalar  # loaded on first use

    rss = np.array([problem.rss(tc) for tc in grid])
    best = int(np.argmin(rss))
    if grid[best] <= 0 or grid.size < 3:
        return float(grid[best])
    lo = grid[max(best - 1, 0)] if grid[max(best - 1, 0)] > 0 else grid[best] / 2
    hi = grid[min(best + 1, grid.size - 1)]
    res = minimize_scalar(
        lambda v: problem.rss(math.exp(v)),
        bounds=(math.log(max(lo, bounds[0], 1e-12)), math.log(min(hi, bounds[1]))),
        method="bounded",
        options={"xatol": 1e-3},
    )
    return float(math.exp(res.x)) if res.fun <= rss[best] else float(grid[best])


def _lag_interval(
    problem: _Problem, tc: float, level: float, bounds: tuple[float, float]
) -> tuple[float, float]:
    """The lags whose residual sum of squares stays below ``level`` (Delta chi^2 = 1)."""
    from scipy.optimize import brentq  # loaded on first use

    def excess(t: float) -> float:
        return problem.rss(t) - level

    ends = []
    for edge in (max(bounds[0], 0.0), bounds[1]):
        if edge == tc or excess(edge) <= 0:
            ends.append(edge)
        else:
            tol = 1e-3 * max(tc, problem.tau0)
            ends.append(float(brentq(excess, min(tc, edge), max(tc, edge), xtol=tol)))
    return (min(ends), max(ends))


def _check(measurement: Any, aux: Any, lag_range: Any) -> tuple[np.ndarray, tuple[float, float]]:
    if not isinstance(measurement, Measurement):
        raise InputError(
            f"measurement must be a stability.Measurement, got {type(measurement).__name__}"
        )
    u = np.asarray(aux, dtype=float)
    if u.shape != (measurement.n - 1,):
        raise InputError(
            f"the auxiliary series must have one value per frequency sample "
            f"({measurement.n - 1}), got shape {u.shape}"
        )
    try:
        lo, hi = (float(v) for v in lag_range)
    except (TypeError, ValueError):
        raise InputError(f"lag_range must be two durations in s, got {lag_range!r}") from None
    if not (math.isfinite(lo) and math.isfinite(hi) and 0 <= lo <= hi):
        raise InputError(f"lag_range must satisfy 0 <= low <= high, got {lag_range!r}")
    return u, (lo, hi)


def regress(
    measurement: Measurement,
    aux: Any,
    *,
    quantity: str = "temperature",
    unit: str = "K",
    lag_range: tuple[float, float] = DEFAULT_LAG_RANGE,
) -> Sensitivity:
    """Sensitivity of fractional frequency to ``aux`` (one value per frequency sample).

    See the module docstring for the model, the weighting and the uncertainty.
    """
    u_raw, (lo, hi) = _check(measurement, aux, lag_range)
    tau0 = measurement.tau0
    y_raw = measurement.frequency()
    y, y_filled = _filled(y_raw, "the frequency series")
    u, u_filled = _filled(u_raw, f"the {quantity} series")
    if np.ptp(u) == 0:
        raise AnalysisError(f"the {quantity} series does not vary: no sensitivity can be fitted")
    problem = _Problem(y, u, tau0)
    grid = _lag_grid(lo, hi, tau0)
    tc = float(grid[np.argmin([problem.rss(t) for t in grid])])
    h: dict[int, float] = {}
    for _ in range(2):  # residual noise model, then the weighted search again
        coef, _, _ = problem.solve([problem.columns(tc), problem.T])
        resid = y - coef[0] * lagged(u, tau0, tc) - coef[1] * problem.t
        spec = welch_spectrum(Measurement.from_frequency(resid, tau0), segments=8, fit=False)
        fit = fit_spectrum(spec)
        h = {} if fit is None else {a: v for a, v in fit.h.items() if v > 0}
        problem.set_model(h)
        tc = _search(problem, grid, (lo, hi))
    cols = [problem.columns(tc), problem.T]
    coef, rss, cov = problem.solve(cols)
    dof = 2 * problem.f.size - 3
    s2 = rss / dof
    beta = float(coef[0])
    notes: list[str] = []
    u_cond = math.sqrt(max(cov[0, 0] * s2, 0.0))
    lag_interval = _lag_interval(problem, tc, rss + s2, (lo, hi))
    # the lag's share: the spread of beta over the lag's interval (profile likelihood)
    spread = [problem.solve([problem.columns(t), problem.T])[0][0] for t in lag_interval]
    u_beta = math.hypot(u_cond, 0.5 * (max(spread) - min(spread)))
    if (tc >= hi * 0.999 and hi > 0) or (tc <= lo and lo > 0):
        notes.append(f"the lag {tc:.4g} s lies at the edge of the searched range")
    white = _white_se(y, u, tau0, tc)
    if y_filled or u_filled:
        notes.append(
            f"{y_filled + u_filled} missing sample(s) filled by straight lines for the "
            "Fourier transforms only"
        )
    return Sensitivity(
        quantity=quantity,
        unit=unit,
        coefficient=beta,
        uncertainty=u_beta,
        white_uncertainty=white,
        lag=tc,
        lag_interval=lag_interval,
        lag_range=(lo, hi),
        drift=float(coef[1]),
        samples=int(y.size),
        filled=y_filled + u_filled,
        noise_model=h,
        notes=notes,
        tau0=float(tau0),
        series=(y_raw, u_raw),
    )


def _white_se(y: np.ndarray, u: np.ndarray, tau0: float, tc: float) -> float:
    """Ordinary least-squares standard error of beta, as if the noise were white."""
    t = np.arange(y.size) * tau0
    a = np.column_stack([np.ones_like(t), t, lagged(u, tau0, tc)])
    coef, *_ = np.linalg.lstsq(a, y, rcond=None)
    resid = y - a @ coef
    s2 = float(resid @ resid) / max(1, y.size - 3)
    return float(math.sqrt(s2 * np.linalg.pinv(a.T @ a)[2, 2]))


def remove_effect(measurement: Measurement, aux: Any, sensitivity: Sensitivity) -> Measurement:
    """The measurement with beta u_lag (less its mean) taken out of the frequency.

    The phase loses the running sum of the effect; gaps stay where they were and
    a note says what was removed.
    """
    u, _ = _filled(np.asarray(aux, dtype=float), f"the {sensitivity.quantity} series")
    effect = sensitivity.coefficient * lagged(u, measurement.tau0, sensitivity.lag)
    effect = effect - effect.mean()
    correction = np.concatenate([[0.0], np.cumsum(effect) * measurement.tau0])
    notes = list(measurement.notes)
    notes.append(
        f"Removed the fitted {sensitivity.quantity} effect "
        f"({sensitivity.coefficient:.3g} per {sensitivity.unit}, lag {sensitivity.lag:.4g} s) "
        "from the frequency before the statistics."
    )
    return measurement.replace(phase=measurement.phase - correction, notes=notes)
