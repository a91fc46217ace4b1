"""Every benchmark script in tests/benchmarks runs at a tiny scale (so none of them rots).

Timing figures are printed by the scripts, never asserted here (DESIGN "Performance rules").
"""

from __future__ import annotations

import importlib.util
from pathlib import Path

import pytest

BENCH_DIR = Path(__file__).resolve().parent / "benchmarks"
SCRIPTS = sorted(BENCH_DIR.glob("bench_*.py"))


def _load(path: Path):
    spec = importlib.util.spec_from_file_location(f"_smoke_{path.stem}", path)
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def test_benchmarks_are_found():
    assert any(p.name == "bench_core.py" for p in SCRIPTS)


@pytest.mark.parametrize("path", SCRIPTS, ids=[p.stem for p in SCRIPTS])
def test_benchmark_runs_at_tiny_scale(path, capsys):
    module = _load(path)
    main = getattr(module, "main", None)
    # Every benchmark exposes main(scale) so that this smoke run can call it.
    assert callable(main), f"{path.name} has no main(scale)"
    main(scale=1e-4)
    printed = capsys.readouterr().out
    assert printed.strip(), f"{path.name} printed nothing"
