"""The pyarrow and pandas engines give the same Measurement and report; memory is checked.

Each log is invented and written as a counter program or lab PC writes it. The
pyarrow engine takes clean files of the common layouts; on any other file the
``auto`` engine gives way to pandas, and ``engine="pyarrow"`` says why not.
"""

from __future__ import annotations

from datetime import UTC, datetime, timedelta

import numpy as np
import pytest
from deep_equal import assert_same

from stability import InputError
from stability.ingest import arrow_parsing, inspect_log, memory, read_log
from stability.ingest.sniff import open_source, sniff_dialect

T0 = datetime(2026, 4, 7, 6, 0, 0, tzinfo=UTC)
RNG = np.random.default_rng(21)
N = 500
Y = RNG.normal(0.0, 2e-11, N)  # invented fractional frequency
HZ = 10e6 + np.round(RNG.normal(0.0, 2e-4, N), 5)  # invented 10 MHz readings


def _write(path, header, rows, sep="\n"):
    path.write_text(header + sep + sep.join(rows) + sep)
    return path


def _iso_z(tmp_path):
    rows = [f"{(T0 + timedelta(seconds=i)).strftime('%Y-%m-%dT%H:%M:%SZ')},{HZ[i]:.5f}"
            for i in range(N)]  # fmt: skip
    return _write(tmp_path / "iso_z.csv", "time,Frequency [Hz]", rows)


def _iso_ms_gaps_sentinel(tmp_path):
    keep = [i for i in range(N) if i % 97 != 5]  # a few missing readings
    rows = [f"{(T0 + timedelta(seconds=0.1 * i)).isoformat(timespec='milliseconds')[:-6]}"
            f";{Y[i]:.6e}" for i in keep]  # fmt: skip
    rows[40] = rows[40].split(";")[0] + ";9.91e37"  # SCPI not-a-number sentinel
    return _write(tmp_path / "ms.csv", "Zeit;y", rows, sep="\r\n")


def _epoch(tmp_path):
    base = 1_775_000_000
    rows = [f"{base + 10 * i}\t{Y[i]:.6e}" for i in range(N)]
    return _write(tmp_path / "epoch.tsv", "unix_time\ty", rows)


def _elapsed_comma(tmp_path):
    rows = [f"{0.5 * i:.1f};{HZ[i]:.5f}".replace(".", ",") for i in range(N)]
    return _write(tmp_path / "elapsed.csv", "# Gate time: 0,5 s\nelapsed [s];Frequenz [Hz]", rows)


CLEAN = [_iso_z, _iso_ms_gaps_sentinel, _epoch, _elapsed_comma]


@pytest.mark.parametrize("make", CLEAN, ids=lambda f: f.__name__)
def test_engines_give_the_same_measurement_and_report(tmp_path, monkeypatch, make):
    pytest.importorskip("pyarrow")
    path = make(tmp_path)
    used = []
    real = arrow_parsing.arrow_rows
    monkeypatch.setattr(
        "stability.ingest.readers.arrow_rows",
        lambda *a, **k: used.append(1) or real(*a, **k),
    )
    fast = read_log(path, engine="pyarrow")
    assert used, "the pyarrow engine was not used"
    auto = read_log(path)
    slow = read_log(path, engine="pandas")
    assert_same(fast, slow, "measurement")
    assert_same(auto, slow, "measurement")
    assert_same(
        inspect_log(path, engine="pyarrow").to_dict(), inspect_log(path).to_dict(), "report"
    )
    assert_same(
        inspect_log(path, engine="pyarrow").to_dict(),
        inspect_log(path, engine="pandas").to_dict(),
        "report",
    )


def test_auto_gives_way_to_pandas_on_a_bad_line(tmp_path):
    pytest.importorskip("pyarrow")
    rows = [f"{(T0 + timedelta(seconds=i)).isoformat()},{Y[i]:.6e}" for i in range(50)]
    rows[20] = rows[20].split(",")[0] + ",ERR"
    rows.insert(30, "counter re-armed")
    p = _write(tmp_path / "bad.csv", "time,y", rows)
    auto, slow = read_log(p), read_log(p, engine="pandas")
    assert_same(auto, slow, "measurement")
    assert auto.provenance.details["bad_value_count"] == 1
    assert auto.provenance.details["junk_line_count"] == 1
    with pytest.raises(InputError, match="pyarrow engine cannot read this log: a row does not"):
        read_log(p, engine="pyarrow")


def test_pyarrow_engine_says_why_not(tmp_path, monkeypatch):
    rows = [f"{(T0 + timedelta(seconds=i)).strftime('%d.%m.%Y %H:%M:%S')};{Y[i]:.6e}"
            for i in range(20)]  # fmt: skip
    p = _write(tmp_path / "dotted.csv", "Zeitstempel;y", rows)
    if arrow_parsing.have_pyarrow():
        with pytest.raises(InputError, match=r"not ISO 8601 \(pass --engine auto"):
            read_log(p, engine="pyarrow")
    monkeypatch.setattr(arrow_parsing, "have_pyarrow", lambda: False)
    with pytest.raises(InputError, match=r"pyarrow is not installed.*\[fast\]"):
        read_log(p, engine="pyarrow")
    assert read_log(p).n == 21  # auto reads it with pandas
    with pytest.raises(InputError, match="engine must be one of auto, pandas, pyarrow"):
        read_log(p, engine="fastest")


def test_a_log_too_large_for_memory_is_refused_up_front(tmp_path, monkeypatch):
    p = _iso_z(tmp_path)
    monkeypatch.setattr(memory, "available_bytes", lambda: 10_000)
    with pytest.raises(InputError, match=r"too large for this machine's memory: about 500 rows"):
        read_log(p)
    monkeypatch.setattr(memory, "available_bytes", lambda: None)
    assert read_log(p).n == N + 1
    src = open_source(p)  # the estimate is close for a regular log
    assert abs(memory.estimated_rows(src, sniff_dialect(src)) - N) <= 0.02 * N
