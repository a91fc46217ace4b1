"""The canonical Measurement: conversions, gaps and segments, immutability, bad input.

Conventions (NIST SP 1065 (2008) section 5.2.1): x_{k+1} = x_k + tau0 y_k, so
y_k = (x_{k+1} - x_k) / tau0; a missing y leaves the phase after it unknown by a
constant (section 5.14), which starts a new segment.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from stability import InputError, Measurement, Provenance, StabilityError
from stability.measurement import index_dtype


def test_bad_input_messages():
    cases = [
        (Measurement.from_phase, ([], 1.0), "phase is empty"),
        (Measurement.from_frequency, ([], 1.0), "frequency is empty"),
        (Measurement.from_phase, ([[1.0, 2.0], [3.0, 4.0]], 1.0), "one-dimensional"),
        (Measurement.from_frequency, (np.zeros((3, 2)), 1.0), "one-dimensional"),
        (Measurement.from_phase, ([1.0, 2.0, 3.0], math.nan), "tau0 must be a positive, finite"),
        (Measurement.from_frequency, ([1.0, 2.0], math.inf), "tau0 must be a positive, finite"),
        (Measurement.from_phase, ([1.0, 2.0], 0.0), "tau0"),
        (Measurement.from_phase, ([1.0, 2.0], -1.0), "tau0"),
        (Measurement.from_phase, ([1.0, 2.0], "soon"), "tau0 must be a positive number"),
        (Measurement.from_phase, ([math.nan] * 4, 1.0), "no finite sample"),
        (Measurement.from_frequency, ([math.nan] * 4, 1.0), "no finite sample"),
        (Measurement.from_phase, ([1.0, math.inf, 2.0], 1.0), "infinite value at index 1"),
        (Measurement.from_frequency, ([-math.inf, 2.0], 1.0), "infinite value at index 0"),
        (Measurement.from_phase, (["a", "b"], 1.0), "must be numbers"),
        (Measurement.from_phase, ([1.0], 1.0), "at least 2 samples"),
        (Measurement.from_phase, (None, 1.0), "one-dimensional"),
    ]
    for func, args, text in cases:
        with pytest.raises(InputError, match=text) as info:
            func(*args)
        assert isinstance(info.value, StabilityError)
        assert "\n" not in str(info.value)
    with pytest.raises(InputError, match="nominal frequency must be positive"):
        Measurement.from_phase([1.0, 2.0], 1.0, nominal=-10e6)
    with pytest.raises(InputError, match="segments must have the same length"):
        Measurement(phase=np.zeros(4), tau0=1.0, segments=np.zeros(3))
    with pytest.raises(InputError, match="segments must never decrease"):
        Measurement(phase=np.zeros(4), tau0=1.0, segments=[0, 1, 0, 1])
    with pytest.raises(InputError, match="kind must be"):
        Measurement(phase=np.zeros(4), tau0=1.0, kind="voltage")


def test_frequency_round_trip():
    rng = np.random.default_rng(1)
    y = 2.5e-7 + 1e-11 * rng.standard_normal(1000)
    meas = Measurement.from_frequency(y, 0.1)
    assert meas.n == 1001
    assert meas.kind == "frequency"
    assert meas.frequency_offset == pytest.approx(np.mean(y), rel=1e-15)
    # y_k = (x_{k+1} - x_k)/tau0 (SP 1065 section 5.2.1): the input comes back.
    np.testing.assert_allclose(meas.frequency(), y, rtol=1e-12)
    assert not meas.has_gaps and meas.gap_count() == 0 and meas.segments is None


def test_frequency_round_trip_with_gaps():
    rng = np.random.default_rng(2)
    y = 1e-9 * rng.standard_normal(200) - 3e-9
    y[[0, 50, 51, 199]] = np.nan
    meas = Measurement.from_frequency(y, 2.0)
    back = meas.frequency()
    np.testing.assert_array_equal(np.isnan(back), np.isnan(y))
    good = ~np.isnan(y)
    np.testing.assert_allclose(back[good], y[good], rtol=1e-12, atol=1e-12 * np.nanmax(abs(y)))
    assert meas.has_gaps
    assert meas.gap_count() == 4
    assert not np.isnan(meas.phase).any()  # frequency gaps live in the segments
    # segments[i] counts the frequency gaps before phase sample i (DESIGN).
    expected = np.concatenate(([0], np.cumsum(np.isnan(y))))
    np.testing.assert_array_equal(meas.segments, expected)
    assert meas.frequency_offset == pytest.approx(np.nanmean(y), rel=1e-14)


def test_frequency_block_equals_the_whole():
    # y[start:stop] from phase[start:stop + 1] alone, NaN phase samples and frequency
    # gaps (segment changes) at and across the block edges
    x = np.cumsum(np.random.default_rng(2).normal(size=3001))
    x[[0, 700, 701, 2999]] = np.nan
    y = np.ones(3000)
    y[[10, 1500, 1501]] = np.nan
    for meas in (Measurement.from_phase(x, 2.0), Measurement.from_frequency(y, 2.0)):
        whole = meas.frequency()
        for start, stop in [(0, 3000), (0, 0), (699, 702), (1499, 1502), (1000, 2500)]:
            np.testing.assert_array_equal(meas.frequency(start, stop), whole[start:stop])
        with pytest.raises(InputError, match="samples 10 to 3001 lie outside the record's 0 to"):
            meas.frequency(10, 3001)
        with pytest.raises(InputError, match="outside"):
            meas.frequency(5, 4)


def test_phase_round_trip_and_nan():
    rng = np.random.default_rng(3)
    x = 0.3 + np.cumsum(1e-12 * rng.standard_normal(300))
    x[[10, 11, 250]] = np.nan
    meas = Measurement.from_phase(x, 1.0)
    assert meas.kind == "phase"
    assert meas.frequency_offset == 0.0
    assert meas.has_gaps and meas.gap_count() == 3 and meas.segments is None
    y = meas.frequency()
    np.testing.assert_array_equal(np.isnan(y), np.isnan(np.diff(x)))
    ok = ~np.isnan(y)
    np.testing.assert_allclose(y[ok], np.diff(x)[ok], rtol=1e-9)  # 0.3 s offset costs digits
    np.testing.assert_array_equal(np.isnan(meas.phase), np.isnan(x))


def test_first_finite_sample_is_subtracted():
    meas = Measurement.from_phase([math.nan, math.nan, 5.0, 6.5, math.nan, 9.0], 1.0)
    np.testing.assert_array_equal(meas.phase[2:], [0.0, 1.5, math.nan, 4.0])
    assert np.isnan(meas.phase[:2]).all()
    assert meas.gap_count() == 3
    plain = Measurement.from_phase([2.0, 3.0, 5.0], 1.0)
    np.testing.assert_array_equal(plain.phase, [0.0, 1.0, 3.0])
    assert not plain.has_gaps


def test_phase_with_offset_restores_the_ramp():
    y = np.array([1e-9, 3e-9, 2e-9, 2e-9])
    meas = Measurement.from_frequency(y, 10.0)
    direct = 10.0 * np.concatenate(([0.0], np.cumsum(y)))  # x = tau0 * cumsum(y)
    np.testing.assert_allclose(meas.phase_with_offset(), direct, rtol=1e-12, atol=1e-24)
    assert abs(meas.phase[-1]) < 1e-20  # the mean was removed before integrating
    phase_input = Measurement.from_phase(direct, 10.0)
    assert phase_input.phase_with_offset() is phase_input.phase


def test_arrays_are_read_only_and_input_untouched():
    y = np.array([1.0, np.nan, 3.0, 4.0])
    keep = y.copy()
    meas = Measurement.from_frequency(y, 1.0, lines=[2, 3, 4, 5])
    np.testing.assert_array_equal(y, keep)
    for arr in (meas.phase, meas.segments, meas.lines):
        with pytest.raises(ValueError, match="read-only"):
            arr[0] = 7


def test_segments_of_one_piece_collapse():
    meas = Measurement(phase=np.arange(5.0), tau0=1.0, segments=[3, 3, 3, 3, 3])
    assert meas.segments is None and not meas.has_gaps


def test_replace_and_metadata():
    prov = Provenance(path="log.csv", sha256="ab" * 32, rows=4, reader="csv")
    meas = Measurement.from_phase([0.0, 1e-9, 3e-9, 2e-9], 1.0, provenance=prov, notes=["read"])
    other = meas.replace(nominal=10e6)
    assert other.nominal == 10e6 and meas.nominal is None
    assert other.notes == ["read"] and other.notes is not meas.notes
    other.notes.append("changed")
    assert meas.notes == ["read"]
    assert other.provenance.to_dict()["sha256"] == "ab" * 32
    assert meas.span == 3.0 and meas.n == 4
    assert "n=4" in repr(meas) and "log.csv" in repr(meas)
    with pytest.raises(InputError, match="tau0"):
        meas.replace(tau0=-1.0)


def test_the_constructors_copy_unless_the_arrays_are_handed_over():
    """A measurement never shares the caller's arrays, unless told ``adopt=True``."""
    x = np.array([5.0, 6.0, np.nan, 8.0])
    lines = np.array([2, 3, 0, 5], dtype=np.int32)
    m = Measurement.from_phase(x, 1.0, lines=lines)
    assert x.flags.writeable and lines.flags.writeable  # the caller's arrays untouched
    assert not np.shares_memory(m.phase, x) and not np.shares_memory(m.lines, lines)
    y = np.array([1e-9, 2e-9, np.nan, 4e-9])
    f = Measurement.from_frequency(y, 1.0, lines=lines)
    assert not np.shares_memory(f.lines, lines) and y[0] == 1e-9
    given = Measurement.from_phase(x, 1.0, lines=lines, adopt=True)
    assert np.shares_memory(given.phase, x) and np.shares_memory(given.lines, lines)
    assert not given.phase.flags.writeable
    np.testing.assert_array_equal(given.phase, m.phase)  # shifted in place: same values
    adopted = Measurement.from_frequency(y, 1.0, lines=lines.copy(), adopt=True)
    np.testing.assert_array_equal(adopted.phase, f.phase)
    np.testing.assert_array_equal(adopted.segments, f.segments)


def test_line_numbers_and_segments_are_stored_in_four_bytes_while_they_fit():
    """int32 index arrays halve what a long record carries beside its phase;
    numbers beyond int32 keep int64, and the values never change."""
    x = np.array([5.0, 6.0, 7.0, 8.0])
    wide = np.array([2, 3, 4, 5], dtype=np.int64)
    m = Measurement.from_phase(x, 1.0, lines=wide, adopt=True)
    assert m.lines.dtype == np.int32 and list(m.lines) == [2, 3, 4, 5]
    beyond = np.array([2, 3, 4, 2**31 + 7], dtype=np.int64)
    big = Measurement.from_phase(x, 1.0, lines=beyond)
    assert big.lines.dtype == np.int64 and int(big.lines[-1]) == 2**31 + 7
    y = np.array([1e-9, np.nan, 3e-9, np.nan, 5e-9])
    f = Measurement.from_frequency(y, 1.0)
    assert f.segments.dtype == np.int32 and list(f.segments) == [0, 0, 1, 1, 2, 2]
    given = Measurement(phase=np.arange(6.0), tau0=1.0, segments=np.array([0, 0, 1, 1, 1, 2]))
    assert given.segments.dtype == np.int32 and not given.segments.flags.writeable
    assert index_dtype(2**31 - 1) is np.int32 and index_dtype(2**31) is np.int64


def test_a_handed_over_frequency_in_a_buffer_one_longer_becomes_the_phase_in_place():
    """The screening hands its cleaned frequency over as ``buffer[1:]``: the phase is
    built in that buffer (no second array of the record's length), with the numbers
    a fresh array gives; any other frequency array is left as it was."""
    buffer = np.empty(6)
    y = buffer[1:]
    y[:] = [1e-9, 2e-9, np.nan, 4e-9, 5e-9]
    fresh = Measurement.from_frequency(y.copy(), 1.0)
    built = Measurement.from_frequency(y, 1.0, adopt=True)
    assert np.shares_memory(built.phase, buffer)
    np.testing.assert_array_equal(built.phase, fresh.phase)
    np.testing.assert_array_equal(built.segments, fresh.segments)
    assert built.frequency_offset == fresh.frequency_offset
    plain = np.array([1e-9, 2e-9, 3e-9])
    Measurement.from_frequency(plain, 1.0, adopt=True)
    assert plain.tolist() == [1e-9, 2e-9, 3e-9]
    longer = np.zeros(8)
    Measurement.from_frequency(longer[1:6], 1.0, adopt=True)  # not a buffer one longer
    assert not longer.any()


@pytest.mark.parametrize("reuse", [False, True])
def test_frequency_blocks_join_up_to_the_whole_frequency(reuse):
    """Blocks of 7 (a length that is not a multiple of it, gaps on block edges) give the
    numbers of frequency() and of frequency(centred=True); with ``reuse`` one buffer."""
    y = np.linspace(1e-9, 2e-9, 30)
    y[[6, 7, 13, 29]] = np.nan
    m = Measurement.from_frequency(y, 2.0)
    for centred in (False, True):
        whole = m.frequency(centred=centred)
        parts = [
            (start, stop, values.copy())
            for start, stop, values in m.frequency_blocks(7, centred=centred, reuse=reuse)
        ]
        assert [(a, b) for a, b, _ in parts] == [(0, 7), (7, 14), (14, 21), (21, 28), (28, 30)]
        np.testing.assert_array_equal(np.concatenate([v for _, _, v in parts]), whole)
    buffers = {
        id(v.base) if v.base is not None else id(v) for _, _, v in m.frequency_blocks(7, reuse=True)
    }
    assert len(buffers) == 1
