"""Averaging adjacent samples for a longer tau0.

Method: NIST SP 1065 (2008), phase/frequency conversion and averaging
(decimating phase by m averages the frequency over m tau0). Data are invented,
generated in code with fixed seeds.
"""

from __future__ import annotations

import numpy as np
import pytest

from stability import InputError, Measurement
from stability.prepare import average, largest_average_factor


def test_average_validation_messages() -> None:
    m = Measurement.from_frequency(np.arange(20.0) * 1e-12, 1.0)
    assert largest_average_factor(m) == 10
    with pytest.raises(InputError, match=r"average: measurement must be a stability"):
        average("data", 2)  # type: ignore[arg-type]
    for bad in (0, -2, 11, 2.0, True, "3"):
        with pytest.raises(
            InputError,
            match=r"average factor must be an integer from 1 to 10 \(half the 20 frequency",
        ):
            average(m, bad)  # type: ignore[arg-type]


def test_phase_average_is_decimation() -> None:
    rng = np.random.default_rng(0)
    x = np.cumsum(rng.normal(scale=1e-9, size=1005)) + 0.3
    lines = np.arange(x.size) + 7
    m = Measurement.from_phase(x, 0.5, lines=lines, notes=["read"])
    new = average(m, 10)
    # x[::10] is the phase of the 10-sample averages (NIST SP 1065).
    np.testing.assert_allclose(new.phase, x[::10] - x[0], rtol=0, atol=1e-15)
    assert new.tau0 == 5.0 and new.n == 101 and new.kind == "phase"
    np.testing.assert_array_equal(new.lines, lines[::10])
    y = m.frequency()
    blocks = y[:1000].reshape(100, 10).mean(axis=1)
    np.testing.assert_allclose(new.frequency(), blocks, rtol=1e-9)
    assert new.notes[0] == "read" and "tau0 0.5 s became 5 s" in new.notes[-1]
    assert m.tau0 == 0.5 and m.n == 1005  # the input is not changed
    same = average(m, 1)
    np.testing.assert_array_equal(same.phase, m.phase)


def test_frequency_average_is_block_mean() -> None:
    rng = np.random.default_rng(1)
    y = 1e-9 + rng.normal(scale=1e-11, size=1007)  # a trailing part block of 7 is dropped
    lines = np.arange(y.size) + 2
    m = Measurement.from_frequency(y, 1.0, lines=lines)
    new = average(m, 10)
    expected = y[:1000].reshape(100, 10).mean(axis=1)
    np.testing.assert_allclose(new.frequency(), expected, rtol=1e-12)
    assert new.tau0 == 10.0 and new.kind == "frequency"
    np.testing.assert_array_equal(new.lines, lines[:1000:10])


def test_average_gap_handling() -> None:
    rng = np.random.default_rng(2)
    y = rng.normal(scale=1e-11, size=100)
    y[23] = np.nan  # touches block 2 of frequency data
    new = average(Measurement.from_frequency(y, 1.0), 10)
    f = new.frequency()
    assert np.isnan(f[2]) and np.isfinite(np.delete(f, 2)).all()
    assert new.gap_count() == 1
    # Phase data: a missing block end spoils the two blocks it bounds; a missing
    # sample inside a block does not, since only the end samples count.
    x = np.concatenate([[0.0], np.cumsum(y[np.isfinite(y)])])[:100]
    x[30] = np.nan
    x[55] = np.nan
    p = average(Measurement.from_phase(x, 1.0), 10)
    f = p.frequency()
    assert np.isnan(f[[2, 3]]).all() and np.isfinite(np.delete(f, [2, 3])).all()
    assert np.isnan(p.phase[3]) and np.isfinite(np.delete(p.phase, 3)).all()
    # A segment break inside a block of phase data makes that block a gap.
    seg = np.zeros(100, dtype=np.int64)
    seg[47:] = 1
    s = average(Measurement(phase=np.nan_to_num(x), tau0=1.0, segments=seg), 10)
    f = s.frequency()
    assert np.isnan(f[4]) and np.isfinite(np.delete(f, 4)).all()
