"""stability: frequency-stability analysis of oscillator logs.

Read a counter or time-interval log, prepare it, and compute the Allan family
of deviations with noise identification and confidence intervals::

    import stability
    m = stability.Measurement.from_frequency(y, tau0=1.0)
    table = stability.analyze(m, stats="oadev,mdev")
    print(table.to_frame())

Results draw themselves with the command's own figures (``table.plot()``,
``measurement.plot(ax=ax)``) and show as tables in a notebook; see
:mod:`stability.display` for how, without the result types importing the figures.

The names below are loaded on first use, so that ``import stability`` (and the
command line's start-up) pays only for the parts a job touches.
"""

from __future__ import annotations

import importlib
from typing import TYPE_CHECKING, Any

from . import display as _display
from ._version import __version__
from .errors import AnalysisError, InputError, SpecError, StabilityError, StabilityWarning

# The results' plot methods and rich displays are drawn and formatted floors
# above the result types; those floors register them with stability.display
# when imported, and are imported on the first plot() or display, not here.
_display.add_provider(f"{__name__}.figures")
_display.add_provider(f"{__name__}.reports.html")
_display.add_provider(f"{__name__}.reports.timing_display")
_display.add_provider(f"{__name__}.history.display")
_display.add_provider(f"{__name__}.reports.cause_html")

#: Public name -> module that defines it (relative to this package), or
#: ``module:attribute`` where the public name differs from the defining one.
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
    "AnalysisRun": ".run",
    "run_analysis": ".run",
    "read_and_prepare": ".run",
    "write_analysis": ".workflow",
    "analyze_into": ".workflow",
    "batch": ".fleet",
    "PreparationReport": ".prepare",
    "prepare_measurement": ".prepare:prepare",
    "RunSettings": ".settings",
    "ReadSettings": ".settings",
    "PrepareSettings": ".settings",
    "AnalysisSettings": ".settings",
    "run_with_causes": ".causes",
    "CauseSettings": ".causes",
    "welch_spectrum": ".spectrum",
    "causes_of": ".causes",
    "validate": ".validation",
}

if TYPE_CHECKING:  # pragma: no cover - for type checkers and editors only
    from . import simulate
    from .analysis import analyze, estimate
    from .causes import CauseSettings, causes_of, run_with_causes
    from .deviations import STATISTICS, get_statistic, statistic_names
    from .dynamic import dynamic_stability
    from .fleet import batch
    from .hat import separate
    from .ingest import LogReport, inspect_log, read_log
    from .measurement import Measurement, Provenance
    from .noise import identify
    from .phase_noise import phase_noise_to_stability
    from .prepare import PreparationReport
    from .prepare import prepare as prepare_measurement
    from .run import AnalysisRun, read_and_prepare, run_analysis
    from .settings import AnalysisSettings, PrepareSettings, ReadSettings, RunSettings
    from .spectrum import welch_spectrum
    from .table import COLUMNS, ConfidenceInterval, StabilityTable, StatisticResult
    from .taus import tau_grid
    from .validation import validate
    from .workflow import analyze_into, write_analysis


#: Subpackages reached as attributes (``stability.prepare.three_point_drift``).
_SUBPACKAGES = (
    "prepare",
    "ingest",
    "deviations",
    "spec",
    "figures",
    "reports",
    "history",
    "aging",
    "validation",
)


def __getattr__(name: str) -> Any:
    if name in _SUBPACKAGES:
        module = importlib.import_module(f".{name}", __name__)
        globals()[name] = module
        return module
    where = _LAZY.get(name)
    if where is None:
        raise AttributeError(f"module 'stability' has no attribute {name!r}")
    where, _, attr = where.partition(":")
    module = importlib.import_module(where, __name__)
    value = module if name == "simulate" else getattr(module, attr or name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(_LAZY) | set(_SUBPACKAGES))


__all__ = [
    "__version__",
    "read_log",
    "inspect_log",
    "LogReport",
    "prepare_measurement",
    "PreparationReport",
    "analyze",
    "estimate",
    "run_analysis",
    "read_and_prepare",
    "write_analysis",
    "analyze_into",
    "batch",
    "RunSettings",
    "ReadSettings",
    "PrepareSettings",
    "AnalysisSettings",
    "AnalysisRun",
    "run_with_causes",
    "CauseSettings",
    "causes_of",
    "welch_spectrum",
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
    "validate",
    "StabilityError",
    "InputError",
    "AnalysisError",
    "SpecError",
    "StabilityWarning",
]
