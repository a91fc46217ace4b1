"""Tests of stability.powerlaw's own non-negative least squares."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.optimize import nnls

from stability.errors import InputError
from stability.powerlaw import nonnegative_least_squares


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
