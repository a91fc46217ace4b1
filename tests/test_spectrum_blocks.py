"""The spectrum and the line search computed block by block equal the whole-record forms.

Check values and their sources: the reference spectrum is scipy.signal.welch itself
(Welch 1967, as scipy implements it: Hann window, 50 % overlap, mean of each segment
removed) called once on the whole record, or on each gap-free segment for a record
with gaps; the reference background of an ordinate is the plain mean of its
neighbours' ratios over the window the periodic module states (12 each side, the
line's own ordinate and 2 each side left out). Block sizes are patched small, so the
records are many blocks long and the gaps fall on block edges.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.signal import welch
from scipy.stats import chi2

from stability import Measurement
from stability import periodic as periodic_module
from stability import spectrum as spectrum_module
from stability.periodic import find_lines
from stability.simulate import power_law
from stability.spectrum import welch_spectrum


def _whole_welch(y: np.ndarray, spec) -> np.ndarray:
    """scipy.signal.welch over the segments of ``spec`` that hold no gap (their mean)."""
    length = spec.segment_length
    step = int(round(length * 0.5))  # 50 % overlap
    starts = np.arange(0, y.size - length + 1, step)
    kept = [s for s in starts if np.isfinite(y[s : s + length]).all()]
    assert len(kept) == spec.segments_used
    assert starts.size - len(kept) == spec.segments_left_out
    runs = np.split(np.asarray(kept), np.flatnonzero(np.diff(kept) != step) + 1)
    total = 0.0
    for run in runs:  # one welch call over each stretch without a gap
        _, pxx = welch(
            y[run[0] : run[-1] + length],
            fs=1.0 / spec.tau0,
            window="hann",
            nperseg=length,
            noverlap=length - step,
            detrend="constant",
        )
        total = total + pxx * run.size
    pxx = total / len(kept)
    return pxx[1 : pxx.size - 1 if length % 2 == 0 else pxx.size]


@pytest.mark.parametrize("gaps", [(), (0, 1999, 2000, 4321), (5000,)])
def test_segments_one_at_a_time_equal_scipy_welch(monkeypatch, gaps):
    n = 10_007  # not a multiple of any block
    y = power_law(-1, n, h=1.0, tau0=0.5, seed=17)
    y[list(gaps)] = np.nan
    m = Measurement.from_frequency(y, 0.5)
    reference = welch_spectrum(m, segments=15, fit=False)
    # gaps scanned in blocks of 1000 (the gaps at 1999 and 2000 straddle a block edge)
    monkeypatch.setattr(spectrum_module, "_SCAN", 1000)
    spec = welch_spectrum(m, segments=15, fit=False)
    assert spec.segments_used == reference.segments_used
    assert spec.segments_left_out == reference.segments_left_out
    assert (spec.segments_left_out > 0) == bool(gaps)
    np.testing.assert_array_equal(spec.f, reference.f)
    np.testing.assert_allclose(spec.s_y, reference.s_y, rtol=1e-12)
    whole = _whole_welch(m.frequency(), spec)
    np.testing.assert_allclose(spec.s_y, whole, rtol=1e-12)
    assert spec.edf == reference.edf


def test_band_is_the_chi_squared_scaling():
    y = power_law(0, 4096, h=1.0, seed=9)
    spec = welch_spectrum(Measurement.from_frequency(y, 1.0), confidence=0.9)
    nu = spec.edf
    # [nu S / chi^2_{0.95}(nu), nu S / chi^2_{0.05}(nu)] at two-sided level 0.9
    np.testing.assert_allclose(spec.low, nu * spec.s_y / chi2.ppf(0.95, nu), rtol=1e-12)
    np.testing.assert_allclose(spec.high, nu * spec.s_y / chi2.ppf(0.05, nu), rtol=1e-12)


def test_background_is_the_mean_of_the_neighbours():
    rng = np.random.default_rng(4)
    ratio = rng.exponential(size=300)
    usable = rng.random(300) > 0.2
    usable[:5] = False
    ratio[~usable] = np.nan
    mean, count = periodic_module._background(ratio, usable)
    for i in range(ratio.size):
        near = [
            j
            for j in range(ratio.size)
            if periodic_module.GUARD < abs(i - j) <= periodic_module.NEIGHBOURS and usable[j]
        ]
        assert count[i] == len(near)
        if near:
            assert mean[i] == pytest.approx(np.mean(ratio[near]), rel=1e-12)
        else:
            assert np.isnan(mean[i])


def test_lines_found_on_the_searched_stretch_alone():
    # a sinusoidal FM inside the searched stretch (the third ordinate to a quarter of
    # the Nyquist frequency) and one above it, in white FM with a gap
    n = 2**15
    t = np.arange(n)
    y = power_law(0, n, h=2e-22, seed=5)
    y += 3e-12 * np.sin(2 * np.pi * t / 1210.0) + 4e-12 * np.sin(2 * np.pi * t / 5.0)
    y[20_000] = np.nan
    spec = welch_spectrum(Measurement.from_frequency(y, 1.0))
    lines = find_lines(spec)
    assert len(lines) == 1  # 0.2 Hz lies above a quarter of the Nyquist frequency
    assert abs(lines[0].frequency - 1 / 1210.0) < spec.resolution / 3
    assert lines[0].amplitude == pytest.approx(3e-12, rel=0.1)


@pytest.mark.parametrize("length", [16, 17, 1000, 10_007])
def test_the_window_is_scipys_periodic_hann(length):
    """The spectrum builds its own window (scipy.signal's import is not paid for it):
    the same numbers as scipy.signal.get_window("hann", length), bit for bit."""
    from scipy.signal import get_window

    np.testing.assert_array_equal(spectrum_module.hann_window(length), get_window("hann", length))
