"""The package as a user gets it: a non-editable install into a fresh environment.

The install is built from a copy of the packaging inputs (pyproject.toml,
README.md, stability/, cli/, datasets/demo/), so the checkout gets no build
folders. The fresh environment is made with ``--system-site-packages`` and sees
the running environment's packages (numpy, scipy, pandas, matplotlib, typer,
and pip, setuptools and wheel for the build) through a ``.pth`` line naming
the running interpreter's site-packages, which covers a running interpreter
that is itself a virtual environment. Nothing is downloaded (``--no-index
--no-deps --no-build-isolation``). Then ``stability demo`` runs from an empty
folder, with the demo data installed as package data, and ``python -m
stability --help`` runs the same entry point.
"""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
import sysconfig
import tomllib
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parents[2]
#: What a build reads from the repository.
PACKAGING_INPUTS = ("pyproject.toml", "README.md", "stability", "cli", "datasets/demo")


def _bin(venv: Path, name: str) -> Path:
    return venv / ("Scripts" if os.name == "nt" else "bin") / name


def _run(argv: list[str], cwd: Path, env: dict[str, str]) -> subprocess.CompletedProcess:
    done = subprocess.run(
        argv, cwd=cwd, env=env, capture_output=True, text=True, timeout=240, check=False
    )
    assert done.returncode == 0, f"{argv}\n{done.stdout}\n{done.stderr}"
    return done


def _copy_sources(target: Path) -> Path:
    ignore = shutil.ignore_patterns("__pycache__", "*.pyc", "*.egg-info", "build")
    for name in PACKAGING_INPUTS:
        source = REPO / name
        if source.is_dir():
            shutil.copytree(source, target / name, ignore=ignore)
        else:
            (target / name).parent.mkdir(parents=True, exist_ok=True)
            shutil.copy2(source, target / name)
    return target


def test_every_package_is_listed_for_the_build():
    # pyproject lists the packages by hand (the cli/ folder installs under another
    # name); a new subpackage of stability/ must be added there.
    config = tomllib.loads((REPO / "pyproject.toml").read_text(encoding="utf-8"))
    listed = set(config["tool"]["setuptools"]["packages"])
    found = {
        ".".join(p.parent.relative_to(REPO).parts)
        for p in (REPO / "stability").rglob("__init__.py")
        if "__pycache__" not in p.parts
    }
    assert found | {"stability_cli", "stability_cli.demo_data"} == listed
    mapping = config["tool"]["setuptools"]["package-dir"]
    assert mapping == {"stability_cli": "cli", "stability_cli.demo_data": "datasets/demo"}
    scripts = config["project"]["scripts"]
    assert scripts == {"stability": "stability_cli.entry:main"}


@pytest.mark.install
def test_installed_package_runs_the_demo_anywhere(tmp_path):
    sources = _copy_sources(tmp_path / "src")
    venv = tmp_path / "venv"
    env = {k: v for k, v in os.environ.items() if k not in ("PYTHONPATH", "PYTHONHOME")}
    env["PIP_DISABLE_PIP_VERSION_CHECK"] = "1"
    env["MPLBACKEND"] = "Agg"
    _run(
        [sys.executable, "-m", "venv", "--system-site-packages", "--without-pip", str(venv)],
        tmp_path,
        env,
    )
    python = _bin(venv, "python")
    site = _run(
        [str(python), "-c", "import sysconfig; print(sysconfig.get_paths()['purelib'])"],
        tmp_path,
        env,
    ).stdout.strip()
    outer = dict.fromkeys(sysconfig.get_paths()[key] for key in ("purelib", "platlib"))
    Path(site, "_outer_environment.pth").write_text("\n".join(outer) + "\n", encoding="utf-8")
    _run(
        [str(python), "-m", "pip", "install", "--quiet", "--no-index", "--no-deps"]
        + ["--no-build-isolation", "--ignore-installed", str(sources)],
        tmp_path,
        env,
    )
    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    where = _run(
        [
            str(python),
            "-c",
            "import stability, stability_cli; print(stability.__file__); "
            "print(stability_cli.__file__)",
        ],
        elsewhere,
        env,
    ).stdout.split()
    assert all(Path(p).is_relative_to(venv) for p in where), where  # the installed copy

    demo = _run([str(_bin(venv, "stability")), "demo", "--out", "demo-out"], elsewhere, env)
    data = Path(site) / "stability_cli" / "demo_data"
    assert f"demo data: {data}" in demo.stdout
    out = elsewhere / "demo-out"
    for part in ("counter", "pps"):
        for name in ("table.csv", "table.md", "summary.json", "sigma_tau.png", "series.png"):
            assert (out / part / name).is_file(), (part, name)
    assert (out / "record" / "record.pdf").is_file()
    assert "overall verdict:" in demo.stdout

    # the validation's package data (published data sets, invented logs) are installed
    shipped = REPO / "stability" / "validation" / "data"
    installed = Path(site) / "stability" / "validation" / "data"
    for path in shipped.rglob("*"):
        if path.is_file() and "__pycache__" not in path.parts:
            assert (installed / path.relative_to(shipped)).is_file(), path

    helped = _run([str(python), "-m", "stability", "--help"], elsewhere, env)
    assert "Usage: python -m stability" in helped.stdout and "demo" in helped.stdout
    # the bundled time-error masks are package data of the installed copy
    masks = _run([str(_bin(venv, "stability")), "masks", "g8272-prtc-a"], elsewhere, env)
    assert "0.025 + 0.000275 tau us" in masks.stdout
