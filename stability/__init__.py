"""stability: frequency-stability analysis of oscillator logs.

Read a counter or time-interval log, prepare it, and compute the Allan family
of deviations with noise identification and confidence intervals::

    import stability
    m = stability.Measurement.from_frequency(y, tau0=1.0)
    table = stability.analyze(m, stats="oadev,mdev")
    print(table.to_frame())
"""

from importlib.metadata import PackageNotFoundError, version

from .analysis import analyze, estimate
from .deviations import STATISTICS, get_statistic, statistic_names
from .errors import AnalysisError, InputError, SpecError, StabilityError, StabilityWarning
from .measurement import Measurement, Provenance
from .table import COLUMNS, ConfidenceInterval, StabilityTable, StatisticResult
from .taus import tau_grid

try:
    __version__ = version("stability")
except PackageNotFoundError:  # running from a source tree that is not installed
    __version__ = "0.0.0+unknown"

__all__ = [
    "__version__",
    "analyze",
    "estimate",
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
