"""Hostile and absurd files: each is one InputError naming what and where, never a crash,
never a silent wrong result, never unbounded memory or a hang.

The logs are invented; every case was a traceback, a hang, exhausted memory or a
result computed from nonsense before the reader checked it.
"""

from __future__ import annotations

import gzip
import io
import os
import threading
import tracemalloc
import zipfile

import numpy as np
import pytest

from stability import InputError
from stability.ingest import grid, limits, read_log

N = 50


def _values(n: int = N) -> list[str]:
    # invented fractional-frequency readings
    return [f"{v:.3e}" for v in np.random.default_rng(3).normal(0.0, 1e-11, n)]


def _stamped(path, stamps, header="elapsed"):
    rows = [f"{s!r},{v}" for s, v in zip(stamps, _values(len(stamps)), strict=True)]
    path.write_text(f"{header},fractional\n" + "\n".join(rows) + "\n")
    return path


def _plain_log(n: int = N) -> str:
    return "elapsed,fractional\n" + "".join(f"{i},{v}\n" for i, v in enumerate(_values(n)))


# ------------------------------------------------------------------ zip containers
def _zip_bytes(text: str) -> bytearray:
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w", zipfile.ZIP_DEFLATED) as zf:
        zf.writestr("log.csv", text)
    return bytearray(buf.getvalue())


def _central(data: bytearray) -> int:
    return data.find(b"PK\x01\x02")


def test_encrypted_zip_member_is_one_line(tmp_path):
    data = _zip_bytes(_plain_log())
    data[6] |= 0x01  # general purpose bit 0 (APPNOTE 4.4.4): encrypted
    data[_central(data) + 8] |= 0x01
    p = tmp_path / "locked.zip"
    p.write_bytes(data)
    with pytest.raises(InputError, match=r"locked.zip: the zip member 'log.csv' is encrypted"):
        read_log(p)


def test_unsupported_zip_method_is_one_line(tmp_path):
    data = _zip_bytes(_plain_log())
    data[8] = 99  # compression method (APPNOTE 4.4.5): 99 is AE-x, which zipfile lacks
    data[_central(data) + 10] = 99
    p = tmp_path / "method.zip"
    p.write_bytes(data)
    with pytest.raises(InputError, match=r"method.zip: .*compression method 99"):
        read_log(p)


def test_corrupt_deflate_data_is_one_line(tmp_path):
    data = _zip_bytes(_plain_log(400))
    start = 30 + len("log.csv")  # the local header, then the deflate stream
    for i in range(start, start + 20):
        data[i] ^= 0xFF
    p = tmp_path / "corrupt.zip"
    p.write_bytes(data)
    with pytest.raises(InputError, match=r"corrupt.zip: damaged zip file"):
        read_log(p)


# ------------------------------------------------------------------ archives: bounded memory
def test_gzip_bomb_is_refused_within_a_bounded_memory(tmp_path):
    p = tmp_path / "bomb.csv.gz"
    line = b"1,1e-12\n"
    with gzip.open(p, "wb", compresslevel=9) as fh:
        block = line * (1 << 17)  # 1 MiB
        for _ in range(200):
            fh.write(block)
    assert p.stat().st_size * 100 < 200 << 20  # expands by far more than 100 times
    tracemalloc.start()
    try:
        with pytest.raises(InputError, match=r"bomb.csv.gz: the gzip archive expands to more"):
            read_log(p)
        peak = tracemalloc.get_traced_memory()[1]
    finally:
        tracemalloc.stop()
    assert peak < 64 << 20, peak  # streamed and stopped at the cap, never 200 MiB


def test_expansion_ratio_and_its_override(tmp_path, monkeypatch):
    monkeypatch.setattr(limits, "MIN_EXPANDED_BYTES", 1000)
    monkeypatch.setattr(limits, "DEFAULT_MAX_EXPANSION", 1.5)  # this small log packs 4:1
    p = tmp_path / "regular.csv.gz"
    text = "elapsed,fractional\n" + "".join(f"{i},{(i % 2 + 1)}e-12\n" for i in range(6000))
    p.write_bytes(gzip.compress(text.encode()))
    with pytest.raises(InputError, match=r"pass --max-expansion with a larger ratio"):
        read_log(p)
    m = read_log(p, max_expansion=10)
    np.testing.assert_allclose(m.frequency()[:4], [1e-12, 2e-12, 1e-12, 2e-12])
    with pytest.raises(InputError, match=r"max_expansion .* at least 1, got 0"):
        read_log(p, max_expansion=0)


def test_expansion_beyond_available_memory_is_refused(tmp_path, monkeypatch):
    monkeypatch.setattr(limits, "available_bytes", lambda: 3 << 20)
    p = tmp_path / "log.csv.gz"
    p.write_bytes(gzip.compress(b"elapsed,fractional\n" + b"0,1e-12\n1,2e-12\n" * 400_000))
    with pytest.raises(InputError, match=r"a third of the memory available"):
        read_log(p, max_expansion=1e9)


def test_decompressed_utf8_text_is_not_copied_again(tmp_path):
    text = _plain_log(200)
    plain, packed = tmp_path / "a.csv", tmp_path / "a.csv.gz"
    plain.write_text(text)
    packed.write_bytes(gzip.compress(text.encode()))
    np.testing.assert_array_equal(read_log(packed).phase, read_log(plain).phase)


# ------------------------------------------------------------------ special files
def test_device_is_refused_before_reading():
    if not os.path.exists("/dev/zero"):
        pytest.skip("no /dev/zero here")
    with pytest.raises(InputError, match=r"/dev/zero: is a device, not a regular file"):
        read_log("/dev/zero")


def test_named_pipe_is_refused_without_hanging(tmp_path):
    fifo = tmp_path / "pipe.csv"
    os.mkfifo(fifo)
    outcome: list[BaseException] = []

    def attempt() -> None:
        try:
            read_log(fifo)
        except BaseException as exc:  # noqa: BLE001 - handed to the test thread
            outcome.append(exc)

    worker = threading.Thread(target=attempt, daemon=True)
    worker.start()
    worker.join(20)
    if worker.is_alive():  # unblock the reader so the thread ends, then fail
        with open(fifo, "wb"):
            pass
        pytest.fail("reading a named pipe hangs")
    assert isinstance(outcome[0], InputError)
    assert "is a named pipe, not a regular file" in str(outcome[0])


def test_symbolic_link_loop_and_dangling_link(tmp_path):
    loop = tmp_path / "loop.csv"
    loop.symlink_to(loop)
    with pytest.raises(InputError, match=r"loop.csv: symbolic link loop"):
        read_log(loop)
    dangling = tmp_path / "gone.csv"
    dangling.symlink_to(tmp_path / "never-there.csv")
    with pytest.raises(InputError, match=r"gone.csv: symbolic link to a missing file"):
        read_log(dangling)


# ------------------------------------------------------------------ time stamps out of range
@pytest.mark.parametrize("first", [-1e7, 9e9, 1e300])
def test_mjd_out_of_any_calendar_names_line_and_column(tmp_path, first):
    p = _stamped(tmp_path / "mjd.csv", [first + i / 86400 for i in range(N)], header="mjd")
    with pytest.raises(InputError, match=r"mjd.csv:2 column mjd: the time stamp .* outside"):
        read_log(p)


def test_epoch_column_ending_in_1e30(tmp_path):
    stamps = [1.7e9 + i for i in range(N - 1)] + [1e30]
    p = _stamped(tmp_path / "epoch.csv", stamps, header="time")
    with pytest.raises(InputError, match=rf"epoch.csv:{N + 1} column time: the time stamp 1e\+30"):
        read_log(p)


@pytest.mark.parametrize("last", [4e18, 9.3e18, 1.2e19, 1e25])
def test_elapsed_seconds_jumping_beyond_a_century(tmp_path, last):
    stamps = [float(i) for i in range(N - 1)] + [last]
    p = _stamped(tmp_path / "jump.csv", stamps)
    with pytest.raises(InputError, match=rf"jump.csv:{N + 1} column elapsed: .*span"):
        read_log(p)
    with pytest.raises(InputError, match=rf"jump.csv:{N + 1} column elapsed"):
        read_log(p, allow_unusual=True)  # still beyond what can be held or gridded


def test_a_century_and_more_is_read_when_asked(tmp_path):
    # invented: yearly readings for 150 years (1 year = 365.25 d)
    stamps = [i * 365.25 * 86400 for i in range(150)]
    p = _stamped(tmp_path / "long.csv", stamps)
    with pytest.raises(InputError, match=r"span 149 years, more than the century"):
        read_log(p)
    m = read_log(p, allow_unusual=True)
    assert m.n - 1 == 150 and m.tau0 == pytest.approx(365.25 * 86400)


def test_year_2300_is_blamed_on_the_time_column(tmp_path):
    rows = [f"2300-01-01T00:00:{s:02d},{v}" for s, v in enumerate(_values())]
    p = tmp_path / "future.csv"
    p.write_text("time,fractional\n" + "\n".join(rows) + "\n")
    with pytest.raises(
        InputError, match=r"future.csv:2 column time: .*outside the years 1677 to 2262"
    ):
        read_log(p)


# ------------------------------------------------------------------ tau0 and spacing
@pytest.mark.parametrize(
    ("tau0", "match"),
    [
        ("1e-200s", "beyond the sample intervals that can be computed"),
        ("1e300s", "beyond the sample intervals that can be computed"),
        ("1e-20s", "shorter than 1 ns.*--unusual-timing"),
        ("2d", "longer than one day.*--unusual-timing"),
    ],
)
def test_absurd_tau0_is_refused(tmp_path, tau0, match):
    p = tmp_path / "rows.csv"
    p.write_text("fractional\n" + "\n".join(_values(600)) + "\n")
    with pytest.raises(InputError, match=match):
        read_log(p, tau0=tau0)


def test_unusual_tau0_is_read_when_asked(tmp_path):
    p = tmp_path / "rows.csv"
    p.write_text("fractional\n" + "\n".join(_values(600)) + "\n")
    assert read_log(p, tau0="1e-12s", allow_unusual=True).tau0 == 1e-12
    with pytest.raises(InputError, match="beyond the sample intervals that can be computed"):
        read_log(p, tau0="1e-200s", allow_unusual=True)


def test_given_tau0_far_from_the_stamps_is_named(tmp_path):
    p = _stamped(tmp_path / "one-second.csv", [float(i) for i in range(N)])
    with pytest.raises(InputError, match=r"tau0 1e-20 s as given is far shorter than the spacing"):
        read_log(p, tau0="1e-20s", allow_unusual=True)
    with pytest.raises(InputError, match=r"tau0 2 d as given is longer than the spacing"):
        read_log(p, tau0="2d", allow_unusual=True)


@pytest.mark.parametrize(("step", "side"), [(1e-12, "less than 1 ns"), (2 * 86400.0, "more than")])
def test_stamps_spaced_beyond_the_usual_bounds(tmp_path, step, side):
    p = _stamped(tmp_path / "spacing.csv", [i * step for i in range(N)])
    with pytest.raises(InputError, match=rf"spacing.csv:3 column elapsed: .*{side}"):
        read_log(p)
    assert read_log(p, allow_unusual=True).tau0 == pytest.approx(step)


# ------------------------------------------------------------------ grids made of gaps
def test_jump_that_would_make_the_grid_mostly_gap(tmp_path):
    # 101 rows 1 s apart, then a jump of 9.999e6 s: ten million slots for 101 readings
    stamps = [float(i) for i in range(101)] + [9.999e6 + 100]
    p = _stamped(tmp_path / "pause.csv", stamps)
    with pytest.raises(
        InputError, match=r"pause.csv:103 column elapsed: the time stamps jump forward .*--unusual"
    ):
        read_log(p)


def test_gap_read_when_asked_but_never_beyond_memory(tmp_path, monkeypatch):
    stamps = [float(i) for i in range(101)] + [20_100.0]
    p = _stamped(tmp_path / "pause.csv", stamps)
    with pytest.raises(InputError, match=r"more than 100 times as many"):
        read_log(p)
    m = read_log(p, allow_unusual=True)
    assert m.n - 1 == 20_101  # frequency samples on the grid, 101 + 20 000 in the gap
    monkeypatch.setattr(grid, "available_bytes", lambda: 100_000)
    with pytest.raises(InputError, match=r"pause.csv:103 .*more than the memory available"):
        read_log(p, allow_unusual=True)


# ------------------------------------------------------------------ values of another kind
def test_nominal_outside_any_oscillator(tmp_path):
    p = tmp_path / "cycles.csv"
    p.write_text("cycles\n" + "\n".join(_values(60)) + "\n")
    with pytest.raises(InputError, match=r"nominal '1e-300Hz' lies outside the frequencies"):
        read_log(p, tau0="1s", nominal="1e-300Hz")
    with pytest.raises(InputError, match=r"nominal '1e20Hz' .*--unusual-timing"):
        read_log(p, tau0="1s", nominal="1e20Hz")


def test_time_error_beyond_a_century_is_another_column(tmp_path):
    rows = [f"{i},{v}" for i, v in enumerate(_values(N))]
    rows[7] = "7,7.3e20"  # 7.3e11 s, 23 000 years: no clock's time error
    p = tmp_path / "wild.csv"
    p.write_text("t,TI [ns]\n" + "\n".join(rows) + "\n")
    with pytest.raises(
        InputError, match=r"wild.csv:9 column TI \[ns\]: a time error of 7.3e\+11 s"
    ):
        read_log(p)
