"""PC time stamps as labels: jitter snapped within a tolerance, ``time_column="none"``.

The logs are invented, written as a lab PC does: the program asks the counter
for a reading every tau0 and stamps it with the PC clock when the answer
arrives, so a busy PC stamps some readings late.
"""

from __future__ import annotations

from datetime import datetime, timedelta

import numpy as np
import pytest

from stability import InputError
from stability.ingest import inspect_log, read_log

T0 = datetime(2026, 1, 12, 9, 30, 0)
N = 200
LATE = np.arange(10, 200, 10)[:19].tolist() + [195]  # 20 rows stamped late


def _pc_log(tmp_path, tau0, late_by=0.6, late_rows=LATE, n=N, clock_rate=1.0):
    rng = np.random.default_rng(3)
    y = rng.normal(0.0, 1e-11, n)  # invented fractional frequency readings
    y = np.array([float(f"{v:.6e}") for v in y])  # as written
    lines = ["# Logged by the lab PC", "Time;Fractional frequency"]
    for i in range(n):
        seconds = tau0 * i * clock_rate + (late_by if i in late_rows else 0.0)
        stamp = (T0 + timedelta(seconds=seconds)).strftime("%Y-%m-%d %H:%M:%S.%f")[:-3]
        lines.append(f"{stamp};{y[i]:.6e}")
    p = tmp_path / "pc.csv"
    p.write_text("\n".join(lines) + "\n")
    return p, y


def test_late_stamps_within_the_tolerance_are_jitter_not_duplicates(tmp_path):
    p, y = _pc_log(tmp_path, tau0=2.0)  # 0.6 s late is 0.3 tau0: within a third
    m = read_log(p)
    assert m.tau0 == 2.0 and m.n == N + 1  # N readings give N + 1 phase points
    np.testing.assert_allclose(m.frequency(), y, rtol=1e-12, atol=1e-24)
    rep = inspect_log(p)
    assert rep.duplicate_count == 0 and rep.gap_samples == 0 and rep.off_grid_count == 0
    assert rep.jitter_count == 20 and rep.jitter_max_s == pytest.approx(0.6)
    assert [e["line"] for e in rep.jitter][:2] == [13, 23]  # rows 10, 20 (header on line 2)
    assert "stamp jitter: max 600 ms, 20 rows" in rep.to_text()


def test_late_by_more_than_half_tau0_needs_a_wider_tolerance(tmp_path):
    p, y = _pc_log(tmp_path, tau0=1.0)  # 0.6 s late at 1 s: nearer the next slot
    rep = inspect_log(p)
    # read by the nearest slot: loud, with the option that fixes it
    assert rep.duplicate_count == 20 and rep.gap_samples == 20
    assert any("--stamp-tolerance 0.7" in n for n in rep.notes)
    m = read_log(p, stamp_tolerance=0.7)
    assert m.tau0 == 1.0 and m.n == N + 1  # N readings give N + 1 phase points
    np.testing.assert_allclose(m.frequency(), y, rtol=1e-12, atol=1e-24)
    rep = inspect_log(p, stamp_tolerance="0.7")
    assert (rep.duplicate_count, rep.gap_samples, rep.jitter_count) == (0, 0, 20)
    assert rep.jitter_max_s == pytest.approx(0.6)


def test_early_stamp_put_back_within_the_tolerance(tmp_path):
    p, y = _pc_log(tmp_path, tau0=1.0, late_by=-0.6, late_rows=[50])
    rep = inspect_log(p, stamp_tolerance=0.7)
    assert (rep.duplicate_count, rep.gap_samples, rep.jitter_count) == (0, 0, 1)
    assert rep.jitter[0]["line"] == 53 and rep.jitter[0]["offset_s"] == pytest.approx(-0.6)


def test_true_duplicates_are_still_duplicates(tmp_path):
    p = tmp_path / "dup.csv"
    stamps = [T0 + timedelta(seconds=i) for i in range(10)]
    stamps.insert(5, stamps[4])  # the same reading written twice
    p.write_text("time,y\n" + "".join(f"{s.isoformat()},{i}e-12\n" for i, s in enumerate(stamps)))
    rep = inspect_log(p, kind="fractional", stamp_tolerance=0.9)
    assert rep.duplicates == [{"line": 7}] and rep.samples == 10 and rep.gap_samples == 0


def test_slow_pc_clock_drift_never_accumulates_into_gaps(tmp_path):
    # stamps 20 ppm slow with millisecond resolution: 0.1 s behind after 5000 rows
    p, _ = _pc_log(tmp_path, tau0=1.0, late_rows=[], n=5000, clock_rate=1.00002)
    rep = inspect_log(p)
    assert rep.tau0 == 1.0 and rep.samples == 5000
    assert (rep.duplicate_count, rep.gap_samples, rep.off_grid_count) == (0, 0, 0)


def test_time_column_none_reads_rows_in_sequence(tmp_path):
    p, y = _pc_log(tmp_path, tau0=1.0)
    with pytest.raises(InputError, match=r"--time-column none reads the rows in sequence.*--tau0"):
        read_log(p, time_column="none")
    m = read_log(p, time_column="none", tau0="1s")
    assert m.tau0 == 1.0 and m.n == N + 1  # N readings give N + 1 phase points
    np.testing.assert_allclose(m.frequency(), y, rtol=1e-12, atol=1e-24)
    rep = inspect_log(p, time_column="None", tau0="1s")
    assert rep.columns[0].role == "time (not used)"
    assert "rows read in sequence" in rep.tau0_source
    assert rep.duplicate_count == 0 and rep.gap_samples == 0


def test_stamp_tolerance_is_checked():
    for bad in (1.0, -0.1, "0.3s", "a third", True):
        with pytest.raises(InputError, match="stamp_tolerance is a fraction of tau0"):
            read_log("unused.csv", stamp_tolerance=bad)
