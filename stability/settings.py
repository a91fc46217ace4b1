"""Typed settings of a run: how to read the log, how to prepare it, what to analyse.

Settings travel through the library as these frozen dataclasses, not as loose
keyword dictionaries. The command line builds them in one place
(``stability_cli.options``); a script builds them directly or through
:meth:`RunSettings.from_options`, which takes the familiar keyword names::

    settings = RunSettings.from_options(nominal="10MHz", stats="oadev,mdev", drift="linear")
    run = stability.run_analysis("counter.csv", settings)

The values themselves are checked where they are used (the reader checks the
reading hints, preparation its thresholds, the analysis its statistics), so a
message names the setting and the value received in the words of that layer.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

from .errors import InputError

__all__ = ["ReadSettings", "PrepareSettings", "AnalysisSettings", "RunSettings"]


@dataclass(frozen=True)
class ReadSettings:
    """Reading hints of :func:`stability.read_log` (None: detect from the file)."""

    kind: str = "auto"
    column: int | str | None = None
    time_column: int | str | None = None
    tau0: float | str | None = None
    nominal: float | str | None = None
    wrap: float | str | None = None
    strict: bool = False
    stamp_tolerance: float | str | None = None
    timezone: str | None = None
    sheet: int | str | None = None
    engine: str = "auto"
    allow_unusual: bool = False
    max_expansion: float | str | None = None

    def as_kwargs(self) -> dict[str, Any]:
        """The hints as keyword arguments of :func:`stability.read_log`."""
        return dataclasses.asdict(self)

    def describe(self) -> dict[str, Any]:
        """The hints for a summary: given values as text, None where detected."""
        out: dict[str, Any] = {}
        for key, value in dataclasses.asdict(self).items():
            out[key] = value if isinstance(value, bool) or value is None else str(value)
        return out


@dataclass(frozen=True)
class PrepareSettings:
    """Preparation of :func:`stability.prepare.prepare`: outlier threshold, drift, averaging."""

    outliers: float | str | None = 5.0
    drift: str = "none"
    average: int = 1

    def as_kwargs(self) -> dict[str, Any]:
        return dataclasses.asdict(self)


@dataclass(frozen=True)
class AnalysisSettings:
    """What :func:`stability.analyze` computes: statistics, tau grid, confidence level, f_h,
    and whether the total and Theo families are bias-corrected."""

    stats: str | Sequence[str] = "oadev,mdev"
    taus: str | Sequence[float] = "octave"
    confidence: float = 0.683
    f_h: float | None = None
    bias_correction: bool = True


@dataclass(frozen=True)
class RunSettings:
    """Every setting of one run: reading, preparation and analysis."""

    read: ReadSettings = field(default_factory=ReadSettings)
    prepare: PrepareSettings = field(default_factory=PrepareSettings)
    analysis: AnalysisSettings = field(default_factory=AnalysisSettings)

    @classmethod
    def from_options(cls, **options: Any) -> RunSettings:
        """Settings from the keyword names of the reader, preparation and analysis.

        Unknown names are an :class:`InputError` that lists the known ones; a
        None value keeps the default.
        """
        parts: dict[str, dict[str, Any]] = {"read": {}, "prepare": {}, "analysis": {}}
        owners = {
            **{f.name: "read" for f in dataclasses.fields(ReadSettings)},
            **{f.name: "prepare" for f in dataclasses.fields(PrepareSettings)},
            **{f.name: "analysis" for f in dataclasses.fields(AnalysisSettings)},
        }
        unknown = sorted(set(options) - set(owners))
        if unknown:
            raise InputError(
                f"unknown setting(s) {', '.join(unknown)}",
                hint=f"known settings: {', '.join(owners)}",
            )
        for key, value in options.items():
            if value is not None or key in ("outliers", "f_h"):
                parts[owners[key]][key] = value
        return cls(
            read=ReadSettings(**parts["read"]),
            prepare=PrepareSettings(**parts["prepare"]),
            analysis=AnalysisSettings(**parts["analysis"]),
        )

    def replace(self, **options: Any) -> RunSettings:
        """A copy with some settings changed (keyword names as :meth:`from_options`)."""
        merged = {**self.flat(), **options}
        return RunSettings.from_options(**merged)

    def flat(self) -> dict[str, Any]:
        """All settings as one flat mapping of keyword name -> value."""
        return {
            **dataclasses.asdict(self.read),
            **dataclasses.asdict(self.prepare),
            **dataclasses.asdict(self.analysis),
        }
