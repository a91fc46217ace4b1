"""Tests of stability.hat: three-cornered hat separation and pair alignment."""

from __future__ import annotations

import math
from datetime import datetime, timedelta

import numpy as np
import pytest
from scipy.stats import binomtest

from stability import Measurement
from stability.errors import AnalysisError, InputError
from stability.hat import (
    STATUS_BELOW,
    STATUS_OK,
    align,
    hat_coefficients,
    hat_variances,
    separate,
)
from stability.hat_intervals import combination_variance, difference_matrix, null_multiple

N = 2**14


def _white(levels: dict[str, float], n: int, seed: int) -> dict[str, np.ndarray]:
    rng = np.random.default_rng(seed)
    return {k: v * rng.standard_normal(n) for k, v in levels.items()}


def _pairs(y: dict[str, np.ndarray], keys) -> dict[tuple[str, str], Measurement]:
    # Each pair (A, B) measures A - B.
    return {(a, b): Measurement.from_frequency(y[a] - y[b], 1.0) for a, b in keys}


TRIANGLE = [("A", "B"), ("B", "C"), ("C", "A")]


# ---------------------------------------------------------------------------- validation
def test_every_validation_message():
    y = _white({"A": 1.0, "B": 1.0, "C": 1.0, "D": 1.0}, 64, 0)
    good = _pairs(y, TRIANGLE)
    m = good[("A", "B")]
    cases = [
        ({}, {}, "non-empty mapping"),
        ({("A",): m}, {}, "tuple of two names"),
        ({("A", "A"): m}, {}, "paired with itself"),
        ({("A", "B"): m, ("B", "A"): m}, {}, "given twice"),
        ({("A", "B"): y["A"]}, {}, "must be a stability.Measurement"),
        ({("A", "B"): m}, {}, "needs at least 3"),
        (good, {"stat": "mtie"}, "does not separate"),
        (good, {"stat": "nope"}, "unknown statistic"),
        (good, {"confidence": 1.5}, "strictly between 0 and 1"),
        (good, {"confidence": "x"}, "confidence must be a number"),
    ]
    for pairs, kwargs, message in cases:
        with pytest.raises(InputError, match=message):
            separate(pairs, **kwargs)
    # A triangle with a missing side does not determine each oscillator.
    open_chain = _pairs(y, [("A", "B"), ("B", "C"), ("C", "D")])
    with pytest.raises(AnalysisError, match="do not determine"):
        separate(open_chain)


# ---------------------------------------------------------------------------- the algebra
def test_three_oscillator_coefficients_are_the_closed_form():
    # sigma_A^2 = (sigma_AB^2 + sigma_CA^2 - sigma_BC^2)/2 and cyclically (Gray & Allan 1974).
    coefs = hat_coefficients(TRIANGLE, ["A", "B", "C"])
    expected = 0.5 * np.array([[1, -1, 1], [1, 1, -1], [-1, 1, 1]])
    np.testing.assert_allclose(coefs, expected, atol=1e-12)
    rng = np.random.default_rng(5)
    v = dict(zip(TRIANGLE, rng.uniform(1.0, 2.0, size=(3, 4)), strict=True))
    out = hat_variances(v)
    ab, bc, ca = v[("A", "B")], v[("B", "C")], v[("C", "A")]
    np.testing.assert_allclose(out["A"], (ab + ca - bc) / 2)  # Gray & Allan 1974
    np.testing.assert_allclose(out["B"], (ab + bc - ca) / 2)
    np.testing.assert_allclose(out["C"], (bc + ca - ab) / 2)


def test_four_oscillators_least_squares_equals_closed_form_on_consistent_data():
    # With pair variances exactly s_i^2 + s_j^2 the least-squares solution of all six
    # pairs (SP 1065 section 9.2) returns each s_i^2, as the closed form does on
    # any triangle (Gray & Allan 1974).
    s2 = {"A": 1.0, "B": 9.0, "C": 25.0, "D": 4.0}
    names = list(s2)
    all_pairs = [(a, b) for i, a in enumerate(names) for b in names[i + 1 :]]
    v = {p: np.array([s2[p[0]] + s2[p[1]]]) for p in all_pairs}
    four = hat_variances(v)
    three = hat_variances({p: v[p] for p in [("A", "B"), ("B", "C"), ("A", "C")]})
    for name in names:
        np.testing.assert_allclose(four[name], [s2[name]], rtol=1e-12)
    for name in "ABC":
        np.testing.assert_allclose(three[name], four[name], rtol=1e-12)


def test_four_oscillators_on_simulated_data():
    # Four white-FM oscillators, all six pairs: each recovered near its level
    # (OADEV of white FM = sigma_y / sqrt(m) at tau0 = 1 s, SP 1065 section 5.2.4).
    levels = {"A": 1e-11, "B": 2e-11, "C": 3e-11, "D": 4e-11}
    y = _white(levels, 4096, 11)
    names = list(levels)
    keys = [(a, b) for i, a in enumerate(names) for b in names[i + 1 :]]
    result = separate(_pairs(y, keys), taus=[1.0, 2.0, 4.0])
    for name, level in levels.items():
        osc = result[name]
        assert osc.status == [STATUS_OK] * 3
        np.testing.assert_allclose(osc.deviation, level / np.sqrt(osc.m), rtol=0.15)
    assert result.coefficients.shape == (4, 6)


# ---------------------------------------------------------------------------- separation
def test_recovers_each_level_within_its_interval():
    # Three white-FM oscillators at 1e-11, 3e-11, 5e-11 (tau0 = 1 s): the true OADEV is
    # sigma_y / sqrt(m) (SP 1065 section 5.2.4). Intervals at 95 %: each true value lies
    # inside its interval (or under the upper bound where below resolution) in at least
    # 90 % of the octave taus up to N/16.
    levels = {"A": 1e-11, "B": 3e-11, "C": 5e-11}
    y = _white(levels, N, 1)
    result = separate(_pairs(y, TRIANGLE), confidence=0.95)
    hits = total = 0
    for name, level in levels.items():
        osc = result[name]
        for k, m in enumerate(osc.m):
            if m > N // 16:
                continue
            truth = level / math.sqrt(m)
            total += 1
            if osc.status[k] == STATUS_OK:
                hits += osc.ci_low[k] <= truth <= osc.ci_high[k]
            else:
                hits += truth <= osc.upper_bound[k]
    assert total >= 30
    assert hits >= 0.9 * total
    # The pair curves are qualified as single measurements would be.
    pair = result.pairs[("A", "B")]
    assert np.isfinite(pair.edf).all()
    # The A - B pair is white FM of variance 1e-22 + 9e-22, and OADEV(tau0) of white FM is
    # its sample deviation (SP 1065 section 5.2.4; independent noises add in variance).
    np.testing.assert_allclose(pair.deviation[0], math.hypot(1e-11, 3e-11), rtol=0.05)


def test_negative_variance_is_reported_below_resolution():
    # One oscillator far better than the other two on a short record: its estimate is
    # dominated by the others' scatter and comes out negative at some taus
    # (Gray & Allan 1974 note that the estimates can be negative).
    levels = {"A": 1e-14, "B": 5e-11, "C": 5e-11}
    y = _white(levels, 512, 3)
    result = separate(_pairs(y, TRIANGLE))
    osc = result["A"]
    below = np.array([s == STATUS_BELOW for s in osc.status])
    assert below.any()
    assert np.isnan(osc.deviation[below]).all()
    # A negative estimate is always below resolution; a resolved one exceeds at least
    # three times the hat's resolution there (stability.hat_intervals).
    assert below[osc.variance <= 0].all()
    assert (osc.variance[~below] > 3 * osc.resolution[~below]).all()
    assert np.isfinite(osc.resolution).all() and (osc.resolution > 0).all()
    # Below resolution the interval is [0, upper bound].
    assert (osc.ci_low[below] == 0).all()
    np.testing.assert_array_equal(osc.ci_high[below], osc.upper_bound[below])
    assert np.isfinite(osc.upper_bound).all() and (osc.upper_bound > 0).all()
    # The bound covers the true deviation (it is at least the hat's resolution).
    truth = 1e-14 / np.sqrt(osc.m)
    assert (osc.upper_bound[below] >= truth[below]).all()
    ok = ~below
    assert np.isfinite(osc.deviation[ok]).all()
    np.testing.assert_array_equal(osc.upper_bound[ok], osc.ci_high[ok])
    assert any("below the resolution" in n for n in result.notes)
    frame = result.to_frame()
    assert set(frame["status"]) <= {STATUS_OK, STATUS_BELOW}
    assert list(frame.columns[:4]) == ["oscillator", "statistic", "tau_s", "m"]
    assert len(frame) == 3 * len(osc.tau)
    pairs = result.pairs_frame()
    assert pairs["pair"].iloc[0] == "A-B"


def test_mdev_separates_too():
    # MVAR of white FM = sigma_y^2 / (2 m) at large m (SP 1065 table of R(n) = 0.5;
    # the ratio MVAR/AVAR is exactly 1 at m = 1).
    levels = {"A": 1e-11, "B": 3e-11, "C": 5e-11}
    y = _white(levels, N, 4)
    result = separate(_pairs(y, TRIANGLE), stat="mdev", taus=[1.0])
    np.testing.assert_allclose(result["C"].deviation, [5e-11], rtol=0.05)


# ---------------------------------------------------------------------------- alignment
def test_alignment_by_time_stamps():
    t0 = datetime(2024, 5, 1, 12, 0, 0)
    rng = np.random.default_rng(9)
    x = np.cumsum(rng.standard_normal(300)) * 1e-9
    # Three logs of one phase record, starting 0, 5 and 12 samples late, of
    # different lengths: the common span is samples 12 .. 279 of the record.
    logs = {
        ("A", "B"): Measurement.from_phase(x[0:280], 1.0, start=t0),
        ("B", "C"): Measurement.from_phase(x[5:300], 1.0, start=t0 + timedelta(seconds=5)),
        ("C", "A"): Measurement.from_phase(x[12:290], 1.0, start=t0 + timedelta(seconds=12)),
    }
    out = align(logs)
    expected = x[12:280] - x[12]
    for meas in out.values():
        assert meas.n == 268
        assert meas.start == t0 + timedelta(seconds=12)
        np.testing.assert_allclose(meas.phase, expected, atol=1e-18)
    assert out[("C", "A")] is not logs[("C", "A")]
    assert any("trimmed" in n for n in out[("A", "B")].notes)


def test_alignment_errors():
    t0 = datetime(2024, 5, 1)
    x = np.zeros(50)
    a = Measurement.from_phase(x, 1.0, start=t0)
    with pytest.raises(InputError, match="one sample interval"):
        align({("A", "B"): a, ("B", "C"): Measurement.from_phase(x, 2.0, start=t0)})
    with pytest.raises(InputError, match="off the common grid"):
        shifted = Measurement.from_phase(x, 1.0, start=t0 + timedelta(seconds=0.5))
        align({("A", "B"): a, ("B", "C"): shifted})
    with pytest.raises(InputError, match="no start time"):
        align({("A", "B"): a, ("B", "C"): Measurement.from_phase(x, 1.0)})
    with pytest.raises(InputError, match="equal lengths"):
        align(
            {
                ("A", "B"): Measurement.from_phase(x, 1.0),
                ("B", "C"): Measurement.from_phase(x[:40], 1.0),
            }
        )
    with pytest.raises(AnalysisError, match="overlap"):
        late = Measurement.from_phase(x, 1.0, start=t0 + timedelta(seconds=49))
        align({("A", "B"): a, ("B", "C"): late})


def test_separate_uses_aligned_data():
    # Pair logs offset in time: the separation runs on the common span only.
    levels = {"A": 1e-11, "B": 3e-11, "C": 5e-11}
    y = _white(levels, 2000, 7)
    t0 = datetime(2024, 1, 1)
    pairs = {}
    for k, (a, b) in enumerate(TRIANGLE):
        lo = 10 * k
        pairs[(a, b)] = Measurement.from_frequency(
            (y[a] - y[b])[lo:], 1.0, start=t0 + timedelta(seconds=lo)
        )
    result = separate(pairs, taus=[1.0])
    assert any("common span" in n for n in result.notes)
    # 2001 phase points less the 20 trimmed, N - 2m OADEV terms at m = 1 (SP 1065 section 5.2.4)
    assert all(r.n_terms[0] == 2001 - 20 - 2 for r in result.pairs.values())


# ---------------------------------------------------------------------------- coverage
def _coverage_rows(levels: dict[str, float], seeds: range, confidence: float):
    """(oscillator, m, status, low, high, upper, truth) of every row over seeds.

    White FM of sigma per 1 s sample: the true OADEV is sigma / sqrt(m) (NIST SP 1065
    section 5.2.4: the expectation of the Allan variance of white FM is sigma^2 / m).
    """
    rows = []
    for seed in seeds:
        y = _white(levels, 4095, 1000 + seed)
        result = separate(_pairs(y, TRIANGLE), confidence=confidence)
        for name, level in levels.items():
            osc = result[name]
            for k, m in enumerate(osc.m):
                rows.append(
                    (
                        name,
                        int(m),
                        osc.status[k],
                        osc.ci_low[k],
                        osc.ci_high[k],
                        osc.upper_bound[k],
                        level / math.sqrt(m),
                    )
                )
    return rows


def _judge_ok_rows(rows, confidence):
    ok = [r for r in rows if r[2] == STATUS_OK]
    hits = sum(r[3] <= r[6] <= r[4] for r in ok)
    total = len(ok)
    assert total >= 100, total
    rate = hits / total
    # Two-sided binomial test at the 0.1 % level and a +/- 5 point band (the project's
    # acceptance for interval coverage, as in tests/test_qualify.py).
    assert abs(rate - confidence) <= 0.05, (rate, total)
    assert binomtest(hits, total, confidence).pvalue > 1e-3, (hits, total)
    below = [r for r in rows if r[2] == STATUS_BELOW]
    # A bound below resolution is the upper end of the two-sided interval on the
    # variance, so it covers the truth at least at the interval's level.
    if below:
        covered = sum(r[6] <= r[5] for r in below)
        assert binomtest(covered, len(below), confidence, alternative="less").pvalue > 1e-3
        assert all(r[3] == 0.0 and r[4] == r[5] for r in below)
    return ok, below


@pytest.mark.parametrize("confidence", [0.683, 0.95])
def test_rows_marked_ok_cover_at_their_level_with_one_quiet_oscillator(confidence):
    # A and B white FM of sigma 1, C of sigma 0.05 (4095 samples): C's variance is
    # 1/400 of theirs and drowns in the scatter of their pair estimates at every tau
    # (Gray & Allan 1974: the estimates can even come out negative). The rows marked
    # ok must cover at their level; C is almost never marked ok.
    levels = {"A": 1.0, "B": 1.0, "C": 0.05}
    rows = _coverage_rows(levels, range(60), confidence)
    _judge_ok_rows(rows, confidence)
    quiet = [r for r in rows if r[0] == "C"]
    assert sum(r[2] == STATUS_OK for r in quiet) <= 0.01 * len(quiet)
    at_128 = [r for r in quiet if r[1] == 128]
    assert all(r[2] == STATUS_BELOW and np.isfinite(r[5]) for r in at_128)


def test_rows_marked_ok_cover_at_their_level_with_three_equal_oscillators():
    # Three white-FM oscillators of sigma 1 (4095 samples).
    levels = {"A": 1.0, "B": 1.0, "C": 1.0}
    ok, _ = _judge_ok_rows(_coverage_rows(levels, range(60), 0.683), 0.683)
    # Every oscillator is resolved at short tau, where the pair EDFs are in the thousands.
    assert {r[0] for r in ok if r[1] == 1} == {"A", "B", "C"}


# ---------------------------------------------------------------------------- interval algebra
def test_combination_variance_is_the_closed_form_for_three_oscillators():
    # Var s_C^2 = (2 s_C^4 + s_A^2 s_C^2 + s_B^2 s_C^2 + s_A^2 s_B^2) / nu for one EDF nu
    # (Isserlis 1918 on the quadratic forms of the Gray & Allan 1974 combination; derived
    # in stability.hat_intervals).
    names = ["A", "B", "C"]
    coefs = hat_coefficients(TRIANGLE, names)
    diff = difference_matrix(TRIANGLE, names)
    s2 = np.array([[3.0], [2.0], [0.5]])  # sigma^2 of A, B, C at one tau
    nu = 40.0
    var = combination_variance(coefs, diff, s2, np.full((3, 1), nu))
    a, b, c = s2[:, 0]
    np.testing.assert_allclose(var[2, 0], (2 * c * c + a * c + b * c + a * b) / nu, rtol=1e-12)
    np.testing.assert_allclose(var[0, 0], (2 * a * a + a * b + a * c + b * c) / nu, rtol=1e-12)


def test_null_multiple_matches_the_laplace_law_at_two_degrees_of_freedom():
    # With nu = 2, (X - Y) / 2 for X, Y independent chi-squared(2) is Laplace of scale 1,
    # so P[(X - Y) / (2 sqrt 2) > t] = exp(-t sqrt 2) / 2 (exponential variables).
    tail = 0.00135
    expected = math.log(0.5 / tail) / math.sqrt(2.0)
    assert null_multiple(2.0, tail) == pytest.approx(expected, rel=1e-6)
    # Many degrees of freedom: the normal quantile; few: heavier tails, a larger multiple.
    assert null_multiple(5000.0, tail) == pytest.approx(3.0, abs=0.01)
    assert null_multiple(1.0, tail) > null_multiple(10.0, tail) > null_multiple(100.0, tail)
