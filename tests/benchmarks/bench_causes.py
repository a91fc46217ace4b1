"""Benchmark of the causes study: what the spectrum, the search for periodic components
and a regression on temperature add to an analysis.

Run by hand (not collected by pytest)::

    env -u OPENBLAS_CORETYPE -u OPENBLAS_L2_SIZE python tests/benchmarks/bench_causes.py [scale]

10**7 * scale frequency readings (seeded white plus flicker FM and an invented room
temperature, 1 s), statistics oadev, mdev, octave taus: ``run_analysis`` against
``run_with_causes`` with the default study (spectrum and periodic components, which
``stability analyze`` always runs) and with ``--regress temperature``, best of 2
each. Target: the default study takes at most 1.2 x the analysis alone. No reference
implementation offers these studies, so none is timed beside them.
"""

from __future__ import annotations

import sys
import time
import warnings

import numpy as np

from stability import Measurement, StabilityWarning
from stability.causes import CauseSettings, run_with_causes
from stability.measurement import Auxiliary
from stability.run import run_analysis
from stability.simulate import simulate

__all__ = ["main"]


def _best(func, runs: int = 2) -> float:
    best = float("inf")
    for _ in range(runs):
        start = time.perf_counter()
        func()
        best = min(best, time.perf_counter() - start)
    return best


def main(scale: float = 1.0) -> dict[str, float]:
    n = max(2000, int(10**7 * scale))
    y = simulate(n, 1.0, levels={0: 2e-24, -1: 3e-26}, seed=20261202)
    t = np.arange(n, dtype=float)
    room = 21.5 + 0.3 * np.sin(2 * np.pi * t / 1210.0)
    aux = {"temperature": Auxiliary(values=room, unit="degC", column="temperature_C")}

    def fresh() -> Measurement:
        return Measurement.from_frequency(y - 6e-12 * room, 1.0, auxiliary=aux)

    with warnings.catch_warnings():
        warnings.simplefilter("ignore", StabilityWarning)
        plain = _best(lambda: run_analysis(fresh(), stats="oadev,mdev"))
        study = _best(lambda: run_with_causes(fresh(), None, CauseSettings(), stats="oadev,mdev"))
        regress = _best(
            lambda: run_with_causes(
                fresh(), None, CauseSettings(regress="temperature"), stats="oadev,mdev"
            )
        )
    print(f"{n} frequency readings, octave taus, oadev,mdev")
    print(f"analysis {plain:.3f} s, with the spectrum study {study:.3f} s, with a regression "
          f"{regress:.3f} s")  # fmt: skip
    print(f"ratio study/analysis = {study / plain:.3f} (target <= 1.2)")
    print(f"ratio regression/analysis = {regress / plain:.3f}")
    return {"study_ratio": study / plain, "regress_ratio": regress / plain}


if __name__ == "__main__":
    main(float(sys.argv[1]) if len(sys.argv) > 1 else 1.0)
