"""Reports: safe output files, the results table as text, the summary JSON.

``files``    atomic writes, overwrite protection, file and settings hashes
``tables``   the results table as CSV, Markdown and terminal text (and CSV back)
``summary``  the machine-readable summary of one analysis

References
----------
.. [1] W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065 (2008),
   section 10 (reporting stability analyses).
"""

from .files import (
    atomic_output,
    atomic_write_bytes,
    atomic_write_text,
    ensure_folder,
    jsonable,
    refuse_overwrite,
    settings_hash,
    sha256_file,
)
from .summary import SUMMARY_FIELDS, build_summary, summary_json
from .tables import read_table_csv, table_csv, table_markdown, terminal_table

__all__ = [
    "atomic_output",
    "atomic_write_bytes",
    "atomic_write_text",
    "ensure_folder",
    "jsonable",
    "refuse_overwrite",
    "settings_hash",
    "sha256_file",
    "SUMMARY_FIELDS",
    "build_summary",
    "summary_json",
    "read_table_csv",
    "table_csv",
    "table_markdown",
    "terminal_table",
]
