"""stability: frequency-stability analysis of oscillator logs.

Read a counter or time-interval log, prepare it, and compute the Allan family
of deviations with noise identification and confidence intervals::

    import stability
    m = stability.Measurement.from_frequency(y, tau0=1.0)
    table = stability.analyze(m, stats="oadev,mdev")
    print(table.to_frame())
"""

from importlib.metadata import PackageNotFoundError, version

from . import simulate
from .analysis import analyze, estimate
from .deviations import STATISTICS, get_statistic, statistic_names
from .dynamic import dynamic_stability
from .errors import AnalysisError, InputError, SpecError, StabilityError, StabilityWarning
from .hat import separate
from .ingest import LogReport, inspect_log, read_log
from .measurement import Measurement, Provenance
from .noise import identify
from .phase_noise import phase_noise_to_stability
from .prepare import PreparationReport, prepare
from .table import COLUMNS, ConfidenceInterval, StabilityTable, StatisticResult
from .taus import tau_grid
from .workflow import AnalysisRun, run_analysis, write_analysis

try:
    __version__ = version("stability")
except PackageNotFoundError:  # running from a source tree that is not installed
    __version__ = "0.0.0+unknown"

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
