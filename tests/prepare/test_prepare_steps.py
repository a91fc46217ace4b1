"""Phase-step detection: reported, data unchanged.

Method: NIST SP 1065 (2008), data preprocessing (a phase step is an isolated
frequency outlier; robust sigma from the median absolute deviation). Data are
invented, generated in code with fixed seeds.
"""

from __future__ import annotations

import numpy as np
import pytest

from stability import InputError, Measurement
from stability.prepare import detect_phase_steps


def _phase(seed: int, n: int = 5000, level: float = 1e-11) -> np.ndarray:
    rng = np.random.default_rng(seed)
    return np.concatenate([[0.0], np.cumsum(rng.normal(scale=level, size=n - 1))])


def test_detect_phase_steps_validation_messages() -> None:
    m = Measurement.from_phase(_phase(0, 100), 1.0)
    with pytest.raises(InputError, match=r"detect_phase_steps: measurement must be a stability"):
        detect_phase_steps([1.0, 2.0])  # type: ignore[arg-type]
    for bad in (0, -3, None, "off", "many"):
        with pytest.raises(InputError, match=r"threshold must be a positive number of robust"):
            detect_phase_steps(m, threshold=bad)  # type: ignore[arg-type]
    with pytest.raises(InputError, match=r"window must be an odd integer >= 3, got 6"):
        detect_phase_steps(m, window=6)


def test_phase_step_is_reported_and_data_unchanged() -> None:
    x = _phase(1)
    x[3000:] += 2e-9  # a 2 ns step, 200 times the white FM step size (invented)
    lines = np.arange(x.size) + 10
    m = Measurement.from_phase(x, 1.0, lines=lines, notes=["read"])
    before = m.phase.copy()
    steps = detect_phase_steps(m)
    assert len(steps) == 1
    step = steps[0]
    assert step.index == 3000
    assert step.line == 3010
    # Size: the jump less the local median first difference, within a few noise steps.
    assert step.size == pytest.approx(2e-9, abs=5e-11)
    assert step.sigmas > 100
    np.testing.assert_array_equal(m.phase, before)
    assert m.notes == ["read"] and m.segments is None
    assert step.to_dict()["size_s"] == pytest.approx(step.size)


def test_glitch_and_clean_noise_are_not_steps() -> None:
    for seed in range(4):
        x = _phase(seed)
        assert detect_phase_steps(Measurement.from_phase(x, 1.0)) == []
        x[1000] += 5e-9  # one bad reading: out and back, no lasting step
        assert detect_phase_steps(Measurement.from_phase(x, 1.0)) == []


def test_negative_step_and_frequency_data() -> None:
    x = _phase(7)
    x[100:] -= 1e-9
    (step,) = detect_phase_steps(Measurement.from_phase(x, 0.1))
    assert step.index == 100 and step.size == pytest.approx(-1e-9, abs=5e-11)
    # Frequency data: an isolated frequency outlier is a step of the integrated phase.
    y = np.random.default_rng(8).normal(scale=1e-11, size=2000)
    y[700] = 1e-8
    m = Measurement.from_frequency(y, 2.0, lines=np.arange(2000) + 5)
    (step,) = detect_phase_steps(m)
    assert step.index == 701 and step.line == 705
    assert step.size == pytest.approx(1e-8 * 2.0, rel=0.01)  # x = tau0 * y (NIST SP 1065)
