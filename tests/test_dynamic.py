"""Tests of stability.dynamic: deviations in a sliding window (dynamic Allan deviation)."""

from __future__ import annotations

import math
from datetime import datetime, timedelta

import numpy as np
import pytest

from stability import Measurement
from stability.deviations import mdev, oadev, ohdev
from stability.dynamic import dynamic_stability, window_sums
from stability.errors import AnalysisError, InputError, StabilityWarning


def _white(n: int, seed: int, level: float = 1e-11) -> np.ndarray:
    return level * np.random.default_rng(seed).standard_normal(n)


# ---------------------------------------------------------------------------- validation
def test_every_validation_message():
    m = Measurement.from_frequency(_white(100, 0), 1.0)
    good = {"window": 50.0, "step": 10.0}
    cases = [
        ({**good, "window": 500.0}, "longer than the record"),
        ({**good, "window": 2.0}, "shorter than 3 samples"),
        ({**good, "step": 0.0}, "step must be positive"),
        ({**good, "step": -5.0}, "step must be positive"),
        ({**good, "step": 0.5}, "shorter than the sample interval"),
        ({**good, "window": "abc"}, "window"),
        ({**good, "stat": "mtie"}, "not available in a sliding window"),
        ({**good, "taus": "weekly"}, "unknown tau grid"),
        ({**good, "confidence": 0.0}, "strictly between 0 and 1"),
        ({**good, "noise": "all"}, "noise must be"),
    ]
    for kwargs, message in cases:
        with pytest.raises(InputError, match=message):
            dynamic_stability(m, **kwargs)
    with pytest.raises(InputError, match="must be a stability.Measurement"):
        dynamic_stability(np.zeros(10), **good)
    with pytest.raises(AnalysisError, match="does not fit a window"):
        dynamic_stability(m, window=50.0, step=10.0, taus=[1.0, 40.0])


# ---------------------------------------------------------------------------- correctness
@pytest.mark.parametrize(("stat", "func"), [("oadev", oadev), ("mdev", mdev), ("ohdev", ohdev)])
def test_running_sums_equal_the_estimator_on_each_window(stat, func):
    # Vectorised window sums checked against a plain loop of the whole-record
    # estimator (SP 1065 eqs. 11, 14, 18) applied to each window's samples.
    meas = Measurement.from_frequency(_white(1200, 1), 1.0)
    result = dynamic_stability(meas, window=300.0, step=70.0, stat=stat, noise="record")
    starts = np.arange(0, meas.n - 300 + 1, 70)
    assert result.shape == (starts.size, result.m.size)
    for w, s in enumerate(starts):
        x = meas.phase[s : s + 300]
        expected = [func(x, 1.0, int(m)) for m in result.m]
        np.testing.assert_allclose(result.deviation[w], [e[0] for e in expected], rtol=1e-9)
        np.testing.assert_array_equal(result.n_terms[w], [e[1] for e in expected])
    np.testing.assert_allclose(result.time_s, (starts + 149.5) * 1.0)


def test_gaps_drop_only_the_terms_that_touch_them():
    # Terms touching a gap are dropped and each window normalised by the terms used
    # (SP 1065 section 5.14); checked against the estimator on each window.
    y = _white(800, 2)
    y[300:305] = np.nan
    meas = Measurement.from_frequency(y, 1.0)
    result = dynamic_stability(meas, window=200.0, step=50.0, taus=[1.0, 4.0, 16.0])
    starts = np.arange(0, meas.n - 200 + 1, 50)
    for w, s in enumerate(starts):
        x = meas.phase[s : s + 200]
        seg = meas.segments[s : s + 200]
        for k, m in enumerate(result.m):
            dev, n = oadev(x, 1.0, int(m), seg)
            assert result.n_terms[w, k] == n
            if n:
                assert math.isclose(result.deviation[w, k], dev, rel_tol=1e-9)
    assert (result.n_terms < result.n_terms.max(axis=0)).any()


def test_tdev_is_tau_mdev_over_root3_and_datetimes():
    # TDEV = tau MDEV / sqrt(3) (ITU-T G.810; SP 1065 eq. 15).
    start = datetime(2024, 3, 1, 0, 0, 0)
    meas = Measurement.from_frequency(_white(600, 3), 1.0, start=start)
    kw = {"window": 240.0, "step": 60.0, "noise": "record"}
    md = dynamic_stability(meas, stat="mdev", **kw)
    td = dynamic_stability(meas, stat="tdev", **kw)
    np.testing.assert_allclose(td.deviation, md.deviation * md.tau / math.sqrt(3.0))
    assert td.time[0] == start + timedelta(seconds=119.5)
    frame = td.to_frame()
    assert list(frame.columns) == [
        "time_s",
        "time",
        "tau_s",
        "m",
        "n_terms",
        "deviation",
        "ci_low",
        "ci_high",
        "edf",
    ]
    assert len(frame) == td.deviation.size
    assert frame["time"].iloc[0] == start + timedelta(seconds=119.5)


def test_window_sums_against_a_loop():
    rng = np.random.default_rng(4)
    values = rng.standard_normal(50)
    valid = rng.uniform(size=50) > 0.2
    starts = np.array([0, 3, 17, 40])
    sums, counts = window_sums(values, valid, starts, 10)
    for k, s in enumerate(starts):
        sel = valid[s : s + 10]
        assert math.isclose(sums[k], values[s : s + 10][sel].sum(), abs_tol=1e-12)
        assert counts[k] == sel.sum()


# ---------------------------------------------------------------------------- behaviour
def test_stationary_white_fm_gives_a_flat_map():
    # Stationary white FM: every window estimates the same OADEV as the whole record,
    # so the whole-record value lies inside the window's 95 % chi-squared interval
    # (Greenhall EDF) in at least 90 % of cells (Galleani & Tavella 2009: a flat
    # dynamic Allan variance for stationary noise).
    y = _white(2**13, 5)
    meas = Measurement.from_frequency(y, 1.0)
    result = dynamic_stability(meas, window=1024.0, step=256.0, confidence=0.95)
    whole = np.array([oadev(meas.phase, 1.0, int(m))[0] for m in result.m])
    inside = (result.ci_low <= whole[None, :]) & (whole[None, :] <= result.ci_high)
    assert np.isfinite(result.ci_low).all()
    assert inside.mean() >= 0.9
    assert result.deviation.shape[0] == (meas.n - 1024) // 256 + 1


def test_noise_level_step_is_located():
    # White FM whose level is x1 for the first half and x4 for the second: the
    # deviation at tau0 crosses the geometric mean of the two levels (x2) within one
    # window of the true step time (Galleani & Tavella 2009 show such steps on the map).
    n = 8000
    y = _white(n, 6)
    y[n // 2 :] *= 4.0
    meas = Measurement.from_frequency(y, 1.0)
    window = 400.0
    result = dynamic_stability(meas, window=window, step=20.0, taus=[1.0], noise="record")
    level = result.deviation[:, 0]
    threshold = math.sqrt(1e-11 * 4e-11)
    crossing = result.time_s[np.argmax(level > threshold)]
    assert abs(crossing - n // 2) <= window
    assert (level[result.time_s < n // 2 - window] < threshold).all()
    assert (level[result.time_s > n // 2 + window] > threshold).all()


def test_all_gap_window_warns_and_gives_nan():
    y = _white(400, 7)
    y[100:250] = np.nan
    meas = Measurement.from_frequency(y, 1.0)
    with pytest.warns(StabilityWarning, match="no usable term"):
        result = dynamic_stability(meas, window=100.0, step=50.0, taus=[1.0], noise="record")
    empty = result.n_terms[:, 0] == 0
    assert empty.any()
    assert np.isnan(result.deviation[empty, 0]).all()
    assert np.isnan(result.ci_low[empty, 0]).all()
