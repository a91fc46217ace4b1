"""Benchmark of the core estimators against allantools 2024.6 on the same data and taus.

Run by hand (not collected by pytest)::

    env -u OPENBLAS_CORETYPE -u OPENBLAS_L2_SIZE python tests/benchmarks/bench_core.py [scale]

Cases (``scale`` multiplies every size):

* 10**7 phase points of white FM (cumulative sum of seeded white noise), octave
  taus: oadev, mdev, tdev, hdev, ohdev, totdev, ours vs allantools, best of 2;
  target ratio ours/allantools <= 0.5;
* MTIE over octave windows at 10**5 points vs allantools.mtie, target <= 1/50;
  and ours alone at 10**6 points;
* peak memory (tracemalloc) of our 10**7 case relative to the input array,
  target <= 5x.
"""

from __future__ import annotations

import os
import sys
import time
import tracemalloc
import warnings
from collections.abc import Callable

import allantools
import numpy as np

from stability import Measurement, analyze, estimate, get_statistic

__all__ = ["main"]

STATS = ("oadev", "mdev", "tdev", "hdev", "ohdev", "totdev")
TARGET_RATIO = 0.5
TARGET_MTIE_RATIO = 1.0 / 50.0
TARGET_MEMORY = 5.0


def _best_of(func: Callable[[], object], runs: int = 2) -> float:
    best = float("inf")
    for _ in range(runs):
        start = time.perf_counter()
        func()
        best = min(best, time.perf_counter() - start)
    return best


def _white_fm_phase(n: int, seed: int = 20240601) -> np.ndarray:
    rng = np.random.default_rng(seed)
    return np.cumsum(rng.standard_normal(n)) * 1e-9


def _environment_note() -> None:
    for name in ("OPENBLAS_CORETYPE", "OPENBLAS_L2_SIZE"):
        print(f"{name} = {os.environ.get(name, '(unset)')}")
    if any(name in os.environ for name in ("OPENBLAS_CORETYPE", "OPENBLAS_L2_SIZE")):
        print(
            "hint: these settings can slow numpy down; for representative figures run\n"
            "      env -u OPENBLAS_CORETYPE -u OPENBLAS_L2_SIZE \\\n"
            "          python tests/benchmarks/bench_core.py"
        )


def _reference(name: str, x: np.ndarray, tau0: float, taus: np.ndarray) -> None:
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        getattr(allantools, name)(x, rate=1.0 / tau0, data_type="phase", taus=taus)


def bench_deviations(n: int, tau0: float = 1.0) -> dict[str, float]:
    """Time each statistic, ours vs allantools, on n white-FM phase points."""
    x = _white_fm_phase(n)
    meas = Measurement.from_phase(x, tau0)
    ratios = {}
    print(f"\n{n} phase points, octave taus (best of 2)")
    header = f"{'statistic':<10} {'ours s':>10} {'allantools s':>13} {'ratio':>8}"
    print(f"{header}  target <= {TARGET_RATIO}")
    for name in STATS:
        stat = get_statistic(name)
        ours_result = estimate(meas, stat, "octave")
        taus = ours_result.tau
        ours = _best_of(lambda stat=stat: estimate(meas, stat, "octave"))
        ref = _best_of(lambda name=name, taus=taus: _reference(name, x, tau0, taus))
        ratios[name] = ours / ref
        flag = "" if ratios[name] <= TARGET_RATIO else "  MISSED"
        print(f"{name:<10} {ours:>10.3f} {ref:>13.3f} {ratios[name]:>8.3f}{flag}")
    return ratios


def bench_mtie(n: int, n_alone: int, tau0: float = 1.0) -> float:
    """MTIE over octave windows: ours vs allantools at n points; ours alone at n_alone."""
    x = _white_fm_phase(n, seed=7)
    meas = Measurement.from_phase(x, tau0)
    stat = get_statistic("mtie")
    taus = estimate(meas, stat, "octave").tau
    ours = _best_of(lambda: estimate(meas, stat, "octave"))
    start = time.perf_counter()
    _reference("mtie", x, tau0, taus)
    ref = time.perf_counter() - start
    if ref < 5.0:  # a second run only where it is cheap
        ref = min(ref, _best_of(lambda: _reference("mtie", x, tau0, taus), runs=1))
    ratio = ours / ref
    flag = "" if ratio <= TARGET_MTIE_RATIO else "  MISSED"
    print(f"\nMTIE, octave windows, {n} points")
    print(
        f"ours {ours:.4f} s, allantools {ref:.3f} s, ratio {ratio:.5f}{flag}"
        f"  target <= {TARGET_MTIE_RATIO:.3f}"
    )
    big = Measurement.from_phase(_white_fm_phase(n_alone, seed=8), tau0)
    alone = _best_of(lambda: estimate(big, stat, "octave"))
    print(f"MTIE, octave windows, {n_alone} points, ours alone: {alone:.3f} s")
    return ratio


def bench_memory(n: int, tau0: float = 1.0) -> float:
    """Peak traced memory of our six statistics on n points, relative to the input array."""
    x = _white_fm_phase(n)
    meas = Measurement.from_phase(x, tau0)
    tracemalloc.start()
    try:
        analyze(meas, stats=list(STATS), taus="octave", qualify=False)
        _, peak = tracemalloc.get_traced_memory()
    finally:
        tracemalloc.stop()
    ratio = peak / x.nbytes
    flag = "" if ratio <= TARGET_MEMORY else "  MISSED"
    print(
        f"\npeak memory of analyze({', '.join(STATS)}) on {n} points: "
        f"{peak / 2**20:.1f} MiB = {ratio:.2f} x input ({x.nbytes / 2**20:.1f} MiB){flag}"
        f"  target <= {TARGET_MEMORY:g}"
    )
    return ratio


def main(scale: float = 1.0) -> dict[str, float]:
    """Run every case at ``scale`` times the nominal sizes; return the ratios."""
    _environment_note()
    n_dev = max(64, int(1e7 * scale))
    n_mtie = max(64, int(1e5 * scale))
    n_mtie_alone = max(64, int(1e6 * scale))
    ratios = {f"{k}_time": v for k, v in bench_deviations(n_dev).items()}
    ratios["mtie_time"] = bench_mtie(n_mtie, n_mtie_alone)
    ratios["memory"] = bench_memory(n_dev)
    return ratios


if __name__ == "__main__":
    main(float(sys.argv[1]) if len(sys.argv) > 1 else 1.0)
