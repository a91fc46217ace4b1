"""Derive E[MTOT]/E[MVAR] per noise type and averaging factor from the exact quadratic forms.

Run by hand (about ten minutes on one core): ``python tests/tools/derive_total_ratios.py``.
It prints the table held in stability/confidence_models.py. The ratio is N-independent
(every 3m-sample subsequence of noise with stationary second differences has the same
expected reflected sum), so a record of 3m + 32 samples is used.

HTOT on y is MTOT's form applied to y, and OHVAR on x is MVAR's form applied to y,
so HTOT/OHVAR at alpha equals MTOT/MVAR at alpha + 2; the table therefore runs over
alpha' = 4 .. -2 (4 and 3 serve HTOT's WPM and FPM).
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))
from quadform import _double_sum_form, _second_difference_filter, q_mtot, q_mvar  # noqa: E402

EVEN = (2, 4, 6, 8, 10, 12, 14, 16, 24, 32, 48, 64, 128, 256, 512, 1024)
ODD = (3, 5, 7, 9, 11, 13, 15, 17, 25, 33, 49, 65, 129, 257, 513, 1025)
ALPHAS = (4, 3, 2, 1, 0, -1, -2)


def means(q: np.ndarray) -> dict[int, float]:
    q2 = _double_sum_form(q)
    out = {}
    for a in ALPHAS:
        g = _second_difference_filter(a, q.shape[0])
        out[a] = float(np.einsum("ij,ij->", g, q2 @ g))  # tr(G' Q2 G)
    return out


def main() -> None:
    table = {a: {} for a in ALPHAS}
    for m in sorted(EVEN + ODD):
        n = 3 * m + 32
        num, den = means(q_mtot(n, m)), means(q_mvar(n, m))
        for a in ALPHAS:
            table[a][m] = num[a] / den[a]
        print(m, " ".join(f"{table[a][m]:.4f}" for a in ALPHAS), file=sys.stderr, flush=True)
    for name, grid in (("EVEN", EVEN), ("ODD", ODD)):
        print(f"_RATIO_{name} = {{")
        for a in ALPHAS:
            vals = ", ".join(f"{table[a][m]:.4f}" for m in grid)
            print(f"    {a}: ({vals}),")
        print("}")


if __name__ == "__main__":
    main()
