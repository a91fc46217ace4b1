"""Benchmark: read_log against the usual pandas idioms on the same file.

Generates a time + frequency CSV (ISO 8601 stamps, 10 MHz readings with 13
significant digits, as a counter writes them) of ``10**7 * scale`` rows, then
times, each in a fresh child process so that its peak resident memory
(``ru_maxrss``) is its own:

* ``pandas.read_csv`` followed by ``pandas.to_datetime`` with the explicit
  format (the slow idiom);
* ``pandas.read_csv(..., parse_dates=["time"])`` (the fast idiom);
* ``pyarrow.csv.read_csv`` when pyarrow is installed (multi-threaded);
* ``stability.read_log`` with ``engine="auto"``, and with ``engine="pandas"``.

The readers run in rounds, one after another in each round, so that a busy
moment of a shared machine falls on all of them alike; each figure is the
median over the rounds, and read_log's ratios to the fast pandas idiom are
the medians of the ratios within each round (the goal: at most 1.0 in time
and memory). Run by hand::

    python tests/benchmarks/bench_ingest.py 1.0 5   # 10**7 rows, 5 rounds
    python tests/benchmarks/bench_ingest.py 0.1 5   # 10**6 rows
"""

from __future__ import annotations

import importlib.util
import json
import subprocess
import sys
import tempfile
from pathlib import Path

import numpy as np
import pandas as pd

__all__ = ["main", "write_log"]

_CHILD = r"""
import json, resource, sys, time
which, path = sys.argv[1], sys.argv[2]
import pandas as pd
import stability.ingest
if which == "pyarrow":
    import pyarrow.csv
t = time.perf_counter()
if which == "to_datetime":
    df = pd.read_csv(path)
    stamps = pd.to_datetime(df["time"], format="ISO8601", utc=True)
    n = len(stamps)
elif which == "parse_dates":
    df = pd.read_csv(path, parse_dates=["time"])
    n = len(df)
elif which == "pyarrow":
    n = pyarrow.csv.read_csv(path).num_rows
else:
    m = stability.ingest.read_log(path, engine=which.split(":")[1])
    n = m.n
elapsed = time.perf_counter() - t
# VmHWM: this process's own peak (ru_maxrss would carry the parent's across exec)
rss_kb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
try:
    with open("/proc/self/status") as fh:
        rss_kb = next(int(ln.split()[1]) for ln in fh if ln.startswith("VmHWM:"))
except (OSError, StopIteration):
    pass
print(json.dumps({"seconds": elapsed, "peak_mb": rss_kb / 1024.0, "n": n}))
"""


def write_log(path: Path, rows: int, block: int = 1_000_000) -> None:
    """Write an invented counter log: ISO stamps 1 s apart, 10 MHz readings."""
    rng = np.random.default_rng(1)
    start = pd.Timestamp("2024-01-01T00:00:00Z")
    with open(path, "w") as fh:
        fh.write("time,Frequency [Hz]\n")
        for lo in range(0, rows, block):  # loop over blocks of rows
            n = min(block, rows - lo)
            stamps = (start + pd.to_timedelta(np.arange(lo, lo + n), unit="s")).strftime(
                "%Y-%m-%dT%H:%M:%SZ"
            )
            freq = 1e7 + np.round(rng.normal(0.0, 2e-4, n), 5)
            text = pd.Series(stamps).str.cat(pd.Series(np.char.mod("%.5f", freq)), sep=",")
            fh.write("\n".join(text.tolist()))
            fh.write("\n")


def _run(which: str, path: Path) -> dict:
    proc = subprocess.run(
        [sys.executable, "-c", _CHILD, which, str(path)],
        capture_output=True,
        text=True,
        check=False,
    )
    if proc.returncode != 0:
        raise RuntimeError(f"{which} run failed: {proc.stderr.strip()[-500:]}")
    return json.loads(proc.stdout.strip().splitlines()[-1])


_RUNS = (
    ("to_datetime", "pandas read_csv + to_datetime"),
    ("parse_dates", "pandas read_csv(parse_dates)"),
    ("pyarrow", "pyarrow.csv.read_csv"),
    ("read_log:auto", "read_log (engine auto)"),
    ("read_log:pandas", "read_log (engine pandas)"),
)


def _has_pyarrow() -> bool:
    return importlib.util.find_spec("pyarrow") is not None


def main(scale: float = 1.0, repeats: int = 3) -> dict:
    """Generate ``10**7 * scale`` rows, time every reader in ``repeats`` rounds, print medians."""
    rows = max(10, int(round(1e7 * scale)))
    runs = [r for r in _RUNS if r[0] != "pyarrow" or _has_pyarrow()]
    rounds: list[dict] = []
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "counter.csv"
        write_log(path, rows)
        size_mb = path.stat().st_size / 1e6
        for _ in range(max(1, repeats)):  # loop over rounds: each reader once per round
            rounds.append({which: _run(which, path) for which, _ in runs})
    for got in rounds:
        for which in ("read_log:auto", "read_log:pandas"):
            if got[which]["n"] != rows + 1:  # frequency samples give one more phase sample
                raise RuntimeError(f"{which} returned {got[which]['n']} samples, expected {rows}")

    def median(which: str, key: str) -> float:
        return float(np.median([got[which][key] for got in rounds]))

    def ratio(which: str, key: str) -> float:
        return float(np.median([got[which][key] / got["parse_dates"][key] for got in rounds]))

    print(f"ingest: {rows} rows ({size_mb:.0f} MB), medians of {len(rounds)} round(s)")
    print(f"  {'reader':34s} {'seconds':>8s} {'peak MB':>8s} {'time x':>7s} {'memory x':>8s}")
    for which, label in runs:
        print(
            f"  {label:34s} {median(which, 'seconds'):8.2f} {median(which, 'peak_mb'):8.0f} "
            f"{ratio(which, 'seconds'):7.2f} {ratio(which, 'peak_mb'):8.2f}"
        )
    print("  (ratios to pandas read_csv(parse_dates) within each round, their median;")
    print("   goal for read_log: at most 1.0)")
    return {
        "rows": rows,
        "file_mb": size_mb,
        "rounds": len(rounds),
        **{f"{which}_seconds": median(which, "seconds") for which, _ in runs},
        **{f"{which}_peak_mb": median(which, "peak_mb") for which, _ in runs},
        "time_ratio": ratio("read_log:auto", "seconds"),
        "memory_ratio": ratio("read_log:auto", "peak_mb"),
    }


if __name__ == "__main__":
    main(
        float(sys.argv[1]) if len(sys.argv) > 1 else 1.0,
        int(sys.argv[2]) if len(sys.argv) > 2 else 3,
    )
