"""The preparation pipeline: average, drift (always estimated), outliers, steps.

Practice: NIST SP 1065 (2008), data preprocessing (screen outliers on
residuals after drift removal; report drift; flagged samples become gaps).
Data are invented, generated in code with fixed seeds.
"""

from __future__ import annotations

import json

import numpy as np
import pytest

from stability import InputError, Measurement
from stability.prepare import PreparationReport, fit_drift, prepare


def _log(seed: int, n: int = 20_000) -> np.ndarray:
    rng = np.random.default_rng(seed)
    t = (np.arange(n) + 0.5) / 86400
    return 1e-7 + 5e-10 * t + rng.normal(scale=1e-12, size=n)


def test_prepare_validation_messages() -> None:
    m = Measurement.from_frequency(_log(0, 40), 1.0)
    with pytest.raises(InputError, match=r"prepare: measurement must be a stability"):
        prepare(None)  # type: ignore[arg-type]
    with pytest.raises(InputError, match=r"outliers must be a positive number .* or 'off', got 0"):
        prepare(m, outliers=0)
    with pytest.raises(InputError, match=r"drift must be one of none, linear, quadratic, log"):
        prepare(m, drift="spline")
    with pytest.raises(InputError, match=r"average factor must be an integer from 1 to 20"):
        prepare(m, average=21)


def test_full_pipeline_on_frequency_data() -> None:
    y = _log(1)
    y[777] = 1e-6  # a counter glitch (invented)
    y[9000:9004] = np.nan  # four missing readings
    m = Measurement.from_frequency(y, 1.0, lines=np.arange(y.size) + 2, notes=["read"])
    new, report = prepare(m, outliers=5, drift="linear", average=2)
    assert isinstance(report, PreparationReport)
    assert report.gaps_before == 4
    assert report.average_factor == 2 and report.tau0_before == 1.0 and report.tau0_after == 2.0
    assert report.samples_before == 20_001 and report.samples_after == 10_001
    # Averaging by 2: the glitch (sample 777) lands in block 388, the gap in blocks 4500, 4501.
    assert [o.index for o in report.outliers.samples] == [388]
    assert report.outliers.samples[0].line == 2 + 776  # first sample of the block
    assert report.gaps_after == 3
    assert report.linear_drift.model == "linear"
    assert report.removed_drift is not None and report.removed_drift.model == "linear"
    # The drift is estimated after screening, so the glitch does not bend it:
    # 5e-10/day within 3 standard errors (common practice).
    lin = report.linear_drift
    assert abs(lin.per_day - 5e-10) < 3 * lin.per_day_error
    assert report.removed_drift.per_day == pytest.approx(lin.per_day)
    assert new.tau0 == 2.0 and new.gap_count() == 3
    f = new.frequency()
    assert np.isnan(f[388]) and np.isnan(f[4500:4502]).all()
    # The drift is gone from the result (common practice: zero slope after removal).
    assert abs(fit_drift(new, "linear").per_day) < 1e-6 * lin.per_day_error
    data = report.to_dict()
    text = json.dumps(data, allow_nan=False)
    assert json.loads(text)["outliers"]["count"] == 1
    assert all(isinstance(s, str) for s in report.notes)
    assert any("Averaged 2 adjacent samples" in s for s in report.notes)
    assert any("mean frequency offset was kept" in s for s in report.notes)
    assert report.frequency_offset_removed is False
    assert m.gap_count() == 4 and m.tau0 == 1.0  # the input is not changed


def test_drift_none_still_reports_linear_drift() -> None:
    m = Measurement.from_frequency(_log(2), 1.0)
    new, report = prepare(m)
    assert report.drift_model == "none" and report.removed_drift is None
    # 5e-10/day within 3 standard errors (common practice).
    assert abs(report.linear_drift.per_day - 5e-10) < 3 * report.linear_drift.per_day_error
    np.testing.assert_allclose(new.phase, m.phase, rtol=0, atol=1e-18)
    assert any(s.startswith("Estimated linear drift") for s in report.notes)
    assert any("No drift was removed" in s for s in report.notes)
    off, off_report = prepare(m, outliers="off")
    assert off_report.outliers.threshold is None
    assert off_report.to_dict()["outliers"]["sigma"] is None


def test_phase_step_is_reported_in_the_notes() -> None:
    rng = np.random.default_rng(3)
    x = np.concatenate([[0.0], np.cumsum(rng.normal(scale=1e-11, size=4000))])
    x[2500:] += 5e-9
    m = Measurement.from_phase(x, 1.0, lines=np.arange(x.size) + 1)
    new, report = prepare(m, outliers=None)
    assert [(s.index, s.line) for s in report.steps] == [(2500, 2501)]
    assert any(s.startswith("Phase step of ") and "s at line 2501" in s for s in report.notes)
    assert report.steps[0].size == pytest.approx(5e-9, abs=1e-10)
    assert any("data were left unchanged" in s for s in report.notes)
    np.testing.assert_array_equal(new.phase, m.phase)
    # With screening on, the step's frequency sample is an outlier and the record is split.
    split, split_report = prepare(m)
    assert [o.action for o in split_report.outliers.samples] == ["record split"]
    assert any("split the record" in s for s in split_report.notes)
    assert split.segments is not None
