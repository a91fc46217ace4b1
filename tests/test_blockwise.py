"""Block-by-block computations of the analysis equal their whole-array forms.

The least-squares offset and drift, the block means of the noise
identification, the drift taken out of the estimators and the edge terms of
the total deviation are computed in blocks so that no array of the record's length is made. Each is
checked here against the plain whole-array computation, with the block size
made small, a length that is not a multiple of it, and gaps (NaN samples and
frequency gaps) on and beside the block edges.
"""

from __future__ import annotations

import numpy as np
import pytest

import stability.noise as noise
import stability.powerlaw as powerlaw
from stability import Measurement
from stability.deviations import _kernels, total
from stability.deviations.allan import mdev, oadev
from stability.noise import identify

BLOCK = 7  # the small block size of these tests; 103 samples are not a multiple of it


def _frequency_record(n: int = 103, seed: int = 3) -> tuple[np.ndarray, Measurement]:
    """Frequency with gaps on a block edge (7, 14), beside one (20) and at the ends."""
    rng = np.random.default_rng(seed)
    y = rng.standard_normal(n) * 1e-11 + 2e-9 + 1e-13 * np.arange(n)
    y[[0, 7, 14, 20, n - 1]] = np.nan
    return y, Measurement.from_frequency(y, 0.5)


def _phase_record(n: int = 104, seed: int = 4) -> Measurement:
    """Phase with NaN samples on a block edge (7, 49), beside one (15) and near the end."""
    rng = np.random.default_rng(seed)
    x = np.concatenate(([0.0], np.cumsum(rng.standard_normal(n - 1) * 1e-11)))
    x[[7, 15, 49, n - 2]] = np.nan
    return Measurement.from_phase(x, 1.0)


def _whole_frequency(meas: Measurement) -> np.ndarray:
    """y = diff(x) / tau0 + offset, NaN across frequency gaps (the whole-array form)."""
    y = np.diff(meas.phase) / meas.tau0 + meas.frequency_offset
    if meas.segments is not None:
        y[np.diff(meas.segments) != 0] = np.nan
    return y


def _ols(y: np.ndarray, tau0: float) -> tuple[float, float, float]:
    """(offset, slope per second, residual variance) of the finite samples, whole-array."""
    k = np.flatnonzero(np.isfinite(y)).astype(float)
    v = y[np.isfinite(y)]
    slope, intercept = np.polyfit(k * tau0, v, 1)
    resid = v - (intercept + slope * k * tau0)
    return float(v.mean()), float(slope), float(resid @ resid / (v.size - 2))


def test_least_squares_in_blocks_equals_the_whole_array_fit(monkeypatch):
    y, meas = _frequency_record()
    offset, slope, s2 = _ols(y, meas.tau0)
    monkeypatch.setattr(powerlaw, "_FIT_BLOCK", BLOCK)
    for got in (
        powerlaw.offset_and_drift(y, meas.tau0, None),
        powerlaw.offset_and_drift_of(meas, None),
    ):
        assert got.offset == pytest.approx(offset, rel=1e-12)
        assert got.drift_per_day == pytest.approx(slope * 86400.0, rel=1e-9)
        k = np.flatnonzero(np.isfinite(y))
        sxx = float(np.sum((k - k.mean()) ** 2)) * meas.tau0**2
        assert got.u_drift_per_day == pytest.approx(np.sqrt(s2 / sxx) * 86400.0, rel=1e-9)
        assert got.u_offset == pytest.approx(np.sqrt(s2 / k.size), rel=1e-9)
        assert got.span_s == (k[-1] - k[0] + 1) * meas.tau0
    assert powerlaw.frequency_slope(meas) == pytest.approx(slope, rel=1e-9)


def _whole_block_means(meas: Measurement, m: int, limit: int) -> np.ndarray:
    """Finite means of blocks of m frequency samples, middle ``limit`` of them (whole-array)."""
    y = _whole_frequency(meas) - meas.frequency_offset
    k = y.size // m
    means = y[: k * m].reshape(k, m).mean(axis=1)
    means = means[np.isfinite(means)]
    start = max(0, (means.size - limit) // 2)
    return means[start : start + limit]


@pytest.mark.parametrize("record", ["frequency", "phase"])
def test_block_means_from_the_phase_equal_the_means_of_the_frequency(monkeypatch, record):
    meas = _frequency_record()[1] if record == "frequency" else _phase_record()
    monkeypatch.setattr(noise, "_BLOCK", BLOCK)
    gaps = noise._gap_steps(meas.phase, meas.segments)
    np.testing.assert_array_equal(gaps, np.flatnonzero(np.isnan(_whole_frequency(meas))))
    for m in (1, 2, 3, 7, 8, 25, 60):
        for limit in (1, 4, 5, 9, 1000):
            got = noise._block_means(meas.phase, gaps, meas.tau0, m, limit)
            expected = _whole_block_means(meas, m, limit)
            np.testing.assert_allclose(got, expected, rtol=1e-9, atol=0)


def test_identification_does_not_depend_on_the_block_size(monkeypatch):
    # gaps everywhere, 5000 samples: the lag-1 method on block means spans many blocks
    rng = np.random.default_rng(8)
    y = rng.standard_normal(5000) * 1e-11
    y[rng.integers(0, y.size, 40)] = np.nan
    meas = Measurement.from_frequency(y, 1.0)
    ms = [1, 2, 4, 8, 16, 64, 256, 1024]
    whole = identify(meas, "oadev", ms)
    monkeypatch.setattr(noise, "ACF_MAX_POINTS", 300)
    middle = identify(meas, "oadev", ms)
    monkeypatch.setattr(noise, "_BLOCK", 13)
    blocked = identify(meas, "oadev", ms)
    assert blocked.noise == middle.noise
    np.testing.assert_allclose(blocked.estimate, middle.estimate, rtol=1e-9)
    assert whole.noise[:4] == ["WFM"] * 4


@pytest.mark.parametrize("record", ["frequency", "phase", "unbroken"])
def test_drift_taken_out_term_by_term_equals_the_detrended_phase(record):
    # The terms of x - D t^2 / 2 are those of x less D tau^2: the estimators take the
    # drift out without a detrended copy of the phase.
    if record == "frequency":
        meas = _frequency_record()[1]
    elif record == "phase":
        meas = _phase_record()
    else:
        meas = Measurement.from_frequency(np.random.default_rng(5).standard_normal(103), 1.0)
    drift = 3e-3
    t = np.arange(meas.n) * meas.tau0
    detrended = meas.phase - 0.5 * drift * t * t
    for func in (oadev, mdev):
        for m in (1, 2, 5, 16):
            got = func(meas.phase, meas.tau0, m, meas.segments, drift=drift)
            expected = func(detrended, meas.tau0, m, meas.segments)
            assert got[1] == expected[1]
            assert got[0] == pytest.approx(expected[0], rel=1e-10)


def test_shifted_kernels_in_small_blocks_equal_the_whole_terms():
    meas = _phase_record()
    x, seg = meas.phase, meas.segments
    offsets, coefs, shift = (0, 3, 6), (1.0, -2.0, 1.0), 0.25
    count = x.size - 6
    terms = _kernels.comb_terms(x, seg, offsets, coefs, count) - shift
    ok = np.isfinite(terms)
    total, used = _kernels.gappy_sum_squares(x, seg, offsets, coefs, count, BLOCK, shift)
    assert used == int(ok.sum())
    assert total == pytest.approx(float(terms[ok] @ terms[ok]), rel=1e-12)
    window = _kernels.window_sums_squares(terms, 3)
    got = _kernels.gappy_window_sums_squares(x, seg, offsets, coefs, count, 3, BLOCK, shift)
    assert got[1] == window[1]
    assert got[0] == pytest.approx(window[0], rel=1e-12)
    clean = np.nan_to_num(x)
    whole = _kernels.comb_terms(clean, None, offsets, coefs, count) - shift
    blocked = _kernels.comb_sum_squares(clean, offsets, coefs, count, 0, BLOCK, shift)
    assert blocked == pytest.approx(float(whole @ whole), rel=1e-12)


def _reflected_totvar_sums(meas: Measurement, m: int) -> tuple[float, int]:
    """TOTVAR's sum of squared terms and their count from the odd-reflected record
    written out whole (SP 1065 eq. 25), a reflected sample taking its end's segment."""
    x = meas.phase
    n, last = x.size, x.size - 1
    seg = np.zeros(n, dtype=np.int64) if meas.segments is None else meas.segments
    ext = np.concatenate((2 * x[0] - x[m:0:-1], x, 2 * x[last] - x[last - 1 : last - m - 1 : -1]))
    ext_seg = np.concatenate((np.full(m, seg[0]), seg, np.full(m, seg[last])))
    i = np.arange(1, n - 1) + m  # the record's samples 1 .. N-2 in the extension
    terms = ext[i - m] - 2 * ext[i] + ext[i + m]
    ok = np.isfinite(terms) & (ext_seg[i - m] == ext_seg[i + m])
    return float(terms[ok] @ terms[ok]), int(ok.sum())


@pytest.mark.parametrize("record", ["frequency", "phase", "unbroken"])
def test_total_deviation_edges_in_small_blocks_equal_the_reflected_record(monkeypatch, record):
    if record == "frequency":
        meas = _frequency_record()[1]
    elif record == "phase":
        meas = _phase_record()
    else:
        meas = Measurement.from_frequency(np.random.default_rng(6).standard_normal(103), 1.0)
    edge_blocks = total._edge_blocks
    monkeypatch.setattr(total, "_edge_blocks", lambda x, seg, m: edge_blocks(x, seg, m, BLOCK))
    for m in (1, 2, 7, 15, 30, 51):
        dev, used = total.totdev(meas.phase, meas.tau0, m, meas.segments)
        sums, count = _reflected_totvar_sums(meas, m)
        assert used == count
        if count == 0:  # every term spans a gap
            assert np.isnan(dev)
            continue
        assert dev == pytest.approx(np.sqrt(sums / (2 * (m * meas.tau0) ** 2 * count)), rel=1e-12)
