"""Peak memory of a whole ``stability analyze`` against the size of its phase array.

Run by hand (not collected by pytest)::

    python tests/benchmarks/bench_memory.py [scale] [--log PATH] [--stats LIST]

A log of 10**7 x ``scale`` one-second readings (ISO time stamps and fractional
frequency, seeded white plus flicker FM, invented; 10**7 by default) is written
a block at a time, or an existing log of that shape is taken with ``--log``
(writing 10**8 rows takes several minutes). ``stability analyze LOG --out DIR``
runs in a child process, and so does the same command on a 10**4-row log: the
peak resident memory of that small run (interpreter, libraries, figure
rendering) is the fixed overhead. The figure of merit is

    (peak - fixed overhead) / (8 bytes x phase samples)

the peak above the fixed part in units of the phase array. Goal: below 4, so
that a 10**8-row log (a 0.8 GB phase array) is analysed in 4 GB. The peak of
each child is its own (``os.wait4``), not a running maximum over children.
"""

from __future__ import annotations

import argparse
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd

__all__ = ["main", "write_log"]

GOAL = 4.0
BLOCK = 10**6


def write_log(path: Path, rows: int, seed: int = 7) -> None:
    """A log of ``rows`` 1 s readings, written a block of 10**6 rows at a time."""
    rng = np.random.default_rng(seed)
    start = pd.Timestamp("2026-03-01T00:00:00Z")
    with open(path, "w", encoding="utf-8") as fh:
        fh.write("time,fractional\n")
        for lo in range(0, rows, BLOCK):
            n = min(BLOCK, rows - lo)
            white = rng.standard_normal(n) * 1e-11
            shaped = np.fft.rfft(rng.standard_normal(n)) / np.sqrt(np.arange(n // 2 + 1) + 1.0)
            flicker = np.fft.irfft(shaped, n)
            y = white + flicker * 1e-12 / max(float(np.std(flicker)), 1e-300)
            stamps = pd.date_range(start + pd.Timedelta(seconds=lo), periods=n, freq="s")
            frame = pd.DataFrame({"time": stamps.strftime("%Y-%m-%dT%H:%M:%SZ"), "fractional": y})
            frame.to_csv(fh, header=False, index=False, float_format="%.6e")


def peak_of(cmd: list[str]) -> tuple[float, float]:
    """(wall seconds, peak resident bytes) of one child process, its own peak only."""
    env = {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}
    start = time.perf_counter()
    child = subprocess.Popen(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, env=env)
    _, status, usage = os.wait4(child.pid, 0)
    took = time.perf_counter() - start
    err = child.stderr.read().decode(errors="replace") if child.stderr else ""
    child.returncode = os.waitstatus_to_exitcode(status)
    if child.returncode != 0:
        raise RuntimeError(f"{' '.join(cmd[:3])} failed: {err.strip()[-500:]}")
    return took, usage.ru_maxrss * 1024.0  # ru_maxrss is in KiB on Linux


def _rows_of(log: Path) -> int:
    with open(log, "rb") as fh:
        return sum(chunk.count(b"\n") for chunk in iter(lambda: fh.read(1 << 24), b"")) - 1


def main(scale: float = 1.0, log: Path | None = None, stats: str | None = None) -> dict[str, float]:
    """Analyse a log of 10**7 x ``scale`` rows (or ``log``) and print the ratio."""
    exe = Path(sys.executable).parent / "stability"
    base = [str(exe)] if exe.exists() else [sys.executable, "-m", "stability"]
    with tempfile.TemporaryDirectory() as tmp:
        small = Path(tmp) / "small.csv"
        write_log(small, 10**4)
        if log is not None:
            rows = _rows_of(log)
        else:
            rows = max(200, int(10**7 * scale))
            log = Path(tmp) / "log.csv"
            write_log(log, rows)
        extra = ["--stats", stats] if stats else []

        def analyse(path: Path, name: str) -> tuple[float, float]:
            return peak_of([*base, "analyze", str(path), *extra, "--out", str(Path(tmp) / name)])

        analyse(small, "warm")  # bytecode and page caches, as for a user's second run
        _, fixed = analyse(small, "small")
        took, peak = analyse(log, "big")
        size = log.stat().st_size
    phase = 8.0 * (rows + 1)
    ratio = (peak - fixed) / phase
    print(f"rows {rows}: {size / 1e9:.2f} GB log, phase array {phase / 1e9:.3f} GB")
    print(
        f"peak {peak / 1e9:.3f} GB, fixed overhead {fixed / 1e9:.3f} GB (10**4-row run), "
        f"{took:.1f} s"
    )
    print(f"ratio (peak - fixed) / phase array = {ratio:.2f} (goal < {GOAL:g})")
    at_1e8 = fixed + ratio * 8.0 * 1e8
    print(f"at this ratio a 10**8-row log peaks at {at_1e8 / 1e9:.2f} GB")
    return {"ratio": ratio, "peak_bytes": peak, "fixed_bytes": fixed, "seconds": took}


if __name__ == "__main__":
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("scale", nargs="?", type=float, default=1.0, help="10**7 rows x scale")
    parser.add_argument("--log", type=Path, default=None, help="an existing log to analyse")
    parser.add_argument("--stats", default=None, help="--stats for analyze (default: its own)")
    args = parser.parse_args()
    main(args.scale, args.log, args.stats)
