"""Shared test fixtures: published reference data and seeded power-law noise.

References
----------
1. W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065 (2008),
   sections 12.3 (NBS14 data) and 12.4 (the 1000-point data set).
2. N. J. Kasdin, T. Walter, "Discrete simulation of power law noise", Proc.
   IEEE Frequency Control Symposium (1992).
"""

from __future__ import annotations

import sys
from collections.abc import Callable
from pathlib import Path

import numpy as np
import pytest

__all__ = [
    "reference_dir",
    "nbs14_frequency",
    "sp1065_1000pt_frequency",
    "power_law_frequency",
]

REPO = Path(__file__).resolve().parent.parent


def _nbs14() -> np.ndarray:
    # NBS Monograph 140 Annex 8.E; NIST SP 1065 section 12.3; Riley table I.
    return np.array([892, 809, 823, 798, 671, 644, 883, 903, 677], dtype=np.float64)


def _sp1065_1000pt() -> np.ndarray:
    # NIST SP 1065 section 12.4; Riley table II: exact integer recursion, seed first.
    n = 1234567890
    values = []
    for _ in range(1000):
        values.append(n / 2147483647)
        n = 16807 * n % 2147483647
    return np.array(values, dtype=np.float64)


def _kasdin_walter(alpha: float, n: int, seed: int) -> np.ndarray:
    """Fractional frequency with S_y(f) ~ f**alpha (Kasdin & Walter 1992).

    White Gaussian noise filtered by h_0 = 1, h_k = h_{k-1} (beta/2 + k - 1)/k
    with beta = -alpha, both zero-padded to 2n and multiplied in the FFT domain.
    """
    beta = -float(alpha)
    k = np.arange(1, n)
    h = np.concatenate(([1.0], np.cumprod((beta / 2.0 + k - 1.0) / k)))
    w = np.random.default_rng(seed).standard_normal(n)
    y = np.fft.irfft(np.fft.rfft(w, 2 * n) * np.fft.rfft(h, 2 * n), 2 * n)[:n]
    return 1e-11 * y


@pytest.fixture(scope="session")
def reference_dir() -> Path:
    """datasets/reference/ of the repository."""
    return REPO / "datasets" / "reference"


@pytest.fixture(scope="session")
def nbs14_frequency() -> np.ndarray:
    """The NBS14 fractional-frequency data (tau0 = 1 s)."""
    return _nbs14()


@pytest.fixture(scope="session")
def sp1065_1000pt_frequency() -> np.ndarray:
    """The 1000-point fractional-frequency data of NIST SP 1065 (tau0 = 1 s)."""
    return _sp1065_1000pt()


@pytest.fixture(scope="session")
def power_law_frequency() -> Callable[[float, int, int], np.ndarray]:
    """``make(alpha, n, seed)``: seeded fractional frequency with S_y ~ f**alpha."""
    return _kasdin_walter


@pytest.fixture(scope="session")
def stability_command() -> list[str]:
    """The installed ``stability`` console script (beside the interpreter), as an argv prefix."""
    script = Path(sys.executable).parent / "stability"
    if script.is_file():
        return [str(script)]
    return [sys.executable, "-c", "from cli.main import app; app()"]
