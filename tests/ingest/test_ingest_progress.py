"""Progress of reading through a callback: (bytes parsed, bytes in all)."""

from __future__ import annotations

import gzip
from datetime import datetime, timedelta

import numpy as np
import pytest

from stability.ingest import inspect_log, parsing, read_log, validate_read_args
from stability.ingest.readers import _read


def _lines(n: int) -> list[str]:
    rng = np.random.default_rng(5)  # invented fractional frequency readings
    t0 = datetime(2024, 1, 2, 3, 4, 5)
    return [
        f"{(t0 + timedelta(seconds=i)).isoformat()},{v:.6e}"
        for i, v in enumerate(rng.normal(0.0, 1e-11, n))
    ]


@pytest.mark.parametrize("stamps", ["auto", "general"])
def test_progress_advances_to_the_size_of_the_text(tmp_path, monkeypatch, stamps):
    monkeypatch.setattr(parsing, "_CHUNK_ROWS", 100)
    p = tmp_path / "log.csv"
    p.write_text("time,y\n" + "\n".join(_lines(1000)) + "\n")
    calls: list[tuple[int, int]] = []
    m, _ = _read(
        p,
        validate_read_args(engine="pandas"),  # the pandas engine reports once per chunk
        on_progress=lambda done, total: calls.append((done, total)),
        stamps=stamps,
    )
    assert m.frequency().size == 1000
    size = p.stat().st_size
    assert {total for _, total in calls} == {size}
    assert calls[0] == (0, size) and calls[-1] == (size, size)
    assert len(calls) >= 12  # the start, one report per chunk of 100 rows, the end
    dones = [done for done, _ in calls]
    assert dones == sorted(dones)
    # the estimate from the mean line length stays within a few lines of the truth
    per_line = size / 1001
    assert all(abs(d - 100 * (k + 1) * per_line) < 5 * per_line for k, d in enumerate(dones[1:11]))


def test_progress_of_a_compressed_log_counts_its_text(tmp_path):
    text = ("time,y\n" + "\n".join(_lines(300)) + "\n").encode()
    p = tmp_path / "log.csv.gz"
    p.write_bytes(gzip.compress(text, mtime=0))
    calls: list[tuple[int, int]] = []
    rep = inspect_log(p, on_progress=lambda done, total: calls.append((done, total)))
    assert rep.container == "gzip"
    assert calls[-1] == (len(text), len(text))


def test_reading_without_a_callback(tmp_path):
    p = tmp_path / "log.csv"
    p.write_text("time,y\n" + "\n".join(_lines(20)) + "\n")
    assert read_log(p).frequency().size == 20
    assert read_log(p, on_progress=None).frequency().size == 20
