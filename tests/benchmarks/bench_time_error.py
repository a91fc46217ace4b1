"""Benchmark of dense-grid MTIE (and the whole time-error analysis) against allantools.

Run by hand (not collected by pytest)::

    env -u OPENBLAS_CORETYPE -u OPENBLAS_L2_SIZE python tests/benchmarks/bench_time_error.py [scale]

Cases (``scale`` multiplies every size):

* MTIE on the dense grid (20 log-spaced windows per decade, up to the whole
  record) at 10**6 and 10**7 phase points of white FM: time, cost per sample
  per window, and peak traced memory (tracemalloc) relative to the input
  array; target <= 2x the input, cost linear per window (the same ns per
  sample per window at both sizes);
* allantools.mtie on the same windows, one window at a time, until a time cap
  (:data:`CAP_S`, 60 s at scale 1); the ratio ours / allantools is taken over
  the windows allantools finished within the cap;
* the whole ``analyze_time_error`` (metrics, MTIE, TDEV, mask) at 10**6 points.
"""

from __future__ import annotations

import sys
import time
import tracemalloc
import warnings

import allantools
import numpy as np

from stability import Measurement
from stability.deviations.time_error import _BLOCK, mtie_windows
from stability.taus import tau_grid
from stability.timing import analyze_time_error

__all__ = ["main"]

CAP_S = 60.0
TARGET_MEMORY = 2.0
#: Block-sized buffers alive at once in a sweep: the two query buffers and
#: numpy's copy of an overlapping block in the in-place raise (one more for slack).
BLOCK_BUFFERS = 4


def _phase(n: int, seed: int) -> np.ndarray:
    return np.cumsum(np.random.default_rng(seed).standard_normal(n)) * 1e-9


def bench_dense(n: int) -> tuple[float, float]:
    """(ns per sample per window, peak memory / input) of dense MTIE on n points."""
    x = _phase(n, 11)
    ms = tau_grid("dense", n - 1)
    start = time.perf_counter()
    mtie_windows(x, ms)
    took = time.perf_counter() - start
    tracemalloc.start()
    try:
        mtie_windows(x, ms)
        _, peak = tracemalloc.get_traced_memory()
    finally:
        tracemalloc.stop()
    per = took / (n * ms.size) * 1e9
    memory = peak / x.nbytes
    # the two levels of the table, plus the cache-sized blocks (a fixed few hundred kB)
    blocks = BLOCK_BUFFERS * _BLOCK * 8
    flag = "" if peak <= TARGET_MEMORY * x.nbytes + blocks else "  MISSED"
    print(
        f"dense MTIE, {n} points, {ms.size} windows: {took:.3f} s, {per:.2f} ns per sample "
        f"per window, peak {memory:.3f} x input{flag}  (target <= {TARGET_MEMORY:g} x input "
        f"+ {blocks / 2**10:.0f} KiB of blocks)"
    )
    return per, memory


def bench_against_allantools(n: int, cap: float) -> float | None:
    """ours / allantools over the dense windows allantools finishes within ``cap`` seconds."""
    x = _phase(n, 12)
    ms = tau_grid("dense", n - 1)
    done: list[int] = []
    spent = 0.0
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        for m in ms[ms <= n // 2]:
            start = time.perf_counter()
            try:
                allantools.mtie(x, rate=1.0, data_type="phase", taus=[float(m)])
            except MemoryError:
                print(f"  allantools.mtie ran out of memory at m = {m}")
                break
            except UserWarning:  # allantools refuses windows near the record length
                break
            spent += time.perf_counter() - start
            done.append(int(m))
            if spent > cap:
                break
    if not done:
        print(f"allantools.mtie finished no window on {n} points within {cap:g} s")
        return None
    start = time.perf_counter()
    mtie_windows(x, done)
    ours = time.perf_counter() - start
    ratio = ours / spent
    print(
        f"MTIE on {n} points, the {len(done)} dense windows allantools finished within "
        f"{cap:g} s (up to m = {done[-1]} of {ms[-1]}): ours {ours:.4f} s, allantools "
        f"{spent:.2f} s, ratio {ratio:.5f}"
    )
    return ratio


def bench_analysis(n: int) -> float:
    x = _phase(n, 13) * 1e-2 + 20e-9
    meas = Measurement.from_phase(x, 1.0)
    start = time.perf_counter()
    analyze_time_error(meas, mask="g8272-prtc-a")
    took = time.perf_counter() - start
    print(f"analyze_time_error on {n} points (metrics, dense MTIE and TDEV, mask): {took:.2f} s")
    return took


def main(scale: float = 1.0) -> dict[str, float | None]:
    """Run every case at ``scale`` times the nominal sizes; return the figures."""
    out: dict[str, float | None] = {}
    for n in (10**6, 10**7):
        size = max(200, int(n * scale))
        out[f"ns_per_sample_window_{n}"], out[f"memory_{n}"] = bench_dense(size)
    cap = max(0.05, CAP_S * scale)
    for n in (10**5, 10**6):
        out[f"allantools_ratio_{n}"] = bench_against_allantools(max(200, int(n * scale)), cap)
    out["analysis_s"] = bench_analysis(max(500, int(10**6 * scale)))
    return out


if __name__ == "__main__":
    main(float(sys.argv[1]) if len(sys.argv) > 1 else 1.0)
