"""Tests of stability.workflow: writing a run's outputs, all of them or none."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

import stability
from stability.workflow import analyze_into, write_analysis


def _log(tmp_path: Path) -> Path:
    # Invented data: seeded white FM, 1 s samples, written as a plain column.
    y = np.random.default_rng(5).normal(0.0, 1e-11, 3000)
    path = tmp_path / "white.txt"
    path.write_text("".join(f"{v:.6e}\n" for v in y))
    return path


def test_analyze_into_writes_what_write_analysis_writes(tmp_path):
    log = _log(tmp_path)
    run, written = analyze_into(
        log, tmp_path / "a", kind="fractional", tau0=1.0, stats="oadev,tdev"
    )
    names = ["table.csv", "table.md", "summary.json", "sigma_tau.png", "series.png"]
    assert sorted(p.name for p in (tmp_path / "a").iterdir()) == sorted(names)
    assert list(written) == ["table.csv", "table.md", "summary.json", "sigma_tau", "series"]
    # the same run written again by write_analysis gives the same bytes, figures included
    again = write_analysis(run, tmp_path / "b")
    assert list(again) == list(written)
    for key, path in written.items():
        assert path.read_bytes() == again[key].read_bytes(), key
    assert written["series"].stat().st_size > 20_000


def test_a_failed_analysis_leaves_no_figure_and_no_new_folder(tmp_path):
    log = _log(tmp_path)
    folder = tmp_path / "never"
    with pytest.raises(stability.AnalysisError, match="tau 1e\\+06 s is too long"):
        analyze_into(log, folder, kind="fractional", tau0=1.0, stats="oadev", taus=[1e6])
    assert not folder.exists()
    kept = tmp_path / "kept"
    kept.mkdir()
    with pytest.raises(stability.AnalysisError):
        analyze_into(log, kept, kind="fractional", tau0=1.0, stats="oadev", taus=[1e6])
    assert list(kept.iterdir()) == []  # no pending figure left behind


def test_a_run_failing_while_drawing_changes_no_earlier_output(tmp_path):
    log = _log(tmp_path)
    out = tmp_path / "out"
    opts = {"kind": "fractional", "tau0": 1.0}
    analyze_into(log, out, stats="oadev", **opts)
    before = {p.name: p.read_bytes() for p in out.iterdir()}
    # limits on a statistic the table lacks: the stability plot cannot be drawn
    with pytest.raises(stability.InputError, match="limits_statistic 'hdev' is not in the table"):
        analyze_into(log, out, stats="oadev,mdev", limits_statistic="hdev", **opts)
    assert {p.name: p.read_bytes() for p in out.iterdir()} == before  # nothing new, no pending
    nested = tmp_path / "a" / "b" / "c"
    with pytest.raises(stability.InputError):
        analyze_into(log, nested, stats="oadev", limits_statistic="hdev", **opts)
    assert not (tmp_path / "a").exists()  # every folder made for the run is gone again
