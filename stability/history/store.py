"""The calibration history: every record of every device in one SQLite file.

:func:`open_history` checks an existing file read-only first
(:func:`~.schema.inspect_file`), makes a new one complete before it takes its
name (:func:`~.schema.create_file`), brings an older schema up to date, and
returns a :class:`HistoryStore`. The store works in WAL journal mode with a
busy timeout, so two processes adding records at once both land (the second
waits for the first's transaction); every write is one ``BEGIN IMMEDIATE``
transaction, so a process killed in the middle leaves the file as it was
before that transaction (SQLite's atomic commit [1]_). Every statement is
parameterised: a device id is stored and read back exactly as given.

A record is identified by its input SHA-256 and settings hash: the same log
analysed with the same settings is one record, refused a second time unless
``force``, which replaces it under its old number.

References
----------
.. [1] SQLite, "Atomic Commit In SQLite" and "Write-Ahead Logging",
   https://sqlite.org/atomiccommit.html, https://sqlite.org/wal.html.
"""

from __future__ import annotations

import contextlib
import functools
import hashlib
import json
import os
import sqlite3
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from datetime import UTC, datetime
from pathlib import Path
from typing import Any, TypeVar

from ..aging import CalendarInterval, Calibration, KeyTau, parse_interval
from ..errors import InputError
from .entry import RecordEntry, entry_from_record, parse_record_text
from .schema import SCHEMA_VERSION, HistoryFileError, create_file, inspect_file, migrate

__all__ = [
    "BUSY_TIMEOUT_S",
    "StoredRecord",
    "DeviceSummary",
    "RecordRow",
    "HistoryStore",
    "open_history",
]

#: How long a write waits for another process's transaction, seconds.
BUSY_TIMEOUT_S = 60.0

F = TypeVar("F", bound=Callable[..., Any])


@dataclass(frozen=True)
class StoredRecord:
    """A record as stored: its number in the history, device, date; ``replaced`` with force."""

    number: int
    device_id: str
    calibrated_at: datetime
    replaced: bool = False


@dataclass(frozen=True)
class DeviceSummary:
    """One device: description, stored interval, record count and its last record."""

    device_id: str
    description: str | None
    interval: str | None
    records: int
    last_number: int | None
    last_calibrated: datetime | None
    last_verdict: str | None


@dataclass(frozen=True)
class RecordRow:
    """The indexed fields of one stored record (the whole record.json is kept beside them)."""

    number: int
    device_id: str
    calibrated_at: datetime
    span_s: float | None
    overall_verdict: str
    offset: float | None
    u_offset: float | None
    drift_per_day: float | None
    u_drift_per_day: float | None
    input_sha256: str
    settings_hash: str
    tool_version: str | None
    reference_id: str | None
    spec_statistic: str | None
    analysis_time: str | None
    stored_at: str
    has_pdf: bool


_ROW_COLUMNS = (
    "record_no, device_id, calibrated_at, span_s, overall_verdict, frequency_offset, "
    "u_frequency_offset, drift_per_day, u_drift_per_day, input_sha256, settings_hash, "
    "tool_version, reference_id, spec_statistic, analysis_time, stored_at, "
    "record_pdf IS NOT NULL"
)


def _stamp(moment: datetime) -> str:
    return moment.astimezone(UTC).isoformat(timespec="microseconds")


def _moment(text: str | None) -> datetime | None:
    return None if text is None else datetime.fromisoformat(text)


def _row(values: tuple[Any, ...]) -> RecordRow:
    fields = list(values)
    fields[2] = _moment(fields[2])
    fields[-1] = bool(fields[-1])
    return RecordRow(*fields)


def _sql_errors(method: F) -> F:
    """Turn SQLite's errors inside a store method into one-line errors naming the file."""

    @functools.wraps(method)
    def wrapper(self: HistoryStore, *args: Any, **kwargs: Any) -> Any:
        try:
            return method(self, *args, **kwargs)
        except sqlite3.OperationalError as exc:
            if "locked" in str(exc) or "busy" in str(exc):
                raise InputError(
                    f"the calibration history is busy: another process held it for more "
                    f"than {BUSY_TIMEOUT_S:g} s",
                    path=str(self.path),
                    hint="try again when the other run has finished",
                ) from None
            raise HistoryFileError(
                f"cannot use the calibration history ({exc})", path=str(self.path)
            ) from None
        except sqlite3.DatabaseError as exc:
            raise HistoryFileError(
                f"a damaged calibration history ({exc})", path=str(self.path)
            ) from None

    return wrapper  # type: ignore[return-value]


class HistoryStore:
    """An open calibration history (make one with :func:`open_history`; close it after use)."""

    def __init__(self, path: Path, connection: sqlite3.Connection) -> None:
        self.path = path
        self._con = connection
        self._depth = 0

    # ------------------------------------------------------------------ life
    def close(self) -> None:
        """Close the connection (a transaction still open is rolled back)."""
        self._con.close()

    def __enter__(self) -> HistoryStore:
        return self

    def __exit__(self, *exc: Any) -> None:
        self.close()

    @contextlib.contextmanager
    def transaction(self) -> Iterator[HistoryStore]:
        """One write transaction (``BEGIN IMMEDIATE``): all of it is committed or none.

        Nested uses join the outer transaction. Other writers wait up to
        :data:`BUSY_TIMEOUT_S` for it; readers keep reading the last commit.
        """
        if self._depth:
            self._depth += 1
            try:
                yield self
            finally:
                self._depth -= 1
            return
        self._begin()
        self._depth = 1
        try:
            yield self
        except BaseException:
            self._depth = 0
            with contextlib.suppress(sqlite3.Error):
                self._con.execute("ROLLBACK")
            raise
        self._depth = 0
        self._commit()

    @_sql_errors
    def _begin(self) -> None:
        self._con.execute("BEGIN IMMEDIATE")

    @_sql_errors
    def _commit(self) -> None:
        try:
            self._con.execute("COMMIT")
        except BaseException:
            with contextlib.suppress(sqlite3.Error):
                self._con.execute("ROLLBACK")
            raise

    # ------------------------------------------------------------------ writing
    @_sql_errors
    def add(
        self,
        record: dict[str, Any] | str,
        *,
        text: str | None = None,
        pdf: bytes | None = None,
        force: bool = False,
        source: str | None = None,
    ) -> StoredRecord:
        """Store one calibration record (the content or text of a record.json).

        Parameters
        ----------
        record
            The parsed record.json, or its text.
        text
            The record.json text to keep (default: the text given, or the record
            written as JSON).
        pdf
            The record.pdf issued with it, kept byte for byte.
        force
            Replace a stored record of the same input SHA-256 and settings hash
            (it keeps its number); without it such a record is refused.
        source
            Where the record came from, for the messages.

        Raises
        ------
        InputError
            A record that is not a calibration record, or a duplicate without ``force``.
        """
        if isinstance(record, str):
            text = record if text is None else text
            record = parse_record_text(record, source=source)
        entry = entry_from_record(record, source=source)
        if text is None:
            text = json.dumps(record, indent=2, ensure_ascii=False, allow_nan=False) + "\n"
        with self.transaction():
            return self._store(entry, text, pdf, force, source)

    def _store(
        self, entry: RecordEntry, text: str, pdf: bytes | None, force: bool, source: str | None
    ) -> StoredRecord:
        con = self._con
        found = con.execute(
            "SELECT record_no, device_id FROM records WHERE input_sha256 = ? AND settings_hash = ?",
            (entry.input_sha256, entry.settings_hash),
        ).fetchone()
        if found is not None and not force:
            raise InputError(
                f"already in the calibration history as record {found[0]} of device "
                f"{found[1]!r} (same input SHA-256 and settings hash)",
                path=source,
                hint="pass --force to replace it",
            )
        self._upsert_device(entry)
        values = (
            entry.device_id,
            _stamp(entry.calibrated_at),
            entry.measurement_start,
            entry.span_s,
            entry.analysis_time,
            entry.input_sha256,
            entry.settings_hash,
            entry.tool_version,
            entry.reference_id,
            entry.spec_statistic,
            entry.spec_sha256,
            entry.confidence,
            entry.overall_verdict,
            entry.offset,
            entry.u_offset,
            entry.drift_per_day,
            entry.u_drift_per_day,
            text,
            _stamp(datetime.now(UTC)),
            pdf,
            None if pdf is None else hashlib.sha256(pdf).hexdigest(),
        )
        columns = (
            "device_id, calibrated_at, measurement_start, span_s, analysis_time, input_sha256, "
            "settings_hash, tool_version, reference_id, spec_statistic, spec_sha256, confidence, "
            "overall_verdict, frequency_offset, u_frequency_offset, drift_per_day, "
            "u_drift_per_day, record_json, stored_at, record_pdf, record_pdf_sha256"
        )
        if found is None:
            marks = ", ".join("?" * len(values))
            cursor = con.execute(f"INSERT INTO records ({columns}) VALUES ({marks})", values)
            number = int(cursor.lastrowid or 0)
        else:
            number = int(found[0])
            assignments = ", ".join(f"{c.strip()} = ?" for c in columns.split(","))
            con.execute(f"UPDATE records SET {assignments} WHERE record_no = ?", (*values, number))
            con.execute("DELETE FROM checks WHERE record_no = ?", (number,))
            if found[1] != entry.device_id:
                self._drop_device_if_empty(found[1])
        con.executemany(
            "INSERT INTO checks (record_no, statistic, tau_s, listed, interpolated, limit_value, "
            "deviation, ci_low, ci_high, verdict, noise) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)",
            [
                (
                    number,
                    c.statistic,
                    c.tau_s,
                    int(c.listed),
                    int(c.interpolated),
                    c.limit,
                    c.deviation,
                    c.ci_low,
                    c.ci_high,
                    c.verdict,
                    c.noise,
                )
                for c in entry.checks
            ],
        )
        return StoredRecord(
            number, entry.device_id, entry.calibrated_at, replaced=found is not None
        )

    def _upsert_device(self, entry: RecordEntry) -> None:
        """Add the device; its description is the one of its latest record."""
        latest = self._con.execute(
            "SELECT max(calibrated_at) FROM records WHERE device_id = ?", (entry.device_id,)
        ).fetchone()[0]
        newest = latest is None or _stamp(entry.calibrated_at) >= latest
        self._con.execute(
            "INSERT INTO devices (device_id, description) VALUES (?, ?) "
            "ON CONFLICT (device_id) DO NOTHING",
            (entry.device_id, entry.description),
        )
        if newest and entry.description is not None:
            self._con.execute(
                "UPDATE devices SET description = ? WHERE device_id = ?",
                (entry.description, entry.device_id),
            )

    def _drop_device_if_empty(self, device_id: str) -> None:
        self._con.execute(
            "DELETE FROM devices WHERE device_id = ? AND interval IS NULL AND NOT EXISTS "
            "(SELECT 1 FROM records WHERE device_id = ?)",
            (device_id, device_id),
        )

    @_sql_errors
    def set_interval(self, device_id: str, interval: CalendarInterval | str) -> CalendarInterval:
        """Store a device's calibration interval (used when no interval is given)."""
        value = parse_interval(interval)
        with self.transaction():
            self.device(device_id)
            self._con.execute(
                "UPDATE devices SET interval = ? WHERE device_id = ?", (value.text, device_id)
            )
        return value

    # ------------------------------------------------------------------ reading
    @_sql_errors
    def devices(self) -> list[DeviceSummary]:
        """Every device with its last record, by device id."""
        rows = self._con.execute(
            "SELECT d.device_id, d.description, d.interval, "
            "(SELECT count(*) FROM records c WHERE c.device_id = d.device_id), "
            "r.record_no, r.calibrated_at, r.overall_verdict "
            "FROM devices d LEFT JOIN records r ON r.record_no = ("
            "SELECT record_no FROM records l WHERE l.device_id = d.device_id "
            "ORDER BY calibrated_at DESC, record_no DESC LIMIT 1) "
            "ORDER BY d.device_id"
        ).fetchall()
        return [DeviceSummary(r[0], r[1], r[2], int(r[3]), r[4], _moment(r[5]), r[6]) for r in rows]

    @_sql_errors
    def device(self, device_id: str) -> DeviceSummary:
        """One device; an unknown id is an error listing some known ones."""
        for summary in self.devices():
            if summary.device_id == device_id:
                return summary
        known = [d.device_id for d in self.devices()]
        shown = ", ".join(repr(k) for k in known[:10]) + (" ..." if len(known) > 10 else "")
        raise InputError(
            f"no device {device_id!r} in the calibration history",
            path=str(self.path),
            hint=f"known devices: {shown}" if known else "the history holds no device yet",
        )

    @_sql_errors
    def records(self, device_id: str | None = None) -> list[RecordRow]:
        """The stored records (of one device), oldest first."""
        where, args = ("WHERE device_id = ?", (device_id,)) if device_id is not None else ("", ())
        rows = self._con.execute(
            f"SELECT {_ROW_COLUMNS} FROM records {where} ORDER BY calibrated_at, record_no", args
        ).fetchall()
        return [_row(r) for r in rows]

    @_sql_errors
    def record(self, number: int) -> tuple[RecordRow, str, bytes | None]:
        """(row, record.json text, record.pdf bytes or None) of record ``number``."""
        found = self._con.execute(
            f"SELECT {_ROW_COLUMNS}, record_json, record_pdf, record_pdf_sha256 "
            "FROM records WHERE record_no = ?",
            (int(number),),
        ).fetchone()
        if found is None:
            raise InputError(
                f"no record number {number} in the calibration history",
                path=str(self.path),
                hint="stability history --device ID lists a device's record numbers",
            )
        pdf, digest = found[-2], found[-1]
        if pdf is not None and hashlib.sha256(pdf).hexdigest() != digest:
            raise HistoryFileError(
                f"record {number}'s stored record.pdf does not match its SHA-256",
                path=str(self.path),
            )
        return _row(found[:-3]), found[-3], pdf

    @_sql_errors
    def checks(self, number: int) -> list[KeyTau]:
        """The judged taus of record ``number``."""
        rows = self._con.execute(
            "SELECT statistic, tau_s, deviation, ci_low, ci_high, limit_value, verdict, noise "
            "FROM checks WHERE record_no = ? ORDER BY statistic, tau_s",
            (int(number),),
        ).fetchall()
        return [KeyTau(*r) for r in rows]

    @_sql_errors
    def check_table(self, device_id: str | None = None) -> list[dict[str, Any]]:
        """Every stored judged tau (of one device) as rows, by record and tau."""
        where, args = ("WHERE r.device_id = ?", (device_id,)) if device_id is not None else ("", ())
        cursor = self._con.execute(
            "SELECT c.record_no, r.device_id, c.statistic, c.tau_s, c.listed, c.interpolated, "
            "c.limit_value AS limit_, c.deviation, c.ci_low, c.ci_high, c.verdict, c.noise "
            f"FROM checks c JOIN records r ON r.record_no = c.record_no {where} "
            "ORDER BY r.calibrated_at, c.record_no, c.statistic, c.tau_s",
            args,
        )
        names = [d[0].rstrip("_") for d in cursor.description]
        return [dict(zip(names, row, strict=True)) for row in cursor.fetchall()]

    @_sql_errors
    def calibrations(self, device_id: str) -> list[Calibration]:
        """A device's calibrations with the deviation at its listed (key) taus, oldest first."""
        self.device(device_id)
        out = []
        for row in self.records(device_id):
            keys = self._con.execute(
                "SELECT statistic, tau_s, deviation, ci_low, ci_high, limit_value, verdict, "
                "noise FROM checks WHERE record_no = ? AND listed = 1 ORDER BY tau_s",
                (row.number,),
            ).fetchall()
            out.append(
                Calibration(
                    number=row.number,
                    when=row.calibrated_at,
                    offset=row.offset,
                    u_offset=row.u_offset,
                    drift_per_day=row.drift_per_day,
                    u_drift_per_day=row.u_drift_per_day,
                    verdict=row.overall_verdict,
                    key_taus=tuple(KeyTau(*k) for k in keys),
                )
            )
        return out

    @_sql_errors
    def schema_versions(self) -> list[int]:
        """The schema versions applied to this file, in order."""
        return [r[0] for r in self._con.execute("SELECT version FROM schema_version ORDER BY 1")]


def open_history(path: str | os.PathLike[str], *, create: bool = True) -> HistoryStore:
    """Open (or, with ``create``, make) the calibration history at ``path``.

    An existing file is checked read-only first and refused, untouched, when
    it is not a calibration history (:func:`~.schema.inspect_file`); an older
    schema is migrated. Without ``create`` a missing file is an error.
    """
    target = Path(path).expanduser()
    version = inspect_file(target)
    if version is None:
        if not create:
            raise InputError(
                "no calibration history here",
                path=str(target),
                hint="store records with stability record --history FILE, or import "
                "record.json files with stability history import",
            )
        create_file(target)
        version = inspect_file(target)
    try:
        con = sqlite3.connect(target, timeout=BUSY_TIMEOUT_S, isolation_level=None)
        con.execute(f"PRAGMA busy_timeout = {int(BUSY_TIMEOUT_S * 1000)}")
        con.execute("PRAGMA foreign_keys = ON")
        con.execute("PRAGMA synchronous = FULL")
    except sqlite3.Error as exc:
        raise HistoryFileError(
            f"cannot open the calibration history ({exc})", path=str(target)
        ) from None
    store = HistoryStore(target, con)
    if version is not None and version < SCHEMA_VERSION:
        try:
            migrate(con)
            con.execute("PRAGMA journal_mode = WAL")
        except sqlite3.Error as exc:
            con.close()
            raise HistoryFileError(
                f"cannot bring the calibration history from schema {version} to "
                f"{SCHEMA_VERSION} ({exc}); the file is as it was",
                path=str(target),
            ) from None
    return store
