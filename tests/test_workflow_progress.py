"""Progress bars of the workflow: the reading bar is built here and fed by read_log's callback."""

from __future__ import annotations

import io
import sys

import numpy as np

from stability import workflow


class _Terminal(io.StringIO):
    def isatty(self) -> bool:
        return True


def _log(tmp_path):
    rng = np.random.default_rng(2)  # invented fractional frequency readings
    p = tmp_path / "log.csv"
    readings = rng.normal(0.0, 1e-11, 64)
    p.write_text("t,y\n" + "".join(f"{i},{v:.6e}\n" for i, v in enumerate(readings)))
    return p


def test_reading_bar_follows_the_bytes_of_the_log(tmp_path, monkeypatch):
    made = []

    class Recording(workflow._ReadingBar):
        def __init__(self) -> None:
            super().__init__()
            self.calls: list[tuple[int, int]] = []
            made.append(self)

        def __call__(self, done: int, total: int) -> None:
            self.calls.append((done, total))
            super().__call__(done, total)

    monkeypatch.setattr(workflow, "_ReadingBar", Recording)
    monkeypatch.setattr(workflow, "_READING_BAR_BYTES", 1)  # draw it even for a small log
    monkeypatch.setattr(sys, "stderr", _Terminal())
    p = _log(tmp_path)
    source, _, _ = workflow.read_and_prepare(p, tau0=1.0, progress=True)
    assert source.frequency().size == 64
    (bar,) = made
    size = p.stat().st_size
    assert bar.calls[0] == (0, size) and bar.calls[-1] == (size, size)
    assert bar.bar is not None and not bar.bar.live.is_started  # drawn, then closed


def test_no_reading_bar_off_a_terminal_or_when_not_asked(monkeypatch):
    monkeypatch.setattr(sys, "stderr", io.StringIO())
    with workflow._reading_bar(True) as callback:
        assert callback is None
    monkeypatch.setattr(sys, "stderr", _Terminal())
    with workflow._reading_bar(False) as callback:
        assert callback is None


def test_a_small_log_draws_no_bar():
    bar = workflow._ReadingBar()
    bar(0, 1000)
    bar(1000, 1000)
    bar.close()
    assert bar.bar is None
