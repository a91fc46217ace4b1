"""A device's history reviewed: due date, aging fit, prediction at the due date, interval.

:func:`review_device` gathers what ``stability history --device ID`` shows: the
device's calibrations, the interval in force (given, else stored for the
device, else 12 months) and the due date (last calibration + interval), the
aging fit (:mod:`stability.aging`), the prediction interval of the offset at
the due date, whether it stays within a tolerance every day until then, and
the longest interval for which it does. The prediction is statistical and
assumes the aging model; the interval is the laboratory's decision under its
own procedure.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from datetime import UTC, datetime
from typing import Any, Literal

import numpy as np

from ..aging import (
    AGING_MODELS,
    LOG_TIME_CONSTANT_DAYS,
    AgingFit,
    CalendarInterval,
    Calibration,
    Prediction,
    fit_calibrations,
    longest_interval,
    parse_interval,
)
from ..display import Displayable
from ..display import plot as _plot
from ..errors import InputError, StabilityError
from ..files import jsonable
from ..intervals import check_confidence
from .store import DeviceSummary, HistoryStore

__all__ = ["DEFAULT_INTERVAL", "DeviceReview", "review_device", "due_date", "interval_in_force"]

#: The calibration interval when none is given or stored.
DEFAULT_INTERVAL = CalendarInterval(months=12)


@dataclass(frozen=True)
class DeviceReview(Displayable):
    """What the history says about one device (see :func:`review_device`).

    Attributes
    ----------
    device
        The device's summary.
    calibrations
        Its calibrations, oldest first.
    interval, interval_from
        The interval in force and where it came from (``"given"``, ``"stored"``,
        ``"default"``).
    due
        Last calibration + interval.
    fit
        The aging fit, or None with the reason in ``fit_note``.
    confidence
        Level of the bands and prediction intervals.
    at_due
        The prediction at the due date, or None.
    tolerance
        The tolerance asked about, or None.
    within
        Whether the prediction interval stays within +-tolerance every day from
        the last calibration to the due date (None without tolerance or prediction).
    longest
        (months, days) of the longest such interval (:func:`stability.aging.longest_interval`).
    """

    device: DeviceSummary
    calibrations: list[Calibration]
    interval: CalendarInterval
    interval_from: Literal["given", "stored", "default"]
    due: datetime
    fit: AgingFit | None
    fit_note: str
    confidence: float
    at_due: Prediction | None
    tolerance: float | None
    within: bool | None
    longest: tuple[int, float] | None

    @property
    def last(self) -> Calibration:
        """The latest calibration."""
        return self.calibrations[-1]

    def plot(self, ax: Any = None, *, figure: Any = None, **options: Any) -> Any:
        """The device's history as ``stability history --device`` draws it.

        ``ax``: an ``Axes`` (or two: the offsets, then the key taus) in a
        figure the caller lays out; ``figure``: a ``Figure`` or ``SubFigure``
        to draw into; neither: a figure of its own (never pyplot). ``options``
        are those of :func:`stability.figures.history_figure` (title, footer).
        Returns the :class:`stability.figures.HistoryDrawn`.
        """
        return _plot(self, ax=ax, figure=figure, **options)

    def overdue(self, now: datetime | None = None) -> bool:
        """Whether the due date has passed."""
        return (now or datetime.now(UTC)) > self.due

    def to_dict(self) -> dict[str, Any]:
        """The review as JSON types (what ``stability history --device ID --json`` prints)."""
        fit = self.fit
        fitted = None
        if fit is not None:
            rate, u_rate = fit.rate_per_day()
            fitted = {
                "model": fit.model,
                "why": fit.why,
                "origin": fit.origin,
                "log_time_constant_days": fit.log_days if fit.model == "log" else None,
                "coefficients": list(fit.coef),
                "covariance": (fit.scale**2 * fit.inverse).tolist() if fit.dof > 0 else None,
                "birge_ratio": fit.scale,
                "dof": fit.dof,
                "rate_per_day_at_last": rate,
                "u_rate_per_day_at_last": u_rate,
                "records_skipped": list(fit.skipped),
            }
        at_due = None
        if self.at_due is not None:
            at_due = {
                "offset": float(self.at_due.mean[0]),
                "band": [float(self.at_due.band_low[0]), float(self.at_due.band_high[0])],
                "prediction_interval": [float(self.at_due.low[0]), float(self.at_due.high[0])],
            }
        return jsonable(
            {
                "device": self.device,
                "calibrations": self.calibrations,
                "interval": self.interval.text,
                "interval_from": self.interval_from,
                "last_calibration": self.last.when,
                "due": self.due,
                "confidence": self.confidence,
                "fit": fitted,
                "fit_note": self.fit_note,
                "at_due": at_due,
                "tolerance": self.tolerance,
                "within_tolerance_until_due": self.within,
                "longest_interval": None
                if self.longest is None
                else {"months": self.longest[0], "days": self.longest[1]},
            }
        )


def due_date(last: datetime, interval: CalendarInterval) -> datetime:
    """The next due date: the last calibration plus the interval."""
    return interval.after(last)


def interval_in_force(
    given: CalendarInterval | str | None, stored: str | None
) -> tuple[CalendarInterval, Literal["given", "stored", "default"]]:
    """The interval that sets a due date, and where it came from.

    ``given`` (the command line's ``--interval``) wins; else the device's
    ``stored`` interval; else :data:`DEFAULT_INTERVAL`.
    """
    if given is not None:
        return parse_interval(given), "given"
    if stored:
        return parse_interval(stored), "stored"
    return DEFAULT_INTERVAL, "default"


def _within_until(
    fit: AgingFit, last: datetime, due: datetime, tolerance: float, confidence: float
) -> bool:
    start = fit.days(last)
    end = max(start, fit.days(due))
    days = np.append(np.arange(start, end, 1.0), end)
    pred = fit.predict(days, confidence)
    return bool(((pred.low >= -tolerance) & (pred.high <= tolerance)).all())


def review_device(
    store: HistoryStore,
    device_id: str,
    *,
    interval: CalendarInterval | str | None = None,
    tolerance: float | None = None,
    model: str = "auto",
    confidence: float = 0.95,
    log_days: float = LOG_TIME_CONSTANT_DAYS,
) -> DeviceReview:
    """Review one device of ``store`` (module docstring).

    Parameters
    ----------
    interval
        The calibration interval (``12mo``); default: the device's stored one, else 12 months.
    tolerance
        Offset tolerance (fractional frequency) to test the prediction against.
    model
        Aging model: ``auto``, ``linear`` or ``log`` (:mod:`stability.aging`).
    confidence
        Level of the bands and of the prediction interval.
    log_days
        Time constant of the log model, days.
    """
    if model not in AGING_MODELS:
        raise InputError(
            f"unknown aging model {model!r}", hint=f"choose one of {', '.join(AGING_MODELS)}"
        )
    level = check_confidence(confidence, "confidence")
    if tolerance is not None and (
        isinstance(tolerance, bool)
        or not isinstance(tolerance, int | float)
        or not math.isfinite(tolerance)
        or tolerance <= 0
    ):
        raise InputError(f"tolerance must be a positive number, got {tolerance!r}")
    summary = store.device(device_id)
    calibrations = store.calibrations(device_id)
    if not calibrations:
        raise InputError(f"device {device_id!r} has no record in the history", path=str(store.path))
    chosen, source = interval_in_force(interval, summary.interval)
    due = due_date(calibrations[-1].when, chosen)
    fit: AgingFit | None = None
    note = ""
    try:
        fit = fit_calibrations(calibrations, model=model, log_days=log_days)
        note = fit.why
        if fit.dof < 1:
            note += "; three records or more are needed for a prediction interval"
    except StabilityError as exc:
        note = exc.message
    at_due = within = longest = None
    if fit is not None and fit.dof >= 1:
        at_due = fit.predict([fit.days(due)], level)
        if tolerance is not None:
            last = calibrations[-1].when
            within = _within_until(fit, last, due, float(tolerance), level)
            longest = longest_interval(fit, float(tolerance), confidence=level, start=last)
    return DeviceReview(
        device=summary,
        calibrations=calibrations,
        interval=chosen,
        interval_from=source,
        due=due,
        fit=fit,
        fit_note=note,
        confidence=level,
        at_due=at_due,
        tolerance=None if tolerance is None else float(tolerance),
        within=within,
        longest=longest,
    )
