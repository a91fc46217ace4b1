"""MTOT, TTOT, HTOT, Theo1, TheoBR, ThêoH and PDEV: published values, cross-checks, gaps."""

from __future__ import annotations

import math
import warnings

import numpy as np
import pytest

import stability
from stability.deviations import (
    get_statistic,
    htot,
    mtot,
    oadev,
    ohdev,
    pdev,
    theo1,
    theobr,
    theoh,
    ttot,
)
from stability.deviations.theo import theo1_variance, theobr_ratio

with warnings.catch_warnings():
    warnings.simplefilter("ignore")
    import allantools as at

# NBS14 frequency data (NBS Monograph 140 Annex 8.E; NIST SP 1065 section 12.3).
NBS14_Y = np.array([892, 809, 823, 798, 671, 644, 883, 903, 677], dtype=float)
NBS14_X = np.concatenate(([0.0], np.cumsum(NBS14_Y)))


def _set1000() -> np.ndarray:
    """The 1000-point test set of NIST SP 1065 section 12.4 (frequency data)."""
    n = np.empty(1000, dtype=np.int64)
    n[0] = 1234567890
    for k in range(1, 1000):  # a 1000-step recurrence, test data only
        n[k] = (16807 * int(n[k - 1])) % 2147483647
    return n / 2147483647.0


def _noise(n: int, alpha: int, seed: int) -> np.ndarray:
    """Phase samples of power-law noise S_y ~ f^alpha (Kasdin & Walter 1992 filter)."""
    rng = np.random.default_rng(seed)
    beta = 2 - alpha  # phase spectrum S_x ~ f^-beta
    h = np.empty(n)
    h[0] = 1.0
    k = np.arange(1, n)
    h[1:] = np.cumprod((beta / 2.0 + k - 1) / k)
    w = rng.standard_normal(n)
    size = 2 * n
    return np.fft.irfft(np.fft.rfft(w, size) * np.fft.rfft(h, size), size)[:n] * 1e-9


def _ours(func, x, taus, tau0=1.0, factor=1.0):
    return np.array([func(x, tau0, int(round(t / (factor * tau0))))[0] for t in taus])


def _allan(name, x, **kw):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return getattr(at, name)(x, rate=1.0, data_type="phase", **kw)


# ------------------------------------------------------------------ degenerate input
def test_degenerate_arguments_give_nan():
    x = NBS14_X
    assert mtot(x, 1.0, 4) == (pytest.approx(math.nan, nan_ok=True), 0)  # 3m > N
    assert mtot(x, 1.0, 0)[1] == 0
    assert htot(x, 1.0, 4)[1] == 0  # 3m > N - 1 frequency samples
    assert theo1(x, 1.0, 3)[1] == 0  # m must be even
    assert theo1(x, 1.0, 10)[1] == 0  # m <= N - 1
    assert pdev(x, 1.0, 5)[1] == 0  # N - 2m >= 1
    assert theobr(x, 1.0, 2)[1] == 0  # needs N >= 90
    assert math.isnan(theobr_ratio(x))
    allnan = np.full(20, np.nan)
    for func, m in ((mtot, 2), (htot, 2), (theo1, 2), (pdev, 2), (ttot, 1)):
        dev, n = func(allnan, 1.0, m)
        assert n == 0 and math.isnan(dev)


# ------------------------------------------------------------------ published values
@pytest.mark.parametrize(
    ("m", "mtot_ref", "ttot_ref"),
    # NBS14, NIST SP 1065 section 12.3 / Riley, "The Calculation of Time Domain Frequency
    # Stability", table I -- from memory; these published figures include the WFM bias
    # factor, i.e. raw deviation / sqrt(0.73).
    [(1, 75.50203, 43.59112), (2, 75.83606, 87.56794)],
)
def test_nbs14_mtot_ttot_from_memory(m, mtot_ref, ttot_ref):
    # The recalled values are corrected ones: raw / sqrt(0.73), the handbook's WFM factor
    # (from memory). Compare the raw estimate with the raw value they imply.
    raw = math.sqrt(0.73)
    assert mtot(NBS14_X, 1.0, m)[0] == pytest.approx(mtot_ref * raw, rel=2e-7, abs=0)
    assert ttot(NBS14_X, 1.0, m)[0] == pytest.approx(ttot_ref * raw, rel=2e-7, abs=0)
    assert mtot(NBS14_X, 1.0, m)[1] == 10 - 3 * m + 1
    if m == 1:  # raw MTOT(tau0) = MDEV(tau0)/sqrt(2) = 91.22945/sqrt(2) (SP 1065 MDEV value)
        assert mtot(NBS14_X, 1.0, 1)[0] == pytest.approx(91.22945 / math.sqrt(2), rel=1e-7, abs=0)


def test_nbs14_htot_m1_is_ohdev():
    # SP 1065 section 5.2.14: the overlapping Hadamard deviation at m = 1;
    # NBS14 OHDEV(1) = 70.80607 (SP 1065 section 12.3, Riley table I).
    assert htot(NBS14_X, 1.0, 1)[0] == pytest.approx(70.80607, rel=1e-7, abs=0)
    assert htot(NBS14_X, 1.0, 1) == ohdev(NBS14_X, 1.0, 1)


def test_nbs14_against_allantools():
    # allantools 2024.6 cross-check on NBS14 at tau = 1, 2, 3.
    taus = [1.0, 2.0, 3.0]
    for name, ours in (("mtotdev", mtot), ("ttotdev", ttot), ("htotdev", htot)):
        t, dev, _, _ = _allan(name, NBS14_X, taus=taus)
        np.testing.assert_allclose(_ours(ours, NBS14_X, t), dev, rtol=1e-12)


# ------------------------------------------------------------------ 1000-point set
def test_set1000_against_allantools():
    # SP 1065 lists no values of these statistics for the 1000-point set:
    # cross-check against allantools 2024.6.
    y = _set1000()
    assert y.mean() == pytest.approx(0.4897745, abs=5e-8)  # SP 1065 section 12.4
    x = np.concatenate(([0.0], np.cumsum(y - y.mean())))
    for name, ours, taus in (
        ("mtotdev", mtot, [1.0, 4.0]),
        ("ttotdev", ttot, [1.0, 4.0]),
        ("htotdev", htot, [1.0, 4.0]),
        ("pdev", pdev, [1.0, 10.0, 100.0]),
    ):
        t, dev, _, n = _allan(name, x, taus=taus)
        np.testing.assert_allclose(_ours(ours, x, t), dev, rtol=1e-9, err_msg=name)
    # allantools' theo1 takes tau = m tau0 with m even; ours reports tau = 0.75 m tau0.
    t, dev, _, n = _allan("theo1", x, taus=[2.0, 10.0, 100.0])
    got = [theo1(x, 1.0, int(m)) for m in t]
    np.testing.assert_allclose([g[0] for g in got], dev, rtol=1e-10)
    np.testing.assert_array_equal([g[1] for g in got], n)


# ------------------------------------------------------------------ simulated noise
@pytest.mark.parametrize("n", [150, 151])
@pytest.mark.parametrize("alpha", [2, 0, -2])
def test_power_law_noise_against_allantools(n, alpha):
    # allantools 2024.6 cross-check, octave taus, N even and odd, to 1e-8 relative.
    x = _noise(n, alpha, seed=100 + n + alpha)
    for name, ours in (
        ("mtotdev", mtot),
        ("ttotdev", ttot),
        ("htotdev", htot),
        ("pdev", pdev),
        ("theo1", theo1),
    ):
        t, dev, _, _ = _allan(name, x, taus="octave")
        assert t.size >= 4
        np.testing.assert_allclose(_ours(ours, x, t), dev, rtol=1e-8, err_msg=name)


def test_large_phase_offset_keeps_digits():
    # common practice: a constant offset and frequency offset leave these statistics unchanged
    x = _noise(300, 0, seed=5)
    ramp = 0.3 + 1e-6 * np.arange(300)
    for func, m in ((mtot, 8), (htot, 8), (theo1, 8), (pdev, 8)):
        assert func(x + ramp, 1.0, m)[0] == pytest.approx(func(x, 1.0, m)[0], rel=1e-6, abs=0)


# ------------------------------------------------------------------ identities
def test_identities():
    x = _noise(400, -1, seed=7)
    for m in (1, 2, 5, 17):
        # SP 1065 eq. 28: TTOT = tau MTOT / sqrt(3) (from memory)
        assert ttot(x, 0.5, m)[0] == pytest.approx(0.5 * m * mtot(x, 0.5, m)[0] / math.sqrt(3))
    # allantools 2024.6 convention: PDEV(tau0) = ADEV(tau0)
    assert pdev(x, 1.0, 1) == oadev(x, 1.0, 1)
    # ThêoH is the Allan deviation at tau = 0.75 m tau0 up to 10 % of the record
    # (SP 1065 eq. 32, from memory)
    assert theoh(x, 1.0, 8) == oadev(x, 1.0, 6)
    assert theoh(x, 1.0, 200)[0] == pytest.approx(theobr(x, 1.0, 200)[0])
    # TheoBR = sqrt(ratio * Theo1 variance) (SP 1065 eq. 31, from memory)
    ratio = theobr_ratio(x)
    var, _ = theo1_variance(x, 1.0, 40)
    assert theobr(x, 1.0, 40)[0] == pytest.approx(math.sqrt(ratio * var), rel=1e-12, abs=0)
    # scaling with tau0: the deviations are dimensionless, tau0 only rescales phase
    for func in (mtot, htot, theo1, pdev):
        assert func(2.0 * x, 2.0, 4)[0] == pytest.approx(func(x, 1.0, 4)[0], rel=1e-12, abs=0)


def test_theobr_ratio_definition():
    # SP 1065 eq. 31 (from memory): mean of AVAR(9 + 3i) / Theo1(12 + 4i),
    # i = 0 .. floor(0.1 N / 3 - 3)
    x = _noise(150, 0, seed=11)
    top = math.floor(0.1 * 150 / 3 - 3)
    want = np.mean(
        [
            oadev(x, 1.0, 9 + 3 * i)[0] ** 2 / theo1_variance(x, 1.0, 12 + 4 * i)[0]
            for i in range(top + 1)
        ]
    )
    assert theobr_ratio(x) == pytest.approx(want, rel=1e-12, abs=0)


# ------------------------------------------------------------------ rounding at long tau
def _reflected_sum_extended(u: np.ndarray, m: int) -> tuple[float, int]:
    """Sum over 3m-sample subsequences of the mean square of the 6m reflected second
    differences of m-averages (SP 1065 eqs. 26 and 29, from memory), term by term in
    80-bit extended precision (np.longdouble): the direct definition, no fast algebra."""
    u = np.asarray(u, dtype=np.longdouble)
    n = 3 * m
    count = u.size - n + 1
    k1, k2 = n // 2, (n + 1) // 2
    t = np.arange(n, dtype=np.longdouble)
    j = np.arange(6 * m)
    total = np.longdouble(0)
    for lo in range(0, count, 32):  # blocks of subsequences (test reference)
        idx = np.arange(lo, min(count, lo + 32))[:, None] + np.arange(n)[None, :]
        xs = u[idx] - u[idx[:, :1]]
        slope = (xs[:, k2:].mean(axis=1) - xs[:, :k1].mean(axis=1)) / k2
        x0 = xs - slope[:, None] * t
        x0 -= x0.mean(axis=1, keepdims=True)
        ext = np.concatenate((x0[:, ::-1], x0, x0[:, ::-1]), axis=1)
        c = np.concatenate((np.zeros((idx.shape[0], 1), np.longdouble), ext.cumsum(axis=1)), 1)
        sums = c[:, m:] - c[:, :-m]  # m-sample sums starting at each position
        z = (sums[:, j] - 2 * sums[:, j + m] + sums[:, j + 2 * m]) / m
        total += np.sum(z * z) / (6 * m)
    return float(total), count


@pytest.mark.skipif(np.finfo(np.longdouble).eps > 1e-18, reason="needs 80-bit long double")
@pytest.mark.parametrize(("name", "alpha"), [("htot", 2), ("htot", 1), ("mtot", 2), ("mtot", 0)])
def test_long_tau_against_extended_precision(name, alpha):
    # The fast algebra must keep its digits at long tau for rough data (white PM phase
    # makes HTOT's frequency input blue): against the definition summed in extended
    # precision, to 1e-10 relative at m = 1024.
    m, n = 1024, 3200
    x = _noise(n, alpha, seed=31 + alpha)
    if name == "htot":
        total, count = _reflected_sum_extended(np.diff(x), m)
        want = math.sqrt(total / (6.0 * count))
    else:
        total, count = _reflected_sum_extended(x, m)
        want = math.sqrt(total / (2.0 * m * m * count))
    got = {"htot": htot, "mtot": mtot}[name](x, 1.0, m)
    assert got[1] == count
    assert got[0] == pytest.approx(want, rel=1e-10, abs=0)


@pytest.mark.parametrize("alpha", [2, 0, -2])
def test_both_reflected_forms_are_the_definition(alpha):
    # The sum is computed on first differences (smooth data) or on the samples (rough
    # data); each form alone must be the definition, whichever the data would choose.
    from stability.deviations.total import _stretch_sum

    x = _noise(120, alpha, seed=41) * 1e9
    for m in (1, 2, 5, 16):
        want = _mtot_loop(x, None, m, m * 1.0)
        for choice in ("differences", "samples"):
            total, count = _stretch_sum(x, [(0, x.size)], m, choice)
            got = math.sqrt(total / (2.0 * m**4 * 6.0 * m * count))
            assert count == want[1]
            assert got == pytest.approx(want[0], rel=1e-11, abs=0), (choice, m)


def test_htot_long_tau_against_allantools():
    # allantools 2024.6 htotdev (a direct float64 sum per subsequence) on white PM at the
    # longest octave tau of a 1600-sample record, to 1e-10 relative.
    x = _noise(1600, 2, seed=3)
    t, dev, _, n = _allan("htotdev", x, taus=[512.0])
    got = htot(x, 1.0, 512)
    assert got[1] == n[0]
    assert got[0] == pytest.approx(dev[0], rel=1e-10, abs=0)


# ------------------------------------------------------------------ gaps
def _ok(x, seg, idx):
    idx = np.asarray(idx)
    if not np.isfinite(x[idx]).all():
        return False
    return seg is None or seg[idx.min()] == seg[idx.max()]


def _mtot_loop(u, seg, m, tau, hadamard=False):
    """Brute force: every usable 3m-sample subsequence, SP 1065 eqs. 26 and 29 (from memory)."""
    n = 3 * m
    total, count = 0.0, 0
    for s in range(u.size - n + 1):
        if not _ok(u, seg, range(s, s + n)):
            continue
        xs = u[s : s + n]
        k1, k2 = n // 2, (n + 1) // 2
        slope = (xs[k2:].mean() - xs[:k1].mean()) / k2
        x0 = xs - slope * np.arange(n)
        ext = np.concatenate((x0[::-1], x0, x0[::-1]))
        acc = 0.0
        for j in range(6 * m):
            a = (
                ext[j : j + m].mean()
                - 2 * ext[j + m : j + 2 * m].mean()
                + ext[j + 2 * m : j + 3 * m].mean()
            )
            acc += a * a
        total += acc / (6 * m)
        count += 1
    scale = 6.0 if hadamard else 2.0 * tau * tau
    return math.sqrt(total / (scale * count)), count


def _theo1_loop(x, seg, m, tau0):
    # Theo1 of Howe (NIST SP 1065 eq. 30), formula from memory.
    h = m // 2
    total = 0.0
    used = 0
    for d in range(h):
        acc, k = 0.0, 0
        for i in range(x.size - m):
            idx = [i, i + m, i + h - d, i + h + d]
            if _ok(x, seg, idx):
                t = x[i] - x[i + h - d] + x[i + m] - x[i + h + d]
                acc += t * t
                k += 1
        total += acc / k / (h - d)
        used += k
    return math.sqrt(total / (0.75 * (m * tau0) ** 2)), used


def _pdev_loop(x, seg, m, tau0):
    # PVAR of Vernotte et al. 2016 (arXiv:1506.00687), formula from memory.
    total, used = 0.0, 0
    w = (m - 1) / 2 - np.arange(m)
    for i in range(x.size - 2 * m):
        if _ok(x, seg, range(i, i + 2 * m)):
            s = float(np.sum(w * (x[i : i + m] - x[i + m : i + 2 * m])))
            total += s * s
            used += 1
    return math.sqrt(72 * total / (used * m**4 * (m * tau0) ** 2)), used


def _gappy():
    x = _noise(160, 0, seed=21)
    xp = x.copy()
    xp[[17, 18, 70, 121]] = np.nan  # missing phase samples
    y = np.diff(x) + 1e-9
    y[[40, 41, 99]] = np.nan  # missing frequency samples
    meas = stability.Measurement.from_frequency(y, 1.0)
    return [(xp, None), (meas.phase, meas.segments)]


@pytest.mark.parametrize("case", [0, 1], ids=["phase-gaps", "frequency-gaps"])
def test_gaps_against_loops(case):
    x, seg = _gappy()[case]
    for m in (1, 2, 5):
        got, want = mtot(x, 1.0, m, seg), _mtot_loop(x, seg, m, m * 1.0)
        assert got[1] == want[1]
        assert got[0] == pytest.approx(want[0], rel=1e-10, abs=0)
    y = np.diff(x)
    yseg = None if seg is None else seg[:-1]
    if seg is not None:
        y[np.diff(seg) != 0] = np.nan
    for m in (2, 5):
        got, want = htot(x, 1.0, m, seg), _mtot_loop(y, yseg, m, m * 1.0, hadamard=True)
        assert got[1] == want[1]
        assert got[0] == pytest.approx(want[0], rel=1e-10, abs=0)
    for m in (2, 6):
        got, want = theo1(x, 1.0, m, seg), _theo1_loop(x, seg, m, 1.0)
        assert got[1] == want[1]
        assert got[0] == pytest.approx(want[0], rel=1e-10, abs=0)
    for m in (2, 7):
        got, want = pdev(x, 1.0, m, seg), _pdev_loop(x, seg, m, 1.0)
        assert got[1] == want[1]
        assert got[0] == pytest.approx(want[0], rel=1e-10, abs=0)


# ------------------------------------------------------------------ registry
@pytest.mark.parametrize(
    ("name", "family"),
    [
        ("mtot", "total_modified"),
        ("ttot", "total_modified"),
        ("htot", "hadamard_total"),
        ("theo1", "theo"),
        ("theobr", "theo"),
        ("theoh", "theo"),
        ("pdev", "parabolic"),
    ],
)
def test_registry_and_analyze(name, family):
    stat = get_statistic(name)
    assert stat.family == family
    if family == "theo":
        # Theo1 needs m even and sits at tau = 0.75 m tau0 (Howe; NIST SP 1065, from memory)
        assert stat.tau_factor == 0.75 and stat.m_step == 2
    y = _noise(301, 0, seed=3)
    meas = stability.Measurement.from_phase(y, 1.0)
    table = stability.analyze(meas, stats=[name])
    frame = table.to_frame()
    assert (frame["statistic"] == name).all()
    assert np.isfinite(frame["deviation"]).all() and (frame["deviation"] > 0).all()
    ms = frame["m"].to_numpy()
    np.testing.assert_allclose(frame["tau_s"], ms * stat.tau_factor)
    result = table.results[name]
    # the qualification layer may divide by a bias factor; compare the raw estimates
    raw = result.deviation if result.raw_deviation is None else result.raw_deviation
    np.testing.assert_allclose(raw, [stat.func(meas.phase, 1.0, int(m))[0] for m in ms])


def test_theobr_refuses_records_whose_cost_would_explode():
    # TheoBR's bias ratio needs Theo1 at ~N/30 averaging factors (NIST SP 1065 eq. 31, from
    # memory), a cost growing as N^3: past the limit a clear error, not hours of computing.
    from stability.deviations.theo import THEOBR_MAX_POINTS

    y = np.random.default_rng(3).standard_normal(THEOBR_MAX_POINTS + 10)
    m = stability.Measurement.from_frequency(y, 1.0)
    with pytest.raises(stability.AnalysisError, match="average the data first"):
        stability.analyze(m, stats="theobr", taus=[3.0], qualify=False)


def test_explicit_taus_of_theo1_are_taken_at_three_quarters_m():
    # Theo1 is reported at tau = 0.75 m tau0 (NIST SP 1065 eq. 30, from memory): asking for
    # tau = 3 s at tau0 = 1 s means m = 4.
    y = np.random.default_rng(5).standard_normal(400)
    m = stability.Measurement.from_frequency(y, 1.0)
    r = stability.analyze(m, stats="theo1", taus=[3.0, 6.0], qualify=False)["theo1"]
    assert list(r.m) == [4, 8]
    np.testing.assert_allclose(r.tau, [3.0, 6.0])
