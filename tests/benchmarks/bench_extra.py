"""Benchmark of MTOT, TTOT, HTOT and Theo1 against allantools 2024.6 (run by hand).

    /work/venv/bin/python tests/benchmarks/bench_extra.py [scale]

Prints, for each case, our time, the reference time measured in the same run,
their ratio (ours / reference) and our peak traced memory. Targets: Theo1 at
1e4 * scale points at most 1/50 of the reference time; MTOT, TTOT, HTOT no
slower than the reference. The reference evaluates the definitions with
Python loops over samples, so its comparison runs use a capped tau range
(stated in the output); our full octave grid on 1e6 * scale points is timed
on its own.
"""

from __future__ import annotations

import sys
import time
import tracemalloc
import warnings

import numpy as np

from stability.deviations import htot, mtot, theo1, ttot

__all__ = ["main"]


def _phase(n: int, seed: int) -> np.ndarray:
    """Phase of white FM plus a little random-walk FM (a typical oscillator)."""
    rng = np.random.default_rng(seed)
    y = rng.standard_normal(n - 1) + 0.01 * np.cumsum(rng.standard_normal(n - 1))
    return np.concatenate(([0.0], np.cumsum(y))) * 1e-9


def _octave(max_m: int, step: int = 1) -> list[int]:
    ms = [step * 2**k for k in range(64) if step * 2**k <= max_m]
    return ms


def _run_ours(func, x, ms) -> tuple[float, int]:
    tracemalloc.start()
    t0 = time.perf_counter()
    for m in ms:
        func(x, 1.0, m)
    elapsed = time.perf_counter() - t0
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    return elapsed, peak


def _run_ref(name, x, ms) -> float:
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        import allantools

        t0 = time.perf_counter()
        getattr(allantools, name)(x, rate=1.0, data_type="phase", taus=np.array(ms, float))
        return time.perf_counter() - t0


def _line(label: str, ours: float, ref: float | None, peak: int) -> None:
    ratio = "" if ref is None else f"  reference {ref:8.3f} s  ratio {ours / ref:.4f}"
    print(f"{label:<44s} ours {ours:8.3f} s{ratio}  peak {peak / 2**20:7.1f} MiB")


def main(scale: float = 1.0) -> None:
    """Run the benchmark at ``scale`` (1 = the sizes of the targets)."""
    # Theo1: same taus (even m, octave) for both.
    n = max(64, int(1e4 * scale))
    x = _phase(n, 1)
    ms = _octave(n - 1, step=2)
    ours, peak = _run_ours(theo1, x, ms)
    ref = _run_ref("theo1", x, ms)
    _line(f"theo1 N={n} m=2..{ms[-1]} (target <= 1/50)", ours, ref, peak)
    if scale >= 1:
        n5 = int(1e5 * scale)
        x5 = _phase(n5, 2)
        ms5 = _octave(n5 - 1, step=2)
        ours, peak = _run_ours(theo1, x5, ms5)
        _line(f"theo1 N={n5} m=2..{ms5[-1]} (time only)", ours, None, peak)

    # MTOT, TTOT, HTOT against the reference on a tau range it can finish.
    n = max(64, int(1e6 * scale))
    x = _phase(n, 3)
    n_cmp = max(64, min(n, int(2e4 * scale)))
    x_cmp = x[:n_cmp]
    cap = 16
    for name, func, ref_name, limit in (
        ("mtot", mtot, "mtotdev", n_cmp // 3),
        ("ttot", ttot, "ttotdev", n_cmp // 3),
        ("htot", htot, "htotdev", (n_cmp - 1) // 3),
    ):
        ms = _octave(min(cap, limit))
        ours, peak = _run_ours(func, x_cmp, ms)
        ref = _run_ref(ref_name, x_cmp, ms)
        _line(f"{name} N={n_cmp} m=1..{ms[-1]} (target ratio <= 1)", ours, ref, peak)
    for name, func, limit in (("mtot", mtot, n // 3), ("htot", htot, (n - 1) // 3)):
        ms = _octave(limit)
        ours, peak = _run_ours(func, x, ms)
        _line(f"{name} N={n} full octave m=1..{ms[-1]} (time only)", ours, None, peak)


if __name__ == "__main__":
    main(float(sys.argv[1]) if len(sys.argv) > 1 else 1.0)
