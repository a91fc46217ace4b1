"""The calibration history's SQLite file: its schema, its migrations, and the check of a file.

A history file is an SQLite 3 database [1]_ marked as ours by its application
id (``PRAGMA application_id``, the bytes ``STBh``) and holding a table
``schema_version`` with one row per schema version applied. The first schema
(:data:`SCHEMA_1`) is kept here as it was shipped; every later version is a
list of statements in :data:`MIGRATIONS` applied in one transaction, so a file
of any earlier version is brought up to :data:`SCHEMA_VERSION` when it is
opened, and a new file is made by the same path (schema 1, then each
migration), so the migrations run on every new file.

Before anything is written, :func:`inspect_file` looks at an existing file
through a read-only connection (``mode=ro`` URI [2]_): a file that is not
SQLite, is SQLite without our schema, is damaged (``PRAGMA quick_check``), or
was written by a newer version is refused with one line and left untouched.

Schema 2 adds the device's stored calibration interval (``devices.interval``)
and the issued ``record.pdf`` with its SHA-256 (``records.record_pdf``,
``records.record_pdf_sha256``).

References
----------
.. [1] SQLite file format, https://sqlite.org/fileformat2.html (the 16-byte
   header string "SQLite format 3\\0"; application id at offset 68).
.. [2] SQLite URI filenames, https://sqlite.org/uri.html (``mode=ro``).
"""

from __future__ import annotations

import contextlib
import os
import sqlite3
import time
from datetime import UTC, datetime
from pathlib import Path

from .._version import __version__
from ..errors import InputError

__all__ = [
    "APPLICATION_ID",
    "SCHEMA_VERSION",
    "SCHEMA_1",
    "MIGRATIONS",
    "HistoryFileError",
    "inspect_file",
    "create_file",
    "migrate",
    "read_only_uri",
]

#: ``PRAGMA application_id`` of a history file: the bytes "STBh".
APPLICATION_ID = int.from_bytes(b"STBh", "big")
#: The schema version this code writes and reads.
SCHEMA_VERSION = 2
_HEADER = b"SQLite format 3\x00"

#: The first schema, as shipped: never change it, add a migration instead.
SCHEMA_1: tuple[str, ...] = (
    """CREATE TABLE schema_version (
        version INTEGER PRIMARY KEY,
        applied_at TEXT NOT NULL,
        tool_version TEXT NOT NULL)""",
    """CREATE TABLE devices (
        device_id TEXT PRIMARY KEY NOT NULL,
        description TEXT)""",
    """CREATE TABLE records (
        record_no INTEGER PRIMARY KEY,
        device_id TEXT NOT NULL REFERENCES devices (device_id),
        calibrated_at TEXT NOT NULL,
        measurement_start TEXT,
        span_s REAL,
        analysis_time TEXT,
        input_sha256 TEXT NOT NULL,
        settings_hash TEXT NOT NULL,
        tool_version TEXT,
        reference_id TEXT,
        spec_statistic TEXT,
        spec_sha256 TEXT,
        confidence REAL,
        overall_verdict TEXT NOT NULL,
        frequency_offset REAL,
        u_frequency_offset REAL,
        drift_per_day REAL,
        u_drift_per_day REAL,
        record_json TEXT NOT NULL,
        stored_at TEXT NOT NULL,
        UNIQUE (input_sha256, settings_hash))""",
    "CREATE INDEX records_by_device ON records (device_id, calibrated_at)",
    """CREATE TABLE checks (
        record_no INTEGER NOT NULL REFERENCES records (record_no) ON DELETE CASCADE,
        statistic TEXT NOT NULL,
        tau_s REAL NOT NULL,
        listed INTEGER NOT NULL,
        interpolated INTEGER NOT NULL,
        limit_value REAL,
        deviation REAL,
        ci_low REAL,
        ci_high REAL,
        verdict TEXT,
        noise TEXT,
        PRIMARY KEY (record_no, statistic, tau_s))""",
)

#: Version -> the statements that bring a file from the version before to it.
MIGRATIONS: dict[int, tuple[str, ...]] = {
    2: (
        "ALTER TABLE devices ADD COLUMN interval TEXT",
        "ALTER TABLE records ADD COLUMN record_pdf BLOB",
        "ALTER TABLE records ADD COLUMN record_pdf_sha256 TEXT",
    ),
}

_OUR_TABLES = {"schema_version", "devices", "records", "checks"}


class HistoryFileError(InputError):
    """A history file that cannot be used (not SQLite, not ours, damaged, newer); left as it is."""


def read_only_uri(path: Path) -> str:
    """The ``file:`` URI opening ``path`` read-only (characters such as ``?`` and ``#`` quoted)."""
    return f"{path.resolve().as_uri()}?mode=ro"


def _refuse(path: Path, what: str, hint: str | None = None) -> HistoryFileError:
    return HistoryFileError(
        f"{what}; the file was left as it is",
        path=str(path),
        hint=hint or "pass another --history file, or move this one away",
    )


def _version_of(con: sqlite3.Connection, path: Path) -> int:
    app_id = con.execute("PRAGMA application_id").fetchone()[0]
    tables = {r[0] for r in con.execute("SELECT name FROM sqlite_master WHERE type = 'table'")}
    if app_id != APPLICATION_ID or "schema_version" not in tables:
        raise _refuse(path, "an SQLite database but not a stability calibration history")
    missing = _OUR_TABLES - tables
    if missing:
        raise _refuse(path, f"a calibration history without its tables {sorted(missing)}")
    row = con.execute("SELECT max(version) FROM schema_version").fetchone()
    if row is None or row[0] is None:
        raise _refuse(path, "a calibration history without a schema version")
    version = int(row[0])
    if version > SCHEMA_VERSION:
        raise _refuse(
            path,
            f"a calibration history of schema {version}, newer than this version of "
            f"stability reads ({SCHEMA_VERSION})",
            hint="use a newer stability",
        )
    return version


def _check_header(target: Path, head: bytes) -> None:
    """Checks that need no SQLite: the magic string, our application id, the size [1]_."""
    if not head:
        raise _refuse(target, "an empty file, not a calibration history")
    if not head.startswith(_HEADER):
        raise _refuse(target, "not a calibration history (not an SQLite database)")
    if len(head) < 100:
        raise _refuse(target, "a damaged SQLite file (shorter than its 100-byte header)")
    if int.from_bytes(head[68:72], "big") != APPLICATION_ID:
        raise _refuse(target, "an SQLite database but not a stability calibration history")
    size, stated = _sizes(target, head)
    if size < stated:
        raise _refuse(
            target, f"a damaged calibration history (truncated: {size} bytes of {stated})"
        )


def _sizes(target: Path, head: bytes) -> tuple[int, int]:
    """The file's size and the size its header states (0 when the header states none)."""
    page = int.from_bytes(head[16:18], "big")
    page = 65536 if page == 1 else page
    pages = int.from_bytes(head[28:32], "big")
    valid = head[92:96] == head[24:28]
    return target.stat().st_size, page * pages if valid and pages else 0


#: How long a file shorter than its header says may take to grow: another process
#: writing the history (a checkpoint writes page 1 before it extends the file) shows
#: that for a moment; a truncated file stays so.
_SETTLE_S = 2.0


def _read_head(target: Path) -> bytes:
    """The first 100 bytes, read again while the file is shorter than they say (a writer
    at work) for at most :data:`_SETTLE_S`."""
    deadline = time.monotonic() + _SETTLE_S
    while True:
        try:
            with open(target, "rb") as handle:
                head = handle.read(100)
        except OSError as exc:
            raise InputError(f"cannot read: {exc.strerror or exc}", path=str(target)) from None
        if len(head) < 100 or not head.startswith(_HEADER) or time.monotonic() > deadline:
            return head
        size, stated = _sizes(target, head)
        if size >= stated:
            return head
        time.sleep(0.05)


def _tidy(target: Path, existed: set[str]) -> None:
    """Remove the empty journal files a read-only look at a refused file made."""
    for suffix in ("-wal", "-shm"):
        side = Path(f"{target}{suffix}")
        if suffix not in existed and side.exists():
            wal_used = Path(f"{target}-wal").exists() and Path(f"{target}-wal").stat().st_size
            if suffix == "-shm" and wal_used:
                continue
            with contextlib.suppress(OSError):
                side.unlink()


def inspect_file(path: str | os.PathLike[str]) -> int | None:
    """The schema version of an existing history file, None when there is no file.

    The file is read, then opened read-only, and never changed here.

    Raises
    ------
    HistoryFileError
        A folder, an empty file, a file that is not SQLite, an SQLite database
        without the history's schema, a damaged or truncated file, or one of a
        newer schema.
    """
    target = Path(path)
    if not target.exists():
        return None
    if target.is_dir():
        raise _refuse(target, "is a folder, not a calibration history file")
    head = _read_head(target)
    _check_header(target, head)
    existed = {s for s in ("-wal", "-shm") if Path(f"{target}{s}").exists()}
    try:
        con = sqlite3.connect(read_only_uri(target), uri=True, timeout=30.0)
    except sqlite3.Error as exc:
        raise _refuse(target, f"cannot be opened as SQLite ({exc})") from None
    try:
        check = con.execute("PRAGMA quick_check").fetchall()
        if [tuple(r) for r in check] != [("ok",)]:
            raise _refuse(target, f"a damaged calibration history ({check[0][0]})")
        return _version_of(con, target)
    except sqlite3.DatabaseError as exc:
        con.close()
        _tidy(target, existed)
        raise _refuse(target, f"a damaged or unreadable SQLite file ({exc})") from None
    except HistoryFileError:
        con.close()
        _tidy(target, existed)
        raise
    finally:
        con.close()


def _now() -> str:
    return datetime.now(UTC).isoformat(timespec="seconds")


def migrate(con: sqlite3.Connection) -> int:
    """Bring an open history (schema 1 or later) up to :data:`SCHEMA_VERSION`; return it.

    Runs in one ``BEGIN IMMEDIATE`` transaction and reads the version inside it,
    so two processes opening one old file migrate it once.
    """
    con.execute("BEGIN IMMEDIATE")
    try:
        version = int(con.execute("SELECT max(version) FROM schema_version").fetchone()[0])
        for target in range(version + 1, SCHEMA_VERSION + 1):
            for statement in MIGRATIONS[target]:
                con.execute(statement)
            con.execute(
                "INSERT INTO schema_version (version, applied_at, tool_version) VALUES (?, ?, ?)",
                (target, _now(), __version__),
            )
        con.execute("COMMIT")
    except BaseException:
        con.execute("ROLLBACK")
        raise
    return max(version, SCHEMA_VERSION)


def create_file(path: str | os.PathLike[str]) -> bool:
    """Make a new history file at ``path`` unless one appears there first; True if made here.

    The file is built under a temporary name beside the target (schema 1, then
    every migration, the application id and WAL journal mode [1]_) and linked
    to its name only when complete, so no reader ever finds an empty or
    half-made history, and of two processes creating one file at once, one wins
    and the other opens the winner's file.
    """
    target = Path(path)
    target.parent.mkdir(parents=True, exist_ok=True)
    temp = target.with_name(f".{target.name}.{os.getpid()}.new")
    temp.unlink(missing_ok=True)
    try:
        con = sqlite3.connect(temp, isolation_level=None)
        try:
            con.execute(f"PRAGMA application_id = {APPLICATION_ID}")
            con.execute("BEGIN")
            for statement in SCHEMA_1:
                con.execute(statement)
            con.execute(
                "INSERT INTO schema_version (version, applied_at, tool_version) VALUES (1, ?, ?)",
                (_now(), __version__),
            )
            con.execute("COMMIT")
            migrate(con)
            con.execute("PRAGMA journal_mode = WAL")
        finally:
            con.close()
        with open(temp, "rb") as handle:
            os.fsync(handle.fileno())
        try:
            os.link(temp, target)
        except FileExistsError:
            return False
        _fsync_folder(target.parent)
        return True
    finally:
        for leftover in (temp, Path(f"{temp}-wal"), Path(f"{temp}-shm")):
            with contextlib.suppress(OSError):
                leftover.unlink()


def _fsync_folder(folder: Path) -> None:
    with contextlib.suppress(OSError):
        fd = os.open(folder, os.O_RDONLY)
        try:
            os.fsync(fd)
        finally:
            os.close(fd)
