"""Records into and out of a calibration history: import, export, a stored record written out.

:func:`import_records` stores earlier ``record.json`` files (each with the
``record.pdf`` beside it, when that is there) in one transaction: all of them
or, when one is refused, none.

:func:`export_history` writes into a folder, all or nothing
(:class:`stability.outputs.OutputSet`):

``devices.csv``
    device_id, description, interval, records, last_record, last_calibrated, last_verdict.
``records.csv``
    One row per record: number, device, date, span, verdict, offset and drift
    with their uncertainties, input SHA-256, settings hash, tool version,
    reference, specification statistic, analysis and storing times, whether
    the issued record.pdf is kept.
``checks.csv``
    One row per judged tau of every record: estimate, interval, limit,
    verdict, noise type nearest to it.
``history.json``
    The same devices and records, each record with its whole record.json.

CSV is RFC 4180 [1]_ (``csv`` module, ``\\r\\n`` line ends as it writes them),
numbers in full precision, empty cells for missing values; JSON is strict
(RFC 8259 [2]_). Text is written as stored: a device id with commas, quotes or
other characters comes back as given.

:func:`write_stored_record` writes a stored record's record.pdf (byte for byte
as issued) and record.json.

References
----------
.. [1] RFC 4180, *Common Format and MIME Type for Comma-Separated Values (CSV) Files* (2005).
.. [2] RFC 8259, *The JavaScript Object Notation (JSON) Data Interchange Format* (2017).
"""

from __future__ import annotations

import csv
import io
import json
import os
from dataclasses import asdict
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

from .._version import __version__
from ..errors import InputError
from ..files import atomic_write_bytes, atomic_write_text, jsonable, refuse_overwrite
from ..outputs import OutputSet
from .entry import parse_record_text
from .schema import SCHEMA_VERSION
from .store import HistoryStore, RecordRow, StoredRecord

__all__ = [
    "EXPORT_NAMES",
    "import_records",
    "export_history",
    "history_document",
    "write_stored_record",
]

EXPORT_NAMES = ("devices.csv", "records.csv", "checks.csv", "history.json")


_PDF_MAGIC = b"%PDF-"


def _read_record(path: Path) -> tuple[str, bytes | None]:
    """(record.json text, the record.pdf beside it or None)."""
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise InputError("no such file", path=str(path), hint="check the path") from None
    except IsADirectoryError:
        raise InputError(
            "is a folder", path=str(path), hint="pass the record.json inside it"
        ) from None
    except UnicodeDecodeError:
        raise InputError("not a record.json (not UTF-8 text)", path=str(path)) from None
    except OSError as exc:
        raise InputError(f"cannot read: {exc.strerror or exc}", path=str(path)) from None
    beside = path.with_name("record.pdf")
    pdf = None
    if path.name == "record.json" and beside.is_file():
        data = beside.read_bytes()
        pdf = data if data.startswith(_PDF_MAGIC) else None
    return text, pdf


def import_records(
    store: HistoryStore, paths: list[str | os.PathLike[str]], *, force: bool = False
) -> list[tuple[Path, StoredRecord, bool]]:
    """Store earlier records (record.json files) in one transaction: all or none.

    A file named ``record.json`` brings the ``record.pdf`` beside it (a PDF
    file) along. Returns (path, stored record, whether a PDF came along) in the
    order given.

    Raises
    ------
    InputError
        A file that is not a calibration record, or one already stored
        (unless ``force``); nothing is stored then.
    """
    if not paths:
        raise InputError("no record.json given", hint="pass one or more record.json files")
    read = []
    for given in paths:
        path = Path(given)
        text, pdf = _read_record(path)
        read.append((path, parse_record_text(text, source=str(path)), text, pdf))
    stored = []
    with store.transaction():
        for path, record, text, pdf in read:
            entry = store.add(record, text=text, pdf=pdf, force=force, source=str(path))
            stored.append((path, entry, pdf is not None))
    return stored


def _cell(value: Any) -> str:
    if value is None:
        return ""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, float):
        return repr(value)
    if isinstance(value, datetime):
        return value.isoformat()
    return str(value)


def _csv(rows: list[dict[str, Any]], columns: list[str]) -> str:
    buffer = io.StringIO()
    writer = csv.writer(buffer)
    writer.writerow(columns)
    for row in rows:
        writer.writerow([_cell(row.get(c)) for c in columns])
    return buffer.getvalue()


def _record_dict(row: RecordRow) -> dict[str, Any]:
    return asdict(row)


def history_document(store: HistoryStore, device: str | None = None) -> dict[str, Any]:
    """The history (or one device's) as JSON types: devices, and records with their record.json."""
    devices = store.devices() if device is None else [store.device(device)]
    records = []
    for row in store.records(device):
        _, text, _ = store.record(row.number)
        records.append({**_record_dict(row), "record": json.loads(text)})
    return jsonable(
        {
            "content": "stability calibration history",
            "history_schema": SCHEMA_VERSION,
            "exported_at": datetime.now(UTC),
            "tool": {"name": "stability", "version": __version__},
            "source": str(store.path),
            "devices": [asdict(d) for d in devices],
            "records": records,
        }
    )


def export_history(
    store: HistoryStore, folder: str | os.PathLike[str], *, device: str | None = None
) -> dict[str, Path]:
    """Write devices.csv, records.csv, checks.csv and history.json into ``folder`` (all or none)."""
    document = history_document(store, device)
    device_rows = [
        {
            "device_id": d["device_id"],
            "description": d["description"],
            "interval": d["interval"],
            "records": d["records"],
            "last_record": d["last_number"],
            "last_calibrated": d["last_calibrated"],
            "last_verdict": d["last_verdict"],
        }
        for d in document["devices"]
    ]
    record_rows = [{k: v for k, v in r.items() if k != "record"} for r in document["records"]]
    record_columns = list(RecordRow.__dataclass_fields__)
    check_rows = store.check_table(device)
    check_columns = [
        "record_no", "device_id", "statistic", "tau_s", "listed", "interpolated", "limit",
        "deviation", "ci_low", "ci_high", "verdict", "noise",
    ]  # fmt: skip
    for row in check_rows:
        row["listed"], row["interpolated"] = bool(row["listed"]), bool(row["interpolated"])
    texts = {
        "devices.csv": _csv(device_rows, list(device_rows[0]) if device_rows else ["device_id"]),
        "records.csv": _csv(record_rows, record_columns),
        "checks.csv": _csv(check_rows, check_columns),
        "history.json": json.dumps(document, indent=2, ensure_ascii=False, allow_nan=False) + "\n",
    }
    with OutputSet(folder, EXPORT_NAMES, inputs=[store.path]) as out:
        for name, text in texts.items():
            out.write_text(name, text)
        return out.commit()


def write_stored_record(
    store: HistoryStore,
    number: int,
    *,
    pdf: str | os.PathLike[str] | None = None,
    json_path: str | os.PathLike[str] | None = None,
    force: bool = False,
) -> dict[str, Path]:
    """Write record ``number``'s stored record.pdf and/or record.json; return what was written.

    The PDF is the one issued with the record, byte for byte (its SHA-256 is
    checked). A record stored from its record.json alone has no PDF: that is
    an error naming the record, and its record.json can still be written.
    Existing files are not overwritten without ``force``.
    """
    if pdf is None and json_path is None:
        raise InputError("nothing to write", hint="pass --pdf FILE and/or --json-file FILE")
    _, text, pdf_bytes = store.record(number)
    targets = [Path(p) for p in (pdf, json_path) if p is not None]
    for target in targets:
        refuse_overwrite(target, force)
        if target.resolve() == store.path.resolve():
            raise InputError("would overwrite the calibration history itself", path=str(target))
    if pdf is not None and pdf_bytes is None:
        raise InputError(
            f"record {number} was stored from its record.json alone, without the record.pdf "
            "issued with it",
            path=str(store.path),
            hint="write its record.json with --json-file FILE, or import the record.json with "
            "its record.pdf beside it",
        )
    written: dict[str, Path] = {}
    if pdf is not None and pdf_bytes is not None:
        written["record.pdf"] = atomic_write_bytes(pdf, pdf_bytes)
    if json_path is not None:
        written["record.json"] = atomic_write_text(json_path, text)
    return written
