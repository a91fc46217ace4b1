"""Outlier screening: the median-absolute-deviation rule on frequency residuals.

Method: NIST SP 1065 (2008), data preprocessing (robust sigma = MAD / 0.6745,
flag |r - median| > 5 sigma, flagged samples become gaps). All data here are
invented, generated in code with fixed seeds.
"""

from __future__ import annotations

import json

import numpy as np
import pytest

from stability import InputError, Measurement, StabilityWarning
from stability.prepare import screen_outliers


def _white_frequency(seed: int, n: int = 10_000, level: float = 1e-11) -> np.ndarray:
    return np.random.default_rng(seed).normal(scale=level, size=n)


def test_screen_outliers_validation_messages() -> None:
    m = Measurement.from_frequency(_white_frequency(0, 100), 1.0)
    with pytest.raises(InputError, match=r"screen_outliers: measurement must be a stability"):
        screen_outliers(np.zeros(10))  # type: ignore[arg-type]
    for bad in (0, -1.0, float("nan"), "abc", True):
        with pytest.raises(InputError, match=r"threshold must be a positive number .* or 'off'"):
            screen_outliers(m, threshold=bad)
    with pytest.raises(InputError, match=r"drift must be one of none, linear, quadratic, log"):
        screen_outliers(m, drift="cubic")
    for bad in (4, 1, 2.5):
        with pytest.raises(InputError, match=r"window must be an odd integer >= 3"):
            screen_outliers(m, window=bad)  # type: ignore[arg-type]


@pytest.mark.parametrize("seed", [0, 1, 2, 3, 4])
@pytest.mark.parametrize("kind", ["frequency", "phase"])
def test_drifting_random_walk_keeps_every_sample(seed: int, kind: str) -> None:
    # Random-walk FM plus 1e-10/day drift: wander, not outliers, so the 5-sigma
    # rule on local residuals must take nothing out (NIST SP 1065: screen residuals).
    rng = np.random.default_rng(seed)
    n = 10_000
    y = np.cumsum(rng.normal(scale=1e-13, size=n)) + 1e-10 * np.arange(n) / 86400 + 5e-8
    if kind == "frequency":
        m = Measurement.from_frequency(y, 1.0)
    else:
        m = Measurement.from_phase(np.concatenate([[0.0], np.cumsum(y)]), 1.0)
    new, report = screen_outliers(m, threshold=5.0)
    assert report.count == 0
    assert new.gap_count() == 0
    np.testing.assert_array_equal(new.phase, m.phase)
    assert "found no outlier" in new.notes[-1]


def test_single_glitch_in_frequency_data_is_removed_and_reported() -> None:
    y = _white_frequency(1)
    y[1234] += 5e-9  # a 500-sigma glitch (invented)
    lines = np.arange(y.size) + 3  # data start on line 3 of an imagined file
    m = Measurement.from_frequency(y, 1.0, lines=lines)
    new, report = screen_outliers(m)
    assert report.count == 1
    (out,) = report.samples
    assert out.index == 1234
    assert out.line == 1237
    assert out.action == "removed"
    assert out.value == pytest.approx(y[1234], abs=1e-20)
    assert out.sigmas > 100
    assert report.threshold == 5.0
    # Robust sigma of the residuals against the neighbour median: about
    # 1e-11 * sqrt(1 + pi/(2*6)) for white noise (variance of a median, from memory).
    assert report.sigma == pytest.approx(1e-11 * np.sqrt(1 + np.pi / 12), rel=0.05)
    f = new.frequency()
    assert np.isnan(f[1234])
    keep = np.ones(y.size, dtype=bool)
    keep[1234] = False
    np.testing.assert_allclose(f[keep], y[keep], rtol=0, atol=1e-22)
    assert new.gap_count() == 1
    np.testing.assert_array_equal(new.lines, lines)
    assert "took out 1 sample (line 1237)" in new.notes[-1]
    # The input is not changed.
    assert m.gap_count() == 0
    json.dumps(report.to_dict())


def test_single_glitch_in_phase_data_sets_that_sample_missing() -> None:
    rng = np.random.default_rng(2)
    x = np.concatenate([[0.0], np.cumsum(rng.normal(scale=1e-11, size=10_000))])
    x[500] += 5e-9  # one bad reading: two adjacent opposite frequency outliers
    lines = np.arange(x.size) + 1
    m = Measurement.from_phase(x, 1.0, lines=lines)
    new, report = screen_outliers(m)
    assert [(o.index, o.line, o.action) for o in report.samples] == [(500, 501, "set missing")]
    out = report.samples[0]
    assert out.value == pytest.approx(x[500] - x[0], abs=1e-20)
    assert abs(out.frequency) == pytest.approx(5e-9, rel=0.02)
    assert np.isnan(new.phase[500])
    assert np.isfinite(np.delete(new.phase, 500)).all()
    assert new.segments is None  # the record is not split
    f = new.frequency()
    assert np.isnan(f[499]) and np.isnan(f[500])
    assert np.isfinite(np.delete(f, [499, 500])).all()


def test_isolated_frequency_outlier_in_phase_data_splits_the_record() -> None:
    rng = np.random.default_rng(3)
    x = np.concatenate([[0.0], np.cumsum(rng.normal(scale=1e-11, size=5000))])
    x[2000:] += 3e-9  # the phase jumps and stays
    m = Measurement.from_phase(x, 1.0)
    new, report = screen_outliers(m)
    assert [(o.index, o.line, o.action) for o in report.samples] == [(2000, None, "record split")]
    assert new.segments is not None
    assert new.segments[1999] + 1 == new.segments[2000]
    f = new.frequency()
    assert np.isnan(f[1999]) and np.isfinite(np.delete(f, 1999)).all()
    assert np.isfinite(new.phase).all()


def test_existing_gaps_are_kept_and_skipped() -> None:
    y = _white_frequency(4, 3000)
    y[100:110] = np.nan
    y[2000] = -4e-9
    m = Measurement.from_frequency(y, 10.0)
    new, report = screen_outliers(m)
    assert [o.index for o in report.samples] == [2000]
    f = new.frequency()
    assert np.isnan(f[100:110]).all() and np.isnan(f[2000])
    assert new.gap_count() == 11
    assert report.screened == 2990


def test_screening_off_and_zero_spread() -> None:
    m = Measurement.from_frequency(_white_frequency(5, 200), 1.0)
    for off in (None, "off", "OFF"):
        new, report = screen_outliers(m, threshold=off)
        assert report.threshold is None and report.count == 0
        np.testing.assert_array_equal(new.phase, m.phase)
        assert new.notes[-1] == "Outlier screening was off."
    # Quantised counter readings: most residuals are exactly zero, MAD = 0.
    steady = Measurement.from_frequency(np.full(200, 1e-9), 1.0)
    with pytest.warns(StabilityWarning, match="robust spread"):
        new, report = screen_outliers(steady)
    assert report.count == 0 and "skipped" in new.notes[-1]


@pytest.mark.parametrize("tau0", [0.1, 1.0, 3600.0])
@pytest.mark.parametrize("level", [5e-9, 0.0537, 1e7])
def test_quantised_readings_are_not_screened_on_rounding_noise(tau0: float, level: float) -> None:
    # Invented: readings on one level with 2 % on a second one (a counter's last digit).
    # Their robust spread is zero; removing offset and drift leaves only rounding residue
    # (about eps x the level), which must not be taken for noise (common practice).
    rng = np.random.default_rng(0)
    y = np.full(2000, level)
    y[rng.random(2000) < 0.02] = level * (1 + 2e-3)
    with pytest.warns(StabilityWarning, match="robust spread of the frequency residuals is zero"):
        _, report = screen_outliers(Measurement.from_frequency(y, tau0))
    assert report.count == 0


def test_small_real_noise_on_a_large_offset_is_still_screened() -> None:
    # 1e-13 of noise on an offset of 1 is 500 eps: real, so a 1e-9 glitch is removed.
    y = 1.0 + np.random.default_rng(2).normal(0.0, 1e-13, 5000)
    y[100] = 1.0 + 1e-9
    _, report = screen_outliers(Measurement.from_frequency(y, 1.0))
    assert report.count == 1 and report.samples[0].index == 100
