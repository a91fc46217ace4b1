"""Calibration history: every record of every device in one SQLite file, aging and due dates.

``location``  where the history file is (``--history``, ``STABILITY_HISTORY``, the default)
``schema``    the file's schema, its migrations, the read-only check of a file
``entry``     what the history keeps of a record.json, checked
``store``     :func:`open_history` and :class:`HistoryStore`: adding and reading records
``review``    a device reviewed: due date, aging fit, prediction, longest interval
``transfer``  import of record.json files, export to CSV and JSON, a stored record written out

The aging model itself is :mod:`stability.aging`; the figure is
:mod:`stability.figures.history`.
"""

from .entry import CheckRow, RecordEntry, entry_from_record
from .location import ENV_VAR, default_location, history_for_record, history_to_read
from .review import DEFAULT_INTERVAL, DeviceReview, due_date, interval_in_force, review_device
from .schema import APPLICATION_ID, SCHEMA_VERSION, HistoryFileError, inspect_file
from .store import DeviceSummary, HistoryStore, RecordRow, StoredRecord, open_history
from .transfer import EXPORT_NAMES, export_history, import_records, write_stored_record

__all__ = [
    "APPLICATION_ID",
    "SCHEMA_VERSION",
    "ENV_VAR",
    "DEFAULT_INTERVAL",
    "EXPORT_NAMES",
    "CheckRow",
    "RecordEntry",
    "DeviceSummary",
    "DeviceReview",
    "HistoryFileError",
    "HistoryStore",
    "RecordRow",
    "StoredRecord",
    "default_location",
    "due_date",
    "entry_from_record",
    "export_history",
    "history_for_record",
    "history_to_read",
    "import_records",
    "interval_in_force",
    "inspect_file",
    "open_history",
    "review_device",
    "write_stored_record",
]
