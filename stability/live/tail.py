"""Find the bytes a logger appended to a log since the last look, and notice a rotated log.

Each :meth:`LogTail.poll` opens the log, reads from where the last look ended to
the end of the file, and hands back the complete lines; a partial last line
stays in memory for the next look. The log counts as replaced (rotated) and is
read again from its start when its inode changed, when it is shorter than the
bytes already read (truncated), or when its first bytes differ from the ones
first seen (rewritten in place). The log is never written to.
"""

from __future__ import annotations

import os
import stat
from dataclasses import dataclass
from typing import BinaryIO

from ..errors import InputError

__all__ = ["LogTail", "TailUpdate"]

#: Bytes compared at the start of the log to notice a file rewritten in place.
HEAD_BYTES = 256
#: Longest line waited for (a log line is far shorter; a file without newlines is no log).
MAX_LINE = 1024 * 1024
#: Bytes read at most per look (a logger that wrote more is caught up over a few looks).
READ_LIMIT = 64 * 1024 * 1024


@dataclass
class TailUpdate:
    """What one look at the log found.

    Attributes
    ----------
    lines
        Complete lines appended since the last look (bytes ending with a newline).
    restarted
        Why the log is read again from its start (rotated, truncated,
        rewritten), or "" when it simply grew.
    missing
        The log does not exist (yet, or between rotation and a new file).
    more
        More bytes are waiting than one look reads.
    """

    lines: bytes = b""
    restarted: str = ""
    missing: bool = False
    more: bool = False


class LogTail:
    """The appended lines of one log file, look by look."""

    def __init__(self, path: str | os.PathLike[str], *, read_limit: int = READ_LIMIT) -> None:
        self.path = os.fspath(path)
        self.read_limit = int(read_limit)
        self._identity: tuple[int, int] | None = None
        self._head = b""
        self._offset = 0  # bytes of the file consumed (complete lines and the partial line)
        self._partial = b""

    @property
    def offset(self) -> int:
        """Bytes of the current file read so far."""
        return self._offset

    @property
    def partial(self) -> bytes:
        """The last line read so far, without its newline yet."""
        return self._partial

    def _reset(self) -> None:
        self._identity, self._head, self._offset, self._partial = None, b"", 0, b""

    def poll(self) -> TailUpdate:
        """Read what was appended since the last look."""
        try:
            fd = os.open(self.path, os.O_RDONLY)
        except FileNotFoundError:
            return TailUpdate(missing=True)
        except OSError as exc:
            raise InputError(f"cannot read the log: {exc.strerror}", path=self.path) from None
        with os.fdopen(fd, "rb") as fh:
            st = os.fstat(fh.fileno())
            if not _regular(st.st_mode):
                raise InputError(
                    "not a regular file: a log to follow is a file a logger appends to",
                    path=self.path,
                )
            why = self._changed(fh, st)
            if why:
                self._reset()
            self._identity = (st.st_dev, st.st_ino)
            fh.seek(self._offset)
            new = fh.read(self.read_limit)
            more = bool(fh.read(1))
            end = self._offset + len(new)
            if len(self._head) < HEAD_BYTES:
                fh.seek(0)
                self._head = fh.read(min(HEAD_BYTES, end))
        self._offset += len(new)
        buffered = self._partial + new
        cut = buffered.rfind(b"\n") + 1
        self._partial = buffered[cut:]
        if len(self._partial) > MAX_LINE:
            raise InputError(
                f"a line longer than {MAX_LINE // 1024} kB without its end: not a log written "
                "line by line",
                path=self.path,
                hint="watch the text log a logger appends lines to",
            )
        return TailUpdate(lines=buffered[:cut], restarted=why, more=more)

    def _changed(self, fh: BinaryIO, st: os.stat_result) -> str:
        """Why the file is not the one read so far ("" when it is, or nothing was read)."""
        if self._identity is None:
            return ""
        if (st.st_dev, st.st_ino) != self._identity:
            return "the log was replaced by a new file (rotated)"
        if st.st_size < self._offset:
            return "the log was truncated"
        if self._head:
            fh.seek(0)
            if fh.read(len(self._head)) != self._head:
                return "the log was rewritten from its start"
        return ""


def _regular(mode: int) -> bool:
    return stat.S_ISREG(mode)
