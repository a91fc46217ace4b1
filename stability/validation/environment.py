"""What the validation ran on: the tool, its installed files, the libraries, the machine.

The source hash identifies the installed code itself, not just its version
number: the SHA-256 of a list of every file of the installed ``stability`` and
``stability_cli`` packages (compiled caches left out), one line per file with its
path relative to the package folder and the SHA-256 of its bytes, sorted by path.
Two installations with the same hash run the same code and data; a local edit
after installation changes it.
"""

from __future__ import annotations

import hashlib
import importlib.util
import os
import platform
import sys
from importlib.metadata import PackageNotFoundError, version
from pathlib import Path
from typing import Any

from .._version import DISTRIBUTION, __version__
from ..files import sha256_file

__all__ = ["LIBRARIES", "package_folders", "source_hash", "environment"]

#: Libraries whose versions the report names (the computation rests on them).
LIBRARIES = ("numpy", "scipy", "pandas", "matplotlib", "typer", "rich")


def package_folders() -> dict[str, Path]:
    """The folders the ``stability`` and ``stability_cli`` packages are loaded from."""
    folders = {"stability": Path(__file__).resolve().parents[1]}
    loaded = sys.modules.get("stability_cli")
    paths = list(getattr(loaded, "__path__", []) or [])
    if not paths:
        spec = importlib.util.find_spec("stability_cli")
        paths = list(spec.submodule_search_locations or []) if spec is not None else []
    if paths:
        folders["stability_cli"] = Path(paths[0]).resolve()
    return folders


def source_hash(folders: dict[str, Path] | None = None) -> tuple[str, int]:
    """(SHA-256 of the list of installed files and their hashes, number of files)."""
    folders = package_folders() if folders is None else folders
    lines = []
    for name, folder in sorted(folders.items()):
        for path in sorted(folder.rglob("*")):
            if not path.is_file() or "__pycache__" in path.parts or path.suffix == ".pyc":
                continue
            relative = path.relative_to(folder).as_posix()
            lines.append(f"{name}/{relative}\t{sha256_file(path)}\n")
    digest = hashlib.sha256("".join(lines).encode("utf-8")).hexdigest()
    return digest, len(lines)


def _version_of(name: str) -> str:
    try:
        return version(name)
    except PackageNotFoundError:
        return "not installed"


def environment() -> dict[str, Any]:
    """The tool, its source hash, Python and library versions, and the platform."""
    folders = package_folders()
    digest, count = source_hash(folders)
    return {
        "tool": "stability",
        "distribution": DISTRIBUTION,
        "version": __version__,
        "source_sha256": digest,
        "source_files": count,
        "installed_at": {name: str(path) for name, path in folders.items()},
        "python": platform.python_version(),
        "python_implementation": platform.python_implementation(),
        "libraries": {name: _version_of(name) for name in LIBRARIES},
        "platform": platform.platform(),
        "machine": platform.machine(),
        "host": platform.node(),
        "processors": os.cpu_count(),
    }
