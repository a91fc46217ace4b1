"""Tests of stability.figures.series: the data over time."""

from __future__ import annotations

from datetime import UTC, datetime

import numpy as np
import pytest
from matplotlib import dates as mdates
from matplotlib import image as mimage
from matplotlib.collections import PolyCollection

import stability
from stability.errors import InputError
from stability.figures import (
    SeriesDrawn,
    envelope,
    run_series_figure,
    save_figure,
    series_figure,
)
from stability.figures.series import gap_runs
from stability.run import run_analysis


def _white_fm(n: int, seed: int = 7) -> np.ndarray:
    # Invented test data: seeded white frequency noise, 1e-11 per sample.
    return np.random.default_rng(seed).normal(0.0, 1e-11, n)


def _is_nontrivial_png(path, min_bytes=20_000):
    assert path.stat().st_size > min_bytes
    pixels = mimage.imread(path)
    assert pixels.ndim == 3 and pixels.shape[0] > 300 and pixels.shape[1] > 300
    assert float(pixels[..., :3].std()) > 0.02  # not a uniform image


def test_every_validation_message():
    meas = stability.Measurement.from_frequency(_white_fm(4096), 1.0)
    with pytest.raises(InputError, match="measurement must be a stability.Measurement"):
        series_figure(np.zeros(10))
    with pytest.raises(InputError, match=r"drift_curve must hold one value per frequency sample"):
        series_figure(meas, drift_curve=np.zeros(3))
    with pytest.raises(InputError, match="drift_curve must be an array of numbers"):
        series_figure(meas, drift_curve=["a"] * (meas.n - 1))
    with pytest.raises(InputError, match=r"outlier_indices must lie in 0\.\.4095"):
        series_figure(meas, outlier_indices=[5000])
    with pytest.raises(InputError, match="outlier_indices must be whole sample indices"):
        series_figure(meas, outlier_indices=[1.5])
    with pytest.raises(InputError, match="max_columns must be an integer of at least 10"):
        series_figure(meas, max_columns=2)
    with pytest.raises(InputError, match="title must be a str or None"):
        series_figure(meas, title=1.0)


def test_envelope_is_honest():
    rng = np.random.default_rng(3)
    values = rng.normal(size=10_007)  # invented test data
    values[500:700] = np.nan
    idx, val = envelope(values, 100)
    finite = np.isfinite(idx)
    # every drawn point is a real sample, at its own index
    np.testing.assert_array_equal(val[finite & np.isfinite(val)],
                                  values[idx[finite & np.isfinite(val)].astype(int)])  # fmt: skip
    assert np.nanmax(val) == np.nanmax(values) and np.nanmin(val) == np.nanmin(values)
    # each bucket's extremes are drawn (plain loop over buckets as the reference)
    block = int(np.ceil(values.size / 100))
    drawn = set(val[np.isfinite(val)].tolist())
    for start in range(0, values.size, block):
        chunk = values[start : start + block]
        if np.isfinite(chunk).any():
            assert np.nanmax(chunk) in drawn and np.nanmin(chunk) in drawn
    # indices never go back in time; the line breaks beside a gap
    assert (np.diff(idx[finite]) >= 0).all()
    assert np.isnan(val[(idx > 400) & (idx < 800) | np.isnan(idx)]).any()


def test_gap_runs_against_a_plain_loop():
    mask = np.zeros(1000, dtype=bool)
    mask[[3, 4, 5, 100, 998, 999]] = True  # invented gaps, one at the very end
    runs = gap_runs(mask, max_runs=10)
    expected, start = [], None
    for i, missing in enumerate([*mask, False]):  # reference: walk the samples
        if missing and start is None:
            start = i
        if not missing and start is not None:
            expected.append([start, i])
            start = None
    np.testing.assert_array_equal(runs, expected)
    # more runs than allowed: merged per bucket, still covering every gap sample
    many = np.zeros(1000, dtype=bool)
    many[::7] = True
    merged = gap_runs(many, max_runs=20)
    assert len(merged) <= 20
    covered = np.zeros(1000, dtype=bool)
    for a, b in merged:
        covered[a:b] = True
    assert covered[many].all()


def test_series_figure_small_record(tmp_path):
    y = _white_fm(3000)
    y[1000:1010] = np.nan
    meas = stability.Measurement.from_frequency(y, 1.0)
    drift = np.linspace(-1e-12, 1e-12, y.size)
    drawn = series_figure(meas, drift_curve=drift, outlier_indices=[5, 2500])
    assert isinstance(drawn, SeriesDrawn)
    assert not drawn.decimated
    x, freq = drawn.frequency
    np.testing.assert_array_equal(freq, meas.frequency())
    assert x[-1] == pytest.approx(2999 / 60.0)  # 50 min record: elapsed time in minutes
    assert drawn.axes[1].get_xlabel() == drawn.x_label == "elapsed time (min)"
    np.testing.assert_array_equal(drawn.drift[1], drift)
    np.testing.assert_allclose(drawn.gaps, [[1000 / 60.0, 1010 / 60.0]])
    np.testing.assert_allclose(drawn.outliers, [5 / 60.0, 2500 / 60.0])
    polys = [c for c in drawn.axes[0].collections if isinstance(c, PolyCollection)]
    assert len(polys) == 1
    _is_nontrivial_png(save_figure(drawn, tmp_path / "series.png"))


def test_phase_residual_removes_linear_fit():
    k = np.arange(2000, dtype=float)
    # invented test data: an offset, a frequency offset and a quadratic (drift)
    x = 3e-6 + 2e-9 * k + 1e-14 * k**2
    meas = stability.Measurement.from_phase(x, 0.5)
    drawn = series_figure(meas)
    factor, unit = drawn.phase_unit
    _, resid = drawn.phase_residual
    expected = meas.phase - np.polyval(np.polyfit(k, meas.phase, 1), k)
    np.testing.assert_allclose(resid * factor, expected, rtol=0, atol=1e-18)
    # 1e-14 k^2 less its line over 2000 samples peaks near 1e-14 * 2000^2 / 6 = 6.7 ns
    assert unit == "ns" and factor == 1e-9
    assert 1.0 <= np.nanmax(np.abs(resid)) < 1000.0
    # a phase (time-interval) log: the panel is its time error, the least-squares
    # frequency offset removed and stated (the slope of the fitted line over tau0)
    assert drawn.axes[1].get_ylabel() == "time error (ns)"
    slope = np.polyfit(k, meas.phase, 1)[0]
    assert drawn.frequency_offset == pytest.approx(slope / 0.5, rel=1e-9)
    np.testing.assert_array_equal(drawn.time_error[1], resid)
    assert drawn.gaps.shape == (0, 2)
    # a frequency log: the panel is the phase residual
    freq = stability.Measurement.from_frequency(np.diff(x) / 0.5, 0.5)
    assert series_figure(freq).axes[1].get_ylabel() == "phase residual (ns)"


def test_series_figure_long_record_is_decimated(tmp_path):
    n = 200_000
    y = _white_fm(n, seed=11) + np.linspace(0.0, 5e-11, n)
    y[50_000:51_000] = np.nan
    y[150_000] = np.nan
    start = datetime(2024, 3, 1, 0, 0, tzinfo=UTC)
    meas = stability.Measurement.from_frequency(y, 1.0, start=start)
    drawn = series_figure(
        meas, drift_curve=np.linspace(0.0, 5e-11, n), outlier_indices=np.array([10, 123_456])
    )
    assert drawn.decimated
    _, shown = drawn.frequency
    assert shown.size < 10_000
    freq = meas.frequency()
    assert np.nanmax(shown) == np.nanmax(freq) and np.nanmin(shown) == np.nanmin(freq)
    assert drawn.axes[1].get_xlabel() == "time (UTC)"
    day0 = float(np.asarray(drawn.axes[1].get_xlim())[0])
    assert day0 == pytest.approx(mdates.date2num(start))
    assert drawn.gaps.shape == (2, 2)
    np.testing.assert_allclose(
        (drawn.gaps - day0) * 86400.0, [[50_000, 51_000], [150_000, 150_001]]
    )
    _is_nontrivial_png(save_figure(drawn, tmp_path / "series.png"))


def test_fixed_layout_keeps_every_label_inside_the_figure():
    # The series figure uses fixed margins: nothing may be clipped, and the long
    # tick labels of a large offset are plain text.
    y = _white_fm(20_000) + 3e-9  # invented: a large offset gives long tick labels
    y[500:620] = np.nan
    start = datetime(2026, 3, 1, tzinfo=UTC)
    series = stability.Measurement.from_frequency(y, 1.0, start=start)
    fig = series_figure(series, outlier_indices=[40, 9000]).figure
    assert fig.get_layout_engine() is None
    fig.canvas.draw()
    renderer = fig.canvas.get_renderer()
    box = fig.bbox
    for ax in fig.axes:
        tight = ax.get_tightbbox(renderer)
        assert tight.x0 >= box.x0 - 0.5 and tight.y0 >= box.y0 - 0.5
        assert tight.x1 <= box.x1 + 0.5 and tight.y1 <= box.y1 + 0.5
    labels = [t.get_text() for ax in fig.axes for t in ax.get_yticklabels() if t.get_text()]
    assert labels and not any("$" in t for t in labels)
    offsets = [ax.yaxis.get_offset_text().get_text() for ax in fig.axes]
    assert not any("$" in t or "\\" in t for t in offsets)


# ---------------------------------------------------------------------- the data as analysed
def test_series_shows_the_data_as_analysed():
    # invented: white FM, a quadratic drift, one glitch of 6e-9 and 300 missing readings
    rng = np.random.default_rng(5)
    n = 6000
    t = np.arange(n)
    y = 1e-11 * rng.standard_normal(n) + 4e-11 * (t / n) ** 2
    y[2000] = 6e-9
    y[3000:3300] = np.nan
    run = run_analysis(stability.Measurement.from_frequency(y, 1.0), stats="oadev",
                       drift="quadratic")  # fmt: skip
    assert [o.index for o in run.preparation.outliers.samples] == [2000]
    drawn = run_series_figure(run)
    # the removed glitch is marked, not drawn, and does not set the frequency axis
    assert np.nanmax(np.abs(drawn.frequency[1])) < 1e-9
    assert max(np.abs(drawn.axes[0].get_ylim())) < 1e-9
    np.testing.assert_allclose(drawn.outliers, [2000 / 60.0])
    legend = [t.get_text() for t in drawn.axes[0].get_legend().get_texts()]
    assert "drift removed (quadratic model)" in legend and "outliers removed (1)" in legend
    assert "gaps (300 missing readings)" in legend and drawn.missing == 300
    # the residual is the analysed phase (drift removed), joined where readings are missing,
    # less its least-squares line: recomputed here by a plain running sum
    prepared = run.measurement.frequency()
    centred = np.where(np.isfinite(prepared), prepared - np.nanmean(prepared), 0.0)
    phase = np.concatenate([[0.0], np.cumsum(centred)])
    k = np.arange(phase.size)
    expected = phase - np.polyval(np.polyfit(k, phase, 1), k)
    factor, unit = drawn.phase_unit
    np.testing.assert_allclose(drawn.phase_residual[1] * factor, expected, rtol=0, atol=1e-15)
    # without the drift removed, the same log's residual holds the drift's phase (tens of ns)
    kept = run_series_figure(run_analysis(stability.Measurement.from_frequency(y, 1.0),
                                          stats="oadev"))  # fmt: skip
    spread = np.ptp(drawn.phase_residual[1] * factor)
    assert np.ptp(kept.phase_residual[1] * kept.phase_unit[0]) > 3 * spread
    assert "linear drift estimate" in [t.get_text() for t in kept.axes[0].get_legend().get_texts()]


def test_phase_steps_are_marked_and_the_time_error_joins_up():
    # invented 1 PPS log: 1 ns white phase, a 2e-12 offset and a 50 ns phase step at 1200
    rng = np.random.default_rng(2)
    x = 1e-9 * rng.standard_normal(3000) + 2e-12 * np.arange(3000)
    x[1200:] += 5e-8
    run = run_analysis(stability.Measurement.from_phase(x, 1.0), stats="tdev")
    assert [s.index for s in run.preparation.steps] == [1200]
    drawn = run_series_figure(run)
    np.testing.assert_allclose(drawn.steps, [1200 / 60.0])
    for ax in drawn.axes[1:]:
        assert any(np.allclose(ln.get_xdata(), 20.0) for ln in ax.get_lines())
    # the outlier screening split the record at the step: the time error has no 50 ns jump
    factor = drawn.phase_unit[0]
    _, tie = drawn.time_error
    assert np.nanmax(np.abs(np.diff(tie * factor))) < 2e-8
    assert drawn.frequency_offset == pytest.approx(run.table.extras["offset_drift"].offset)
