"""Time-stamp formats, the sample grid (gaps, duplicates, off-grid), wrap-arounds."""

from __future__ import annotations

from datetime import UTC, datetime, timedelta

import numpy as np
import pytest

from stability import InputError
from stability.ingest import inspect_log, read_log

Y = np.array([1e-12, 2e-12, -1e-12, 3e-12, 0.0, -2e-12, 4e-12])
T0 = datetime(2024, 3, 5, 22, 59, 58, 250000)


def _log(tmp_path, stamps, name="t.csv", header="time,y"):
    p = tmp_path / name
    p.write_text(header + "\n" + "".join(f"{s},{y:.3e}\n" for s, y in zip(stamps, Y, strict=False)))
    return p


@pytest.mark.parametrize(
    ("fmt", "aware"),
    [
        ("%Y-%m-%dT%H:%M:%S.%fZ", True),
        ("%Y-%m-%dT%H:%M:%S.%f+00:00", True),
        ("%Y-%m-%d %H:%M:%S.%f", False),
        ("%Y-%m-%dT%H:%M:%S.%f", False),
        ("%d.%m.%Y %H:%M:%S.%f", False),
        ("%Y/%m/%d %H:%M:%S.%f", False),
    ],
)
def test_datetime_formats(tmp_path, fmt, aware):
    stamps = [(T0 + timedelta(seconds=10 * i)).strftime(fmt) for i in range(Y.size)]
    m = read_log(_log(tmp_path, stamps))
    assert m.tau0 == 10.0
    np.testing.assert_allclose(m.frequency(), Y, rtol=1e-12, atol=1e-26)
    expected = T0.replace(tzinfo=UTC) if aware else T0
    assert m.start == expected


def test_zone_offset_converted_to_utc(tmp_path):
    stamps = [
        (T0 + timedelta(seconds=i)).strftime("%Y-%m-%dT%H:%M:%S.%f+02:00") for i in range(Y.size)
    ]
    m = read_log(_log(tmp_path, stamps))
    assert m.start == (T0 - timedelta(hours=2)).replace(tzinfo=UTC)


def test_date_and_time_in_two_columns(tmp_path):
    p = tmp_path / "two.txt"
    p.write_text(
        "".join(
            f"{(T0 + timedelta(seconds=i)).strftime('%Y-%m-%d  %H:%M:%S.%f')}   {y:.3e}\n"
            for i, y in enumerate(Y)
        )
    )
    m = read_log(p, kind="fractional")
    assert m.start == T0 and m.tau0 == 1.0
    rep = inspect_log(p, kind="fractional")
    assert [c.role for c in rep.columns] == ["date", "time of day", "value"]


@pytest.mark.parametrize(
    ("scale", "text"),
    [
        (1, "seconds"),
        (1_000, "milliseconds"),
        (1_000_000, "microseconds"),
        (1_000_000_000, "nanoseconds"),
    ],
)
def test_epoch_units_by_magnitude(tmp_path, scale, text):
    base = 1_700_000_000
    stamps = [(base + 2 * i) * scale for i in range(Y.size)]
    p = _log(tmp_path, stamps, header="stamp,y")
    m = read_log(p)
    assert m.tau0 == 2.0
    assert m.start == datetime.fromtimestamp(base, tz=UTC)
    assert text in inspect_log(p).time_format


def test_mjd_and_elapsed(tmp_path):
    stamps = [f"{60000.5 + i / 86400:.8f}" for i in range(Y.size)]
    m = read_log(_log(tmp_path, stamps, header="MJD,y"))
    assert abs(m.tau0 - 1.0) < 1e-3  # MJD printed to 1e-8 day = 0.864 ms (common practice)
    # MJD 40587 = 1970-01-01 (common practice); MJD 60000.5 = 2023-02-25 12:00 UTC
    assert m.start == datetime(2023, 2, 25, 12, tzinfo=UTC)
    m2 = read_log(_log(tmp_path, [0.5 * i for i in range(Y.size)], "e.csv"))
    assert m2.tau0 == 0.5 and m2.start is None


def test_gaps_inserted_and_reported(tmp_path):
    secs = [0, 1, 2, 5, 6, 7, 9]
    m = read_log(_log(tmp_path, secs))
    y = m.frequency()
    assert y.size == 10
    assert np.isnan(y[[3, 4, 8]]).all()
    np.testing.assert_allclose(y[[0, 1, 2, 5, 6, 7, 9]], Y, rtol=1e-12, atol=1e-26)
    rep = m.provenance.details
    assert rep["gap_samples"] == 3
    assert rep["gaps_inserted"] == [
        {"after_line": 4, "missing": 2},
        {"after_line": 7, "missing": 1},
    ]
    assert list(m.lines) == [2, 3, 4, 0, 0, 5, 6, 7, 0, 8]


def test_duplicates_off_grid_and_tau0_override(tmp_path):
    secs = [0, 1, 1, 2, 3.3, 4, 5]
    p = _log(tmp_path, secs)
    rep = inspect_log(p)
    assert rep.duplicates == [{"line": 4}]
    # 3.3 s is 0.3 tau0 from its slot: jitter within the default tolerance (a third)
    assert [e["line"] for e in rep.jitter] == [6] and rep.off_grid == []
    assert rep.jitter_max_s == pytest.approx(0.3)
    rep = inspect_log(p, stamp_tolerance=0.2)
    assert [e["line"] for e in rep.off_grid] == [6] and rep.jitter == []
    m = read_log(p, tau0="0.5s")
    assert m.tau0 == 0.5
    assert any("overrides" in n for n in m.notes)


def test_backward_time_is_an_error(tmp_path):
    with pytest.raises(InputError, match=r"t\.csv:5 .*backward"):
        read_log(_log(tmp_path, [0, 1, 2, 1.5, 3, 4, 5]))


def test_pps_time_interval_wraps_unwrapped(tmp_path):
    # invented 1 PPS time-interval readings drifting through the 1 s wrap
    true = 0.9999999990 + np.arange(8) * 3e-10
    read = np.mod(true, 1.0)
    p = tmp_path / "tic.csv"
    p.write_text("t,TI (s)\n" + "".join(f"{i},{v:.10f}\n" for i, v in enumerate(read)))
    m = read_log(p)
    np.testing.assert_allclose(m.phase, np.arange(8) * 3e-10, atol=1e-18)
    rep = m.provenance.details
    assert rep["wrap_count"] == 1 and rep["wraps"] == [{"line": 6}]


def test_carrier_phase_wrap_and_explicit_period(tmp_path):
    cyc = np.array([0.9, 0.95, 0.0, 0.05, 0.1])
    p = tmp_path / "car.csv"
    p.write_text("t,phase (cycles)\n" + "".join(f"{i},{c}\n" for i, c in enumerate(cyc)))
    m = read_log(p, nominal="1MHz")
    np.testing.assert_allclose(m.phase, np.arange(5) * 0.05e-6, atol=1e-18)
    p2 = tmp_path / "ns.csv"
    p2.write_text("t,TI (ns)\n" + "".join(f"{i},{v}\n" for i, v in enumerate([98, 99, 0, 1])))
    m2 = read_log(p2, wrap="100ns")
    np.testing.assert_allclose(m2.phase, np.arange(4) * 1e-9, atol=1e-18)
