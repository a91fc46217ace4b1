"""Time-error metrics: max|TE|, cTE, dTE filter split, offset removal, sawtooth, window rule.

The dTE split is the first-order 0.1 Hz low-pass/high-pass pair recalled from
ITU-T G.8273.2 clause 7.1 (from memory). Its gain is checked on sine waves
against the first-order response: the analog form 1 / sqrt(1 + (f/fc)^2)
(to 6 %, the bilinear transform's warping at 2 Hz of 16 Hz sampling) and the
bilinear (Tustin) form, with tan(pi f / fs) for f, exactly to 1 %
(A. V. Oppenheim, R. W. Schafer, *Discrete-Time Signal Processing*, bilinear
transformation).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from stability import Measurement, read_log
from stability.errors import InputError
from stability.timing import (
    TDEV_RECORD_FACTOR,
    analyze_time_error,
    apply_sawtooth,
    longest_tau,
    remove_frequency_offset,
    split_dte,
    time_error_metrics,
)

FS = 16.0  # samples per second
FC = 0.1  # Hz, G.8273.2 (from memory)


def _sine(amplitude, f, seconds):
    t = np.arange(int(seconds * FS)) / FS
    return amplitude * np.sin(2 * np.pi * f * t)


def _amplitude(a):
    tail = a[a.size // 2 :]  # after the filter's start
    return 0.5 * (tail.max() - tail.min())


def _analog_low(f):
    return 1 / math.sqrt(1 + (f / FC) ** 2)


def _bilinear_low(f):
    r = math.tan(math.pi * f / FS) / math.tan(math.pi * FC / FS)
    return 1 / math.sqrt(1 + r * r)


def test_validation_messages():
    with pytest.raises(InputError, match="bandwidth must be a positive"):
        split_dte(np.zeros(10), 1.0, bandwidth=0)
    with pytest.raises(InputError, match="cTE window must be a positive"):
        time_error_metrics(np.zeros(10), 1.0, cte_window=-1)
    with pytest.raises(InputError, match="no finite sample"):
        time_error_metrics(np.full(10, np.nan), 1.0)
    with pytest.raises(InputError, match="one value per time-error sample"):
        apply_sawtooth(np.zeros(5), np.zeros(4))
    with pytest.raises(InputError, match="next or the same pulse"):
        apply_sawtooth(np.zeros(5), np.zeros(5), applies_to="later")
    with pytest.raises(InputError, match="no observation-window rule"):
        longest_tau("adev", 100.0)
    with pytest.raises(InputError, match="at least two"):
        remove_frequency_offset(np.array([1.0, np.nan]), 1.0)


def test_fast_component_goes_to_dte_high_and_slow_to_dte_low():
    seconds = 2000
    fast = _sine(5e-9, 2.0, seconds)  # 2 Hz
    slow = _sine(20e-9, 0.002, seconds)  # 500 s period
    low = split_dte(fast, 1 / FS).low
    assert _amplitude(low) == pytest.approx(5e-9 * _bilinear_low(2.0), rel=0.01)
    assert _amplitude(low) == pytest.approx(5e-9 * _analog_low(2.0), rel=0.06)
    high = split_dte(slow, 1 / FS).high
    gain = math.sqrt(1 - _bilinear_low(0.002) ** 2)  # |1 - H| of a first-order pair
    assert _amplitude(high) == pytest.approx(20e-9 * gain, rel=0.03)
    both = split_dte(fast + slow, 1 / FS)
    np.testing.assert_allclose(both.low + both.high, fast + slow - np.mean(fast + slow), atol=1e-20)


def test_metrics_of_a_known_signal():
    seconds = 4000  # whole periods of both sines
    c = 35e-9
    te = c + _sine(20e-9, 0.002, seconds) + _sine(5e-9, 2.0, seconds)
    met = time_error_metrics(te, 1 / FS)
    assert met.cte == pytest.approx(c, abs=1e-13)
    assert met.cte_windows == 4  # 1000 s windows (G.8273.2, from memory)
    assert met.max_abs_cte == pytest.approx(c, abs=1e-12)  # two whole periods per window
    assert met.max_abs_te == pytest.approx(c + 25e-9, rel=0.01)
    assert met.peak_to_peak == pytest.approx(50e-9, rel=0.02)
    # both components leak through the high-pass by their gains; the peaks add up
    high = 5e-9 * math.sqrt(1 - _bilinear_low(2) ** 2)
    high += 20e-9 * math.sqrt(1 - _bilinear_low(0.002) ** 2)
    assert met.dte_high_pp == pytest.approx(2 * high, rel=0.02)
    assert met.dte_low_pp == pytest.approx(40e-9, rel=0.03)
    assert met.max_abs_te_low == pytest.approx(c + 20e-9, rel=0.03)


def test_filter_not_resolved_below_the_nyquist_rate():
    split = split_dte(np.arange(10.0), 10.0)  # 0.05 Hz Nyquist < 0.1 Hz
    assert math.isnan(split.bandwidth) and "too long" in split.note
    assert np.all(split.high == 0)


def test_gaps_stay_gaps_through_the_filter():
    te = _sine(1e-9, 0.01, 200)
    te[100:110] = np.nan
    split = split_dte(te, 1 / FS)
    assert np.isnan(split.low[100:110]).all() and np.isfinite(split.low[:100]).all()


def test_offset_removal_takes_the_slope_and_keeps_the_mean():
    t = np.arange(10_000.0)
    te = 50e-9 + 2e-12 * t + np.random.default_rng(1).standard_normal(t.size) * 1e-9
    flat, off = remove_frequency_offset(te, 1.0)
    assert off.frequency_offset == pytest.approx(2e-12, rel=0.01)
    assert np.mean(flat) == pytest.approx(np.mean(te), abs=1e-15)
    assert abs(np.polyfit(t, flat, 1)[0]) < 1e-16


def test_sawtooth_for_the_next_pulse_is_removed_exactly():
    rng = np.random.default_rng(3)
    smooth = np.cumsum(rng.standard_normal(500)) * 1e-10
    q = rng.uniform(-4e-9, 4e-9, 500)  # pulse minus ideal, reported one pulse ahead
    te = smooth.copy()
    te[1:] += q[:-1]
    fixed = apply_sawtooth(te, q)
    assert math.isnan(fixed[0])
    np.testing.assert_allclose(fixed[1:], smooth[1:], atol=1e-21)
    same = apply_sawtooth(smooth - q, q, sign=+1, applies_to="same")
    np.testing.assert_allclose(same, smooth, atol=1e-21)


def test_sawtooth_improvement_is_reported():
    rng = np.random.default_rng(4)
    n = 4000
    smooth = np.cumsum(rng.standard_normal(n)) * 1e-11 + 1e-6
    q = rng.uniform(-5e-9, 5e-9, n)
    te = smooth.copy()
    te[1:] += q[:-1]
    meas = Measurement.from_phase(te, 1.0)
    res = analyze_time_error(meas, sawtooth=q, sawtooth_column="qerr", taus="octave")
    eff = res.sawtooth
    assert eff.tdev_ratio < 0.1 and eff.mtie_after < eff.mtie_before / 10
    assert eff.missing == 1  # the first pulse has no earlier report
    assert res.metrics.cte == pytest.approx(np.mean(smooth[1:]), rel=1e-9)
    assert "sawtooth" in " ".join(res.notes)


def test_observation_window_rule():
    assert longest_tau("mtie", 86400.0) == 86400.0
    assert longest_tau("tdev", 86400.0) == 86400.0 / TDEV_RECORD_FACTOR == 7200.0


def test_absolute_time_error_keeps_the_logged_offset():
    te = 123.4e-6 + np.random.default_rng(2).standard_normal(3000) * 1e-9
    res = analyze_time_error(Measurement.from_phase(te, 1.0), taus="decade")
    assert res.absolute and res.metrics.cte == pytest.approx(np.mean(te), rel=1e-12)
    assert res.metrics.max_abs_te == np.max(np.abs(te))
    assert res.offset is None and any("not removed" in n for n in res.notes)
    rel = analyze_time_error(Measurement.from_frequency(np.zeros(100) + 1e-9, 1.0))
    assert not rel.absolute and any("relative" in n for n in rel.notes)


@pytest.mark.parametrize("digits", [3, 17])
def test_the_reader_keeps_the_first_reading_as_origin(tmp_path, digits):
    # exact decimal text (3 decimals) and plain floats (17 digits) both keep the absolute TE
    te = 21.6 + np.random.default_rng(9).standard_normal(50)
    stamps = np.datetime64("2026-04-14T06:00:00", "s") + np.arange(50).astype("timedelta64[s]")
    rows = [f"{s}Z,{v:.{digits}f}" for s, v in zip(stamps, te, strict=True)]
    path = tmp_path / "pps.csv"
    path.write_text("timestamp,te_ns\n" + "\n".join(rows) + "\n")
    meas = read_log(path)
    logged = np.array([float(r.split(",")[1]) for r in rows]) * 1e-9
    np.testing.assert_allclose(meas.phase + meas.origin, logged, rtol=0, atol=1e-21)
    assert meas.origin == pytest.approx(logged[0], rel=1e-15)
