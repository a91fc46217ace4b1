"""The aging fit of a calibration history: recovery of a known rate, interval coverage, intervals.

Invented histories: offsets on a known line (or log curve) with normal scatter of
each record's stated uncertainty. Under that model the weighted least-squares
slope over its standard error is Student-t with n - 2 degrees of freedom, and
the prediction interval of a next calibration covers it with the nominal
probability (Draper & Smith, *Applied Regression Analysis*, 3rd ed., 1998,
chapter 9; NIST/SEMATECH e-Handbook section 4.5.2.2, from memory). Coverage over
seeds is judged with a binomial test, as scipy.stats does for its intervals.
"""

from __future__ import annotations

import math
from datetime import UTC, datetime, timedelta

import numpy as np
import pytest
from scipy import stats

from stability.aging import (
    CalendarInterval,
    Calibration,
    fit_aging,
    fit_calibrations,
    longest_interval,
    parse_interval,
)
from stability.errors import InputError

A, B = 5e-10, 2e-13  # intercept and aging per day (7.3e-11 a year)
YEARS = 10
T = np.arange(YEARS) * 365.25


def _history(seed: int, *, log: bool = False) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    rng = np.random.default_rng(seed)
    if log:  # monthly checks of a young crystal: a + b ln(1 + t / 30 d)
        t = np.arange(12) * 30.0
        truth = A + 2e-10 * np.log1p(t / 30.0)
    else:
        t = T
        truth = A + B * t
    u = rng.uniform(1e-11, 3e-11, t.size)
    return t, truth + u * rng.standard_normal(t.size), u


def test_validation_messages():
    with pytest.raises(InputError, match="unknown aging model 'cubic'"):
        fit_aging(T, T, T + 1, model="cubic")
    with pytest.raises(InputError, match="log_days must be a positive number"):
        fit_aging(T, T, T + 1, log_days=0)
    with pytest.raises(InputError, match="1-d arrays of one length"):
        fit_aging(T, T[:3], T + 1)
    with pytest.raises(InputError, match="must be finite"):
        fit_aging(T, np.full(T.size, np.nan), T + 1)
    with pytest.raises(InputError, match="positive and finite"):
        fit_aging(T, T, np.zeros(T.size))
    with pytest.raises(InputError, match="at least two calibrations"):
        fit_aging([0.0], [1e-9], [1e-11])
    with pytest.raises(InputError, match="two different dates"):
        fit_aging([0.0, 0.0], [1e-9, 2e-9], [1e-11, 1e-11])
    with pytest.raises(InputError, match="time order"):
        fit_aging([5.0, 0.0], [1e-9, 2e-9], [1e-11, 1e-11])
    with pytest.raises(InputError, match="cannot read the calibration interval '12 parsecs'"):
        parse_interval("12 parsecs")
    with pytest.raises(InputError, match="whole number of months"):
        parse_interval("1.01y")
    with pytest.raises(InputError, match="not a positive whole number of months"):
        parse_interval("0mo")
    with pytest.raises(InputError, match="must be positive"):
        CalendarInterval()
    fit = fit_aging(*_history(1))
    with pytest.raises(InputError, match="tolerance must be a positive number"):
        longest_interval(fit, -1.0)
    with pytest.raises(InputError, match="confidence must lie strictly between 0 and 1"):
        fit.predict([0.0], 1.5)
    with pytest.raises(InputError, match="at least two calibrations with an offset"):
        fit_calibrations([Calibration(1, datetime(2020, 1, 1, tzinfo=UTC), None, None)])


def test_calendar_intervals():
    # calendar arithmetic: a month end stays in its month, a leap day rolls to 28 Feb
    assert parse_interval("12mo") == CalendarInterval(months=12)
    assert parse_interval("1y") == parse_interval("12 months") == CalendarInterval(months=12)
    assert parse_interval("18 months").text == "18mo"
    assert parse_interval("26w") == CalendarInterval(days=182)
    assert parse_interval("90d").text == "90d"
    jan31 = datetime(2023, 1, 31, tzinfo=UTC)
    assert CalendarInterval(months=1).after(jan31) == datetime(2023, 2, 28, tzinfo=UTC)
    leap = datetime(2024, 2, 29, 12, tzinfo=UTC)
    assert CalendarInterval(months=12).after(leap) == datetime(2025, 2, 28, 12, tzinfo=UTC)
    assert CalendarInterval(days=90).after(jan31) == jan31 + timedelta(days=90)


def test_rate_recovered_within_its_uncertainty():
    # one invented history: the fitted rate lies within t(0.975, 8) standard errors of the truth
    fit = fit_aging(*_history(3), model="linear")
    rate, u_rate = fit.rate_per_day()
    assert fit.dof == YEARS - 2
    assert abs(rate - B) <= stats.t.ppf(0.975, fit.dof) * u_rate
    # closed form of weighted simple regression (Draper & Smith ch. 9):
    # Var(b) = s^2 / sum w (t - t_w)^2, s^2 = sum w r^2 / (n - 2), w = 1/u^2
    t, y, u = _history(3)
    w = 1.0 / u**2
    t_w = np.sum(w * t) / np.sum(w)
    residual = y - fit.value(t)
    s2 = np.sum(w * residual**2) / (t.size - 2)
    assert u_rate == pytest.approx(math.sqrt(s2 / np.sum(w * (t - t_w) ** 2)), rel=1e-9)
    # weighted least squares against numpy's weighted polyfit (w = 1/u on the residuals)
    slope, intercept = np.polyfit(t, y, 1, w=1.0 / u)
    assert rate == pytest.approx(slope, rel=1e-9)
    assert fit.coef[0] == pytest.approx(intercept, rel=1e-9)


def test_rate_error_is_student_t_over_seeds():
    # (b - B)/u_b ~ t(8): the fraction within one standard error is P(|t_8| <= 1) = 0.653
    inside = 0
    trials = 400
    for seed in range(trials):
        rate, u_rate = fit_aging(*_history(1000 + seed), model="linear").rate_per_day()
        inside += abs(rate - B) <= u_rate
    expected = 2 * stats.t.cdf(1.0, YEARS - 2) - 1
    assert stats.binomtest(inside, trials, expected).pvalue > 1e-3, inside


@pytest.mark.parametrize("log", [False, True], ids=["linear", "log"])
def test_prediction_interval_covers_the_next_calibration(log):
    # a next calibration one year (linear) or two months (log) after the last, stated
    # with the last record's uncertainty: covered by the 95 % prediction interval in
    # 95 % of invented histories; the band of the mean covers the true curve as often
    trials, level = 400, 0.95
    covered = band = 0
    for seed in range(trials):
        t, y, u = _history(2000 + seed, log=log)
        fit = fit_aging(t, y, u, model="log" if log else "linear")
        ahead = t[-1] + (60.0 if log else 365.25)
        truth = A + (2e-10 * math.log1p(ahead / 30.0) if log else B * ahead)
        rng = np.random.default_rng(90_000 + seed)
        observed = truth + u[-1] * rng.standard_normal()
        pred = fit.predict([ahead], level)
        covered += bool(pred.low[0] <= observed <= pred.high[0])
        band += bool(pred.band_low[0] <= truth <= pred.band_high[0])
    assert stats.binomtest(covered, trials, level).pvalue > 1e-3, covered
    assert stats.binomtest(band, trials, level).pvalue > 1e-3, band


def test_auto_model_choice():
    # the stated criterion: the smaller weighted residual sum of squares (four records or more)
    assert fit_aging(*_history(7, log=True), model="auto").model == "log"
    assert fit_aging(*_history(7), model="auto").model == "linear"
    t, y, u = _history(7, log=True)
    few = fit_aging(t[:3], y[:3], u[:3], model="auto")
    assert few.model == "linear" and "fewer than four" in few.why


def test_longest_interval_is_the_last_day_within_tolerance():
    fit = fit_aging(*_history(11), model="linear")
    last = fit.origin + timedelta(days=float(fit.t_days[-1]))
    tol = 1.5e-9
    months, days = longest_interval(fit, tol, confidence=0.95)
    # brute force over days: within on every day up to `days`, out on the day after
    grid = fit.t_days[-1] + np.arange(0.0, days + 2.0)
    pred = fit.predict(grid, 0.95)
    inside = (pred.low >= -tol) & (pred.high <= tol)
    assert inside[: int(days) + 1].all() and not inside[int(days) + 1]
    # the months are whole calendar months ending within those days
    assert CalendarInterval(months=months).after(last) <= last + timedelta(days=days)
    assert CalendarInterval(months=months + 1).after(last) > last + timedelta(days=days)
    # out of tolerance already at the last calibration: no interval; no dof: no answer
    assert longest_interval(fit, 1e-10) == (0, 0.0)
    two = fit_aging(fit.t_days[:2], fit.offset[:2], fit.u_offset[:2])
    assert longest_interval(two, tol) is None
    # a tolerance never reached within the search horizon gives the whole horizon
    months_far, _ = longest_interval(fit, 1.0, horizon_months=24)
    assert months_far == 24


def test_fit_over_calibrations_skips_records_without_offset():
    start = datetime(2018, 5, 1, tzinfo=UTC)
    t, y, u = _history(5)
    cals = [
        Calibration(k + 1, start + timedelta(days=float(tk)), float(yk), float(uk))
        for k, (tk, yk, uk) in enumerate(zip(t, y, u, strict=True))
    ]
    cals.insert(3, Calibration(99, start + timedelta(days=1000), None, None))
    fit = fit_calibrations(cals, model="linear")
    assert fit.skipped == (99,)
    assert fit.origin == start
    direct = fit_aging(t, y, u, model="linear")
    np.testing.assert_allclose(fit.coef, direct.coef, rtol=1e-12)
    assert fit.days(start + timedelta(days=10)) == pytest.approx(10.0)
