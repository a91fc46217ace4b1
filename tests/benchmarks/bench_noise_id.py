"""How well the noise type is identified, by type and number of averages.

Run by hand (not collected by pytest)::

    python tests/benchmarks/bench_noise_id.py [scale]

For each simulated noise (stability.simulate, Kasdin & Walter 1992), 50 * scale
seeds (at least one) of 16384 frequency samples at tau0 = 1 s are analysed with
``analyze(stats="oadev")`` on the octave grid, and the row at N/m = 8, 32, 128 and
1024 averages (m = 2048, 512, 128, 16) is compared with the truth: the type whose
term holds most of the Allan variance at that tau (the closed forms of NIST SP 1065).
Two columns per N/m: the label ``analyze`` reports (the calls weighed across tau,
:mod:`stability.noise_evidence`) and the per-tau call alone
(:func:`stability.noise.identify`: lag-1 autocorrelation from 30 points, B1 and R(n)
below). The mixtures (invented levels):

* WPM + WFM: white PM eight times white FM in AVAR at tau0, so white FM holds 2/3 of
  AVAR at m = 16 and more beyond (the truth is WFM at every m of the table);
* WFM + RWFM: the two equal at tau = 256 s (WFM at m = 16 and 128, RWFM at 512, 2048).

Prints a Markdown table (the one in README.md, "How well the noise type is
identified") and returns the accuracies.
"""

from __future__ import annotations

import math
import sys
import warnings

import numpy as np

from stability import Measurement, StabilityWarning, analyze
from stability.noise import identify
from stability.powerlaw import avar_kernel
from stability.simulate import simulate
from stability.table import NOISE_LABELS

__all__ = ["main", "CASES", "AVERAGES"]

N = 16384
F_H = 0.5  # 1 / (2 tau0)
AVERAGES = (8, 32, 128, 1024)

_H2_MIX = 8.0 * (1.0 / 2.0) / (3.0 * F_H / (4.0 * math.pi**2))  # WPM = 8 WFM at tau0
_H_RW_MIX = 3.0 / (4.0 * math.pi**2 * 256.0**2)  # WFM = RWFM at 256 s (h0 = 1)

#: name -> levels {alpha: h_alpha}
CASES: dict[str, dict[int, float]] = {
    "WPM": {2: 1.0},
    "FPM": {1: 1.0},
    "WFM": {0: 1.0},
    "FFM": {-1: 1.0},
    "RWFM": {-2: 1.0},
    "WPM + WFM": {2: _H2_MIX, 0: 1.0},
    "WFM + RWFM": {0: 1.0, -2: _H_RW_MIX},
}


def truth(levels: dict[int, float], tau: float) -> int:
    """The alpha whose term holds most of the Allan variance at tau (SP 1065 closed forms)."""
    parts = {a: h * float(avar_kernel(a, tau, F_H)) for a, h in levels.items()}
    return max(parts, key=parts.get)


def _accuracy(levels: dict[int, float], seeds: int) -> dict[int, tuple[float, float]]:
    ms = [N // k for k in AVERAGES]
    hits = {m: [0, 0] for m in ms}
    for seed in range(seeds):
        y = simulate(N, 1.0, levels=levels, seed=seed)
        meas = Measurement.from_frequency(y, 1.0)
        result = analyze(meas, stats="oadev")["oadev"]
        calls = identify(meas, "oadev", result.m)
        for m in ms:
            k = int(np.flatnonzero(result.m == m)[0])
            expected = truth(levels, float(m))
            hits[m][0] += result.alpha[k] == expected
            hits[m][1] += calls.alpha[k] == expected
    return {N // m: (h[0] / seeds, h[1] / seeds) for m, h in hits.items()}


def main(scale: float = 1.0) -> dict[str, dict[int, tuple[float, float]]]:
    seeds = max(1, int(round(50 * scale)))
    out: dict[str, dict[int, tuple[float, float]]] = {}
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", StabilityWarning)
        for name, levels in CASES.items():
            out[name] = _accuracy(levels, seeds)
    head = " | ".join(f"N/m = {k} (m = {N // k})" for k in AVERAGES)
    print(f"{seeds} seeds of {N} samples; reported label / per-tau call alone, % correct")
    print()
    print(f"| noise | truth at m = {', '.join(str(N // k) for k in AVERAGES)} | {head} |")
    print("|" + " --- |" * (2 + len(AVERAGES)))
    for name, row in out.items():
        levels = CASES[name]
        types = ", ".join(NOISE_LABELS[truth(levels, float(N // k))] for k in AVERAGES)
        cells = " | ".join(f"{100 * row[k][0]:.0f} / {100 * row[k][1]:.0f}" for k in AVERAGES)
        print(f"| {name} | {types} | {cells} |")
    return out


if __name__ == "__main__":
    main(float(sys.argv[1]) if len(sys.argv) > 1 else 1.0)
