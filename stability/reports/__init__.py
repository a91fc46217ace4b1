"""Reports: safe output files, the results table as text, the summary JSON.

``tables``   the results table as CSV, Markdown and terminal text (and CSV back)
``summary``  the machine-readable summary of one analysis

References
----------
.. [1] W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065 (2008),
   section 10 (reporting stability analyses).
"""

from ..summary import SUMMARY_FIELDS, build_summary, summary_json
from .tables import read_table_csv, table_csv, table_markdown, terminal_table

__all__ = [
    "SUMMARY_FIELDS",
    "build_summary",
    "summary_json",
    "read_table_csv",
    "table_csv",
    "table_markdown",
    "terminal_table",
]
