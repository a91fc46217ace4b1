"""Benchmark of ``stability batch``: logs per minute with one and two local Dask workers.

Run by hand (not collected by pytest)::

    env -u OPENBLAS_CORETYPE -u OPENBLAS_L2_SIZE python tests/benchmarks/bench_fleet.py [scale]

64 * scale one-day logs of 86 400 * scale readings (1 s, ISO time stamps and
fractional frequency, seeded white plus flicker FM at invented levels, each
log its own seed) are analysed by :func:`stability.fleet.batch` as the command
does it (the default statistics oadev and mdev on the decade grid, both
figures per device, the fleet's table, figures and page), into a fresh output
folder each time, with a local cluster of 1 and then 2 worker processes.

Printed:

* throughput in logs per minute, timed from the moment the cluster is up to the
  fleet's files being written (cluster start-up printed apart);
* the ratio of the 2-worker to the 1-worker throughput (goal: at least 1.7 on
  2 cores, the cores being free);
* each worker's peak resident memory (ru_maxrss of the worker process);
* the cost of one log (worker seconds per log, median), the figure the README's
  estimate for a large fleet is made from.

There is no reference program for a fleet: allantools has no batch driver. The
one-worker run is the reference the two-worker run is compared with.
"""

from __future__ import annotations

import os
import statistics
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

__all__ = ["main"]


def write_log(path: Path, rows: int, seed: int) -> None:
    """A one-day counter log (invented): white FM about 1e-11 at 1 s and a flicker floor."""
    rng = np.random.default_rng(seed)
    level = 1e-11 * rng.uniform(0.8, 1.3)
    white = rng.standard_normal(rows) * level
    flicker = np.fft.irfft(
        np.fft.rfft(rng.standard_normal(rows)) / np.sqrt(np.arange(rows // 2 + 1) + 1.0), rows
    )
    y = white + flicker * 1e-13 / max(float(np.std(flicker)), 1e-300)
    stamps = np.datetime64("2026-03-01T00:00:00", "s") + np.arange(rows).astype("timedelta64[s]")
    text = np.char.add(
        np.char.add(np.datetime_as_string(stamps, unit="s"), "Z,"),
        np.char.mod("%.6e", y),
    )
    path.write_text("time,fractional_frequency\n" + "\n".join(text.tolist()) + "\n")


def _run(logs: list[Path], out: Path, workers: int) -> dict[str, float]:
    from stability.fleet import batch, jobs_from_patterns
    from stability.settings import RunSettings

    jobs = jobs_from_patterns(logs, RunSettings.from_options(taus="decade"))
    marks: dict[str, float] = {}
    results: list[dict] = []
    begin = time.perf_counter()

    def started(_: str | None) -> None:
        marks["up"] = time.perf_counter()

    frame = batch(
        jobs,
        out,
        workers=workers,
        on_start=started,
        on_result=lambda done, total, result: results.append(dict(result)),
    ).table
    end = time.perf_counter()
    failed = int((frame["status"] != "ok").sum())
    if failed:
        raise RuntimeError(f"{failed} logs failed: {frame['error'].tolist()}")
    peaks: dict[str, float] = {}
    for result in results:
        key = result.get("worker", "?")
        peaks[key] = max(peaks.get(key, 0.0), float(result.get("worker_peak_mb", 0.0)))
    working = end - marks["up"]
    return {
        "startup_s": marks["up"] - begin,
        "working_s": working,
        "logs_per_min": 60.0 * len(logs) / working,
        "per_log_s": statistics.median(float(r["seconds"]) for r in results),
        "peak_mb": max(peaks.values()) if peaks else float("nan"),
        "workers_seen": len(peaks),
    }


def main(scale: float = 1.0) -> dict[str, float]:
    count = max(2, int(round(64 * scale)))
    rows = max(600, int(round(86_400 * scale)))
    for name in ("OPENBLAS_CORETYPE", "OPENBLAS_L2_SIZE"):
        print(f"{name} = {os.environ.get(name, '(unset)')}")
    load = os.getloadavg()[0] if hasattr(os, "getloadavg") else float("nan")
    print(f"{count} logs of {rows} readings; {os.cpu_count()} cores, load average {load:.1f}")
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        logs = []
        for k in range(count):
            path = folder / f"ocxo-{k:04d}.csv"
            write_log(path, rows, seed=1000 + k)
            logs.append(path)
        measured = {}
        for workers in (1, 2):
            measured[workers] = took = _run(logs, folder / f"out-{workers}", workers)
            print(
                f"{workers} worker(s): {took['logs_per_min']:.1f} logs/min "
                f"({took['working_s']:.1f} s for {count} logs, cluster start-up "
                f"{took['startup_s']:.1f} s), median {took['per_log_s']:.2f} s per log on a "
                f"worker, peak memory per worker {took['peak_mb']:.0f} MB "
                f"({took['workers_seen']} worker(s) seen)"
            )
    ratio = measured[2]["logs_per_min"] / measured[1]["logs_per_min"]
    print(f"throughput ratio 2 workers / 1 worker: {ratio:.2f} (goal: >= 1.7 on 2 free cores)")
    load = os.getloadavg()[0] if hasattr(os, "getloadavg") else float("nan")
    print(f"load average at the end: {load:.1f}")
    return {
        "ratio": ratio,
        "logs_per_min_1": measured[1]["logs_per_min"],
        "logs_per_min_2": measured[2]["logs_per_min"],
        "per_log_s": measured[1]["per_log_s"],
        "peak_mb": max(measured[1]["peak_mb"], measured[2]["peak_mb"]),
    }


if __name__ == "__main__":
    main(float(sys.argv[1]) if len(sys.argv) > 1 else 1.0)
