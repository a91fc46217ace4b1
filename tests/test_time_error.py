"""MTIE and TIE rms against plain-loop definitions, for every window size.

Definitions (ITU-T G.810 (1996) 4.5.13 and appendix II.5; NIST SP 1065 (2008)
sections 5.2.15 and 5.2.16): MTIE(m tau0) is the largest max - min of the phase
over any window of m + 1 consecutive samples; TIE rms(m tau0) is the root mean
square of x_{i+m} - x_i.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from stability import Measurement, analyze
from stability.deviations import mtie, mtie_many, tie_rms


def _table(meas, stats, taus):
    """Raw estimates (no qualification, no bias correction), as the references give them."""
    return analyze(meas, stats=stats, taus=taus, qualify=False)


def brute_mtie(x: list[float], m: int) -> tuple[float, int]:
    best = -math.inf
    count = 0
    for i in range(len(x) - m):
        window = x[i : i + m + 1]
        best = max(best, max(window) - min(window))
        count += 1
    return best, count


def brute_tie_rms(x: list[float], m: int) -> tuple[float, int]:
    diffs = [x[i + m] - x[i] for i in range(len(x) - m)]
    return math.sqrt(sum(d * d for d in diffs) / len(diffs)), len(diffs)


@pytest.mark.parametrize("n", [2, 3, 50, 63, 64, 101])
@pytest.mark.parametrize("seed", [0, 1, 2])
def test_every_window_matches_brute_force(n, seed):
    rng = np.random.default_rng(1000 * seed + n)
    x = np.cumsum(rng.standard_normal(n)) * 1e-9
    if seed == 2:
        x = rng.standard_normal(n) * 1e-9  # white phase: extremes move around a lot
    table = _table(Measurement.from_phase(x, 1.0), "mtie,tie_rms", "all")
    ref = (x - x[0]).tolist()
    np.testing.assert_array_equal(table["mtie"].m, np.arange(1, n))
    np.testing.assert_array_equal(table["tie_rms"].m, np.arange(1, n))
    for m in range(1, n):
        dev, k = brute_mtie(ref, m)
        assert table["mtie"].deviation[m - 1] == dev  # max - min of the same doubles: exact
        assert table["mtie"].n_terms[m - 1] == k
        dev, k = brute_tie_rms(ref, m)
        assert table["tie_rms"].deviation[m - 1] == pytest.approx(dev, rel=1e-12)
        assert table["tie_rms"].n_terms[m - 1] == k


@settings(max_examples=60, deadline=None)
@given(
    st.lists(
        st.floats(min_value=-1e3, max_value=1e3, allow_nan=False, allow_infinity=False),
        min_size=2,
        max_size=40,
    ),
    st.data(),
)
def test_mtie_any_data_any_window(values, data):
    x = np.array(values)
    m = data.draw(st.integers(min_value=1, max_value=x.size - 1))
    dev, k = mtie(x, 1.0, m)
    ref, kr = brute_mtie(values, m)
    assert k == kr
    assert dev == ref  # ITU-T G.810 appendix II.5 definition, exact


def test_mtie_many_keeps_the_order_asked():
    rng = np.random.default_rng(9)
    x = rng.standard_normal(80)
    ms = [17, 1, 64, 5, 2]
    many = mtie_many(x, 1.0, ms)
    for m, (dev, k) in zip(ms, many, strict=True):
        assert (dev, k) == mtie(x, 1.0, m)
        assert (dev, k) == brute_mtie(x.tolist(), m)


def test_out_of_range_window_gives_nan():
    x = np.arange(5.0)
    for func in (mtie, tie_rms):
        dev, k = func(x, 1.0, 5)
        assert math.isnan(dev) and k == 0


def test_mtie_grows_with_window_and_reaches_full_span():
    # MTIE is non-decreasing in the window; the longest window spans the record
    # (ITU-T G.810 appendix II.5 definition; common practice).
    rng = np.random.default_rng(3)
    x = np.cumsum(rng.standard_normal(257))
    result = _table(Measurement.from_phase(x, 0.1), "mtie", "all")["mtie"]
    assert np.all(np.diff(result.deviation) >= 0)
    xs = x - x[0]
    assert result.deviation[-1] == xs.max() - xs.min()
    np.testing.assert_allclose(result.tau, 0.1 * np.arange(1, 257))


def test_tie_rms_of_a_line_is_the_step():
    # x_i = a i gives x_{i+m} - x_i = a m for every i (ITU-T G.810 TIE definition).
    x = 2e-9 * np.arange(50.0)
    result = _table(Measurement.from_phase(x, 1.0), "tie_rms", [1, 7, 30])["tie_rms"]
    np.testing.assert_allclose(result.deviation, 2e-9 * np.array([1, 7, 30]), rtol=1e-12)
    np.testing.assert_array_equal(result.n_terms, [49, 43, 20])
