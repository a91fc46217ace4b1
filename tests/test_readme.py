"""The README's Python examples run as written.

Every fenced ``python`` block of README.md is executed in a fresh folder that
holds the files the examples name: ``counter-log.csv`` is the demo counter log
(an invented OCXO against a rubidium reference, datasets/demo/) under the name
the README uses. Blocks run in order in one namespace, as a reader pasting them
into one session would.
"""

from __future__ import annotations

import re
import shutil
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
BLOCK = re.compile(r"^```python\n(.*?)^```", re.S | re.M)


def _blocks() -> list[str]:
    return BLOCK.findall((ROOT / "README.md").read_text(encoding="utf-8"))


def test_readme_has_python_examples():
    assert _blocks(), "README.md should show the library in use"


def test_readme_python_examples_run(tmp_path, monkeypatch):
    shutil.copyfile(ROOT / "datasets/demo/ocxo-vs-rb-counter.csv.gz", tmp_path / "counter-log.csv")
    for name in ("spec-example.toml", "info-example.toml", "gnss-timing-receiver-pps.csv.gz"):
        shutil.copyfile(ROOT / "datasets/demo" / name, tmp_path / name)
    monkeypatch.chdir(tmp_path)
    namespace: dict = {"__name__": "readme"}
    for number, code in enumerate(_blocks(), 1):
        try:
            exec(compile(code, f"README.md python block {number}", "exec"), namespace)
        except Exception as exc:  # pragma: no cover - the failure message is the point
            pytest.fail(f"README python block {number} raised {type(exc).__name__}: {exc}")
