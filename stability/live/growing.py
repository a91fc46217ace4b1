"""A log that grows: its rows parsed a chunk at a time, read exactly as :func:`read_log` reads it.

:class:`GrowingLog` holds the complete lines of a log seen so far (the bytes up
to the last newline) and the rows parsed from them. New lines are parsed with
the reader's own code (:func:`stability.ingest.parsing.parse_rows`, on a source
holding only the new lines, with the dialect sniffed from the log's first
lines), and the measurement is built from all the rows with the reader's own
last steps (:func:`stability.ingest.readers.measurement_from_rows`: bad rows,
grid, unwrapping, conversion to phase). The result equals ``read_log`` of a
file holding the same bytes, report, notes and SHA-256 included.

Each update parses only the new lines; joining the rows and placing them on the
grid are vectorised passes over the rows, of the order of the statistics that
follow. While the log is short its dialect, columns or value kind may still
change as more lines arrive (they are decided from the first 200 lines); the
rows are then parsed again from the start, once.

Only plain text logs can grow: UTF-8 or Latin-1, LF or CRLF line endings. A
compressed log, a workbook or a UTF-16 log is refused.

References
----------
1. W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065 (2008),
   section 5.14 (gaps are recorded, not silently removed).
"""

from __future__ import annotations

import codecs
import dataclasses
import hashlib
import os

import numpy as np

from ..errors import InputError
from ..ingest.containers import container_of, valid_utf8
from ..ingest.hints import ReadHints
from ..ingest.parsing import ParsedRows, decimal_text_parts, parse_rows
from ..ingest.readers import ReadingPlan, measurement_from_rows, plan_reading
from ..ingest.report import LogReport
from ..ingest.sniff import (
    _SAMPLE_BYTES,
    SAMPLE_LINES,
    RawSource,
    _check_text,
    _encoding,
    _line_endings,
)
from ..ingest.values import DecimalParts
from ..measurement import Measurement

__all__ = ["GrowingLog", "check_followable"]

#: Above this size the reader trusts the head's encoding without checking the whole file
#: (the same bound as :func:`stability.ingest.sniff.open_source`).
_WHOLE_CHECK_BYTES = 64 * 1024 * 1024


def check_followable(head: bytes, path: str) -> None:
    """Refuse a log that cannot grow line by line (an archive, a workbook, UTF-16 text)."""
    container = container_of(head)
    if container != "plain":
        raise InputError(
            f"a {container} file cannot be followed as it grows",
            path=path,
            hint="watch the plain-text log the logger writes; analyse archives with analyze",
        )
    if head.startswith((codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)):
        raise InputError(
            "a UTF-16 log cannot be followed as it grows",
            path=path,
            hint="let the logger write UTF-8 text, or analyse the finished log with analyze",
        )


class GrowingLog:
    """The complete lines of a growing log and the rows parsed from them.

    Parameters
    ----------
    path
        The log as named (written into the provenance, as ``read_log`` does).
    hints
        The reading options (:func:`stability.ingest.validate_read_args`).
    """

    def __init__(self, path: str | os.PathLike[str], hints: ReadHints) -> None:
        self.path = str(path)
        self.hints = hints
        self._data = bytearray()
        self._lines = 0
        self._sha = hashlib.sha256()
        self._utf8 = True  # every line so far is valid UTF-8
        self._plan: tuple[str, ReadingPlan] | None = None
        self._parts: list[ParsedRows] = []
        self._parsed_bytes = 0  # bytes of lines already parsed (from the start of the file)
        self._parsed_line = 0  # file line number of the last line parsed
        #: Bytes parsed by the last :meth:`measurement` call (new lines, or all after a re-plan).
        self.last_parsed_bytes = 0

    # ------------------------------------------------------------------ growing
    @property
    def size(self) -> int:
        """Bytes of complete lines held."""
        return len(self._data)

    @property
    def lines(self) -> int:
        """Complete lines held."""
        return self._lines

    def data(self) -> bytes:
        """The complete lines held, as bytes (what a one-shot read of the same file sees)."""
        return bytes(self._data)

    def sha256(self) -> str:
        """Hex SHA-256 of the complete lines held, kept up to date as lines arrive."""
        return self._sha.hexdigest()

    def extend(self, lines: bytes) -> None:
        """Add complete lines (bytes ending with a newline) read from the end of the log."""
        if not lines:
            return
        if not lines.endswith(b"\n"):
            raise ValueError("extend takes complete lines, ending with a newline")
        if not self._data:
            check_followable(lines[:8], self.path)
        self._data += lines
        self._lines += lines.count(b"\n")
        self._sha.update(lines)
        if self._utf8 and not valid_utf8(lines):  # lines split at newlines: checked piecewise
            self._utf8 = False

    # ------------------------------------------------------------------ reading
    def _source(self) -> RawSource:
        """The log's source as :func:`stability.ingest.sniff.open_source` would open it."""
        data = bytes(self._data)
        if not data:
            raise InputError("the file is empty", path=self.path, hint="give a log with data rows")
        head = data[:_SAMPLE_BYTES]
        encoding = _encoding(head)
        if encoding == "utf-8" and len(data) <= _WHOLE_CHECK_BYTES and not self._utf8:
            encoding = "latin-1"
        sample_text = head.decode(encoding, errors="replace")
        _check_text(sample_text, self.path)
        endings = _line_endings(sample_text)
        if endings == "CR":
            raise InputError(
                "a log with CR-only line endings cannot be followed as it grows",
                path=self.path,
                hint="let the logger end lines with LF or CRLF, or analyse it with analyze",
            )
        lines = sample_text.replace("\r\n", "\n").split("\n")
        if len(head) >= _SAMPLE_BYTES and len(lines) > 1:
            lines = lines[:-1]
        lines = lines[: SAMPLE_LINES * 5]
        if lines and lines[0].startswith("\ufeff"):
            lines[0] = lines[0][1:]
        src = RawSource(
            path=self.path,
            container="plain",
            member=None,
            encoding=encoding,
            line_endings=endings,
            sample=lines,
            size=len(data),
        )
        src.raw = data  # line look-ups of bad rows read these bytes, never the growing file
        src.pandas_encoding = {"latin-1": "latin-1", "utf-8": "utf-8"}.get(encoding, "utf-8-sig")
        return src

    def measurement(self) -> tuple[Measurement, LogReport]:
        """The log's measurement and reading report, as ``read_log`` gives them for these bytes.

        Raises
        ------
        InputError
            What ``read_log`` raises for the same bytes (a log still too short,
            a column that cannot be read, ...).
        """
        src = self._source()
        rep = LogReport(path=self.path, size_bytes=src.size)
        how = plan_reading(src, self.hints, rep)
        key = (src.pandas_encoding, how)
        if self._plan is None or not _same_plan(self._plan, key):
            self._plan = key
            self._parts = []
            self._parsed_bytes = _line_offset(src.raw or b"", how.dialect.first_data_line)
            self._parsed_line = how.dialect.first_data_line - 1
        self.last_parsed_bytes = self._parse_new(src, how)
        if not self._parts:
            raise InputError(  # as the reader says it of a file without rows
                "no data rows below the header",
                path=self.path,
                hint="give a log with at least two data rows",
            )
        parsed = _joined(self._parts)
        self._parts = [parsed]
        blank = self._blank_tail(src, how)
        if blank is not None:  # trailing blank lines: rows of this reading only
            parsed = _joined([parsed, blank])
        return measurement_from_rows(src, self.hints, how, parsed, rep, self.sha256)

    def _blank_tail(self, src: RawSource, how: ReadingPlan) -> ParsedRows | None:
        """The rows of blank lines after the last parsed line (the parser returns them too).

        A chunk of blank lines alone cannot be parsed (no fields), so they are
        parsed with the last line of content before them, which is then dropped.
        """
        data = src.raw or b""
        if self._parsed_bytes >= len(data) or self._parsed_line < how.dialect.first_data_line:
            return None
        start = data.rfind(b"\n", 0, self._parsed_bytes - 1) + 1
        part = self._parse_chunk(src, how, start, len(data), self._parsed_line - 1)
        keep = part.lines > self._parsed_line
        return ParsedRows(
            lines=part.lines[keep],
            values=part.values[keep],
            bad=part.bad[keep],
            ticks=None if part.ticks is None else part.ticks[keep],
            tick_ok=None if part.tick_ok is None else part.tick_ok[keep],
            texts=None if part.texts is None else part.texts[keep],
            units=None if part.units is None else part.units[keep],
            skipped=[s for s in part.skipped if s > self._parsed_line],
            decimals=None if part.decimals is None else part.decimals.take(keep),
        )

    def _parse_new(self, src: RawSource, how: ReadingPlan) -> int:
        """Parse the lines after the last parsed one, up to the last line with content."""
        data = src.raw or b""
        start = self._parsed_bytes
        content = data[start:].rstrip()
        if not content:  # trailing blank lines wait for content (a blank chunk holds no rows)
            return 0
        nl = data.find(b"\n", start + len(content))
        end = nl + 1 if nl >= 0 else len(data)
        part = self._parse_chunk(src, how, start, end, self._parsed_line)
        self._parts.append(part)
        self._parsed_bytes = end
        self._parsed_line += data.count(b"\n", start, end)
        return end - start

    def _parse_chunk(
        self, src: RawSource, how: ReadingPlan, start: int, end: int, shift: int
    ) -> ParsedRows:
        """Rows of the lines in ``data[start:end]``, numbered from line ``shift + 1``."""
        chunk = (src.raw or b"")[start:end]
        if start == 0 and chunk.startswith(codecs.BOM_UTF8):
            chunk = chunk[len(codecs.BOM_UTF8) :]
        part_src = dataclasses.replace(
            src,
            sample=[],
            size=len(chunk),
            buffer=chunk,
            raw=None,
            pandas_encoding="latin-1" if src.pandas_encoding == "latin-1" else "utf-8",
        )
        part_dialect = dataclasses.replace(how.dialect, first_data_line=1, preamble=[])
        part = parse_rows(part_src, part_dialect, how.columns, exact=how.exact, suffix=how.suffix)
        if part.texts is not None:  # the digits of each reading, split once, as it arrives
            part.decimals = decimal_text_parts(part.texts, how.dialect.decimal)
        part.lines = part.lines + shift
        part.skipped = [s + shift for s in part.skipped]
        return part


def _same_plan(a: tuple[str, ReadingPlan], b: tuple[str, ReadingPlan]) -> bool:
    try:
        return bool(a == b)
    except ValueError:  # a field that compares element-wise
        return repr(a) == repr(b)


def _line_offset(data: bytes, line: int) -> int:
    """Byte offset of the start of a 1-based line number."""
    pos = 0
    for _ in range(line - 1):  # the header and preamble lines only (a few)
        nl = data.find(b"\n", pos)
        if nl < 0:
            return len(data)
        pos = nl + 1
    return pos


def _joined(parts: list[ParsedRows]) -> ParsedRows:
    """One :class:`ParsedRows` of parts in file order."""
    if len(parts) == 1:
        return parts[0]

    def cat(name: str) -> np.ndarray | None:
        arrays = [getattr(p, name) for p in parts]
        return None if any(a is None for a in arrays) else np.concatenate(arrays)

    return ParsedRows(
        lines=np.concatenate([p.lines for p in parts]),
        values=np.concatenate([p.values for p in parts]),
        bad=np.concatenate([p.bad for p in parts]),
        ticks=cat("ticks"),
        tick_ok=cat("tick_ok"),
        texts=cat("texts"),
        units=cat("units"),
        skipped=[s for p in parts for s in p.skipped],
        decimals=(
            None
            if any(p.decimals is None for p in parts)
            else DecimalParts.join([p.decimals for p in parts])
        ),
    )
