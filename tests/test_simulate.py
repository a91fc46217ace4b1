"""Tests of power-law noise generation (stability.simulate)."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from stability import InputError, Measurement
from stability.deviations import oadev
from stability.simulate import (
    avar_from_h,
    h_from_deviation,
    power_law,
    simulate,
    simulate_measurement,
    white_noise_variance,
)

ALPHAS = (2, 1, 0, -1, -2)


# ---------------------------------------------------------------------- validation
@pytest.mark.parametrize(
    ("call", "word"),
    [
        (lambda: power_law(3, 100), "alpha"),
        (lambda: power_law(0.5, 100), "alpha"),
        (lambda: power_law("x", 100), "alpha"),
        (lambda: power_law(0, 1), "n"),
        (lambda: power_law(0, 10.5), "n"),
        (lambda: power_law(0, 100, h=-1.0), "h"),
        (lambda: power_law(0, 100, h=math.nan), "h"),
        (lambda: power_law(0, 100, tau0=0.0), "tau0"),
        (lambda: power_law(0, 100, tau0=math.inf), "tau0"),
        (lambda: power_law(0, 100, output="time"), "output"),
        (lambda: power_law(0, 100, seed=-3), "seed"),
        (lambda: power_law(0, 100, seed="abc"), "seed"),
        (lambda: simulate(100, levels=[1, 2]), "levels"),
        (lambda: simulate(100, levels={5: 1.0}), "alpha"),
        (lambda: simulate(100, levels={0: -1.0}), "levels[0]"),
        (lambda: simulate(100, levels={0: 1.0}, drift_per_day=math.nan), "drift_per_day"),
        (lambda: simulate(100, levels={0: 1.0}, offset=math.inf), "offset"),
        (lambda: simulate(1, levels={0: 1.0}), "n"),
        (lambda: simulate_measurement(100, levels={0: 1.0}, output="x"), "output"),
        (lambda: avar_from_h(2, 1.0, 1.0), "f_h"),
        (lambda: avar_from_h(0, 1.0, -1.0), "tau"),
        (lambda: avar_from_h(0, -1.0, 1.0), "h"),
        (lambda: h_from_deviation(0, -1e-11, 1.0), "deviation"),
        (lambda: h_from_deviation(1, 1e-11, 1.0, f_h=0.01), "f_h"),
    ],
)
def test_validation_names_the_parameter(call, word):
    with pytest.raises(InputError) as info:
        call()
    assert word in str(info.value)


# ---------------------------------------------------------------------- conversions
def test_closed_forms_at_unit_level():
    # NIST SP 1065 / NIST TN 1337 closed forms, evaluated by hand at tau = 2 s,
    # f_h = 0.5 Hz.
    tau, fh = 2.0, 0.5
    assert avar_from_h(0, 1.0, tau) == pytest.approx(1.0 / (2 * tau))
    assert avar_from_h(-1, 1.0, tau) == pytest.approx(2 * math.log(2))
    assert avar_from_h(-2, 1.0, tau) == pytest.approx(2 * math.pi**2 / 3 * tau)
    assert avar_from_h(2, 1.0, tau, fh) == pytest.approx(3 * fh / (4 * math.pi**2 * tau**2))
    assert avar_from_h(1, 1.0, tau, fh) == pytest.approx(
        (1.038 + 3 * math.log(2 * math.pi * fh * tau)) / (4 * math.pi**2 * tau**2)
    )
    taus = np.array([1.0, 10.0])
    assert avar_from_h(0, 3.0, taus) == pytest.approx(3.0 / (2 * taus))


def test_wfm_at_1e11_at_one_second():
    # SP 1065: AVAR = h0/(2 tau), so ADEV 1e-11 at 1 s means h0 = 2e-22.
    assert h_from_deviation(0, 1e-11, 1.0) == pytest.approx(2e-22)
    for alpha in ALPHAS:
        h = h_from_deviation(alpha, 3e-12, 10.0, f_h=50.0)
        assert math.sqrt(avar_from_h(alpha, h, 10.0, 50.0)) == pytest.approx(3e-12)


def test_white_noise_variance_derivation():
    # Kasdin & Walter 1992: S(f) = 2 Q_d tau0 (2 pi f tau0)^-beta at low f; WFM samples have
    # variance h0/(2 tau0) (= AVAR(tau0), SP 1065); phase is tau0^2 times frequency.
    assert white_noise_variance(0, 4.0, 0.5, "frequency") == pytest.approx(4.0)
    assert white_noise_variance(2, 1.0, 1.0, "phase") == pytest.approx(1 / (8 * math.pi**2))
    for alpha in ALPHAS:
        f = white_noise_variance(alpha, 1.0, 0.25, "frequency")
        assert white_noise_variance(alpha, 1.0, 0.25, "phase") == pytest.approx(f * 0.0625)


# ---------------------------------------------------------------------- levels
def _oadev_edf(alpha: int, n: int, m: int) -> float:
    """Simple OADEV EDF formulas of NIST SP 1065 (Howe, Allan, Barnes); from memory."""
    if alpha == 2:
        return (n + 1) * (n - 2 * m) / (2 * (n - m))
    if alpha == 1:
        return math.exp(
            math.sqrt(math.log((n - 1) / (2 * m)) * math.log((2 * m + 1) * (n - 1) / 4))
        )
    if alpha == 0:
        return (3 * (n - 1) / (2 * m) - 2 * (n - 2) / n) * 4 * m * m / (4 * m * m + 5)
    if alpha == -1:
        return 5 * n * n / (4 * m * (n + 3 * m))
    return (n - 2) / m * ((n - 1) ** 2 - 3 * m * (n - 1) + 4 * m * m) / (n - 3) ** 2


# Allowance for the discrete Kasdin-Walter spectrum departing from the continuous model with a
# brick-wall cut-off at f_h = 1/(2 tau0) (Kasdin & Walter 1992): the FPM constant 1.038 assumes
# the brick wall; a few per cent at mid-range tau for the others (finite filter length).
_MODEL_ALLOWANCE = {2: 0.02, 1: 0.08, 0: 0.02, -1: 0.04, -2: 0.04}


@pytest.mark.parametrize("alpha", ALPHAS)
def test_simulated_oadev_matches_closed_form(alpha):
    # The ratio OAVAR/AVAR_model is chi-squared/edf distributed with the SP 1065 EDF; a
    # two-sided 99.9 % chi-squared interval (EDF from memory) widened by the model allowance
    # above must hold the simulated ratio at every mid-range tau.
    n, tau0, h = 2**14, 0.5, 2.5e-23
    x = power_law(alpha, n, h=h, tau0=tau0, output="phase", seed=20 + alpha)
    for m in (8, 32, 128):
        tau = m * tau0
        dev, _ = oadev(x, tau0, m)
        ratio = dev**2 / avar_from_h(alpha, h, tau, 1 / (2 * tau0))
        edf = _oadev_edf(alpha, n, m)
        lo = stats.chi2.ppf(0.0005, edf) / edf * (1 - _MODEL_ALLOWANCE[alpha])
        hi = stats.chi2.ppf(0.9995, edf) / edf * (1 + _MODEL_ALLOWANCE[alpha])
        assert lo < ratio < hi, (alpha, m, ratio, lo, hi)


def test_frequency_output_is_phase_derivative():
    # Kasdin & Walter 1992: the filter of S ~ f^-(beta+2) is the filter of f^-beta followed by
    # a running sum (transfer function (1 - z^-1)^(-beta/2)), and Q_d scales by tau0^2, so the
    # phase output is tau0 times the running sum of the frequency output for the same seed.
    tau0 = 0.1
    for alpha in ALPHAS:
        y = power_law(alpha, 4096, h=1.0, tau0=tau0, output="frequency", seed=5)
        x = power_law(alpha, 4096, h=1.0, tau0=tau0, output="phase", seed=5)
        expected = tau0 * np.cumsum(y)
        assert np.allclose(x, expected, rtol=0, atol=1e-9 * np.max(np.abs(expected)))


# ---------------------------------------------------------------------- seeds and mixtures
def test_seeds_are_reproducible():
    a = power_law(-1, 1000, seed=42)
    b = power_law(-1, 1000, seed=42)
    c = power_law(-1, 1000, seed=43)
    assert np.array_equal(a, b)
    assert not np.array_equal(a, c)
    g1 = np.random.default_rng(7)
    g2 = np.random.default_rng(7)
    assert np.array_equal(power_law(0, 50, seed=g1), power_law(0, 50, seed=g2))
    levels = {0: 1e-22, -2: 1e-30}
    assert np.array_equal(
        simulate(500, levels=levels, seed=9), simulate(500, levels=levels, seed=9)
    )
    assert np.array_equal(
        simulate(500, levels=levels, seed=np.random.default_rng(3)),
        simulate(500, levels=levels, seed=np.random.default_rng(3)),
    )


def test_mixture_uses_independent_streams():
    # Each type has its own stream: the mixture is the sum of the single-type simulations.
    n, seed = 2048, 11
    both = simulate(n, levels={0: 1e-22, -2: 1e-30}, seed=seed)
    wfm = simulate(n, levels={0: 1e-22}, seed=seed)
    rwfm = simulate(n, levels={-2: 1e-30}, seed=seed)
    assert np.allclose(both, wfm + rwfm, rtol=1e-12, atol=0)
    corr = np.corrcoef(np.diff(wfm), np.diff(rwfm))[0, 1]
    assert abs(corr) < 0.1  # independent streams: sample correlation ~ 1/sqrt(n)


def test_mixture_levels_add():
    # AVARs of independent noises add (SP 1065 section 5.2); checked at tau = 64 tau0 where
    # the two terms are comparable, over a 99.9 % WFM-EDF interval widened by 5 %.
    n, tau0 = 2**15, 1.0
    levels = {0: 2e-22, -2: 2e-26}
    x = simulate(n, tau0, levels=levels, output="phase", seed=2)
    m = 64
    model = sum(avar_from_h(a, h, m * tau0) for a, h in levels.items())
    dev, _ = oadev(x, tau0, m)
    edf = min(_oadev_edf(0, n, m), _oadev_edf(-2, n, m))
    ratio = dev**2 / model
    assert (
        stats.chi2.ppf(0.0005, edf) / edf * 0.95 < ratio < stats.chi2.ppf(0.9995, edf) / edf * 1.05
    )


def test_drift_and_offset():
    n, tau0 = 1000, 60.0
    drift, offset = 1e-10, 3e-9
    y = simulate(n, tau0, levels={}, drift_per_day=drift, offset=offset, seed=0)
    t = np.arange(n) * tau0
    assert np.allclose(y, offset + drift / 86400.0 * t, rtol=1e-12, atol=0)
    x = simulate(n, tau0, levels={}, drift_per_day=drift, offset=offset, output="phase", seed=0)
    # Constant second difference D tau0^2 (SP 1065 section 5.13, phase drift = 2c).
    assert np.allclose(np.diff(x, 2), drift / 86400.0 * tau0**2, rtol=1e-6)
    noisy = simulate(n, tau0, levels={0: 1e-24}, drift_per_day=drift, seed=4)
    slope = np.polyfit(t, noisy, 1)[0] * 86400.0
    assert slope == pytest.approx(drift, rel=0.05)


def test_simulate_measurement_note_and_kind():
    meas = simulate_measurement(500, 2.0, levels={0: 2e-22}, seed=1, nominal=10e6)
    assert isinstance(meas, Measurement)
    assert meas.kind == "frequency" and meas.n == 501 and meas.tau0 == 2.0
    assert "WFM" in meas.notes[0] and "seed 1" in meas.notes[0]
    assert meas.provenance.details["levels"] == {0: 2e-22}
    y = simulate(500, 2.0, levels={0: 2e-22}, seed=1)
    assert np.allclose(meas.frequency(), y, rtol=0, atol=1e-20)
    phase = simulate_measurement(300, levels={-1: 1e-24}, output="phase", seed=2)
    assert phase.kind == "phase" and phase.n == 300 and "FFM" in phase.notes[0]
