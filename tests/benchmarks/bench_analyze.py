"""Benchmark of the whole ``stability analyze`` command against a plain pandas + allantools script.

Run by hand (not collected by pytest)::

    env -u OPENBLAS_CORETYPE -u OPENBLAS_L2_SIZE python tests/benchmarks/bench_analyze.py [scale]

A 10**6 * scale row CSV of ISO time stamps and fractional frequency (seeded white
plus flicker FM, invented) is analysed twice, each in a fresh process so that
start-up and imports count on both sides:

* ours: ``stability analyze LOG --stats oadev,mdev,hdev,tdev`` - reading,
  preparation (outlier screening, drift estimate), the four statistics with noise
  identification, EDF and intervals, the power-law fit, both plots and all files;
* reference: a script that reads the same file with pandas and calls allantools
  for the same four statistics on octave taus, without intervals or plots.

Both sides run as a user would run them: with Python's bytecode cache on (a normal
installation; PYTHONDONTWRITEBYTECODE is removed from the children's environment),
after one untimed warm-up run each, and then ``repeat`` timed runs each, taken
alternately; the medians are compared.

Target: ours takes no longer than the reference (ratio <= 1). Peak memory of each
process (ru_maxrss) is printed too.
"""

from __future__ import annotations

import os
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd

__all__ = ["main"]

REFERENCE_SCRIPT = """
import sys
import numpy as np
import pandas as pd
import allantools
frame = pd.read_csv(sys.argv[1])
y = frame.iloc[:, 1].to_numpy(dtype=float)
for func in (allantools.oadev, allantools.mdev, allantools.hdev, allantools.tdev):
    func(y, rate=1.0, data_type="freq", taus="octave")
"""


def write_log(path: Path, rows: int, seed: int = 7) -> None:
    rng = np.random.default_rng(seed)
    white = rng.standard_normal(rows) * 1e-11
    flicker = np.fft.irfft(
        np.fft.rfft(rng.standard_normal(rows)) / np.sqrt(np.arange(rows // 2 + 1) + 1.0), rows
    )
    y = white + flicker * 1e-12 / max(np.std(flicker), 1e-300)
    stamps = pd.date_range("2026-03-01T00:00:00Z", periods=rows, freq="s")
    frame = pd.DataFrame({"time": stamps.strftime("%Y-%m-%dT%H:%M:%SZ"), "fractional": y})
    frame.to_csv(path, index=False, float_format="%.6e")


def _run(cmd: list[str]) -> tuple[float, float]:
    """Wall time and peak resident memory (MB) of a child process."""
    env = {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}
    before = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
    start = time.perf_counter()
    done = subprocess.run(cmd, capture_output=True, text=True, check=False, env=env)
    took = time.perf_counter() - start
    if done.returncode != 0:
        raise RuntimeError(f"{cmd[0]} failed: {done.stderr.strip()[-500:]}")
    peak = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
    return took, max(peak, before) / 1024.0


def main(scale: float = 1.0, repeat: int | None = None) -> dict[str, float]:
    rows = max(200, int(10**6 * scale))
    if repeat is None:
        repeat = 3 if rows >= 100_000 else 1  # a tiny smoke run times once
    for name in ("OPENBLAS_CORETYPE", "OPENBLAS_L2_SIZE"):
        print(f"{name} = {os.environ.get(name, '(unset)')}")
    exe = Path(sys.executable).parent / "stability"
    ours_cmd = [str(exe)] if exe.exists() else [sys.executable, "-m", "stability"]
    with tempfile.TemporaryDirectory() as tmp:
        log = Path(tmp) / "bench-log.csv"
        write_log(log, rows)
        script = Path(tmp) / "reference.py"
        script.write_text(REFERENCE_SCRIPT)
        ref_cmd = [sys.executable, str(script), str(log)]
        ours_cmd = ours_cmd + [
            "analyze",
            str(log),
            "--stats",
            "oadev,mdev,hdev,tdev",
            "--out",
            str(Path(tmp) / "o"),
        ]
        _run(ref_cmd)  # warm-up: bytecode and page caches, as for a user's second run
        _run(ours_cmd)
        ref_times, ours_times = [], []
        ref_mem = ours_mem = 0.0
        for _ in range(max(1, repeat)):
            took, ref_mem = _run(ref_cmd)
            ref_times.append(took)
            took, ours_mem = _run(ours_cmd)
            ours_times.append(took)
    ref_time = float(np.median(ref_times))
    ours_time = float(np.median(ours_times))
    ratio = ours_time / ref_time
    print(
        f"rows {rows}: stability analyze {ours_time:.2f} s, pandas+allantools {ref_time:.2f} s "
        f"(medians of {len(ref_times)})"
    )
    print(f"ratio ours/reference = {ratio:.2f} (target <= 1)")
    print(f"peak memory: ours {ours_mem:.0f} MB, reference {ref_mem:.0f} MB (running maximum)")
    return {"ratio": ratio, "ours_s": ours_time, "reference_s": ref_time}


if __name__ == "__main__":
    main(float(sys.argv[1]) if len(sys.argv) > 1 else 1.0)
