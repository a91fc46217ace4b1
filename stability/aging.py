"""Aging of a device over its calibrations: a weighted fit of the frequency offset over time.

Each calibration record states the device's fractional frequency offset with a
standard uncertainty. Over the records the offset follows the device's aging.
Two models of the offset y at t days after the first calibration are offered:

``linear``
    y = a + b t, the usual model of a mature quartz or rubidium oscillator.
``log``
    y = a + b ln(1 + t / t_c), the logarithmic aging of a young quartz crystal
    (NIST SP 1065 [1]_ section 5.16 gives y = a ln(bt + 1) for the frequency
    after turn-on); the time constant t_c is fixed (30 days unless given), so
    the model stays linear in its parameters (a, b).

``auto`` takes the log model when at least four records are there and its
weighted residual sum of squares is the smaller of the two; both models have
two parameters, so this is also the choice Akaike's information criterion [4]_
makes (from memory); with fewer records, ``linear``.

The fit is weighted least squares with weights 1/u_i^2 from the stated
uncertainties, the common scale of the weights estimated from the residuals
(Draper and Smith [2]_, chapter 9): s^2 = chi^2 / (n - 2), whose square root is
the Birge ratio (1 when the scatter between calibrations is what the stated
uncertainties say). With X the design matrix and A = X'WX:

* the fitted mean at x0 has the interval  y(x0) +- t_q s sqrt(x0' A^-1 x0);
* a future calibration at x0, stated with uncertainty u0, lies in the
  prediction interval  y(x0) +- t_q s sqrt(u0^2 + x0' A^-1 x0),

with t_q the two-sided Student-t quantile of n - 2 degrees of freedom
(``scipy.stats.t``). Under the model and normal errors both are exact
(NIST/SEMATECH e-Handbook [3]_ section 4.5.2.2 for the unweighted form).

Calibration intervals
    :func:`longest_interval` finds how long after the last calibration the
    prediction interval stays within +-tolerance. This predicts the drift of
    the measured quantity from the calibration results over calendar time,
    the approach of the "control chart" method (method 2, calendar time) of
    ILAC-G24 / OIML D 10 [5]_ (from memory), rather than the "staircase"
    method 1, which adjusts the interval step by step from in- or
    out-of-tolerance findings. It is statistical and assumes the aging model;
    the interval itself is the laboratory's decision under its own procedure.

References
----------
.. [1] W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065
   (2008), section 5.16 (frequency drift; log model after turn-on).
.. [2] N. R. Draper, H. Smith, *Applied Regression Analysis*, 3rd ed., Wiley
   (1998), chapter 9 (generalised and weighted least squares).
.. [3] NIST/SEMATECH e-Handbook of Statistical Methods, section 4.5.2.2
   (prediction intervals of a fitted model) (from memory).
.. [4] H. Akaike, "A new look at the statistical model identification", IEEE
   Trans. Automatic Control 19(6), 716-723 (1974).
.. [5] ILAC-G24:2022 / OIML D 10:2022, *Guidelines for the determination of
   recalibration intervals of measuring equipment* (from memory).
"""

from __future__ import annotations

import calendar
import dataclasses
import math
import re
from collections.abc import Sequence
from dataclasses import dataclass, field
from datetime import UTC, datetime, timedelta
from typing import Any, Literal

import numpy as np

from .errors import InputError
from .intervals import check_confidence

__all__ = [
    "AGING_MODELS",
    "LOG_TIME_CONSTANT_DAYS",
    "SEARCH_HORIZON_MONTHS",
    "KeyTau",
    "Calibration",
    "AgingFit",
    "Prediction",
    "CalendarInterval",
    "parse_interval",
    "fit_aging",
    "fit_calibrations",
    "longest_interval",
]

AGING_MODELS = ("auto", "linear", "log")
#: Time constant t_c of the log model, days.
LOG_TIME_CONSTANT_DAYS = 30.0
#: How far past the last calibration :func:`longest_interval` looks, in months.
SEARCH_HORIZON_MONTHS = 60
_DAY = 86400.0


# ---------------------------------------------------------------------- the data
@dataclass(frozen=True)
class KeyTau:
    """The deviation at one judged tau of one calibration (a listed tau of the spec)."""

    statistic: str
    tau_s: float
    deviation: float | None
    ci_low: float | None
    ci_high: float | None
    limit: float | None
    verdict: str | None
    noise: str = ""


@dataclass(frozen=True)
class Calibration:
    """One calibration of a device, as the history holds it.

    ``when`` is the start of the measurement (the analysis time when the log had
    no time stamps); ``offset`` and ``drift_per_day`` are fractional frequency
    with their standard uncertainties (None when the record had none).
    """

    number: int
    when: datetime
    offset: float | None
    u_offset: float | None
    drift_per_day: float | None = None
    u_drift_per_day: float | None = None
    verdict: str = ""
    key_taus: tuple[KeyTau, ...] = ()


# ---------------------------------------------------------------------- intervals
_INTERVAL = re.compile(
    r"^\s*(?P<n>\d+(?:\.\d+)?)\s*(?P<unit>mo|mon|month|months|y|yr|yrs|year|years|"
    r"w|wk|wks|week|weeks|d|day|days)\s*$",
    re.IGNORECASE,
)


@dataclass(frozen=True)
class CalendarInterval:
    """A calibration interval in calendar months or in days (``12mo``, ``90d``)."""

    months: int = 0
    days: int = 0

    def __post_init__(self) -> None:
        if self.months < 0 or self.days < 0 or (self.months == 0 and self.days == 0):
            raise InputError(f"a calibration interval must be positive, got {self.text}")

    @property
    def text(self) -> str:
        """The canonical spelling: ``12mo``, ``90d``, or ``12mo+5d``."""
        parts = [f"{self.months}mo" if self.months else "", f"{self.days}d" if self.days else ""]
        return "+".join(p for p in parts if p) or "0d"

    def after(self, moment: datetime) -> datetime:
        """``moment`` plus this interval; a month end is kept within the month (31 Jan + 1mo)."""
        month0 = moment.month - 1 + self.months
        year, month = moment.year + month0 // 12, month0 % 12 + 1
        day = min(moment.day, calendar.monthrange(year, month)[1])
        return moment.replace(year=year, month=month, day=day) + timedelta(days=self.days)


def parse_interval(text: Any) -> CalendarInterval:
    """A calibration interval from ``12mo``, ``1y``, ``18 months``, ``26w`` or ``90d``.

    Months and years are calendar months (a year is 12 months and must come to
    whole months); weeks and days are days.
    """
    if isinstance(text, CalendarInterval):
        return text
    match = _INTERVAL.match(str(text))
    if match is None:
        raise InputError(
            f"cannot read the calibration interval {text!r}",
            hint="write it as 12mo, 1y, 26w or 90d",
        )
    number, unit = float(match["n"]), match["unit"].lower()
    per = {"m": 1, "y": 12, "w": 7, "d": 1}[unit[0]]
    value = number * per
    if value != round(value) or value <= 0:
        raise InputError(
            f"the calibration interval {text!r} is not a positive whole number of "
            f"{'months' if unit[0] in 'my' else 'days'}"
        )
    if unit[0] in "my":
        return CalendarInterval(months=int(round(value)))
    return CalendarInterval(days=int(round(value)))


# ---------------------------------------------------------------------- the fit
@dataclass(frozen=True)
class Prediction:
    """The fitted model at some times: mean, its confidence band, the prediction interval."""

    t_days: np.ndarray
    mean: np.ndarray
    band_low: np.ndarray
    band_high: np.ndarray
    low: np.ndarray
    high: np.ndarray
    confidence: float


@dataclass(frozen=True)
class AgingFit:
    """A weighted least-squares fit of the offset over the calibrations (module docstring).

    Attributes
    ----------
    model
        ``"linear"`` or ``"log"``.
    why
        How the model was chosen, in words.
    origin
        The moment t = 0 (the first calibration).
    t_days, offset, u_offset
        The calibrations fitted (days after ``origin``; fractional frequency).
    coef
        (a, b) of the model.
    inverse
        A^-1 = (X'WX)^-1, unscaled; the covariance of ``coef`` is ``scale**2 * inverse``.
    scale
        The Birge ratio s = sqrt(chi^2 / dof); NaN with no degree of freedom.
    dof
        Degrees of freedom n - 2.
    log_days
        The log model's time constant t_c (days).
    u_next
        The stated uncertainty assumed for the next calibration (the last one's).
    """

    model: Literal["linear", "log"]
    why: str
    origin: datetime
    t_days: np.ndarray
    offset: np.ndarray
    u_offset: np.ndarray
    coef: np.ndarray
    inverse: np.ndarray
    scale: float
    dof: int
    log_days: float = LOG_TIME_CONSTANT_DAYS
    u_next: float = math.nan
    skipped: tuple[int, ...] = field(default=())

    def days(self, moment: datetime) -> float:
        """Days from the first calibration to ``moment``."""
        return (moment - self.origin).total_seconds() / _DAY

    def design(self, t_days: Any) -> np.ndarray:
        """Rows x(t) of the design matrix: (1, t) or (1, ln(1 + t / t_c))."""
        t = np.atleast_1d(np.asarray(t_days, dtype=float))
        shape = t if self.model == "linear" else np.log1p(np.maximum(t, 0.0) / self.log_days)
        return np.column_stack([np.ones_like(t), shape])

    def value(self, t_days: Any) -> np.ndarray:
        """The fitted offset at ``t_days``."""
        return self.design(t_days) @ self.coef

    def rate_per_day(self, t_days: float | None = None) -> tuple[float, float]:
        """(aging rate per day, its standard uncertainty) at ``t_days`` (default: the last record).

        For the linear model the rate is b at every time; for the log model it
        is b / (t_c + t).
        """
        t = float(self.t_days[-1] if t_days is None else t_days)
        factor = 1.0 if self.model == "linear" else 1.0 / (self.log_days + max(t, 0.0))
        u_b = self.scale * math.sqrt(self.inverse[1, 1]) if self.dof > 0 else math.nan
        return float(self.coef[1] * factor), float(u_b * factor)

    def predict(self, t_days: Any, confidence: float = 0.95) -> Prediction:
        """The mean, its confidence band and the prediction interval at ``t_days``.

        The prediction interval is for the offset a next calibration would
        state, with the uncertainty :attr:`u_next`; without a degree of freedom
        the bands are NaN.
        """
        level = check_confidence(confidence, "confidence")
        x = self.design(t_days)
        mean = x @ self.coef
        leverage = np.einsum("ij,jk,ik->i", x, self.inverse, x)
        if self.dof > 0:
            from scipy.stats import t as student_t

            q = float(student_t.ppf(0.5 + level / 2.0, self.dof))
            half_band = q * self.scale * np.sqrt(leverage)
            half_pred = q * self.scale * np.sqrt(self.u_next**2 + leverage)
        else:
            half_band = half_pred = np.full_like(mean, np.nan)
        return Prediction(
            t_days=np.atleast_1d(np.asarray(t_days, dtype=float)),
            mean=mean,
            band_low=mean - half_band,
            band_high=mean + half_band,
            low=mean - half_pred,
            high=mean + half_pred,
            confidence=level,
        )


def _validate_fit_args(t: Any, y: Any, u: Any, model: Any, log_days: Any) -> tuple[np.ndarray, ...]:
    if model not in AGING_MODELS:
        raise InputError(
            f"unknown aging model {model!r}", hint=f"choose one of {', '.join(AGING_MODELS)}"
        )
    if not isinstance(log_days, int | float) or not math.isfinite(log_days) or log_days <= 0:
        raise InputError(f"log_days must be a positive number of days, got {log_days!r}")
    arrays = [np.atleast_1d(np.asarray(a, dtype=float)) for a in (t, y, u)]
    if len({a.shape for a in arrays}) != 1 or arrays[0].ndim != 1:
        raise InputError("t_days, offset and u_offset must be 1-d arrays of one length")
    t, y, u = arrays
    if not (np.isfinite(t).all() and np.isfinite(y).all()):
        raise InputError("t_days and offset must be finite")
    if not (np.isfinite(u).all() and (u > 0).all()):
        raise InputError("every stated uncertainty u_offset must be positive and finite")
    if t.size < 2:
        raise InputError(
            f"an aging fit needs at least two calibrations with an offset, got {t.size}"
        )
    if np.unique(t).size < 2:
        raise InputError("an aging fit needs calibrations on at least two different dates")
    if (np.diff(t) < 0).any():
        raise InputError("t_days must be in time order")
    return t, y, u


def _weighted_fit(
    x: np.ndarray, y: np.ndarray, u: np.ndarray
) -> tuple[np.ndarray, np.ndarray, float]:
    """(coef, A^-1, chi^2) of the weighted least-squares fit, by QR of the whitened system."""
    xw, yw = x / u[:, None], y / u
    q, r = np.linalg.qr(xw)
    coef = np.linalg.solve(r, q.T @ yw)
    r_inv = np.linalg.inv(r)
    residual = yw - xw @ coef
    return coef, r_inv @ r_inv.T, float(residual @ residual)


def fit_aging(
    t_days: Any,
    offset: Any,
    u_offset: Any,
    *,
    model: str = "auto",
    log_days: float = LOG_TIME_CONSTANT_DAYS,
    origin: datetime | None = None,
) -> AgingFit:
    """Fit the aging model to offsets ``offset +- u_offset`` at ``t_days`` (module docstring).

    Parameters
    ----------
    t_days
        Days after the first calibration, in time order.
    offset, u_offset
        Fractional frequency offsets and their standard uncertainties (all > 0).
    model
        ``"linear"``, ``"log"`` or ``"auto"`` (the stated criterion).
    log_days
        Time constant t_c of the log model, days.
    origin
        The moment t = 0, kept with the fit for :meth:`AgingFit.days` (default
        1970-01-01 UTC).

    Returns
    -------
    AgingFit
    """
    t, y, u = _validate_fit_args(t_days, offset, u_offset, model, log_days)
    fits = {}
    for name in ("linear", "log"):
        shape = t if name == "linear" else np.log1p(t / log_days)
        fits[name] = _weighted_fit(np.column_stack([np.ones_like(t), shape]), y, u)
    if model == "auto":
        if t.size < 4:
            chosen = "linear"
            why = "auto: linear (fewer than four records to tell the shapes apart)"
        else:
            chosen = "log" if fits["log"][2] < fits["linear"][2] else "linear"
            why = (
                f"auto: {chosen} (the smaller weighted residual sum of squares, "
                f"linear {fits['linear'][2]:.3g}, log {fits['log'][2]:.3g})"
            )
    else:
        chosen, why = model, f"{model} (as asked)"
    coef, inverse, chi2 = fits[chosen]
    dof = t.size - 2
    return AgingFit(
        model=chosen,  # type: ignore[arg-type]
        why=why,
        origin=origin if origin is not None else datetime(1970, 1, 1, tzinfo=UTC),
        t_days=t,
        offset=y,
        u_offset=u,
        coef=coef,
        inverse=inverse,
        scale=math.sqrt(chi2 / dof) if dof > 0 else math.nan,
        dof=dof,
        log_days=float(log_days),
        u_next=float(u[-1]),
    )


def fit_calibrations(
    calibrations: Sequence[Calibration],
    *,
    model: str = "auto",
    log_days: float = LOG_TIME_CONSTANT_DAYS,
) -> AgingFit:
    """:func:`fit_aging` over a device's calibrations; those without offset or u are skipped.

    t = 0 is the first calibration used; the numbers of skipped calibrations are
    in :attr:`AgingFit.skipped`.
    """
    ordered = sorted(calibrations, key=lambda c: c.when)
    used = [
        c
        for c in ordered
        if c.offset is not None
        and c.u_offset is not None
        and math.isfinite(c.offset)
        and math.isfinite(c.u_offset)
        and c.u_offset > 0
    ]
    numbers = {id(c) for c in used}
    skipped = tuple(c.number for c in ordered if id(c) not in numbers)
    if len(used) < 2:
        raise InputError(
            f"an aging fit needs at least two calibrations with an offset and its "
            f"uncertainty, got {len(used)}"
        )
    origin = used[0].when
    t = [(c.when - origin).total_seconds() / _DAY for c in used]
    fit = fit_aging(
        t,
        [c.offset for c in used],
        [c.u_offset for c in used],
        model=model,
        log_days=log_days,
        origin=origin,
    )
    return dataclasses.replace(fit, skipped=skipped)


# ---------------------------------------------------------------------- intervals from the fit
def _check_tolerance(tolerance: Any) -> float:
    if (
        not isinstance(tolerance, int | float)
        or isinstance(tolerance, bool)
        or not math.isfinite(tolerance)
        or tolerance <= 0
    ):
        raise InputError(f"tolerance must be a positive number, got {tolerance!r}")
    return float(tolerance)


def longest_interval(
    fit: AgingFit,
    tolerance: float,
    *,
    confidence: float = 0.95,
    start: datetime | None = None,
    horizon_months: int = SEARCH_HORIZON_MONTHS,
) -> tuple[int, float] | None:
    """The longest interval after ``start`` for which the prediction stays within +-tolerance.

    The prediction interval at ``confidence`` is evaluated day by day from
    ``start`` (default: the last calibration fitted) up to ``horizon_months``.

    Returns
    -------
    (months, days) or None
        The largest whole number of calendar months and the number of days
        (from ``start``) for which the interval stays within +-tolerance
        every day; (0, 0.0) when it is not within at ``start`` itself; None
        without a degree of freedom to predict with.
    """
    tol = _check_tolerance(tolerance)
    if fit.dof < 1:
        return None
    begin = start if start is not None else fit.origin + timedelta(days=float(fit.t_days[-1]))
    end = CalendarInterval(months=int(horizon_months)).after(begin)
    t0 = fit.days(begin)
    days = np.arange(0.0, math.floor((end - begin).total_seconds() / _DAY) + 1.0)
    pred = fit.predict(t0 + days, confidence)
    inside = (pred.low >= -tol) & (pred.high <= tol)
    if not inside[0]:
        return 0, 0.0
    outside = np.flatnonzero(~inside)
    last = float(days[-1] if outside.size == 0 else days[outside[0] - 1])
    months = 0
    while months < horizon_months:
        step = CalendarInterval(months=months + 1).after(begin)
        if (step - begin).total_seconds() / _DAY > last:
            break
        months += 1
    return months, last
