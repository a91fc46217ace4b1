"""Benchmark: read_log against pandas.read_csv + pandas.to_datetime on the same file.

Generates a time + frequency CSV (ISO 8601 stamps, 10 MHz readings with 13
significant digits, as a counter writes them) of ``10**7 * scale`` rows, then
times, each in a fresh child process so that its peak resident memory
(``ru_maxrss``) is its own:

* the reference: ``pandas.read_csv`` followed by ``pandas.to_datetime`` with the
  explicit format;
* ``stability.read_log`` on the same file.

Prints both times, their ratio (target: at most 1.5) and both peak memories
(target for read_log: at most 2.5 GB). Run by hand::

    python tests/benchmarks/bench_ingest.py 1.0
"""

from __future__ import annotations

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
t = time.perf_counter()
if which == "pandas":
    df = pd.read_csv(path)
    stamps = pd.to_datetime(df["time"], format="ISO8601", utc=True)
    n = len(stamps)
else:
    m = stability.ingest.read_log(path)
    n = m.n
elapsed = time.perf_counter() - t
rss_kb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
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


def main(scale: float = 1.0) -> dict:
    """Generate ``10**7 * scale`` rows, time both readers, print and return the figures."""
    rows = max(10, int(round(1e7 * scale)))
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "counter.csv"
        write_log(path, rows)
        size_mb = path.stat().st_size / 1e6
        ref = _run("pandas", path)
        ours = _run("stability", path)
    if ours["n"] != rows + 1:  # frequency samples give one more phase sample
        raise RuntimeError(f"read_log returned {ours['n']} samples, expected {rows}")
    ratio = ours["seconds"] / ref["seconds"]
    result = {
        "rows": rows,
        "file_mb": size_mb,
        "pandas_seconds": ref["seconds"],
        "read_log_seconds": ours["seconds"],
        "ratio": ratio,
        "pandas_peak_mb": ref["peak_mb"],
        "read_log_peak_mb": ours["peak_mb"],
    }
    print(
        f"ingest: {rows} rows ({size_mb:.0f} MB): pandas read_csv+to_datetime "
        f"{ref['seconds']:.2f} s, read_log {ours['seconds']:.2f} s, ratio {ratio:.2f} "
        f"(target <= 1.5); peak memory pandas {ref['peak_mb']:.0f} MB, read_log "
        f"{ours['peak_mb']:.0f} MB (target <= 2500 MB)"
    )
    return result


if __name__ == "__main__":
    main(float(sys.argv[1]) if len(sys.argv) > 1 else 1.0)
