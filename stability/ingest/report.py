"""The reading report: what was detected in a log, and why.

:class:`LogReport` is filled in by the reader and travels with the measurement
(``Measurement.provenance.details``), so that a calibration record can say how
the raw file was read: dialect, columns, units, time grid, and every row that was
turned into a gap, dropped or repaired, with its line number.

References
----------
1. ISO/IEC 17025:2017, section 7.5 (technical records: sufficient information to
   repeat the measurement and its evaluation; common practice).
2. W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065 (2008),
   section 5.14 (gaps and outliers are recorded, not silently removed).
"""

from __future__ import annotations

import dataclasses
import json
from dataclasses import dataclass, field
from typing import Any

from ..display import Displayable
from ..units import format_duration, format_frequency, format_seconds

__all__ = ["ColumnInfo", "LogReport", "LIST_LIMIT"]

#: Entries kept per list in the report (totals are always exact).
LIST_LIMIT = 1000


@dataclass
class ColumnInfo:
    """One column of the log as detected.

    Attributes
    ----------
    number
        1-based column number.
    name
        Header name ("" without a header).
    role
        ``"time"``, ``"value"``, ``"channel"`` (another value column), ``"date"``,
        ``"time of day"`` or ``"other"``.
    detail
        Unit, kind or time format in words.
    """

    number: int
    name: str
    role: str
    detail: str = ""


@dataclass
class LogReport(Displayable):
    """What :func:`stability.ingest.inspect_log` found in a log and what reading did.

    Every list of lines holds at most :data:`LIST_LIMIT` entries; the matching
    ``*_count`` field holds the total.
    """

    path: str
    sha256: str = ""
    size_bytes: int = 0
    container: str = "plain"
    member: str | None = None
    encoding: str = "utf-8"
    line_endings: str = "LF"
    delimiter: str = "comma"
    decimal_mark: str = "."
    comment_prefix: str | None = None
    preamble: list[dict[str, Any]] = field(default_factory=list)
    header_line: int | None = None
    header: list[str] = field(default_factory=list)
    columns: list[ColumnInfo] = field(default_factory=list)
    channels: list[str] = field(default_factory=list)
    value_column: str = ""
    time_column: str | None = None
    time_format: str | None = None
    tau0: float | None = None
    tau0_source: str = ""
    tau0_evidence: list[dict[str, Any]] = field(default_factory=list)
    median_spacing: float | None = None
    kind: str = ""
    unit: str = ""
    kind_reason: str = ""
    nominal: float | None = None
    nominal_source: str = ""
    rows_read: int = 0
    samples: int = 0
    first_time: str | None = None
    last_time: str | None = None
    gaps_inserted: list[dict[str, Any]] = field(default_factory=list)
    gap_samples: int = 0
    bad_values: list[dict[str, Any]] = field(default_factory=list)
    bad_value_count: int = 0
    junk_lines: list[dict[str, Any]] = field(default_factory=list)
    junk_line_count: int = 0
    blank_or_comment_lines: int = 0
    duplicates: list[dict[str, Any]] = field(default_factory=list)
    duplicate_count: int = 0
    off_grid: list[dict[str, Any]] = field(default_factory=list)
    off_grid_count: int = 0
    stamp_tolerance: float | None = None
    jitter: list[dict[str, Any]] = field(default_factory=list)
    jitter_count: int = 0
    jitter_max_s: float = 0.0
    timezone: str | None = None
    wraps: list[dict[str, Any]] = field(default_factory=list)
    wrap_count: int = 0
    wrap_period: float | None = None
    exact_decimal: bool = False
    notes: list[str] = field(default_factory=list)

    # ------------------------------------------------------------------ shared code
    def note(self, text: str) -> None:
        """Add a plain sentence to the notes (once)."""
        if text not in self.notes:
            self.notes.append(text)

    @staticmethod
    def _capped(items: list[dict[str, Any]], entry: dict[str, Any]) -> None:
        if len(items) < LIST_LIMIT:
            items.append(entry)

    def add_bad_value(self, line: int, text: str, reason: str) -> None:
        self.bad_value_count += 1
        self._capped(self.bad_values, {"line": int(line), "text": text, "reason": reason})

    def add_junk(self, line: int, text: str) -> None:
        self.junk_line_count += 1
        self._capped(self.junk_lines, {"line": int(line), "text": text})

    def to_dict(self) -> dict[str, Any]:
        """Plain JSON-ready dictionary."""
        out = dataclasses.asdict(self)
        return json.loads(json.dumps(out, default=str))

    def summary(self) -> str:
        """One line describing the reader's findings (for ``Provenance.reader``)."""
        parts = [
            f"{self.container} {self.encoding} text",
            f"{self.delimiter}-delimited",
            f"decimal '{self.decimal_mark}'",
        ]
        if self.time_format:
            parts.append(f"time: {self.time_format}")
        parts.append(f"values: {self.kind} ({self.unit or 'no unit'})")
        return "stability.ingest: " + ", ".join(parts)

    def to_text(self) -> str:
        """Report for the terminal."""

        def lines_of(items: list[dict[str, Any]], total: int, fmt: str, limit: int = 10) -> str:
            shown = [fmt.format(**item) for item in items[:limit]]
            more = f" ... and {total - len(shown)} more" if total > len(shown) else ""
            return "; ".join(shown) + more

        out = [f"Log: {self.path}"]
        out.append(f"  size {self.size_bytes} bytes, SHA-256 {self.sha256}")
        where = "sheet" if self.container == "xlsx" else "member"
        container = self.container + (f" ({where} {self.member!r})" if self.member else "")
        out.append(
            f"  container {container}, encoding {self.encoding}, line endings {self.line_endings}"
        )
        out.append(
            f"  delimiter {self.delimiter}, decimal mark '{self.decimal_mark}', "
            f"comment prefix {self.comment_prefix or 'none'}"
        )
        if self.preamble:
            out.append(
                f"  preamble: {len(self.preamble)} line(s) of text before the data "
                f"(lines {self.preamble[0]['line']}-{self.preamble[-1]['line']})"
            )
        if self.header_line:
            out.append(f"  header on line {self.header_line}: {', '.join(self.header)}")
        else:
            out.append("  no header")
        out.append("Columns:")
        for col in self.columns:
            name = f" {col.name!r}" if col.name else ""
            detail = f" ({col.detail})" if col.detail else ""
            out.append(f"  {col.number}{name}: {col.role}{detail}")
        if len(self.channels) > 1:
            out.append(f"  channels: {', '.join(self.channels)}; analysed: {self.value_column}")
        out.append("Values:")
        unit = f"in {self.unit}" if self.unit else "(no unit)"
        out.append(f"  {self.kind} {unit}: {self.kind_reason}")
        if self.nominal:
            out.append(f"  nominal {format_frequency(self.nominal)} ({self.nominal_source})")
        if self.exact_decimal:
            out.append("  parsed as decimal text to keep every written digit")
        out.append("Time:")
        if self.time_format:
            out.append(f"  column {self.time_column}: {self.time_format}")
        if self.tau0:
            line = f"  tau0 {format_duration(self.tau0)} {self.tau0_source}"
            for e in self.tau0_evidence:
                verdict = "agrees" if e["agrees"] else "DISAGREES"
                line += f"; {e['source']} says {e['says']}: {verdict}"
            out.append(line)
        if self.first_time is not None:
            out.append(f"  first {self.first_time}, last {self.last_time}")
        out.append(
            f"Rows: {self.rows_read} data rows read, {self.samples} samples on the grid, "
            f"{self.blank_or_comment_lines} blank or comment lines"
        )
        if self.gap_samples:
            out.append(
                f"  gaps inserted: {self.gap_samples} sample(s): "
                + lines_of(
                    self.gaps_inserted, len(self.gaps_inserted), "{missing} after line {after_line}"
                )
            )
        if self.bad_value_count:
            out.append(
                f"  unreadable values turned into gaps: {self.bad_value_count}: "
                + lines_of(self.bad_values, self.bad_value_count, "line {line} {text!r}")
            )
        if self.junk_line_count:
            out.append(
                f"  lines skipped as not data: {self.junk_line_count}: "
                + lines_of(self.junk_lines, self.junk_line_count, "line {line} {text!r}")
            )
        if self.duplicate_count:
            out.append(
                f"  duplicated time stamps dropped: {self.duplicate_count}: "
                + lines_of(self.duplicates, self.duplicate_count, "line {line}")
            )
        if self.jitter_count:
            out.append(
                f"  stamp jitter: max {format_seconds(self.jitter_max_s)}, "
                f"{self.jitter_count} rows (snapped to the grid): "
                + lines_of(self.jitter, self.jitter_count, "line {line} ({offset_s:.3g} s)")
            )
        if self.off_grid_count:
            tol = f"{self.stamp_tolerance:.3g}" if self.stamp_tolerance else "?"
            out.append(
                f"  samples off the grid by more than {tol} of tau0: {self.off_grid_count}: "
                + lines_of(self.off_grid, self.off_grid_count, "line {line} ({offset_s:.3g} s)")
            )
        if self.wrap_count:
            out.append(
                f"  wrap-arounds unwrapped (period {format_duration(self.wrap_period)}): "
                f"{self.wrap_count}: " + lines_of(self.wraps, self.wrap_count, "line {line}")
            )
        if self.notes:
            out.append("Notes:")
            out.extend(f"  - {n}" for n in self.notes)
        return "\n".join(out)
