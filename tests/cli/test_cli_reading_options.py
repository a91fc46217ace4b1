"""The reading options of the reader reach every command: --time-column none,
--stamp-tolerance, --timezone, --engine (the rules themselves: tests/ingest)."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import numpy as np


def _run(*args: str) -> subprocess.CompletedProcess:
    return subprocess.run(
        [sys.executable, "-m", "stability", *args], capture_output=True, text=True, timeout=120
    )


def _pc_log(path, late_rows=(), zone_jump=False):
    # Invented: a lab PC stamps 10 s readings of fractional frequency, some a little late.
    y = np.random.default_rng(5).normal(0.0, 1e-11, 400)
    lines = ["time,fractional"]
    for i, v in enumerate(y):
        seconds = 10 * i + (4 if i in late_rows else 0)
        hh, rest = divmod(seconds, 3600)
        mm, ss = divmod(rest, 60)
        lines.append(f"2026-03-02 {hh:02d}:{mm:02d}:{ss:02d},{v:.6e}")
    path.write_text("\n".join(lines) + "\n")
    return path


def _tau0(out) -> float:
    summary = json.loads((out / "summary.json").read_text())
    return float(summary["input"]["tau0_s"])


def test_time_column_none_reads_rows_in_sequence(tmp_path):
    log = _pc_log(tmp_path / "pc.csv", late_rows=range(50, 70))
    done = _run("analyze", str(log), "--time-column", "none", "--tau0", "10s",
                "--out", str(tmp_path / "a"), "--json")  # fmt: skip
    assert done.returncode == 0, done.stderr
    assert _tau0(tmp_path / "a") == 10.0
    missing = _run("analyze", str(log), "--time-column", "none", "--out", str(tmp_path / "b"))
    assert missing.returncode != 0 and "--tau0" in missing.stderr


def test_stamp_tolerance_is_checked_and_passed(tmp_path):
    log = _pc_log(tmp_path / "pc.csv", late_rows=range(50, 70))
    done = _run("analyze", str(log), "--stamp-tolerance", "0.5", "--out", str(tmp_path / "a"),
                "--json")  # fmt: skip
    assert done.returncode == 0, done.stderr
    assert _tau0(tmp_path / "a") == 10.0
    assert "jitter" in done.stdout  # the report says what snapping did
    bad = _run("analyze", str(log), "--stamp-tolerance", "2", "--out", str(tmp_path / "c"))
    assert bad.returncode == 2 and bad.stderr.count("\n") == 1 and "stamp" in bad.stderr


def test_timezone_and_engine_are_usage_checked(tmp_path):
    log = _pc_log(tmp_path / "pc.csv")
    zone = _run("analyze", str(log), "--timezone", "Mars/Olympus", "--out", str(tmp_path / "z"))
    assert zone.returncode == 2 and zone.stderr.count("\n") == 1, zone.stderr
    engine = _run("analyze", str(log), "--engine", "fortran", "--out", str(tmp_path / "e"))
    assert engine.returncode == 2 and "engine" in engine.stderr, engine.stderr
    ok = _run("analyze", str(log), "--timezone", "Europe/Berlin", "--engine", "pandas",
              "--out", str(tmp_path / "ok"), "--json")  # fmt: skip
    assert ok.returncode == 0, ok.stderr


def test_bias_correction_off_on_the_command_line(tmp_path):
    # NBS14 (NIST SP 1065 section 12.3): TOTDEV(2 s) = 93.90379 as published, raw.
    nbs14 = Path(__file__).resolve().parents[2] / "stability/validation/data/nbs14.txt"
    done = _run("analyze", str(nbs14), "--kind", "fractional", "--tau0", "1s", "--stats",
                "totdev", "--taus", "1,2", "--bias-correction", "off", "--out", str(tmp_path),
                "--json")  # fmt: skip
    assert done.returncode == 0, done.stderr
    summary = json.loads(done.stdout)
    assert summary["settings"]["bias_correction"] is False
    rows = [r for r in summary["table"] if r["statistic"] == "totdev"]
    assert abs(rows[1]["deviation"] - 93.90379) < 5e-6 and rows[1]["bias_factor"] == 1.0
    bad = _run("analyze", str(nbs14), "--bias-correction", "maybe", "--out", str(tmp_path / "b"))
    assert bad.returncode == 2 and bad.stderr.count("\n") == 1
