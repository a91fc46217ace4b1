"""Tests of stability.special: chi-squared quantiles and binomial coefficients."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.special import chdtri

from stability.errors import InputError
from stability.special import binomial, chi2_upper_quantile

NUS = [0.05, 0.5, 1.0, 1.5, 2.0, 3.0, 7.3, 10.0, 19.9, 20.1, 100.0, 1e3, 1e4, 1e5, 1e6, 1e7]
QS = [1e-4, 0.005, 0.025, 0.1585, 0.5, 0.8415, 0.975, 0.995, 0.9999]


@pytest.mark.parametrize("q", QS)
def test_matches_scipy_chdtri(q):
    # Cross-check against scipy.special.chdtri (Cephes), an independent implementation.
    ours = chi2_upper_quantile(np.array(NUS), q)
    np.testing.assert_allclose(ours, chdtri(np.array(NUS), q), rtol=1e-11)


def test_published_critical_values():
    # Upper critical values of chi-squared, NIST/SEMATECH e-Handbook of Statistical
    # Methods, section 1.3.6.7.4 (values to 3 decimals, from memory).
    table = [
        (1, 0.05, 3.841),
        (1, 0.01, 6.635),
        (2, 0.05, 5.991),
        (10, 0.975, 3.247),
        (10, 0.025, 20.483),
        (100, 0.05, 124.342),
        (100, 0.95, 77.929),
    ]
    for nu, q, value in table:
        assert chi2_upper_quantile(nu, q) == pytest.approx(value, abs=6e-4)


def test_median_and_mean_of_large_nu():
    # For large nu chi-squared is nearly normal with mean nu and variance 2 nu; the
    # median is nu (1 - 2/(9 nu))^3 to O(nu^-2) (Wilson-Hilferty, common practice).
    nu = 1e6
    assert chi2_upper_quantile(nu, 0.5) == pytest.approx(nu * (1 - 2 / (9 * nu)) ** 3, rel=1e-12)
    # one normal sigma: q = 0.158655... gives nu + sqrt(2 nu) to first order
    assert chi2_upper_quantile(nu, 0.5 * math.erfc(1 / math.sqrt(2))) == pytest.approx(
        nu + math.sqrt(2 * nu), rel=1e-6
    )


def test_shapes_and_bad_degrees_of_freedom():
    out = chi2_upper_quantile(np.array([[1.0, -1.0], [np.nan, 4.0]]), 0.05)
    assert out.shape == (2, 2)
    assert np.isnan(out[0, 1]) and np.isnan(out[1, 0])
    assert isinstance(chi2_upper_quantile(4.0, 0.05), float)
    for bad in (0.0, 1.0, -0.1, "0.5"):
        with pytest.raises(InputError, match="q must be a probability strictly between 0 and 1"):
            chi2_upper_quantile(3.0, bad)


def test_binomial():
    assert binomial(4, 2) == 6.0  # common practice
    np.testing.assert_array_equal(binomial(4, np.arange(-1, 6)), [0, 1, 4, 6, 4, 1, 0])
    assert binomial(40, 20) == float(math.comb(40, 20))


def test_interval_from_a_sliver_of_a_degree_of_freedom_warns_nothing():
    # nu = 0.001: the lower quantile underflows to (nearly) 0, so the interval has no
    # useful upper bound; it must say so with a huge or infinite bound, silently.
    import warnings

    from stability.confidence import chi2_interval

    with warnings.catch_warnings():
        warnings.simplefilter("error")
        low, high = chi2_interval(1.0, 0.001, 0.683)
    assert 0.0 <= low <= 1.0 and high > 1e100


def test_deep_lower_tail_and_input_types():
    # A sliver of a degree of freedom: the quantile underflows towards the subnormal
    # range; the closed form y^a / Gamma(a + 1) there matches scipy.special.chdtri.
    assert chi2_upper_quantile(0.0018, 0.48) == pytest.approx(chdtri(0.0018, 0.48), rel=1e-6)
    # numpy scalars are numbers too
    assert chi2_upper_quantile(4.0, np.float32(0.5)) == pytest.approx(
        chdtri(4.0, float(np.float32(0.5))), rel=1e-12
    )
    with pytest.raises(InputError, match="nu must be a number or an array of numbers, got 'a'"):
        chi2_upper_quantile("a", 0.5)
