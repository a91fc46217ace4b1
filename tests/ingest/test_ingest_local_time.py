"""Local-time stamps across daylight-saving changes: ``timezone=``, or a loud refusal.

Europe/Berlin changed clocks in 2026 on Sunday 29 March at 01:00 UTC (02:00 CET
became 03:00 CEST) and on Sunday 25 October at 01:00 UTC (03:00 CEST became
02:00 CET): Directive 2000/84/EC (last Sunday of March and of October, 01:00
UTC). America/New_York on Sunday 8 March 2026 at 02:00 EST (Energy Policy Act of
2005: second Sunday of March). The logs are invented 10 s counter logs whose PC
writes its local time without a zone.
"""

from __future__ import annotations

from datetime import UTC, datetime, timedelta
from zoneinfo import ZoneInfo

import numpy as np
import pytest

from stability import InputError
from stability.ingest import inspect_log, read_log

TAU0 = 10.0


def _local_log(tmp_path, utc_start, hours, zone, name="local.csv", fmt="%d.%m.%Y %H:%M:%S"):
    n = int(hours * 3600 / TAU0)
    rng = np.random.default_rng(11)
    hz = 10e6 + np.round(rng.normal(0.0, 1e-3, n), 4)  # invented 10 MHz readings
    lines = ["Zeitstempel;Frequenz [Hz]"]
    for i in range(n):
        t = (utc_start + timedelta(seconds=TAU0 * i)).astimezone(ZoneInfo(zone))
        reading = f"{hz[i]:.4f}".replace(".", ",")  # decimal comma
        lines.append(f"{t.strftime(fmt)};{reading}")
    p = tmp_path / name
    p.write_text("\n".join(lines) + "\n")
    return p, n


SPRING = datetime(2026, 3, 29, 0, 0, tzinfo=UTC)
AUTUMN = datetime(2026, 10, 25, 0, 0, tzinfo=UTC)


def test_spring_forward_without_a_zone_is_refused(tmp_path):
    p, n = _local_log(tmp_path, SPRING, 2, "Europe/Berlin")
    with pytest.raises(InputError) as err:
        read_log(p)
    msg = str(err.value)
    assert "step forward by one hour after 2026-03-29T01:59:50" in msg
    assert "daylight-saving" in msg and "--timezone" in msg
    # the first stamp after the jump, 03:00:00 local, is row 361 on line 362
    assert "local.csv:362" in msg


def test_spring_forward_read_in_its_zone(tmp_path):
    p, n = _local_log(tmp_path, SPRING, 2, "Europe/Berlin")
    m = read_log(p, timezone="Europe/Berlin")
    assert m.tau0 == TAU0 and m.n == n + 1
    assert m.start == SPRING
    rep = inspect_log(p, timezone="Europe/Berlin")
    assert rep.gap_samples == 0 and rep.duplicate_count == 0 and rep.timezone == "Europe/Berlin"
    assert "Europe/Berlin time" in rep.time_format


def test_fall_back_without_a_zone_is_refused(tmp_path):
    p, n = _local_log(tmp_path, AUTUMN, 2, "Europe/Berlin")
    with pytest.raises(InputError, match=r"step back by one hour.*--timezone"):
        read_log(p)


def test_fall_back_hour_written_twice_resolved_by_row_order(tmp_path):
    p, n = _local_log(tmp_path, AUTUMN, 2, "Europe/Berlin")
    m = read_log(p, timezone="Europe/Berlin")
    assert m.tau0 == TAU0 and m.n == n + 1 and m.start == AUTUMN
    rep = inspect_log(p, timezone="Europe/Berlin")
    assert (rep.gap_samples, rep.duplicate_count, rep.off_grid_count) == (0, 0, 0)
    assert rep.last_time.startswith("2026-10-25T01:59:50")


def test_new_york_spring_forward_iso_stamps(tmp_path):
    start = datetime(2026, 3, 8, 6, 30, tzinfo=UTC)  # 01:30 EST
    p, n = _local_log(tmp_path, start, 1, "America/New_York", fmt="%Y-%m-%dT%H:%M:%S")
    with pytest.raises(InputError, match="--timezone"):
        read_log(p)
    m = read_log(p, timezone="America/New_York")
    assert m.tau0 == TAU0 and m.n == n + 1 and m.start == start


def test_an_hour_pause_on_a_weekday_is_a_gap(tmp_path):
    # UTC stamps with a real one-hour pause on a Tuesday afternoon
    p = tmp_path / "pause.csv"
    t0 = datetime(2026, 3, 3, 14, 0, 0)
    stamps = [t0 + timedelta(seconds=TAU0 * i) for i in range(30)]
    stamps += [stamps[-1] + timedelta(seconds=3600 + TAU0 * (i + 1)) for i in range(30)]
    p.write_text("time,y\n" + "".join(f"{s.isoformat()},1e-12\n" for s in stamps))
    rep = inspect_log(p, kind="fractional")
    assert rep.gap_samples == 360 and rep.tau0 == TAU0  # a 3610 s step: 360 missing


def test_zone_errors(tmp_path):
    with pytest.raises(InputError, match="unknown time zone 'Mars/Olympus'"):
        read_log("unused.csv", timezone="Mars/Olympus")
    # UTC stamps through the spring change read as Berlin local time: 02:30 does not exist
    p = tmp_path / "utc.csv"
    t0 = datetime(2026, 3, 29, 1, 50, 0)
    p.write_text(
        "time,y\n"
        + "".join(f"{(t0 + timedelta(seconds=60 * i)).isoformat()},1e-12\n" for i in range(60))
    )
    with pytest.raises(InputError, match=r"utc.csv:12 .*does not exist in Europe/Berlin"):
        read_log(p, kind="fractional", timezone="Europe/Berlin")


def test_zone_ignored_for_stamps_with_a_zone(tmp_path):
    p = tmp_path / "z.csv"
    t0 = datetime(2026, 3, 29, 0, 0, tzinfo=UTC)
    p.write_text(
        "time,y\n"
        + "".join(f"{(t0 + timedelta(seconds=10 * i)).isoformat()},1e-12\n" for i in range(20))
    )
    m = read_log(p, kind="fractional", timezone="Europe/Berlin")
    assert m.start == t0 and any("not used" in n for n in m.notes)
