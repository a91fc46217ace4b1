"""Dense-grid MTIE against an independent recursion, and MTIE/TDEV against closed forms.

* Every window m = 1..1000 at N = 5000 against a direct recursion (the extremes
  of m + 1 samples from those of m samples and one more sample: a different
  algorithm from the sparse table under test), and a plain loop at a few m
  (ITU-T G.810 (1996) appendix II.5 definition of MTIE).
* TDEV of white PM: from the MVAR definition (NIST SP 1065 (2008) eq. for
  MVAR) with independent phase samples of variance s^2, the inner sum of m
  second differences has variance 6 m s^2, so MVAR = 3 s^2 / (m tau^2), and with
  TDEV^2 = tau^2 MVAR / 3 (ITU-T G.810; SP 1065) TDEV = s / sqrt(m) exactly.
* TDEV of white FM: MVAR = h0 / (4 tau) for large m (SP 1065, Table of MVAR
  for power-law noise; REFERENCES "MVAR (large n)") with AVAR(tau0) = h0 /
  (2 tau0), so TDEV^2 = tau^2 MVAR / 3 = tau sigma_y^2(tau0) tau0 / 6.
* MTIE over a window as long as the record is the record's range, whose mean is
  known: white PM, d2(N) sigma (L. H. C. Tippett, Biometrika 17 (1925); the
  control-chart constants d2(5) = 2.326, d2(10) = 3.078); white FM (a random
  walk of n steps of rms s), sqrt(8 n / pi) s (W. Feller, Ann. Math. Stat. 22
  (1951), range of Brownian motion) less the discrete-walk correction
  2 |zeta(1/2)| / sqrt(2 pi) s = 1.1654 s (the expected maximum of a Gaussian
  random walk, sqrt(2n/pi) s + zeta(1/2)/sqrt(2 pi) s; from memory).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from stability import Measurement
from stability.analysis import estimate
from stability.deviations.time_error import mtie_windows
from stability.taus import tau_grid


def _recursion(x: np.ndarray, top: int) -> list[tuple[float, int]]:
    hi = x.copy()
    lo = x.copy()
    out = []
    for m in range(1, top + 1):
        hi = np.maximum(hi[:-1], x[m:])
        lo = np.minimum(lo[:-1], x[m:])
        span = hi - lo
        good = span[~np.isnan(span)]
        out.append((float(good.max()) if good.size else math.nan, int(good.size)))
    return out


@pytest.mark.parametrize("seed", [11, 12])
def test_every_window_to_1000_at_5000_points(seed):
    rng = np.random.default_rng(seed)
    x = rng.standard_normal(5000)
    if seed == 12:
        x = np.cumsum(x)  # a random walk: the extremes sit at the window ends
    ms = list(range(1, 1001))
    got = mtie_windows(x, ms[::-1])[::-1]  # any order asked
    ref = _recursion(x, 1000)
    for m, w, (value, count) in zip(ms, got, ref, strict=True):
        assert w.value == value, m  # max - min of the same doubles: exact
        assert w.windows == count == 5000 - m
        s = w.start
        assert x[s : s + m + 1].max() - x[s : s + m + 1].min() == value
    for m in (1, 2, 3, 7, 64, 65, 511, 512, 513, 1000):  # plain loop at a few m
        best = max(x[i : i + m + 1].max() - x[i : i + m + 1].min() for i in range(5000 - m))
        assert got[m - 1].value == best


def test_windows_touching_a_gap_are_left_out():
    rng = np.random.default_rng(5)
    x = np.cumsum(rng.standard_normal(3000))
    x[[100, 1500, 1501, 2999]] = np.nan
    ref = _recursion(x, 300)
    got = mtie_windows(x, range(1, 301))
    for w, (value, count) in zip(got, ref, strict=True):
        assert (w.value, w.windows) == (value, count)
    seg = np.zeros(x.size, dtype=np.int64)
    seg[2000:] = 1  # a frequency gap between samples 1999 and 2000
    y = np.cumsum(rng.standard_normal(3000))
    for m in (1, 10, 333):
        w = mtie_windows(y, [m], seg)[0]
        spans = [
            y[i : i + m + 1].max() - y[i : i + m + 1].min()
            for i in range(3000 - m)
            if seg[i] == seg[i + m]
        ]
        assert w.value == max(spans) and w.windows == len(spans)


def test_dense_grid_is_log_spaced_and_reaches_the_longest_window():
    ms = tau_grid("dense", 100_000)
    assert ms[0] == 1 and ms[-1] == 100_000
    ratios = ms[1:] / ms[:-1]
    assert ratios[ms[:-1] >= 20].max() < 1.15  # about 20 per decade
    assert 85 <= ms.size <= 101  # 101 steps, the shortest merged by rounding


def test_tdev_of_white_pm_is_sigma_over_root_m():
    s = 2e-9
    x = np.random.default_rng(7).standard_normal(400_000) * s
    res = estimate(Measurement.from_phase(x, 1.0), "tdev", [1, 4, 16, 64])
    np.testing.assert_allclose(res.deviation, s / np.sqrt([1, 4, 16, 64]), rtol=0.04)


def test_tdev_of_white_fm_grows_as_root_tau():
    sy, tau0 = 1e-11, 1.0  # sigma_y(tau0) of white FM
    x = np.cumsum(np.random.default_rng(8).standard_normal(400_000)) * sy * tau0
    taus = np.array([16.0, 64.0, 256.0])
    res = estimate(Measurement.from_phase(x, tau0), "tdev", taus)
    np.testing.assert_allclose(res.deviation, np.sqrt(taus * sy**2 * tau0 / 6), rtol=0.08)


def _mean_full_range(make, n, records=1000):
    rng = np.random.default_rng(2024)
    vals = [mtie_windows(make(rng, n), [n - 1])[0].value for _ in range(records)]
    return float(np.mean(vals))


@pytest.mark.parametrize(("n", "d2"), [(5, 2.326), (10, 3.078)])
def test_mtie_of_white_pm_over_the_record_is_the_expected_range(n, d2):
    got = _mean_full_range(lambda rng, k: rng.standard_normal(k), n, records=4000)
    assert got == pytest.approx(d2, rel=0.03)


def test_mtie_of_white_fm_over_the_record_is_the_range_of_a_walk():
    steps = 2000
    got = _mean_full_range(
        lambda rng, k: np.concatenate(([0.0], np.cumsum(rng.standard_normal(k - 1)))), steps + 1
    )
    expected = math.sqrt(8 * steps / math.pi) - 1.1654
    assert got == pytest.approx(expected, rel=0.03)
