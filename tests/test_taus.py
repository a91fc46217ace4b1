"""Tau grids: octave, decade (1-2-5), all, explicit lists; the cap and the step.

The grids are common practice (NIST SP 1065 (2008) section 5.3: octave and
decade spacing of averaging times).
"""

from __future__ import annotations

import numpy as np
import pytest

from stability import InputError
from stability.taus import GRIDS, parse_taus, tau_grid


def test_bad_grids():
    with pytest.raises(InputError, match="unknown tau grid 'weekly'"):
        tau_grid("weekly", 10)
    with pytest.raises(InputError, match="not a whole multiple of the sample interval"):
        tau_grid([1.5], 10, 1.0)
    with pytest.raises(InputError, match="not a whole multiple"):
        tau_grid([0.05], 10, 0.1)  # shorter than tau0
    for bad in (0.0, -2.0, float("nan"), float("inf")):
        with pytest.raises(InputError, match="tau must be a positive number"):
            tau_grid([bad], 10, 1.0)
    with pytest.raises(InputError, match="no taus"):
        parse_taus(" , ")
    with pytest.raises(InputError, match="cannot read tau"):
        parse_taus("1,ten")


def test_octave():
    np.testing.assert_array_equal(tau_grid("octave", 100), [1, 2, 4, 8, 16, 32, 64])
    np.testing.assert_array_equal(tau_grid("octave", 64), [1, 2, 4, 8, 16, 32, 64])
    np.testing.assert_array_equal(tau_grid(" Octave ", 1), [1])


def test_decade_one_two_five():
    np.testing.assert_array_equal(tau_grid("decade", 120), [1, 2, 5, 10, 20, 50, 100])
    np.testing.assert_array_equal(tau_grid("decade", 4), [1, 2])
    np.testing.assert_array_equal(
        tau_grid("decade", 1000), [1, 2, 5, 10, 20, 50, 100, 200, 500, 1000]
    )


def test_all():
    np.testing.assert_array_equal(tau_grid("all", 5), [1, 2, 3, 4, 5])
    assert tau_grid("all", 0).size == 0
    assert tau_grid("octave", 0).dtype == np.int64


def test_explicit_list_sorted_unique_and_capped():
    np.testing.assert_array_equal(tau_grid([3.0, 1.0, 1.0, 2.0], 10, 1.0), [1, 2, 3])
    np.testing.assert_array_equal(tau_grid([0.5, 1.5, 100.0], 8, 0.5), [1, 3])
    # 1e-6 relative tolerance on "a whole multiple" absorbs decimal rounding of tau0.
    np.testing.assert_array_equal(tau_grid([0.3, 0.9], 100, 0.1), [3, 9])


def test_step_keeps_multiples():
    np.testing.assert_array_equal(tau_grid("octave", 100, step=2), [2, 4, 8, 16, 32, 64])
    np.testing.assert_array_equal(tau_grid("all", 10, step=2), [2, 4, 6, 8, 10])
    np.testing.assert_array_equal(tau_grid([1, 2, 4, 6], 10, 1.0, step=2), [2, 4, 6])


def test_parse_taus():
    assert GRIDS == ("octave", "decade", "dense", "all")
    assert parse_taus("Dense") == "dense"
    assert parse_taus("octave") == "octave"
    assert parse_taus(" DECADE ") == "decade"
    assert parse_taus("1,10,100") == [1.0, 10.0, 100.0]
    assert parse_taus("100ms, 1s, 2min") == [0.1, 1.0, 120.0]
    assert parse_taus([1, 2.5]) == [1.0, 2.5]
