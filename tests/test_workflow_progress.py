"""Progress of a run reaches the caller through callbacks (the command line draws the bars)."""

from __future__ import annotations

import numpy as np

import stability
from stability.run import read_and_prepare


def _log(tmp_path):
    rng = np.random.default_rng(2)  # invented fractional frequency readings
    p = tmp_path / "log.csv"
    readings = rng.normal(0.0, 1e-11, 64)
    p.write_text("t,y\n" + "".join(f"{i},{v:.6e}\n" for i, v in enumerate(readings)))
    return p


def test_reading_progress_follows_the_bytes_of_the_log(tmp_path):
    calls: list[tuple[int, int]] = []
    p = _log(tmp_path)
    source, _, _ = read_and_prepare(p, tau0=1.0, on_progress=lambda d, t: calls.append((d, t)))
    assert source.frequency().size == 64
    size = p.stat().st_size
    assert calls[0] == (0, size) and calls[-1] == (size, size)
    assert all(a[0] <= b[0] for a, b in zip(calls, calls[1:], strict=False))


def test_each_statistic_and_the_qualification_are_reported(tmp_path):
    steps: list[str] = []
    stability.run_analysis(_log(tmp_path), tau0=1.0, stats="oadev,mdev,tdev", on_step=steps.append)
    assert steps == ["oadev", "mdev", "tdev", "qualification"]
