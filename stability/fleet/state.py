"""The progress of a fleet run, kept as it goes so that a second run resumes where one stopped.

The file ``OUT/fleet-progress.jsonl`` holds one JSON line per log as it
finishes: the device id, the input's SHA-256, the settings hash
(:func:`stability.fleet.work.job_hash`), the status, the fleet-table row and the
curve. Each line is appended with one ``write`` on a file opened for appending
and flushed to the disk, so a run killed at any moment leaves whole lines and
at most one torn last line, which reading ignores. The last line of a device
wins. When the run has finished, the file is rewritten (atomically) with one
line per device.

A log is skipped by the next run when its last line says ``ok`` and its input
and settings hash are unchanged (and its outputs are still there); a failed log
is tried again.
"""

from __future__ import annotations

import json
import os
from collections.abc import Iterable, Mapping
from pathlib import Path
from typing import Any

from ..files import atomic_write_text, jsonable

__all__ = ["PROGRESS_NAME", "read_progress", "ProgressLog"]

PROGRESS_NAME = "fleet-progress.jsonl"
_FORMAT = "stability fleet progress 1"


def _line(entry: Mapping[str, Any]) -> str:
    record = {"format": _FORMAT, **jsonable(dict(entry))}
    return json.dumps(record, separators=(",", ":"), ensure_ascii=True, allow_nan=False) + "\n"


def read_progress(folder: str | os.PathLike[str]) -> dict[str, dict[str, Any]]:
    """Device id -> the last entry of that device in the folder's progress file (may be empty)."""
    path = Path(folder) / PROGRESS_NAME
    entries: dict[str, dict[str, Any]] = {}
    try:
        text = path.read_text(encoding="utf-8", errors="replace")
    except OSError:
        return entries
    for line in text.splitlines():
        try:
            entry = json.loads(line)
        except ValueError:  # a line torn by a killed run
            continue
        if isinstance(entry, dict) and entry.get("format") == _FORMAT and "device" in entry:
            entries[str(entry["device"])] = entry
    return entries


class ProgressLog:
    """Appends finished logs to ``folder/fleet-progress.jsonl`` as they come."""

    def __init__(self, folder: str | os.PathLike[str]) -> None:
        self.path = Path(folder) / PROGRESS_NAME
        self._fd: int | None = None

    def __enter__(self) -> ProgressLog:
        self.path.parent.mkdir(parents=True, exist_ok=True)
        self._fd = os.open(self.path, os.O_WRONLY | os.O_APPEND | os.O_CREAT, 0o644)
        return self

    def __exit__(self, *exc: Any) -> None:
        if self._fd is not None:
            os.close(self._fd)
            self._fd = None

    def add(self, entry: Mapping[str, Any]) -> None:
        """Append one finished log (one ``write``, then ``fsync``)."""
        if self._fd is None:
            raise RuntimeError("the progress log is not open")
        data = _line(entry).encode("ascii")
        os.write(self._fd, data)
        os.fsync(self._fd)

    def compact(self, entries: Iterable[Mapping[str, Any]]) -> None:
        """Rewrite the file atomically with exactly these entries (one line each)."""
        atomic_write_text(self.path, "".join(_line(e) for e in entries))
