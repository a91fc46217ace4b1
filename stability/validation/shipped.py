"""The validation's package data: published data sets and values, and the invented logs.

Everything the checks compare against ships inside the package
(``stability/validation/data/``), so an installed copy validates itself without
the test suite or the source tree:

``published.toml``
    The published test data sets (NBS14 and the 1000-point set of NIST SP 1065,
    section 12), their sources, and the values the sources print, as text so
    that the number of printed digits is kept.
``nbs14.txt``, ``sp1065_1000pt.txt``
    The data sets themselves (fractional frequency, one value a line).
``logs/``
    Invented logs in several dialects and ``logs.toml``, the values each must
    read to, written by ``make_logs.py`` beside them.

The test suite reads the same files (one place for each published value).
"""

from __future__ import annotations

import tomllib
from dataclasses import dataclass
from importlib import resources
from pathlib import Path
from typing import Any

import numpy as np

from ..errors import InputError

__all__ = [
    "data_folder",
    "PublishedSet",
    "published_sets",
    "published_set",
    "read_data_file",
    "generated_values",
    "KnownLog",
    "known_logs",
]


def data_folder() -> Path:
    """The folder of the validation data as installed."""
    folder = Path(str(resources.files(__package__) / "data"))
    if not (folder / "published.toml").is_file():
        raise InputError(
            "the validation data are missing from the installed package",
            path=str(folder),
            hint="reinstall the package",
        )
    return folder


def read_data_file(path: Path) -> np.ndarray:
    """The values of a data file: one number a line after a ``#`` comment header."""
    lines = path.read_text(encoding="utf-8").splitlines()
    values = [float(s) for s in lines if s.strip() and not s.lstrip().startswith("#")]
    return np.array(values, dtype=np.float64)


@dataclass(frozen=True)
class PublishedSet:
    """One published data set and the values its sources print.

    ``values`` maps statistic -> the printed values (text) at ``taus_s``.
    """

    id: str
    title: str
    path: Path
    count: int
    tau0_s: float
    definition: str
    sources: tuple[str, ...]
    taus_s: tuple[float, ...]
    values: dict[str, tuple[str, ...]]
    mean: str | None = None
    data: tuple[float, ...] | None = None
    generator: dict[str, int] | None = None

    @property
    def source(self) -> str:
        return "; ".join(self.sources)

    def frequency(self) -> np.ndarray:
        """The data set's fractional frequency as shipped."""
        return read_data_file(self.path)


def _published(entry: dict[str, Any], folder: Path) -> PublishedSet:
    return PublishedSet(
        id=entry["id"],
        title=entry["title"],
        path=folder / entry["file"],
        count=int(entry["count"]),
        tau0_s=float(entry["tau0_s"]),
        definition=entry["definition"],
        sources=tuple(entry["sources"]),
        taus_s=tuple(float(t) for t in entry["taus_s"]),
        values={k: tuple(v) for k, v in entry["values"].items()},
        mean=entry.get("mean"),
        data=tuple(float(v) for v in entry["data"]) if "data" in entry else None,
        generator=dict(entry["generator"]) if "generator" in entry else None,
    )


def published_sets() -> list[PublishedSet]:
    """Every published data set of ``published.toml``, in file order."""
    folder = data_folder()
    with open(folder / "published.toml", "rb") as handle:
        table = tomllib.load(handle)
    return [_published(entry, folder) for entry in table["set"]]


def published_set(identifier: str) -> PublishedSet:
    """One published data set by its identifier (``nbs14``, ``sp1065_1000pt``)."""
    for entry in published_sets():
        if entry.id == identifier:
            return entry
    known = ", ".join(s.id for s in published_sets())
    raise InputError(f"no published data set {identifier!r}", hint=f"choose from {known}")


def generated_values(entry: PublishedSet) -> np.ndarray | None:
    """The data set as its published definition generates it (exact integer arithmetic).

    The listed values for NBS14; the linear congruential recursion for the
    1000-point set. None when the entry states neither.
    """
    if entry.data is not None:
        return np.array(entry.data, dtype=np.float64)
    if entry.generator is None:
        return None
    n, a, modulus = (entry.generator[k] for k in ("seed", "multiplier", "modulus"))
    values = []
    for _ in range(entry.count):
        values.append(n / modulus)
        n = a * n % modulus
    return np.array(values, dtype=np.float64)


@dataclass(frozen=True)
class KnownLog:
    """An invented log and the values it must read to (``logs/logs.toml``)."""

    path: Path
    dialect: str
    options: dict[str, Any]
    kind: str
    nominal_hz: float | None
    tau0_s: float
    stamp_resolution_s: float
    phase_points: int
    gaps: int
    mean_fractional_frequency: float
    adev_tau0: float


def known_logs() -> list[KnownLog]:
    """Every invented log of the reading checks, in file order."""
    folder = data_folder() / "logs"
    with open(folder / "logs.toml", "rb") as handle:
        table = tomllib.load(handle)
    return [
        KnownLog(
            path=folder / entry["file"],
            dialect=entry["dialect"],
            options=dict(entry["options"]),
            kind=entry["kind"],
            nominal_hz=entry.get("nominal_hz"),
            tau0_s=float(entry["tau0_s"]),
            stamp_resolution_s=float(entry["stamp_resolution_s"]),
            phase_points=int(entry["phase_points"]),
            gaps=int(entry["gaps"]),
            mean_fractional_frequency=float(entry["mean_fractional_frequency"]),
            adev_tau0=float(entry["adev_tau0"]),
        )
        for entry in table["log"]
    ]
