"""Shared test fixtures: published reference data and seeded power-law noise.

References
----------
1. W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065 (2008),
   sections 12.3 (NBS14 data) and 12.4 (the 1000-point data set).
2. N. J. Kasdin, T. Walter, "Discrete simulation of power law noise", Proc.
   IEEE Frequency Control Symposium (1992).
"""

from __future__ import annotations

import atexit
import os
import shutil
import sys
import tempfile
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


def _make_cli_importable() -> Path:
    """Make this checkout's ``cli/`` folder importable as ``stability_cli``, here and in
    the subprocesses the tests start.

    Installed, the packaging maps ``cli/`` to the import package ``stability_cli``;
    a source checkout has no such folder. A one-file package ``stability_cli`` in a
    temporary folder whose ``__path__`` is ``cli/`` stands in for it, put first on
    ``sys.path`` and on ``PYTHONPATH`` (with the checkout itself), so the tests run
    this checkout's command line and library, installed or not.
    """
    shim = Path(tempfile.mkdtemp(prefix="stability-cli-"))
    atexit.register(shutil.rmtree, shim, ignore_errors=True)
    package = shim / "stability_cli"
    package.mkdir()
    (package / "__init__.py").write_text(
        '"""This checkout\'s cli/ folder as the package stability_cli (tests only)."""\n'
        f"__path__ = [{str(REPO / 'cli')!r}]\n",
        encoding="utf-8",
    )
    sys.path.insert(0, str(shim))
    paths = [str(shim), str(REPO), os.environ.get("PYTHONPATH", "")]
    os.environ["PYTHONPATH"] = os.pathsep.join(p for p in paths if p)
    return shim


CLI_SHIM = _make_cli_importable()


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
    """The published data sets as the package ships them (stability/validation/data/)."""
    return REPO / "stability" / "validation" / "data"


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
    """The command line of this checkout in a new process (``python -m stability``)."""
    return [sys.executable, "-m", "stability"]
