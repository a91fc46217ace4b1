"""The series figure computed block by block equals the whole-record computation.

The reference is the whole-array definition of each curve, written out with
plain numpy here: the frequency ``diff(x) / tau0 + offset`` (NIST SP 1065,
section 5.2.1, the inverse of ``x = tau0 cumsum(y)``), the phase joined up from
the centred frequency by a running sum, its least-squares line (``np.polyfit``)
and the min/max envelope of each whole array. The block size is made small
and odd, so that blocks, envelope buckets and gaps fall across one another.
"""

from __future__ import annotations

import numpy as np
import pytest

import stability
import stability.figures.series_data as series_data
from stability.errors import InputError
from stability.figures import envelope, series_figure
from stability.figures.reduce import Envelope, GapRuns, gap_runs
from stability.prepare import fit_drift, remove_drift

BLOCK = 1000
COLUMNS = 100


def _joined(values: np.ndarray, tau0: float, missing: np.ndarray, centre: float) -> np.ndarray:
    """The whole joined phase: 0, then a running sum of tau0 (y - centre) over finite y."""
    steps = np.where(np.isfinite(values), values - centre, 0.0) * tau0
    phase = np.concatenate([[0.0], np.cumsum(steps)])
    phase[missing] = np.nan
    return phase


def _without_line(phase: np.ndarray) -> tuple[np.ndarray, float]:
    k = np.arange(phase.size, dtype=float)
    good = np.isfinite(phase)
    slope, intercept = np.polyfit(k[good], phase[good], 1)
    return phase - (slope * k + intercept), slope


def _same_envelope(drawn: tuple[np.ndarray, np.ndarray], whole: np.ndarray, factor: float = 1.0):
    """The drawn envelope is the whole array's: the same samples, values up to rounding."""
    idx, val = envelope(whole, COLUMNS)
    np.testing.assert_array_equal(np.isnan(drawn[1]), np.isnan(val))
    scale = np.nanmax(np.abs(whole))
    np.testing.assert_allclose(drawn[1] * factor, val, rtol=0, atol=1e-9 * scale)
    return idx


def _per_sample(drawn, n: int) -> float:
    """Axis units per sample (the time axis starts at 0 and ends at the last phase sample)."""
    start, end = drawn.axes[-1].get_xlim()
    assert start == 0.0
    return end / (n - 1)


def test_envelope_and_gap_runs_fed_in_pieces_equal_the_whole():
    # invented: 10 007 samples, NaN runs across piece edges and at the very end
    values = np.random.default_rng(4).normal(size=10_007)
    for a, b in ((0, 3), (997, 1003), (2000, 2001), (4990, 5200), (10_000, 10_007)):
        values[a:b] = np.nan
    whole_idx, whole_val = envelope(values, 77)
    runs_whole = gap_runs(np.isnan(values), 5)
    runs_all = gap_runs(np.isnan(values), 1000)
    for sizes in ([10_007], [1, 996, 3, 3000, 6007], [129] * 78 + [45]):
        reduced, merged, found = Envelope(values.size, 77), GapRuns(values.size, 5), None
        found = GapRuns(values.size, 1000)
        at = 0
        for size in sizes:
            piece = values[at : at + size].copy()  # a buffer the caller reuses
            reduced.add(piece)
            merged.add(np.isnan(piece))
            found.add(np.isnan(piece))
            piece[:] = 0.0
            at += size
        idx, val = reduced.result()
        np.testing.assert_array_equal(idx, whole_idx)
        np.testing.assert_array_equal(val, whole_val)
        np.testing.assert_array_equal(merged.result(), runs_whole)
        np.testing.assert_array_equal(found.result(), runs_all)
    assert len(runs_whole) <= 5 and runs_all.tolist()[:2] == [[0, 3], [997, 1003]]


def test_frequency_log_in_blocks_equals_the_whole_record(monkeypatch):
    monkeypatch.setattr(series_data, "BLOCK", BLOCK)
    # invented: 12 345 frequency readings (not a multiple of the block), white FM on a
    # linear drift, missing readings at block edges and at both ends
    n = 12_345
    rng = np.random.default_rng(21)
    y = 1e-11 * rng.standard_normal(n) + 4e-11 * np.arange(n) / n + 2e-9
    for a, b in ((0, 1), (999, 1001), (2000, 2003), (4999, 5000), (9990, 10_010), (n - 1, n)):
        y[a:b] = np.nan
    meas = stability.Measurement.from_frequency(y, 2.0)
    fit = fit_drift(meas, "linear")
    drawn = series_figure(meas, drift_curve=fit, outlier_indices=[1000, 7000], max_columns=COLUMNS)
    assert drawn.decimated
    frequency = meas.frequency()
    # the frequency is the same array: its envelope is the same to the last bit
    whole_idx, whole_val = envelope(frequency, COLUMNS)
    np.testing.assert_array_equal(drawn.frequency[1], whole_val)
    scale = _per_sample(drawn, meas.n)
    np.testing.assert_allclose(drawn.frequency[0], whole_idx * scale, rtol=1e-12)
    # the residual: the whole joined phase less its least-squares line
    centre = float(np.mean(frequency[np.isfinite(frequency)]))
    residual, _ = _without_line(_joined(frequency, 2.0, np.isnan(meas.phase), centre))
    idx = _same_envelope(drawn.phase_residual, residual, drawn.phase_unit[0])
    np.testing.assert_allclose(drawn.phase_residual[0], idx * scale, rtol=1e-12)
    # the drift curve drawn from the fit is its y_model there
    drift_idx = np.rint(drawn.drift[0] / scale).astype(int)
    np.testing.assert_array_equal(drawn.drift[1], fit.y_model[drift_idx])
    # the gaps: every missing reading but the removed outliers, merged as a whole mask is
    lost = ~np.isfinite(frequency)
    lost[[1000, 7000]] = False
    np.testing.assert_allclose(drawn.gaps, gap_runs(lost, COLUMNS) * scale, rtol=1e-12)
    assert drawn.missing == int(lost.sum()) == 1 + 2 + 3 + 1 + 20 + 1 - 1  # 1000 is an outlier


def test_phase_log_in_blocks_equals_the_whole_record(monkeypatch):
    monkeypatch.setattr(series_data, "BLOCK", BLOCK)
    # invented 1 PPS log: 7 777 samples of 1 ns white phase on a 3e-12 offset and a
    # frequency drift, single missing samples at block edges
    n = 7_777
    rng = np.random.default_rng(8)
    k = np.arange(n, dtype=float)
    x = 1e-9 * rng.standard_normal(n) + 3e-12 * k + 2e-19 * k**2
    x[[999, 1000, 2000, 3999, 6001, n - 1]] = np.nan
    meas, fit = remove_drift(stability.Measurement.from_phase(x, 1.0), "linear")
    drawn = series_figure(meas, drift_curve=fit, drift_removed=True, max_columns=COLUMNS)
    assert drawn.decimated and drawn.axes[1].get_ylabel().startswith("time error")
    analysed = meas.frequency()
    missing = np.isnan(meas.phase)
    drift = fit.y_model
    good = np.isfinite(analysed) & np.isfinite(drift)
    shown = analysed + (drift - np.mean(drift[good]))
    idx = _same_envelope(drawn.frequency, shown)
    np.testing.assert_allclose(drawn.frequency[0], idx * _per_sample(drawn, meas.n), rtol=1e-12)
    # the time error: the drawn frequency joined up, less its line; the offset removed
    # is the mean frequency plus that line's slope per tau0
    tie, slope = _without_line(_joined(shown, 1.0, missing, np.nanmean(shown)))
    idx = _same_envelope(drawn.time_error, tie, drawn.phase_unit[0])
    np.testing.assert_allclose(drawn.time_error[0], idx * _per_sample(drawn, meas.n), rtol=1e-12)
    assert drawn.frequency_offset == pytest.approx(np.nanmean(shown) + slope, rel=1e-9)
    # the residual after the drift model: the analysed frequency joined up, less its line
    centre = float(np.nanmean(analysed))
    residual, _ = _without_line(_joined(analysed, 1.0, missing, centre))
    idx = _same_envelope(drawn.phase_residual, residual, drawn.phase_unit[0])
    np.testing.assert_allclose(drawn.phase_residual[0], idx * _per_sample(drawn, meas.n),
                               rtol=1e-12)  # fmt: skip
    # a missing phase sample leaves both frequency samples beside it missing
    nan_phase = np.isnan(meas.phase)
    lost = nan_phase[:-1] | nan_phase[1:]
    scale = _per_sample(drawn, meas.n)
    np.testing.assert_allclose(drawn.gaps, gap_runs(lost, COLUMNS) * scale, rtol=1e-12)
    assert drawn.missing == 6
    # a stated offset: taken off as it is, no line
    stated = series_figure(meas, drift_curve=fit, drift_removed=True, frequency_offset=3e-12,
                           max_columns=COLUMNS)  # fmt: skip
    _same_envelope(stated.time_error, _joined(shown, 1.0, missing, 3e-12), stated.phase_unit[0])
    assert stated.frequency_offset == 3e-12


def test_a_short_record_is_drawn_whole_from_a_fit_as_from_its_curve(monkeypatch):
    # invented: 2 500 readings of white FM on a quadratic drift, a gap across a block edge
    rng = np.random.default_rng(3)
    y = 1e-11 * rng.standard_normal(2500) + 1e-11 * np.linspace(0.0, 1.0, 2500) ** 2
    y[995:1010] = np.nan
    meas, fit = remove_drift(stability.Measurement.from_frequency(y, 1.0), "quadratic")
    by_curve = series_figure(meas, drift_curve=fit.y_model, drift_removed=True)
    by_fit = series_figure(meas, drift_curve=fit, drift_removed=True)
    assert not by_fit.decimated
    for name in ("frequency", "phase_residual", "drift"):
        for a, b in zip(getattr(by_curve, name), getattr(by_fit, name), strict=True):
            np.testing.assert_array_equal(a, b)
    monkeypatch.setattr(series_data, "BLOCK", 999)  # several blocks: the same up to rounding
    blocks = series_figure(meas, drift_curve=fit, drift_removed=True)
    for name in ("frequency", "phase_residual"):
        whole = getattr(by_fit, name)[1]
        np.testing.assert_allclose(getattr(blocks, name)[1], whole, rtol=0,
                                   atol=1e-9 * np.nanmax(np.abs(whole)))  # fmt: skip
    with pytest.raises(InputError, match=r"drift_curve must be fitted to one value per frequency"):
        series_figure(stability.Measurement.from_frequency(y[:100], 1.0), drift_curve=fit)
