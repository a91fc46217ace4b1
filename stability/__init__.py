"""stability: frequency-stability analysis of oscillator logs.

Read a counter or time-interval log, prepare it, and compute the Allan family
of deviations with noise identification and confidence intervals::

    import stability
    m = stability.Measurement.from_frequency(y, tau0=1.0)
    table = stability.analyze(m, stats="oadev,mdev")
    print(table.to_frame())

The names below are loaded on first use, so that ``import stability`` (and the
command line's start-up) pays only for the parts a job touches.
"""

from __future__ import annotations

import importlib
from typing import TYPE_CHECKING, Any

from ._version import __version__
from .errors import AnalysisError, InputError, SpecError, StabilityError, StabilityWarning

# Loaded now: the subpackage ``stability.prepare`` shares its name with the function.
from .prepare import PreparationReport, prepare  # noqa: E402

#: Public name -> module that defines it (relative to this package).
_LAZY = {
    "simulate": ".simulate",
    "analyze": ".analysis",
    "estimate": ".analysis",
    "STATISTICS": ".deviations",
    "get_statistic": ".deviations",
    "statistic_names": ".deviations",
    "dynamic_stability": ".dynamic",
    "separate": ".hat",
    "LogReport": ".ingest",
    "inspect_log": ".ingest",
    "read_log": ".ingest",
    "Measurement": ".measurement",
    "Provenance": ".measurement",
    "identify": ".noise",
    "phase_noise_to_stability": ".phase_noise",
    "COLUMNS": ".table",
    "ConfidenceInterval": ".table",
    "StabilityTable": ".table",
    "StatisticResult": ".table",
    "tau_grid": ".taus",
    "AnalysisRun": ".workflow",
    "run_analysis": ".workflow",
    "write_analysis": ".workflow",
}

if TYPE_CHECKING:  # pragma: no cover - for type checkers and editors only
    from . import simulate
    from .analysis import analyze, estimate
    from .deviations import STATISTICS, get_statistic, statistic_names
    from .dynamic import dynamic_stability
    from .hat import separate
    from .ingest import LogReport, inspect_log, read_log
    from .measurement import Measurement, Provenance
    from .noise import identify
    from .phase_noise import phase_noise_to_stability
    from .table import COLUMNS, ConfidenceInterval, StabilityTable, StatisticResult
    from .taus import tau_grid
    from .workflow import AnalysisRun, run_analysis, write_analysis


def __getattr__(name: str) -> Any:
    where = _LAZY.get(name)
    if where is None:
        raise AttributeError(f"module 'stability' has no attribute {name!r}")
    module = importlib.import_module(where, __name__)
    value = module if name == "simulate" else getattr(module, name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(_LAZY))


__all__ = [
    "__version__",
    "read_log",
    "inspect_log",
    "LogReport",
    "prepare",
    "PreparationReport",
    "analyze",
    "estimate",
    "run_analysis",
    "write_analysis",
    "AnalysisRun",
    "identify",
    "separate",
    "phase_noise_to_stability",
    "dynamic_stability",
    "simulate",
    "Measurement",
    "Provenance",
    "StabilityTable",
    "StatisticResult",
    "ConfidenceInterval",
    "COLUMNS",
    "STATISTICS",
    "get_statistic",
    "statistic_names",
    "tau_grid",
    "StabilityError",
    "InputError",
    "AnalysisError",
    "SpecError",
    "StabilityWarning",
]
