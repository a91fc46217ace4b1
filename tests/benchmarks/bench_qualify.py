"""Benchmark of the qualification layer: what noise identification, EDF, bias, intervals,
the power-law fit and the offset and drift add to the estimators alone.

Run by hand (not collected by pytest)::

    env -u OPENBLAS_CORETYPE -u OPENBLAS_L2_SIZE python tests/benchmarks/bench_qualify.py [scale]

10**7 * scale phase points (seeded white plus random-walk FM, invented), octave taus,
statistics oadev, mdev, hdev, tdev: ``analyze(qualify=False)`` against
``analyze(qualify=True)``, best of 3 each, every run on a fresh copy of the data
with cold caches. Target: the qualified run takes at most
1.2 x the estimators alone. allantools, the project's reference, has no
qualification, so its estimator time for the same statistics is printed for scale.
"""

from __future__ import annotations

import sys
import time
import warnings

import allantools
import numpy as np

from stability import Measurement, StabilityWarning, analyze
from stability.noise_methods import _expected_on_grid

__all__ = ["main"]

STATS = "oadev,mdev,hdev,tdev"


def _best(func, runs: int = 2) -> float:
    best = float("inf")
    for _ in range(runs):
        start = time.perf_counter()
        func()
        best = min(best, time.perf_counter() - start)
    return best


def main(scale: float = 1.0) -> dict[str, float]:
    n = max(1000, int(10**7 * scale))
    rng = np.random.default_rng(20261202)
    y = rng.standard_normal(n) + 1e-3 * np.cumsum(rng.standard_normal(n))
    x = np.concatenate(([0.0], np.cumsum(y))) * 1e-12

    def fresh() -> Measurement:
        # a new phase array and cold caches for every run: nothing is remembered between runs
        _expected_on_grid.cache_clear()
        return Measurement.from_phase(x.copy(), 1.0)

    with warnings.catch_warnings():
        warnings.simplefilter("ignore", StabilityWarning)
        bare = _best(lambda: analyze(fresh(), stats=STATS, qualify=False), runs=3)
        full = _best(lambda: analyze(fresh(), stats=STATS, qualify=True), runs=3)
    ref = _best(
        lambda: [
            f(x, rate=1.0, data_type="phase", taus="octave")
            for f in (allantools.oadev, allantools.mdev, allantools.hdev, allantools.tdev)
        ],
        runs=1,
    )
    ratio = full / bare
    print(f"{n} phase points, octave taus, {STATS}")
    print(f"estimators alone {bare:.3f} s, qualified {full:.3f} s")
    print(f"ratio qualified/estimators = {ratio:.3f} (target <= 1.2)")
    print(
        f"allantools, same statistics without qualification: {ref:.3f} s "
        f"(qualified ours / allantools = {full / ref:.3f})"
    )
    return {"ratio": ratio, "bare_s": bare, "qualified_s": full}


if __name__ == "__main__":
    main(float(sys.argv[1]) if len(sys.argv) > 1 else 1.0)
