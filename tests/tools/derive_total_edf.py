"""Fit the EDF models of MTOT/TTOT and HTOT to the exact EDF of their quadratic forms.

Run by hand (about five minutes on one core): ``python tests/tools/derive_total_edf.py``
(``--data FILE`` keeps the exact values in a JSON file and reuses them). It prints the
coefficient table held in stability/confidence_models.py and the worst relative error
of each row over the fitted grid.

The exact EDF, tr(QC)^2 / tr((QC)^2), comes from the MTOT form (tests/quadform.py) and
the covariance of Kasdin-Walter noise, for N = 128 .. 2048 and m = 2 .. N/3. HTOT on
the frequency y = diff(x) is MTOT's form applied to y, and y of phase noise alpha is
Kasdin-Walter phase noise of alpha + 2; so HTOT's EDF for N phase samples at alpha is
the MTOT form's EDF on N - 1 samples at alpha' = alpha + 2, and one table over
alpha' = 4 .. -2 serves both (4 and 3 are HTOT's WPM and FPM).

Model, with r = N/m, x = m/N, c = N - 3m + 1 (the subsequences):

    edf = r m^g (b0 + b1/m + b2/m^2 + b3 [m odd]/m) (1 + c1 x + c2 x^2 + c3 x^3) c/(c + k m)

For alpha' <= 2 the EDF is close to a function of r alone and g = k = 0 is fixed; for
alpha' = 4 and 3 (the reflected ends let white and flicker PM into every subsequence,
so the EDF stays near 0.7 N for white PM at every m) g and k are fitted too. The fit
minimises the squared log ratio, from 60 seeded starting points; the model is then
checked to be finite and positive at every m <= N/3 for N from 64 to 100 000.
"""

from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path

import numpy as np
from scipy.optimize import least_squares

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))
from quadform import _double_sum_form, _noise_form, q_mtot  # noqa: E402

ALPHAS = (4, 3, 2, 1, 0, -1, -2)
SIZES = (128, 256, 512, 1024, 2048)
M_GRID = (2, 3, 4, 5, 6, 8, 11, 16, 23, 32, 45, 64, 91, 128, 181, 256, 362, 512, 682)


def exact_edfs(q: np.ndarray) -> dict[int, float]:
    """Exact EDF of v = x' Q x for each alpha' (Q blind to constant and linear phase)."""
    q2 = _double_sum_form(q)
    out = {}
    for a in ALPHAS:
        mm = _noise_form(q, a, q2)
        out[a] = float(np.trace(mm) ** 2 / np.sum(mm * mm))
    return out


def collect(path: Path | None) -> dict[str, dict[str, float]]:
    data: dict[str, dict[str, float]] = {}
    if path is not None and path.exists():
        data = json.loads(path.read_text())
    for n in SIZES:
        for m in sorted({m for m in M_GRID if 3 * m <= n} | {n // 3}):
            key = f"{n},{m}"
            if key not in data:
                data[key] = {str(a): e for a, e in exact_edfs(q_mtot(n, m)).items()}
                print(key, file=sys.stderr, flush=True)
                if path is not None:
                    path.write_text(json.dumps(data))
    return data


def model(p: np.ndarray, n: np.ndarray, m: np.ndarray) -> np.ndarray:
    """The fitted form; p = (b0, b1, b2, b3, c1, c2, c3, g, k)."""
    x = m / n
    count = n - 3 * m + 1
    odd = (m % 2 == 1).astype(float)
    b = p[0] + p[1] / m + p[2] / m**2 + p[3] * odd / m
    shape = 1 + p[4] * x + p[5] * x * x + p[6] * x**3
    return (n / m) * m ** p[7] * b * shape * count / (count + p[8] * m)


def fit(n: np.ndarray, m: np.ndarray, edf: np.ndarray, free_tail: bool) -> np.ndarray:
    best = None
    for seed in range(60):
        rng = np.random.default_rng(seed)
        p0 = rng.normal(0.0, 2.0, 9)
        p0[0] = abs(p0[0]) + 0.5
        p0[7], p0[8] = (rng.uniform(0, 1), rng.uniform(0, 0.3)) if free_tail else (0.0, 0.0)

        def resid(q: np.ndarray) -> np.ndarray:
            p = q if free_tail else np.concatenate((q, [0.0, 0.0]))
            return np.log(np.maximum(model(p, n, m), 1e-9)) - np.log(edf)

        start = p0 if free_tail else p0[:7]
        try:
            r = least_squares(resid, start, max_nfev=4000)
        except (ValueError, FloatingPointError):
            continue
        if best is None or r.cost < best.cost:
            best = r
    assert best is not None
    return best.x if free_tail else np.concatenate((best.x, [0.0, 0.0]))


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--data", type=Path, default=None)
    args = parser.parse_args()
    data = collect(args.data)
    keys = [tuple(map(int, k.split(","))) for k in data]
    n = np.array([k[0] for k in keys], float)
    m = np.array([k[1] for k in keys], float)
    print("_REFLECTED_EDF = {  # alpha': (b0, b1, b2, b3, c1, c2, c3, g, k)")
    for a in ALPHAS:
        edf = np.array([data[f"{k[0]},{k[1]}"][str(a)] for k in keys])
        p = fit(n, m, edf, free_tail=a > 2)
        err = model(p, n, m) / edf - 1.0
        worst = float(np.max(np.abs(err)))
        for size in (64, 128, 1000, 4096, 100_000):  # smooth and positive between grid points
            ms = np.arange(2, size // 3 + 1, dtype=float)
            dense = model(p, np.full(ms.size, float(size)), ms)
            assert np.all(np.isfinite(dense)) and np.all(dense > 0), (a, size)
        vals = ", ".join(f"{v:.4f}" for v in p)
        inner = float(np.max(np.abs(err[4 * m <= n])))
        print(f"    {a}: ({vals}),  # worst {100 * worst:.1f} %, m <= N/4 {100 * inner:.1f} %")
    print("}")


if __name__ == "__main__":
    main()
