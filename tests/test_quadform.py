"""Checks of the quadratic-form test helper (tests/quadform.py) itself."""

from __future__ import annotations

import math

import numpy as np
import pytest
from quadform import Q_BUILDERS, moments, phase_covariance, q_avar, q_oavar

from stability import deviations
from stability.confidence import greenhall_edf
from stability.simulate import power_law, white_noise_variance

CASES = [(name, m) for name in Q_BUILDERS for m in (1, 2, 3, 6)]


@pytest.mark.parametrize(("name", "m"), CASES)
def test_forms_are_the_project_estimators(name, m):
    # v(x) = x' Q x must equal the estimator's variance on any phase record (tau0 = 1).
    if (name == "htot" and m == 1) or (name == "theo1" and m % 2):
        pytest.skip("HTOT is OHDEV at m = 1; Theo1 needs even m")
    n = 97
    q = Q_BUILDERS[name](n, m)
    rng = np.random.default_rng(7 + m)
    for _ in range(3):
        x = rng.standard_normal(n).cumsum() + 3.0 * rng.standard_normal(n)
        dev, _terms = getattr(deviations, name)(x, 1.0, m)
        assert x @ q @ x == pytest.approx(dev * dev, rel=1e-11)


@pytest.mark.parametrize("m", [1, 2, 5, 16])
def test_oavar_of_white_fm_is_one_over_m(m):
    # x = running sum of unit white noise: the second difference over m is the difference
    # of two independent sums of m unit variables, variance 2m; AVAR = 2m / (2 m^2) = 1/m.
    mean, _var, _edf = moments(q_oavar(300, m), 0)
    assert mean == pytest.approx(1.0 / m, rel=1e-9)


@pytest.mark.parametrize("m", [1, 3, 10])
def test_avar_white_fm_edf_closed_form(m):
    # Non-overlapped AVAR of WFM: M second differences of independent block sums, lag-1
    # correlation -1/2, so edf = M^2 r0^2 / (M r0^2 + 2 (M - 1) r1^2) = 2 M^2 / (3M - 1)
    # (Greenhall & Riley, PTTI 2003, their exact check).
    n = 301
    terms = (n - 1) // m - 1
    _mean, _var, edf = moments(q_avar(n, m), 0)
    assert edf == pytest.approx(2 * terms**2 / (3 * terms - 1), rel=1e-9)


@pytest.mark.parametrize("m", [1, 2, 8, 20])
def test_oavar_white_fm_edf_matches_greenhall(m):
    # Sampled Brownian phase is exactly the discrete WFM model, so Greenhall's sum with
    # F = infinity (exact while it has at most 100 terms) must agree with the form. With
    # F = infinity the paper's filter length is L = 2m, so its term count M = 1 + N - L is
    # one more than the N - 2m second differences: pass N - 1 samples.
    n = 300
    _mean, _var, edf = moments(q_oavar(n, m), 0)
    assert edf == pytest.approx(greenhall_edf(0, 2, m, n - 1, F=math.inf, S=m), rel=1e-9)


def test_wpm_moments_closed_form():
    # WPM: x white with unit variance, OAVAR terms have variance 6: E = 3 / m^2; at m = 1
    # the n = N - 2 terms have autocovariance 6, -4, 1, so Var = 2 (n 36 + 2(n-1) 16 + 2(n-2)) / n^2
    n = 200
    mean, var, _edf = moments(q_oavar(n, 1), 2)
    k = n - 2
    assert mean == pytest.approx(3.0, rel=1e-10)
    assert var == pytest.approx(2 * (36 * k + 32 * (k - 1) + 2 * (k - 2)) / (2 * k) ** 2, rel=1e-9)


def test_covariance_is_the_simulators():
    # The simulator's phase noise (Kasdin & Walter, unit white variance) has covariance C.
    alpha, n, trials = -1, 64, 4000
    h = 1.0 / white_noise_variance(alpha, 1.0, 1.0, "phase")
    rng = np.random.default_rng(11)
    xs = np.array([power_law(alpha, n, h=h, output="phase", seed=rng) for _ in range(trials)])
    emp = xs.T @ xs / trials
    c = phase_covariance(alpha, n)
    scale = np.sqrt(np.outer(np.diag(c), np.diag(c)))
    # each entry of a sample covariance of 4000 draws has sd <= sqrt(2/4000) of the scale
    assert np.max(np.abs(emp - c) / scale) < 5 * math.sqrt(2.0 / trials)


@pytest.mark.parametrize("alpha", [2, 1, 0, -1, -2])
def test_mean_against_simulation(alpha):
    # Monte Carlo mean of the project's MDEV^2 on simulated noise agrees with tr(QC).
    n, m, trials = 128, 4, 600
    mean, var, _edf = moments(Q_BUILDERS["mdev"](n, m), alpha)
    h = 1.0 / white_noise_variance(alpha, 1.0, 1.0, "phase")
    rng = np.random.default_rng(100 + alpha)
    vals = [
        deviations.mdev(power_law(alpha, n, h=h, output="phase", seed=rng), 1.0, m)[0] ** 2
        for _ in range(trials)
    ]
    assert np.mean(vals) == pytest.approx(mean, abs=4 * math.sqrt(var / trials))
    assert np.var(vals) == pytest.approx(var, rel=0.3)
