"""Drift models: fit, remove, and the phase-based estimators.

Models and estimators: NIST SP 1065 (2008), data preprocessing (drift from
phase: quadratic fit, three-point, mean second difference; from frequency:
linear fit, log model y = a ln(bt + 1) + c, diffusion model y = a + b sqrt(t + c)).
Acceptance within 3 standard errors is common practice. Data are invented, generated
in code with fixed seeds.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

from stability import AnalysisError, InputError, Measurement, StabilityWarning
from stability.prepare import (
    DRIFT_MODELS,
    bisection_drift,
    fit_drift,
    mean_second_difference_drift,
    remove_drift,
    three_point_drift,
)

DAY = 86400.0


def _drifting(seed: int, rate: float = 1e-10, noise: float = 1e-12, n: int = 86_400):
    t = (np.arange(n) + 0.5) / DAY  # mid-times in days, tau0 = 1 s
    rng = np.random.default_rng(seed)
    return 2e-8 + rate * t + rng.normal(scale=noise, size=n)


def test_drift_validation_messages() -> None:
    m = Measurement.from_frequency(_drifting(0, n=100), 1.0)
    with pytest.raises(InputError, match=r"model must be one of none, linear, quadratic, log"):
        fit_drift(m, "cubic")  # type: ignore[arg-type]
    with pytest.raises(InputError, match=r"model must be one of .* got 3"):
        remove_drift(m, 3)  # type: ignore[arg-type]
    for func in (
        fit_drift,
        remove_drift,
        three_point_drift,
        mean_second_difference_drift,
        bisection_drift,
    ):
        with pytest.raises(InputError, match=rf"{func.__name__}: measurement must be"):
            func(np.zeros(5))  # type: ignore[arg-type]
    assert set(DRIFT_MODELS) == {"none", "linear", "quadratic", "log", "diffusion"}


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_linear_drift_recovered_within_three_standard_errors(seed: int) -> None:
    # 1e-10/day drift, 1e-12 white FM, tau0 = 1 s, one day (invented).
    m = Measurement.from_frequency(_drifting(seed), 1.0)
    fit = fit_drift(m, "linear")
    assert abs(fit.per_day - 1e-10) < 3 * fit.per_day_error
    # Least-squares slope error for white noise: sigma * sqrt(12 / N) / T (common practice).
    assert fit.per_day_error == pytest.approx(1e-12 * math.sqrt(12 / 86_400), rel=0.05)
    assert abs(fit.coefficients["offset"] - 2e-8) < 3 * fit.errors["offset"]
    assert fit.n_used == 86_400 and fit.span_days == pytest.approx(1.0, rel=1e-4)
    assert fit.residual_rms == pytest.approx(1e-12, rel=0.02)
    assert "linear drift 1e-10" in fit.description
    json.dumps(fit.to_dict())


def test_phase_kind_linear_and_quadratic_models() -> None:
    rng = np.random.default_rng(4)
    n = 20_000
    tau0 = 10.0
    t = (np.arange(n) + 0.5) * tau0 / DAY
    y = 1e-9 - 3e-11 * t + 4e-12 * t**2 + rng.normal(scale=1e-12, size=n)
    x = np.concatenate([[0.0], np.cumsum(y) * tau0])
    m = Measurement.from_phase(x, tau0)
    quad = fit_drift(m, "quadratic")
    for name, true in (("offset", 1e-9), ("drift_per_day", -3e-11), ("curvature_per_day2", 4e-12)):
        assert abs(quad.coefficients[name] - true) < 3 * quad.errors[name], name
    span = quad.span_days
    assert abs(quad.per_day - (-3e-11 + 4e-12 * span)) < 3 * quad.per_day_error
    np.testing.assert_allclose(quad.frequency_at(quad.t), quad.y_model)
    none = fit_drift(m, "none")
    assert none.per_day == 0.0 and none.coefficients["offset"] == pytest.approx(np.mean(y))


def test_log_model_converges_on_log_data() -> None:
    rng = np.random.default_rng(5)
    n = 20_000
    tau0 = 10.0
    t = (np.arange(n) + 0.5) * tau0 / DAY
    y = 3e-9 * np.log1p(2.0 * t) - 1e-9 + rng.normal(scale=1e-12, size=n)
    fit = fit_drift(Measurement.from_frequency(y, tau0), "log")
    for name, true in (("a", 3e-9), ("b_per_day", 2.0), ("c", -1e-9)):
        assert abs(fit.coefficients[name] - true) < 3 * fit.errors[name], name
    days = fit.span_days
    assert fit.per_day == pytest.approx(3e-9 * math.log1p(2.0 * days) / days, rel=1e-3)
    new, removed = remove_drift(Measurement.from_frequency(y, tau0), "log")
    assert removed.model == "log"
    assert fit_drift(new, "linear").per_day == pytest.approx(0.0, abs=1e-13)


def test_log_model_on_noise_raises_with_hint() -> None:
    m = Measurement.from_frequency(np.random.default_rng(6).normal(scale=1e-12, size=2000), 1.0)
    with pytest.raises(AnalysisError, match=r"log drift model did not converge.*--drift linear"):
        fit_drift(m, "log")


def test_diffusion_model_converges_on_diffusion_data() -> None:
    # Diffusion model y = a + b sqrt(t + c) (NIST SP 1065, frequency drift models);
    # invented data: a square-root settling plus white FM, 4 days of 10 s samples.
    rng = np.random.default_rng(8)
    n = 4 * 8640
    tau0 = 10.0
    t = (np.arange(n) + 0.5) * tau0 / DAY
    y = 1e-9 + 3e-10 * np.sqrt(t + 0.2) + rng.normal(scale=1e-12, size=n)
    y[700:703] = np.nan  # a gap does not disturb the fit
    fit = fit_drift(Measurement.from_frequency(y, tau0), "diffusion")
    for name, true in (("a", 1e-9), ("b_per_sqrt_day", 3e-10), ("c_days", 0.2)):
        assert abs(fit.coefficients[name] - true) < 3 * fit.errors[name], name
    days = fit.span_days
    mean_rate = 3e-10 * (math.sqrt(days + 0.2) - math.sqrt(0.2)) / days
    assert fit.per_day == pytest.approx(mean_rate, rel=1e-3)
    assert "sqrt(t + 0.2)" in fit.description
    # the model curve is what the fit evaluates, and removal flattens the frequency
    np.testing.assert_allclose(fit.frequency_at(fit.t), fit.y_model, rtol=1e-12)
    new, removed = remove_drift(Measurement.from_frequency(y, tau0), "diffusion")
    assert removed.model == "diffusion"
    assert fit_drift(new, "linear").per_day == pytest.approx(0.0, abs=1e-13)
    assert fit_drift(new, "quadratic").coefficients["curvature_per_day2"] == pytest.approx(
        0.0, abs=5e-13
    )


def test_diffusion_model_on_a_straight_line_raises_with_hint() -> None:
    # a linear drift has no square-root curvature to identify
    y = 1e-12 * np.random.default_rng(9).normal(size=5000) + 1e-15 * np.arange(5000)
    with pytest.raises(AnalysisError, match=r"diffusion drift model did not.*--drift linear"):
        fit_drift(Measurement.from_frequency(y, 1.0), "diffusion")


def test_remove_drift_leaves_zero_slope_and_keeps_gaps() -> None:
    y = _drifting(7, n=20_000)
    y[5000:5003] = np.nan  # frequency gap: a new segment
    m = Measurement.from_frequency(y, 1.0, notes=["read"])
    new, fit = remove_drift(m, "linear")
    after = fit_drift(new, "linear")
    assert abs(after.per_day) < 1e-6 * fit.per_day_error
    assert new.frequency_offset == m.frequency_offset
    np.testing.assert_array_equal(new.segments, m.segments)
    f_old, f_new = m.frequency(), new.frequency()
    np.testing.assert_array_equal(np.isnan(f_new), np.isnan(f_old))
    # Frequency loses exactly the model less its record mean.
    expected = f_old - (fit.y_model - np.mean(fit.y_model))
    np.testing.assert_allclose(f_new, expected, rtol=0, atol=1e-18)
    assert new.notes[0] == "read" and new.notes[-1].startswith("Removed linear drift")
    assert m.notes == ["read"]
    # Phase data with a missing sample: it stays missing.
    x = np.concatenate([[0.0], np.cumsum(_drifting(8, n=3000))])
    x[1500] = np.nan
    p = Measurement.from_phase(x, 1.0)
    new_p, _ = remove_drift(p, "quadratic")
    np.testing.assert_array_equal(np.isnan(new_p.phase), np.isnan(p.phase))
    same, none_fit = remove_drift(p, "none")
    np.testing.assert_array_equal(same.phase, p.phase)
    assert none_fit.model == "none"


def test_phase_estimators_agree_with_linear_fit_on_clean_quadratic_phase() -> None:
    # x = y0 t + D t^2 / 2 gives frequency y0 + D t exactly (NIST SP 1065 drift models).
    tau0 = 60.0
    n = 2001
    t = np.arange(n) * tau0
    rate = 2e-10 / DAY  # per second
    x = 1e-7 * t + 0.5 * rate * t**2
    m = Measurement.from_phase(x, tau0)
    lin = fit_drift(m, "linear")
    three = three_point_drift(m)
    msd = mean_second_difference_drift(m)
    bis = bisection_drift(m)
    for est in (lin, three, msd, bis):
        assert est.per_day == pytest.approx(2e-10, rel=1e-7), est.method
        assert est.coefficients["offset"] == pytest.approx(1e-7, rel=1e-7), est.method
    assert math.isnan(three.per_day_error) and math.isnan(msd.per_day_error)
    # Gaps: a missing sample and a later segment change nothing on clean data.
    x_gap = x.copy()
    x_gap[1000] = np.nan
    g = Measurement.from_phase(x_gap, tau0)
    assert three_point_drift(g).per_day == pytest.approx(2e-10, rel=1e-7)
    assert mean_second_difference_drift(g).per_day == pytest.approx(2e-10, rel=1e-7)
    assert bisection_drift(g).per_day == pytest.approx(2e-10, rel=1e-7)
    with pytest.raises(AnalysisError, match="bisection drift needs frequency samples in both"):
        bisection_drift(Measurement.from_frequency([1e-9, 2e-9, np.nan, np.nan, np.nan], 1.0))


def test_too_short_for_a_fit() -> None:
    m = Measurement.from_frequency([1e-9, np.nan, 2e-9], 1.0)
    with pytest.warns(StabilityWarning, match="needs at least 3 frequency samples"):
        fit = fit_drift(m, "quadratic")
    assert math.isnan(fit.per_day)
    assert fit.to_dict()["per_day"] is None
    with pytest.warns(StabilityWarning), pytest.raises(AnalysisError, match="could not be fitted"):
        remove_drift(m, "quadratic")
    with pytest.raises(AnalysisError, match="three-point drift needs 3 phase samples"):
        three_point_drift(Measurement.from_frequency([1e-9, np.nan, 2e-9, np.nan], 1.0))
