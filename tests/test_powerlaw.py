"""Tests of stability.powerlaw: its own non-negative least squares and the model fit."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.optimize import nnls

from stability.errors import InputError
from stability.powerlaw import fit_power_law, nonnegative_least_squares


def test_matches_scipy_nnls_on_random_problems():
    # Cross-check against scipy.optimize.nnls (Lawson-Hanson active set): with full
    # column rank the solution is unique, so both must agree to rounding.
    rng = np.random.default_rng(11)
    for trial in range(400):
        k = int(rng.integers(1, 6))
        m = int(rng.integers(k + 1, 30))
        a = rng.standard_normal((m, k))
        if trial % 2:
            a = np.abs(a)  # all-positive columns, like the Allan-variance kernels
        b = rng.standard_normal(m)
        expected, _ = nnls(a, b)
        got = nonnegative_least_squares(a, b)
        assert np.all(got >= 0)
        np.testing.assert_allclose(got, expected, rtol=1e-10, atol=1e-12)


def test_exact_positive_solution_and_all_negative_target():
    a = np.array([[1.0, 0.0], [0.0, 1.0], [1.0, 1.0]])
    np.testing.assert_allclose(nonnegative_least_squares(a, a @ [2.0, 3.0]), [2.0, 3.0])
    # every coefficient would have to be negative: the solution is zero
    np.testing.assert_array_equal(nonnegative_least_squares(a, -(a @ [2.0, 3.0])), [0.0, 0.0])


def test_too_many_columns():
    with pytest.raises(InputError, match="at most 12 columns, got 13"):
        nonnegative_least_squares(np.ones((20, 13)), np.ones(20))


# --------------------------------------------------------------------------- the model fit
def test_a_nearly_empty_last_point_does_not_pull_the_white_fm_level_down():
    # White FM, AVAR = h0 / (2 tau) (NIST SP 1065), with its last estimate 50 times too
    # low at one degree of freedom: weighted by the model's own value the fit keeps h0
    # within a few per cent (weighted by the observed value it lost a quarter and more).
    tau = 2.0 ** np.arange(0, 12)
    avar = 1.0 / (2.0 * tau)
    avar[-1] /= 50.0
    edf = 3000.0 / tau
    edf[-1] = 1.0
    model = fit_power_law(tau, np.sqrt(avar), edf, f_h=0.5)
    assert model.h[0] == pytest.approx(1.0, rel=0.03)
    assert all(model.h[a] == 0.0 for a in (2, 1, -1, -2))


def test_a_term_the_data_barely_support_stays_out():
    # Exact white FM plus a random-walk term that lifts only the last point by 5 % at
    # 4 degrees of freedom: the deviance falls by far less than the 1 % price of a term
    # (5.41, Self & Liang 1987), so the model keeps white FM alone; a random-walk term
    # that reaches half, twice and eight times the white FM level over the last three
    # points (at least 12 dof each) is kept.
    tau = 2.0 ** np.arange(0, 12)
    edf = np.maximum(3000.0 / tau, 4.0)
    small = 1.0 / (2.0 * tau)
    small[-1] *= 1.05
    assert fit_power_law(tau, np.sqrt(small), edf, f_h=0.5).h[-2] == 0.0
    large = 1.0 / (2.0 * tau) + 1e-6 * tau
    assert fit_power_law(tau, np.sqrt(large), np.maximum(edf, 12.0), f_h=0.5).h[-2] > 0.0
