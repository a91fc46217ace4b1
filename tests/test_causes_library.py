"""Where instability comes from: spectrum, periodic lines, environmental sensitivity, dead time.

Check values and their sources:
- the spectrum of Kasdin-Walter power-law noise is S_y = h_alpha f^alpha well below
  the Nyquist frequency (Kasdin & Walter 1992, the simulation's own definition);
- the Allan deviation of a sinusoidal FM of amplitude A and period T is
  A sin^2(pi tau/T)/(pi tau/T), peak 0.7246 A at tau = 0.371 T (derived from the
  Allan-variance transfer function, NIST TN 1337 / SP 1065);
- Barnes' B1 and B2 (NBS TN 375): closed forms and the identities the published
  tables show (B1(2, mu) = 1, B1(N, -1) = 1, B1(N, 1) = N/2, B2(1, mu) = 1,
  B2(r, -1) = 1, B2(r, 1) = (3r - 1)/2, B2(r > 1, -2) = 2/3); the table values
  below are recomputed from the closed forms, recalled from memory, not read off
  the printed tables.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from stability import Measurement
from stability.dead_time import barnes_b1, barnes_b2, dead_time_bias, gate_ratio, mu_of_alpha
from stability.deviations import oadev
from stability.environment import lagged, regress, remove_effect
from stability.periodic import PEAK_TAU_RATIO, PEAK_VALUE, find_lines, sinusoid_adev
from stability.simulate import power_law
from stability.spectrum import welch_spectrum


# ---------------------------------------------------------------------- validation
@pytest.mark.parametrize(
    ("call", "words"),
    [
        (lambda: welch_spectrum([1, 2, 3]), "measurement must be"),
        (lambda: welch_spectrum(Measurement.from_frequency(np.ones(10), 1.0)), "too few"),
        (lambda: barnes_b1(1, 0.0), "N (number of samples)"),
        (lambda: barnes_b1(4, 2.5), "mu must be a number in [-2, 2]"),
        (lambda: gate_ratio(1.0, dead_time=2.0), "shorter than the sample interval"),
        (lambda: gate_ratio(1.0, ratio=0.5), "must be >= 1"),
        (lambda: gate_ratio(1.0), "either the dead time or the ratio"),
        (lambda: dead_time_bias(0, 1.2, 0.0), "whole numbers"),
        (lambda: regress(Measurement.from_frequency(np.ones(64), 1.0), np.ones(3)), "one value"),
    ],
)
def test_validation(call, words):
    with pytest.raises(Exception) as err:
        call()
    assert words in str(err.value)


# ---------------------------------------------------------------------- spectrum
@pytest.mark.parametrize("alpha", [2, 1, 0, -1, -2])
def test_spectrum_matches_h_alpha_within_band(alpha):
    y = power_law(alpha, 2**15, h=1.0, tau0=1.0, seed=11 + alpha)
    spec = welch_spectrum(Measurement.from_frequency(y, 1.0), segments=16)
    use = spec.fit_mask()
    truth = spec.f**alpha
    inside = ((truth >= spec.low) & (truth <= spec.high))[use]
    # the band holds the true level at about its confidence (0.683) over the bins
    # that follow the power law; neighbouring bins are correlated, hence the margin
    assert abs(inside.mean() - spec.confidence) < 0.08
    fit = spec.fit
    assert fit is not None
    assert fit.h[alpha] == pytest.approx(1.0, abs=3 * fit.u_h[alpha])
    assert spec.edf == pytest.approx(
        2 * spec.segments_used**2 / (spec.segments_used + 2 * (spec.segments_used - 1) / 36),
        rel=0.02,
    )  # Hann at 50 % overlap: rho(1)^2 = 1/36 (Percival & Walden eq. 292b)
    # neighbouring Hann ordinates: |rho_1| = 2/3, |rho_2| = 1/6 (from the Fourier series of
    # sin^4, the squared Hann window; Percival & Walden section 6.6)
    assert spec.bin_correlation == pytest.approx(1 + 2 * (4 / 9 + 1 / 36))


def test_spectrum_leaves_out_and_counts_gap_segments():
    y = power_law(0, 4096, h=1.0, seed=3)
    y[1000] = np.nan
    spec = welch_spectrum(Measurement.from_frequency(y, 1.0), segments=15)
    assert spec.segments_left_out == 2  # half-overlapping segments: a sample is in two
    assert spec.segments_used == 13
    assert np.all(np.isfinite(spec.s_y))
    assert spec.s_x == pytest.approx(spec.s_y / (2 * np.pi * spec.f) ** 2)


def test_phase_noise_from_spectrum():
    y = power_law(0, 4096, h=1e-22, seed=4)
    spec = welch_spectrum(Measurement.from_frequency(y, 1.0, nominal=10e6))
    lf = spec.phase_noise()
    # L(f) = 10 log10(nu0^2 S_y / (2 f^2)) (IEEE 1139)
    assert lf == pytest.approx(10 * np.log10(1e14 * spec.s_y / (2 * spec.f**2)))


# ---------------------------------------------------------------------- periodic lines
def test_sinusoid_adev_signature():
    tau = np.linspace(1, 2000, 20001)
    sig = sinusoid_adev(tau, 1.0, 1000.0)
    assert tau[np.argmax(sig)] == pytest.approx(0.371 * 1000.0, abs=0.5)
    assert sig.max() == pytest.approx(0.7246, abs=1e-4)
    assert PEAK_TAU_RATIO == pytest.approx(0.3710, abs=1e-4)
    assert PEAK_VALUE == pytest.approx(0.7246, abs=1e-4)


def test_sinusoidal_fm_detected_with_period_and_amplitude():
    n, amp, period = 2**15, 3e-12, 1210.0
    y = power_law(0, n, h=2e-22, seed=5) + amp * np.sin(2 * np.pi * np.arange(n) / period + 0.4)
    spec = welch_spectrum(Measurement.from_frequency(y, 1.0))
    lines = find_lines(spec)
    assert len(lines) == 1
    line = lines[0]
    # the period to within a third of the ordinate spacing, the amplitude to 10 %
    assert abs(1 / line.period - 1 / period) < spec.resolution / 3
    assert line.amplitude == pytest.approx(amp, rel=0.1)
    assert line.describe().startswith("periodic component, period 1 2")


def test_false_alarm_rate_on_pure_noise():
    false_alarm = 0.05
    hits = 0
    for seed in range(50):
        alpha = (0, -1)[seed % 2]
        y = power_law(alpha, 2**13, h=1.0, seed=500 + seed)
        hits += bool(
            find_lines(welch_spectrum(Measurement.from_frequency(y, 1.0)), false_alarm=false_alarm)
        )
    # at most the stated rate: a one-sided binomial test of "rate > 0.05" at the 1 % level
    assert stats.binomtest(hits, 50, false_alarm, alternative="greater").pvalue > 0.01


# ---------------------------------------------------------------------- environment
def _thermal_log(seed: int, n: int = 2**13, beta: float = 2e-11, tc: float = 300.0):
    rng = np.random.default_rng(seed)
    t = np.arange(n, dtype=float)
    temp = 0.5 * np.sin(2 * np.pi * t / 1200 + rng.uniform(0, 6)) + np.cumsum(
        rng.normal(0, 0.01, n)
    )
    y = power_law(-1, n, h=1e-24, seed=1000 + seed) + beta * lagged(temp, 1.0, tc) + 1e-9
    return Measurement.from_frequency(y, 1.0), temp


def test_temperature_coefficient_with_lag_recovered():
    m, temp = _thermal_log(0)
    sens = regress(m, temp, lag_range=(0, 3000))
    assert sens.coefficient == pytest.approx(2e-11, abs=2.5 * sens.uncertainty)
    assert sens.lag_interval[0] <= 300.0 * 1.3 and sens.lag_interval[1] >= 300.0 / 1.3
    # the white-noise standard error is far too small for flicker FM
    assert sens.white_uncertainty < sens.uncertainty / 3
    cleaned = remove_effect(m, temp, sens)
    assert np.nanstd(np.diff(cleaned.phase)) < np.nanstd(np.diff(m.phase))
    assert "Removed the fitted temperature effect" in cleaned.notes[-1]


def test_temperature_coefficient_coverage_over_seeds():
    inside = 0
    seeds = 30
    for seed in range(1, seeds + 1):
        m, temp = _thermal_log(seed)
        sens = regress(m, temp, lag_range=(0, 3000))
        inside += abs(sens.coefficient - 2e-11) <= sens.uncertainty
    # the standard uncertainty covers at about 68.3 %: two-sided binomial test
    assert stats.binomtest(inside, seeds, 0.683).pvalue > 0.01


# ---------------------------------------------------------------------- dead time
def test_barnes_b1_closed_forms():
    # NBS TN 375 identities (closed forms, recalled from memory)
    for mu in (-2.0, -1.0, 0.0, 1.0):
        assert barnes_b1(2, mu) == pytest.approx(1.0)
    n = np.array([4, 16, 64, 256])
    np.testing.assert_allclose(barnes_b1(n, -1.0), 1.0)
    np.testing.assert_allclose(barnes_b1(n, 1.0), n / 2)
    np.testing.assert_allclose(barnes_b1(n, -2.0), 2 * (n + 1) / (3 * n))
    np.testing.assert_allclose(barnes_b1(n, 0.0), n * np.log(n) / (2 * (n - 1) * np.log(2)))
    assert barnes_b1(4, 0.0) == pytest.approx(4 / 3)  # 4 ln 4 / (6 ln 2), exactly 4/3


def test_barnes_b2_table_identities():
    r = np.array([1.5, 2.0, 4.0, 10.0])
    np.testing.assert_allclose(barnes_b2(r, -2.0), 2 / 3)
    np.testing.assert_allclose(barnes_b2(r, -1.0), 1.0)
    np.testing.assert_allclose(barnes_b2(r, 1.0), (3 * r - 1) / 2)
    # FFM at r = 2: (9 ln 3 - 8 ln 2) / (4 ln 2) = 1.5662 (from the closed form)
    assert barnes_b2(2.0, 0.0) == pytest.approx(1.56617, abs=1e-5)


@pytest.mark.parametrize("mu", [-2.0, -1.0, 0.0, 1.0])
def test_dead_time_bias_reduces_to_b2(mu):
    for r in (1.0, 1.25, 2.0, 5.0):
        assert dead_time_bias(1, r, mu) == pytest.approx(barnes_b2(r, mu) * r ** (-mu), rel=1e-9)


@pytest.mark.parametrize("alpha", [0, -1])
def test_dead_time_correction_restores_adev(alpha):
    # fine samples of 0.1 s; a reading every 1 s that averages only the first 0.8 s
    fine = power_law(alpha, 10 * 2**13, h=1.0, tau0=0.1, seed=21 + alpha)
    blocks = fine.reshape(-1, 10)
    gated = blocks[:, :8].mean(axis=1)
    full = blocks.mean(axis=1)
    x_gated = np.concatenate([[0.0], np.cumsum(gated)])
    x_full = np.concatenate([[0.0], np.cumsum(full)])
    r = gate_ratio(1.0, dead_time=0.2)
    assert r == pytest.approx(1.25)
    mu = mu_of_alpha(alpha)
    for m in (1, 4, 16, 64):
        measured, _ = oadev(x_gated, 1.0, m)
        truth, _ = oadev(x_full, 1.0, m)
        corrected = measured / math.sqrt(dead_time_bias(m, r, mu))
        # the same noise without dead time: corrected within 3 %, uncorrected off more
        assert corrected == pytest.approx(truth, rel=0.03)
    m1, _ = oadev(x_gated, 1.0, 1)
    t1, _ = oadev(x_full, 1.0, 1)
    assert abs(m1 / t1 - 1) > 0.05


def test_regression_without_a_lag():
    # invented: the frequency follows the temperature at once (no thermal lag)
    rng = np.random.default_rng(2)
    temp = np.cumsum(rng.normal(0, 0.01, 4096))
    y = power_law(0, 4096, h=1e-24, seed=3) + 5e-12 * temp
    sens = regress(Measurement.from_frequency(y, 1.0), temp, lag_range=(0, 600))
    assert sens.lag_interval[0] == 0.0
    assert sens.coefficient == pytest.approx(5e-12, abs=3 * sens.uncertainty)
