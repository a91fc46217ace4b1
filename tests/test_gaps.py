"""Gaps: vectorised estimators against a plain-loop reference that skips terms touching a gap.

Rule (NIST SP 1065 (2008) section 5.14; DESIGN "One canonical form"): a term is
dropped when it touches a missing phase sample or, for frequency input, when
any fractional-frequency sample between its first and last touched phase
sample is missing; the statistic is normalised by the terms used.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from stability import Measurement, estimate, get_statistic

STATS = ("adev", "oadev", "mdev", "tdev", "hdev", "ohdev", "totdev", "mtie", "tie_rms")
MS = (1, 2, 3, 5, 8)
TAU0 = 0.5


def _terms(name: str, n: int, m: int):
    """Yield (touched phase indices, function of x giving the term) for one statistic."""
    if name in ("oadev", "adev"):
        step = m if name == "adev" else 1
        for i in range(0, n - 2 * m, step):
            yield (i, i + m, i + 2 * m), lambda x, i=i: x[i + 2 * m] - 2 * x[i + m] + x[i]
    elif name in ("ohdev", "hdev"):
        step = m if name == "hdev" else 1
        for i in range(0, n - 3 * m, step):
            yield (
                (i, i + m, i + 2 * m, i + 3 * m),
                lambda x, i=i: x[i + 3 * m] - 3 * x[i + 2 * m] + 3 * x[i + m] - x[i],
            )
    elif name in ("mdev", "tdev"):
        for j in range(0, n - 3 * m + 1):

            def term(x, j=j):
                return sum(x[i + 2 * m] - 2 * x[i + m] + x[i] for i in range(j, j + m))

            yield tuple(range(j, j + 3 * m)), term
    elif name == "totdev":
        last = n - 1
        for i in range(1, last):
            touched = [i]
            if i - m < 0:  # reflected point 2 x_0 - x_{m-i} touches x_0 and x_{m-i}
                touched += [0, m - i]
            else:
                touched.append(i - m)
            if i + m > last:  # reflected point 2 x_last - x_{2 last - i - m}
                touched += [last, 2 * last - i - m]
            else:
                touched.append(i + m)

            def term(x, i=i):
                left = 2 * x[0] - x[m - i] if i - m < 0 else x[i - m]
                right = 2 * x[last] - x[2 * last - i - m] if i + m > last else x[i + m]
                return left - 2 * x[i] + right

            yield tuple(touched), term
    elif name == "mtie":
        for i in range(0, n - m):
            yield (
                tuple(range(i, i + m + 1)),
                lambda x, i=i: max(x[i : i + m + 1]) - min(x[i : i + m + 1]),
            )
    elif name == "tie_rms":
        for i in range(0, n - m):
            yield (i, i + m), lambda x, i=i: x[i + m] - x[i]
    else:  # pragma: no cover - the parametrisation lists the names
        raise AssertionError(name)


def brute_force(name: str, x: list[float], y_missing: list[bool] | None, tau0: float, m: int):
    """(deviation, terms used) by a plain loop over terms, skipping those that touch a gap."""
    n = len(x)
    used = []
    for touched, term in _terms(name, n, m):
        if any(math.isnan(x[k]) for k in touched):
            continue
        if y_missing is not None and any(y_missing[min(touched) : max(touched)]):
            continue
        used.append(term(x))
    if not used:
        return math.nan, 0
    tau = m * tau0
    k = len(used)
    ss = sum(v * v for v in used)
    if name in ("adev", "oadev", "totdev"):
        return math.sqrt(ss / (2 * tau * tau * k)), k
    if name in ("hdev", "ohdev"):
        return math.sqrt(ss / (6 * tau * tau * k)), k
    if name in ("mdev", "tdev"):
        mdev = math.sqrt(ss / (2 * m * m * tau * tau * k))
        return (tau * mdev / math.sqrt(3.0) if name == "tdev" else mdev), k
    if name == "mtie":
        return max(used), k
    return math.sqrt(ss / k), k  # tie_rms


def _check(meas: Measurement, x_ref: list[float], y_missing, name: str) -> None:
    stat = get_statistic(name)
    ms = [m for m in MS if m <= stat.allowed_m(meas.n)]
    result = estimate(meas, stat, [m * TAU0 for m in ms])
    got = dict(
        zip(result.m.tolist(), zip(result.deviation, result.n_terms, strict=True), strict=True)
    )
    for m in ms:
        dev, k = brute_force(name, x_ref, y_missing, TAU0, m)
        if k == 0:
            assert m not in got, f"{name} m={m}: every term touches a gap"
            continue
        assert got[m][1] == k, f"{name} m={m}: terms used"
        assert got[m][0] == pytest.approx(dev, rel=1e-12, abs=0), f"{name} m={m}"


PHASE_GAPS = {
    "interior": (7, 30, 31, 44),
    "first": (0, 22),
    "last": (-1, 15),
    "first_and_last": (0, 1, -1),
}


@pytest.mark.parametrize("n", [60, 121])
@pytest.mark.parametrize("where", list(PHASE_GAPS))
@pytest.mark.parametrize("name", STATS)
def test_phase_gaps_match_brute_force(n, where, name):
    rng = np.random.default_rng(n + len(where))
    x = np.cumsum(rng.standard_normal(n)) * 1e-9
    x[list(PHASE_GAPS[where])] = np.nan
    meas = Measurement.from_phase(x, TAU0)
    assert meas.has_gaps
    _check(meas, meas.phase.tolist(), None, name)


FREQUENCY_GAPS = {
    "interior": (9, 33, 34, 50),
    "first": (0, 27),
    "last": (-1, 12),
    "first_and_last": (0, -2, -1),
}


@pytest.mark.parametrize("n", [59, 200])
@pytest.mark.parametrize("where", list(FREQUENCY_GAPS))
@pytest.mark.parametrize("name", STATS)
def test_frequency_gaps_match_brute_force(n, where, name):
    rng = np.random.default_rng(2 * n + len(where))
    y = rng.standard_normal(n) * 1e-10 + 4e-10  # with a frequency offset
    missing = np.zeros(n, dtype=bool)
    missing[list(FREQUENCY_GAPS[where])] = True
    y[missing] = np.nan
    meas = Measurement.from_frequency(y, TAU0)
    assert meas.has_gaps
    # Reference phase: a plain running sum of the frequency, offset kept, gaps stepping 0.
    x_ref = [0.0]
    for value in y.tolist():
        x_ref.append(x_ref[-1] + TAU0 * (0.0 if math.isnan(value) else value))
    _check(meas, x_ref, missing.tolist(), name)


@pytest.mark.parametrize("name", STATS)
def test_phase_gaps_at_both_ends_and_inside(name):
    # NaN phase samples at the first, a middle and the last position: every term that
    # touches one is dropped and the rest kept, as the plain loop does (SP 1065 5.14).
    rng = np.random.default_rng(77)
    x = np.cumsum(rng.standard_normal(90)) * 1e-9
    x[[0, 40, 89]] = np.nan
    meas = Measurement.from_phase(x, TAU0)
    _check(meas, meas.phase.tolist(), None, name)


def test_unbroken_and_gap_paths_agree():
    # A record with no gap gives the same numbers whether or not a segment array is present
    # (the two kernel paths of the estimators; common practice: vectorised vs plain loop).
    rng = np.random.default_rng(5)
    x = np.cumsum(rng.standard_normal(150)) * 1e-9
    meas = Measurement.from_phase(x, TAU0)
    for name in STATS:
        stat = get_statistic(name)
        result = estimate(meas, stat, [m * TAU0 for m in MS])
        for m, dev, k in zip(result.m, result.deviation, result.n_terms, strict=True):
            ref, kr = brute_force(name, meas.phase.tolist(), None, TAU0, int(m))
            assert k == kr
            assert dev == pytest.approx(ref, rel=1e-12), (name, m)


@pytest.mark.parametrize("block", [7, 64, 1 << 15])
def test_blocked_gap_kernels_equal_the_whole_array_ones(block):
    # The blocked kernels must give the sums of the whole-array definitions (NIST SP
    # 1065 section 5.14: terms touching a gap are dropped) for any block size,
    # windows wider and narrower than a block, gaps and segment breaks at block edges.
    from stability.deviations._kernels import (
        comb_terms,
        gappy_sum_squares,
        gappy_window_sums_squares,
        window_sums_squares,
    )

    rng = np.random.default_rng(42)  # invented test data: a random walk with gaps
    x = np.cumsum(rng.standard_normal(3000))
    x[[0, 63, 64, 700, 701, 702, 2999]] = np.nan
    seg = np.zeros(x.size, dtype=np.int64)
    seg[1500:] = 1
    seg[2200:] = 2
    for m in (1, 3, 50, 400):
        offsets, coefs = (0, m, 2 * m), (1.0, -2.0, 1.0)
        count = x.size - 2 * m
        terms = comb_terms(x, seg, offsets, coefs, count)
        good = terms[~np.isnan(terms)]
        total, used = gappy_sum_squares(x, seg, offsets, coefs, count, block=block)
        assert used == good.size
        assert total == pytest.approx(float(good @ good), rel=1e-12)
        expected = window_sums_squares(terms, m)
        got = gappy_window_sums_squares(x, seg, offsets, coefs, count, m, block=block)
        assert got[1] == expected[1]
        assert got[0] == pytest.approx(expected[0], rel=1e-10)
