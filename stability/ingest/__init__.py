"""Reading oscillator logs: sniffing, columns, time stamps, value kinds and units.

``read_log(path)`` returns a :class:`~stability.measurement.Measurement`;
``inspect_log(path)`` returns a :class:`LogReport` of what was detected and why.

References
----------
1. W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065 (2008).
2. RFC 4180, *Common Format and MIME Type for CSV Files*.
"""

from .readers import KINDS, inspect_log, read_log, validate_read_args
from .report import ColumnInfo, LogReport
from .values import STANDARD_NOMINALS

__all__ = [
    "read_log",
    "inspect_log",
    "validate_read_args",
    "LogReport",
    "ColumnInfo",
    "KINDS",
    "STANDARD_NOMINALS",
]
