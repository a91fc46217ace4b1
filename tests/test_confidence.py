"""Tests of stability.confidence: EDF models, chi-squared intervals, bias factors."""

from __future__ import annotations

import itertools
import math

import allantools
import numpy as np
import pytest
from scipy.stats import binomtest, chi2

from stability import confidence as conf
from stability.confidence import greenhall_edf, simple_oadev_edf
from stability.confidence_models import increment_edf, reflected_total_edf, totvar_edf_pm
from stability.dead_time import barnes_b2
from stability.deviations import STATISTICS, bias_factor, edf_for, edf_many, statistic_names
from stability.errors import InputError
from stability.intervals import ConfidenceInterval, chi2_interval

EDF_STATISTICS = tuple(statistic_names())
BIAS_CORRECTED = frozenset(name for name, stat in STATISTICS.items() if stat.bias is not None)

ALPHAS = (2, 1, 0, -1, -2)


def test_every_validation_message():
    cases = [
        (lambda: greenhall_edf(0, 4, 1, 10), r"d must lie in \[1, 3\], got 4"),
        (lambda: greenhall_edf(0.5, 2, 1, 10), r"alpha must be an integer, got 0.5"),
        (lambda: greenhall_edf(3, 2, 1, 10), r"alpha must lie in \[-4, 2\], got 3"),
        (lambda: greenhall_edf(-1, 1, 1, 10), r"alpha \+ 2d must exceed 1.*alpha=-1, d=1"),
        (lambda: greenhall_edf(0, 2, 0, 10), r"m must lie in \[1, inf\], got 0"),
        (lambda: greenhall_edf(0, 2, 1, 1), r"n must lie in \[2, inf\], got 1"),
        (lambda: greenhall_edf(0, 2, 4, 100, F=2), r"F must be 1 .*m = 4.*got 2"),
        (lambda: greenhall_edf(1, 2, 4, 100, F=math.inf), r"F = infinity needs alpha <= 0"),
        (lambda: greenhall_edf(0, 2, 4, 100, S=5), r"S must lie in \[1, 4\], got 5"),
        (lambda: greenhall_edf(0, 2, 4, 8), r"n = 8 phase samples is shorter than .*L = 9"),
        (lambda: edf_for("allan", 0, 1, 10), r"unknown statistic 'allan'"),
        (lambda: edf_for(3, 0, 1, 10), r"statistic must be one of .*got 3"),
        (lambda: edf_for("oadev", 3, 1, 10), r"alpha must lie in \[-2, 2\], got 3"),
        (lambda: edf_for("oadev", "wfm", 1, 10), r"alpha must be an integer, got 'wfm'"),
        (lambda: edf_for("oadev", 0, 0, 10), r"m must lie in \[1, inf\], got 0"),
        (lambda: edf_for("oadev", 0, 1, 1), r"n must lie in \[2, inf\], got 1"),
        (lambda: edf_many("oadev", [0, 0], [1, 2, 3], 10), r"alphas and ms must be .*shapes"),
        (lambda: chi2_interval(1.0, 5, 0.0), r"confidence must lie strictly .*got 0.0"),
        (lambda: chi2_interval(1.0, 5, 1.0), r"confidence must lie strictly .*got 1.0"),
        (lambda: chi2_interval(1.0, 5, "0.9"), r"confidence must be a number .*got '0.9'"),
        (lambda: chi2_interval(1.0, 5, True), r"confidence must be a number .*got True"),
        (lambda: chi2_interval("a", 5, 0.9), r"deviation and edf must be numbers"),
        (lambda: bias_factor("mtot2", 0, 1, 10), r"unknown statistic 'mtot2'"),
        (lambda: barnes_b2(0.0, 1.0), r"r \(T/tau\) must be finite and > 0, got 0.0"),
        (lambda: barnes_b2(1.0, 2.0), r"mu must be a number in \[-2, 2\), got 2.0"),
        (lambda: simple_oadev_edf(0, 5, 10), r"m must lie in \[1, 4\], got 5"),
        (lambda: simple_oadev_edf(0, 1, 3), r"n must lie in \[4, inf\], got 3"),
        (lambda: simple_oadev_edf(-3, 1, 10), r"alpha must lie in \[-2, 2\], got -3"),
    ]
    for call, pattern in cases:
        with pytest.raises(InputError, match=pattern):
            call()
    # An unknown statistic gets a suggestion and the list of valid names.
    with pytest.raises(InputError, match=r"did you mean 'oadev'\?.*tie_rms"):
        edf_for("oadv", 0, 1, 10)


# --------------------------------------------------------------------------- Greenhall


def _grid():
    """(alpha, d, overlapping, modified, N, m) over the cases of the algorithm."""
    out = []
    for alpha, d, ov, mod in itertools.product(
        range(2, -5, -1), (2, 3), (False, True), (False, True)
    ):
        for n in (10, 64, 1000, 10000):
            for m in (1, 2, 3, 5, 8, 16, 34, 40, 50, 150, 200, 333, n // 7, n // 5, (n - 1) // 3):
                length = (1 if not mod else m) + m * d
                if alpha + 2 * d > 1 and 1 <= m and n >= length:
                    out.append((alpha, d, ov, mod, n, m))
    return sorted(set(out))


def test_greenhall_matches_allantools():
    # Cross-check against allantools 2024.6 (allantools.edf_greenhall), rel. tol. 1e-6,
    # alpha 2..-4, d = 2, 3, (non-)overlapping, (un)modified, m up to N/3.
    checked = skipped = 0
    for alpha, d, ov, mod, n, m in _grid():
        try:
            ref = allantools.edf_greenhall(alpha, d, m, n, overlapping=ov, modified=mod)
        except NotImplementedError:
            # allantools leaves the unmodified-WPM case K <= d open; tested below.
            assert alpha == 2 and not mod
            skipped += 1
            continue
        except AssertionError:
            # allantools' table-2 lookup rejects alpha = -4 (its row-index check stops
            # at -3); that entry is checked against the uncapped sum below.
            assert alpha == -4 and not mod
            skipped += 1
            continue
        got = greenhall_edf(alpha, d, m, n, F=1 if mod else m, S=m if ov else 1)
        assert got == pytest.approx(ref, rel=1e-6), (alpha, d, ov, mod, n, m)
        checked += 1
    assert checked > 900 and skipped < 50


def test_grid_reaches_every_branch():
    # The grid above covers J <= Jmax, and J > Jmax = 100 (Greenhall & Riley 2003) with
    # r > d + 1 (asymptotic tables) and r <= d + 1 (m' = Jmax / r).
    branches = set()
    for _alpha, d, ov, mod, n, m in _grid():
        s = m if ov else 1
        f = 1 if mod else m
        big_m = 1 + math.floor(s * (n - (m / f + m * d)) / m)
        j = min(big_m, (d + 1) * s)
        r = big_m / s
        branches.add("sum" if j <= 100 else ("table" if r > d + 1 else "rescaled"))
    assert branches == {"sum", "table", "rescaled"}


def test_greenhall_extends_to_d1():
    # First-difference variance (d = 1), alpha >= 0; allantools 2024.6 cross-check.
    for alpha, mod, ov, (n, m) in itertools.product(
        (2, 1, 0), (False, True), (False, True), [(50, 3), (1000, 40), (1000, 300)]
    ):
        ref = allantools.edf_greenhall(alpha, 1, m, n, overlapping=ov, modified=mod)
        got = greenhall_edf(alpha, 1, m, n, F=1 if mod else m, S=m if ov else 1)
        assert got == pytest.approx(ref, rel=1e-6)


def test_wpm_closed_form_matches_sum():
    # Unmodified WPM: the closed form of Greenhall & Riley 2003 (case 4, including
    # K = ceil(r) <= d, which allantools 2024.6 leaves unimplemented) equals the
    # direct correlation sum of their eq. (10) wherever that sum has <= 100 terms.
    for d, n, m in [(2, 100, 45), (2, 100, 40), (3, 100, 30), (3, 50, 16), (2, 64, 10), (3, 9, 2)]:
        for s in (1, m):
            big_m = 1 + math.floor(s * (n - 1 - m * d) / m)
            j = min(big_m, (d + 1) * s)
            exact = conf._basic_sum(j, big_m, s, float(m), 2, d) / (
                big_m * conf._sz(0.0, float(m), 2, d)[0] ** 2
            )
            assert greenhall_edf(2, d, m, n, F=m, S=s) == pytest.approx(1 / exact, rel=1e-12)


def test_asymptotic_tables_agree_with_uncapped_sum():
    # Tables 1-3 of Greenhall & Riley 2003 are asymptotic forms of the capped sum; an
    # uncapped sum (all (d+1)m terms) must agree to about 0.5 % at N = 20000, m = 200.
    n, m = 20000, 200
    for mod in (True, False):
        for d in (2, 3):
            for alpha in range(2 if mod else 1, -2 * d + 1, -1):
                f = 1.0 if mod else float(m)
                big_m = 1 + math.floor(m * (n - (m / f + m * d)) / m)
                j = (d + 1) * m
                fx = f if (mod or alpha == 1) else math.inf
                exact = conf._basic_sum(j, big_m, m, fx, alpha, d) / (
                    big_m * conf._sz(0.0, fx, alpha, d)[0] ** 2
                )
                got = greenhall_edf(alpha, d, m, n, F=f if mod else m, S=m)
                assert got == pytest.approx(1 / exact, rel=5e-3), (mod, d, alpha)


def test_exact_white_fm_limit():
    # Greenhall & Riley 2003: non-overlapped AVAR, WFM, F = infinity gives
    # edf = 2 M^2 / (3M - 1) exactly, with M = 1 + floor((N - L)/m), L = m d = 2m.
    for n in (5, 10, 100, 1000):
        for m in range(1, n // 2 + 1, max(1, n // 40)):
            big_m = 1 + math.floor((n - 2 * m) / m)
            expected = 2 * big_m**2 / (3 * big_m - 1)
            for f in (math.inf, 0):
                assert greenhall_edf(0, 2, m, n, F=f, S=1) == pytest.approx(expected, rel=1e-12)


def test_white_fm_approaches_its_limit_as_m_grows():
    # With F = m the unmodified filter tends to the F = infinity one; the algorithm
    # switches to it once m(d+1) > Jmax = 100 (Greenhall & Riley 2003), below that the
    # gap to 2M^2/(3M-1) (here with L = 1 + 2m) shrinks roughly like 1/m.
    n = 1000
    gaps = []
    for m in (5, 10, 20, 33, 34, 60, 200):
        big_m = 1 + math.floor((n - 1 - 2 * m) / m)
        limit = 2 * big_m**2 / (3 * big_m - 1)
        gap = greenhall_edf(0, 2, m, n, F=m, S=1) / limit - 1
        if m >= 34:
            assert gap == pytest.approx(0.0, abs=1e-12)
        else:
            assert 0 < gap < 0.15 / m
            gaps.append(gap)
    assert gaps == sorted(gaps, reverse=True)


def test_single_allan_term_has_one_degree_of_freedom():
    # Howe, Allan, Barnes, "Properties of signal sources and measurement methods" (1981),
    # section V: three phase readings give one Allan-variance term, distributed as
    # chi-squared with one degree of freedom (WFM).
    assert greenhall_edf(0, 2, 1, 3, F=1, S=1) == pytest.approx(1.0, rel=1e-12)
    assert edf_for("adev", 0, 1, 3) == pytest.approx(1.0, rel=1e-12)


def test_fpm_large_m_keeps_its_digits():
    # The rewritten alpha = 1 filter (c(q) + 2 ln F) must equal the textbook form
    # F^2 [2 sw(t) - sw(t - 1/F) - sw(t + 1/F)] (Greenhall & Riley 2003 eq. 8) where that
    # form is still accurate, and stay smooth where it would lose digits.
    t = np.array([0.0, 0.25, 1.0, 2.5, 3.0, 5.5])
    f = 20.0
    plain = f * f * (2 * conf._sw(t, 1) - conf._sw(t - 1 / f, 1) - conf._sw(t + 1 / f, 1))
    np.testing.assert_allclose(conf._sx(t, f, 1), plain, rtol=1e-10, atol=1e-12)
    edfs = [greenhall_edf(1, 3, m, 10**7, F=m, S=1) for m in (10**5, 10**5 + 1, 10**5 + 2)]
    assert np.all(np.diff(edfs) < 0) and np.ptp(edfs) / edfs[0] < 1e-4


# --------------------------------------------------------------------------- per statistic


def test_edf_for_dispatch():
    n = 1000
    for a in ALPHAS:  # m = 1: the exact EDF of the N - d sampled d-th differences
        for stat in ("adev", "oadev", "mdev", "tdev", "totdev", "mtot", "ttot"):
            assert edf_for(stat, a, 1, n) == increment_edf(a, 2, n - 2)
        for stat in ("hdev", "ohdev", "htot"):
            assert edf_for(stat, a, 1, n) == increment_edf(a, 3, n - 3)
    for m in (2, 4, 30, 200):
        for a in ALPHAS:
            assert edf_for("adev", a, m, n) == greenhall_edf(a, 2, m, n, F=m, S=1)
            assert edf_for("oadev", a, m, n) == greenhall_edf(a, 2, m, n, F=m, S=m)
            assert edf_for("mdev", a, m, n) == greenhall_edf(a, 2, m, n, F=1, S=m)
            assert edf_for("tdev", a, m, n) == edf_for("mdev", a, m, n)
            assert edf_for("pdev", a, m, n) == edf_for("mdev", a, m, n)
            assert edf_for("hdev", a, m, n) == greenhall_edf(a, 3, m, n, F=m, S=1)
            assert edf_for("ohdev", a, m, n) == greenhall_edf(a, 3, m, n, F=m, S=m)
            # HTOT is MTOT's form on the N - 1 frequency values, noise type alpha + 2
            assert edf_for("htot", a, m, n) == reflected_total_edf(a + 2, m, n - 1)
            assert math.isnan(edf_for("mtie", a, m, n))
            assert math.isnan(edf_for("tie_rms", a, m, n))
    # Accepts numpy integers, integral floats, mixed case and NaN for "not identified".
    assert edf_for(" OADEV ", np.int64(0), np.int32(4), 1000.0) == edf_for("oadev", 0, 4, 1000)
    assert edf_for("oadev", float("nan"), 4, 1000) == edf_for("oadev", None, 4, 1000)


def test_total_family_formulas():
    # NIST SP 1065 EDF table for TOTVAR (from memory), edf = b T/tau - c with
    # T/tau = (N - 1)/m (coefficients from memory).
    n, m = 1001, 10
    ratio = (n - 1) / m
    assert edf_for("totdev", 0, m, n) == pytest.approx(1.50 * ratio)
    assert edf_for("totdev", -1, m, n) == pytest.approx(1.17 * ratio - 0.22)
    assert edf_for("totdev", -2, m, n) == pytest.approx(0.93 * ratio - 0.36)
    for a in (2, 1):  # WPM, FPM: models from the exact moments (tests/test_confidence_exact.py)
        oadev_edf = edf_for("oadev", a, m, n)
        assert edf_for("totdev", a, m, n) == totvar_edf_pm(a, m, n, oadev_edf)
        # the reflected ends cost degrees of freedom at long tau (m = N/4)
        assert edf_for("totdev", a, 250, n) < edf_for("oadev", a, 250, n)
    for a in ALPHAS:  # MTOT/TTOT: the model fitted to the exact EDF (test_confidence_exact)
        assert edf_for("mtot", a, m, n) == reflected_total_edf(a, m, n)
        assert edf_for("ttot", a, m, n) == edf_for("mtot", a, m, n)
    # Past the end of the record (3m > N) the model has no value: the floor of 1.
    assert edf_for("mtot", 2, 1000, 1001) == 1.0


def test_theo1_formulas():
    # Howe's Theo1 EDF with r = 0.75 m (NIST SP 1065, from memory).
    n, m = 1000, 40
    r = 0.75 * m
    wpm = 0.86 * (n + 1) * (n - 4 * r / 3) / (n - r) * r / (r + 1.14)
    wfm = ((4.1 * n + 0.8) / r - (3.1 * n + 6.5) / n) * r**1.5 / (r**1.5 + 5.2)
    ffm = (2 * n * n - 1.3 * n * r - 3.5 * r) / (n * r) * r**3 / (r**3 + 2.3)
    u = 4.4 * n - 1
    rwfm = (4.4 * n - 2) / (2.9 * r) * (u * u - 8.6 * r * u + 11.4 * r * r) / (4.4 * n - 3) ** 2
    for stat in ("theo1", "theobr"):
        assert edf_for(stat, 2, m, n) == pytest.approx(wpm)
        assert edf_for(stat, 0, m, n) == pytest.approx(wfm)
        assert edf_for(stat, -1, m, n) == pytest.approx(ffm)
        assert edf_for(stat, -2, m, n) == pytest.approx(rwfm)
        assert edf_for(stat, 1, m, n) == pytest.approx(min(wpm, wfm))


def test_theoh_takes_the_model_of_the_estimator_used_at_each_tau():
    # ThêoH is OADEV at 0.75 m up to 10 % of the record, TheoBR beyond (SP 1065 eq. 32),
    # so its rows take the EDF model of whichever estimator made them.
    n = 1000
    for a in ALPHAS:
        assert edf_for("theoh", a, 40, n) == edf_for("oadev", a, 30, n)  # tau 30 <= 99.9
        assert edf_for("theoh", a, 400, n) == edf_for("theo1", a, 400, n)  # tau 300 > 99.9


def test_unknown_alpha_takes_the_smallest_edf():
    for stat in EDF_STATISTICS:
        if stat in ("mtie", "tie_rms"):
            assert math.isnan(edf_for(stat, None, 5, 100))
            continue
        for m in (1, 5, 20):
            smallest = min(edf_for(stat, a, m, 100) for a in ALPHAS)
            assert edf_for(stat, None, m, 100) == smallest


def test_edf_for_never_fails():
    # Every statistic, alpha -2..2 and unknown, m from 1 to N - 1 (beyond every
    # estimator's limit): finite and >= 1, NaN only for the time-error statistics.
    for n in (3, 4, 5, 10, 100, 1000):
        ms = list(range(1, n))
        alphas = (*ALPHAS, None)
        if n == 1000:  # unknown alpha (which evaluates all five types), m dense at both ends
            ms = sorted({*range(1, 60), *range(60, 940, 5), *range(940, 1000)})
            alphas = (None,)
        for stat in EDF_STATISTICS:
            for m, a in itertools.product(ms, alphas):
                e = edf_for(stat, a, m, n)
                if stat in ("mtie", "tie_rms"):
                    assert math.isnan(e)
                else:
                    assert math.isfinite(e) and e >= 1.0, (stat, a, m, n, e)
    for stat in EDF_STATISTICS:  # ... and each type on a sparser grid
        for m, a in itertools.product(range(1, 1000, 17), ALPHAS):
            e = edf_for(stat, a, m, 1000)
            assert math.isnan(e) if stat in ("mtie", "tie_rms") else e >= 1.0


def test_edf_many_matches_loop():
    ms = np.array([1, 2, 4, 8, 16, 32])
    alphas = np.array([0, -1, np.nan, 2, 1, -2])
    got = edf_many("ohdev", alphas, ms, 500)
    loop = [
        edf_for("ohdev", None if np.isnan(a) else int(a), int(m), 500)
        for a, m in zip(alphas, ms, strict=True)
    ]
    np.testing.assert_array_equal(got, loop)
    assert edf_many("oadev", 0, ms, 500).shape == ms.shape  # scalar alpha broadcasts


def test_simple_oadev_edf():
    # SP 1065 closed forms vs the Greenhall algorithm for OAVAR, WFM. The closed
    # forms are empirical fits (Howe, Allan, Barnes 1981), least accurate at small m;
    # at moderate m (10..100 of N = 1000) they agree to within 10 %.
    n = 1000
    for m in (10, 20, 50, 100):
        approx = simple_oadev_edf(0, m, n)
        exact = greenhall_edf(0, 2, m, n, F=m, S=m)
        assert approx == pytest.approx(exact, rel=0.10)
    # The handbook's formulas, evaluated directly (NIST SP 1065, from memory).
    assert simple_oadev_edf(2, 3, n) == pytest.approx((n + 1) * (n - 6) / (2 * (n - 3)))
    assert simple_oadev_edf(1, 3, n) == pytest.approx(
        math.exp(math.sqrt(math.log((n - 1) / 6) * math.log(7 * (n - 1) / 4)))
    )
    assert simple_oadev_edf(-1, 1, n) == pytest.approx(2 * (n - 2) ** 2 / (2.3 * n - 4.9))
    assert simple_oadev_edf(-1, 3, n) == pytest.approx(5 * n * n / (12 * (n + 9)))
    assert simple_oadev_edf(-2, 3, n) == pytest.approx(
        (n - 2) / 3 * ((n - 1) ** 2 - 9 * (n - 1) + 36) / (n - 3) ** 2
    )


# --------------------------------------------------------------------------- intervals


def test_chi2_interval_matches_table_values():
    # Chi-squared quantiles for nu = 10: chi2_{0.025} = 3.247, chi2_{0.975} = 20.483
    # (chi-square table, NIST/SEMATECH e-Handbook of Statistical Methods 1.3.6.7.4,
    # from memory), and scipy.stats.chi2 directly.
    low, high = chi2_interval(2.0, 10, 0.95)
    assert low == pytest.approx(2.0 * math.sqrt(10 / 20.483), rel=1e-4)
    assert high == pytest.approx(2.0 * math.sqrt(10 / 3.247), rel=1e-4)
    assert low == pytest.approx(2.0 * math.sqrt(10 / chi2.ppf(0.975, 10)), rel=1e-12)
    assert high == pytest.approx(2.0 * math.sqrt(10 / chi2.ppf(0.025, 10)), rel=1e-12)
    # Non-integer nu goes straight to the continuous distribution.
    low, high = chi2_interval(1.0, 7.3, 0.683)
    assert low == pytest.approx(math.sqrt(7.3 / chi2.ppf(1 - 0.317 / 2, 7.3)), rel=1e-12)
    assert high == pytest.approx(math.sqrt(7.3 / chi2.ppf(0.317 / 2, 7.3)), rel=1e-12)


def test_chi2_interval_properties():
    edf = np.array([1.0, 2.0, 5.0, 10.0, 100.0, 1e4, 1e6])
    dev = np.full(edf.shape, 3.0)
    low, high = chi2_interval(dev, edf, 0.683)
    assert isinstance(chi2_interval(dev, edf), ConfidenceInterval)
    assert np.all(low <= dev) and np.all(dev <= high)
    width = high - low
    assert np.all(np.diff(width) < 0)  # more EDF, narrower interval
    up, down = high - dev, dev - low
    assert up[0] > 3 * down[0]  # strongly skewed at one degree of freedom
    assert up[-1] / down[-1] == pytest.approx(1.0, abs=0.01)  # near symmetric at large nu
    # Higher confidence, wider interval.
    low95, high95 = chi2_interval(dev, edf, 0.95)
    assert np.all(low95 < low) and np.all(high95 > high)
    # NaN bounds for unusable rows, scalars give floats.
    low, high = chi2_interval([1.0, np.nan, 1.0, 1.0, -1.0], [5, 5, np.nan, 0.0, 5], 0.9)
    assert np.isfinite(low[0]) and np.all(np.isnan(low[1:])) and np.all(np.isnan(high[1:]))
    low, high = chi2_interval(1.0, 3.0)
    assert isinstance(low, float) and isinstance(high, float)
    # At a low confidence level the interval is widened to reach the estimate.
    low, high = chi2_interval(1.0, 1.0, 0.1)
    assert low <= 1.0 <= high


def test_chi2_interval_coverage_sample_variance():
    # Sample variance of nu + 1 Gaussian values is sigma^2 chi2(nu)/nu (common practice):
    # the interval must cover sigma = 1 at the nominal rate, judged with a binomial test.
    rng = np.random.default_rng(20240611)
    trials = 1000
    for nu in (2, 10, 40):
        s = rng.standard_normal((trials, nu + 1)).std(axis=1, ddof=1)
        for level in (0.683, 0.95):
            low, high = chi2_interval(s, nu, level)
            hits = int(np.count_nonzero((low <= 1.0) & (1.0 <= high)))
            assert abs(hits / trials - level) < 0.05
            assert binomtest(hits, trials, level).pvalue > 1e-3


def test_chi2_interval_coverage_overlapping_allan_white_fm():
    # End to end: OAVAR of simulated white FM (y white with unit variance has
    # AVAR(m) = 1/m exactly; SP 1065), interval from the Greenhall EDF. The chi-squared
    # model is an approximation for correlated terms: coverage within 5 points.
    rng = np.random.default_rng(7)
    trials, n_y, m = 600, 256, 8
    y = rng.standard_normal((trials, n_y))
    x = np.concatenate([np.zeros((trials, 1)), np.cumsum(y, axis=1)], axis=1)  # tau0 = 1
    n = x.shape[1]
    second = x[:, 2 * m :] - 2 * x[:, m:-m] + x[:, : -2 * m]
    avar = (second**2).sum(axis=1) / (2 * m * m * (n - 2 * m))
    edf = edf_for("oadev", 0, m, n)
    for level in (0.683, 0.95):
        low, high = chi2_interval(np.sqrt(avar), edf, level)
        cover = np.mean((low**2 <= 1 / m) & (1 / m <= high**2))
        assert abs(cover - level) < 0.05


# --------------------------------------------------------------------------- bias


def test_bias_factors_at_tabulated_values():
    # TOTVAR FFM/RWFM: NIST SP 1065 section 5.2.11 (from memory); the rest are exact
    # ratios of expectations (tests/quadform.py; checked in tests/test_confidence_exact.py).
    n, m = 1001, 100  # tau/T = 0.1
    assert bias_factor("totdev", 0, m, n) == 1.0
    assert bias_factor("totdev", 2, m, n) == pytest.approx(1 + 4 * 100 / (3 * 999))
    assert bias_factor("totdev", -1, m, n) == pytest.approx(1 - 0.481 * 0.1)
    assert bias_factor("totdev", -2, m, n) == pytest.approx(1 - 0.750 * 0.1)
    for a, b in zip(ALPHAS, (0.9953, 0.8506, 0.7705, 0.7173, 0.6787), strict=True):
        assert bias_factor("mtot", a, m, n) == pytest.approx(b, abs=5e-4)
        assert bias_factor("ttot", a, m, n) == bias_factor("mtot", a, m, n)
    for a, b in zip(ALPHAS, (1.3779, 1.2613, 0.9953, 0.8506, 0.7705), strict=True):
        assert bias_factor("htot", a, m, n) == pytest.approx(b, abs=5e-4)
    # Theo1: AVAR/Theo1 = a + b/tau^c, tau = 0.75 m; corrected = raw / B = raw (a + b/tau^c)
    # (NIST SP 1065, coefficients from memory).
    m = 8
    tau = 0.75 * m
    coeffs = {
        2: (0.09, 0.74, 0.40),
        1: (0.14, 0.82, 0.30),
        0: (1.0, 0.0, 0.0),
        -1: (1.87, -1.05, 0.79),
        -2: (2.70, -1.53, 0.85),
    }
    raw = 4.0e-24
    for a, (ca, cb, cc) in coeffs.items():
        corrected = raw / bias_factor("theo1", a, m, n)
        assert corrected == pytest.approx(raw * (ca + cb / tau**cc), rel=1e-12)
    assert bias_factor("theo1", 0, m, n) == 1.0


def test_bias_factor_defaults_to_one():
    assert BIAS_CORRECTED == frozenset({"totdev", "mtot", "ttot", "htot", "theo1"})
    for stat in EDF_STATISTICS:
        assert bias_factor(stat, None, 4, 100) == 1.0
        if stat not in BIAS_CORRECTED:
            for a in ALPHAS:
                assert bias_factor(stat, a, 4, 100) == 1.0


# --------------------------------------------------------------------------- Barnes B2


def test_barnes_b2():
    # At r = 1 (no dead time) the formula reduces to [4 (2^mu) - 4] / [4 (2^mu - 1)] = 1
    # for every mu, since |r - 1|^(mu+2) vanishes: a variance without dead time needs no
    # correction (Barnes, NBS TN 375; formula from memory). At mu = 0 the 0/0 limit gives
    # 4 ln 2 / (4 ln 2) = 1.
    for mu in (-2.0, -1.5, -1.0, -0.5, 0.0, 0.5, 1.0, 1.9):
        assert barnes_b2(1.0, mu) == pytest.approx(1.0, rel=1e-12)
    # Closed values derived from the TN 375 formula: mu = 1 (RWFM), r >= 1:
    # (r+1)^3 + (r-1)^3 = 2 r^3 + 6 r, so B2 = (6r - 2)/4 = (3r - 1)/2.
    r = np.array([1.0, 2.0, 3.5, 10.0])
    np.testing.assert_allclose(barnes_b2(r, 1.0), (3 * r - 1) / 2, rtol=1e-12)
    # mu = -1 (WFM): B2 = 1 for all r >= 1, dead time does not bias white FM.
    np.testing.assert_allclose(barnes_b2(r, -1.0), 1.0, rtol=1e-12)
    # mu = 0 (FFM) is continuous with its neighbours.
    assert barnes_b2(2.0, 0.0) == pytest.approx(
        0.5 * (barnes_b2(2.0, 1e-6) + barnes_b2(2.0, -1e-6)), rel=1e-6
    )
