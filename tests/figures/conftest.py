"""Fixtures of the figure tests: invented results tables to draw."""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pytest

import stability


def _white_fm(n: int, seed: int = 7) -> np.ndarray:
    """Invented test data: seeded white frequency noise, 1e-11 per sample."""
    return np.random.default_rng(seed).normal(0.0, 1e-11, n)


@pytest.fixture
def table():
    meas = stability.Measurement.from_frequency(_white_fm(4096), 1.0)
    return stability.analyze(meas, stats="oadev,mdev,tdev")


@pytest.fixture
def qualified(table):
    """Intervals and noise labels filled in BY HAND (invented test data, not computed).

    The values only exercise the drawing: a +-20 % interval on all rows but
    the last, and a noise label that changes from WFM to FFM.
    """
    results = {}
    for name, r in table.results.items():
        n = len(r)
        low, high = r.deviation * 0.8, r.deviation * 1.25
        low[-1] = high[-1] = np.nan
        noise = ["WFM"] * (n - 3) + ["FFM"] * 2 + [""]
        results[name] = replace(r, ci_low=low, ci_high=high, noise=tuple(noise))
    return replace(table, results=results)
