"""Titles and footers of figures: which input, which tool version, when.

Every figure carries a footer naming its input (the SHA-256 prefix of the log
file), the tool version and the analysis date, so that a figure separated from
its folder can still be traced (DESIGN: provenance on every output). The
helpers here build those texts without drawing anything.
"""

from __future__ import annotations

from datetime import UTC, datetime
from pathlib import Path
from typing import Any

from .._version import __version__
from ..errors import InputError
from ..measurement import Measurement
from ..table import StabilityTable

__all__ = [
    "analysis_date",
    "check_text",
    "column_text",
    "default_footer",
    "default_title",
    "tool_footer",
]


def analysis_date(moment: datetime | None) -> str:
    """``YYYY-MM-DD HH:MM UTC`` of a moment (default now; a naive moment is local time)."""
    moment = moment or datetime.now(UTC)
    if moment.tzinfo is None:
        moment = moment.astimezone()
    return moment.astimezone(UTC).strftime("%Y-%m-%d %H:%M UTC")


def default_footer(
    source: StabilityTable | Measurement | None, *, analysis_time: datetime | None = None
) -> str:
    """Footer text: input SHA-256 prefix (12 hex), tool version and analysis date."""

    measurement = source.measurement if isinstance(source, StabilityTable) else source
    sha = None
    if isinstance(measurement, Measurement):
        sha = measurement.provenance.sha256
    where = f"input SHA-256 {sha[:12]}" if sha else "input from memory (no file hash)"
    return f"{where} · stability {__version__} · analysed {analysis_date(analysis_time)}"


def column_text(measurement: Any) -> str | None:
    """Which column of the log the values came from: "column 4 (ch3)", "column 1", or None.

    Read from what the reader reported (``provenance.details``): the value
    column's number and, when the log has a header, its name, so that two
    channels of one multi-channel log are told apart.
    """
    if not isinstance(measurement, Measurement):
        return None
    details = measurement.provenance.details or {}
    name = details.get("value_column")
    number = next(
        (c.get("number") for c in details.get("columns") or () if c.get("role") == "value"), None
    )
    if not name and number is None:
        return None
    if name and str(name).startswith("column "):
        return str(name)
    if number is None:
        return f"column {name}"
    return f"column {number} ({name})" if name else f"column {number}"


def default_title(measurement: Any, fallback: str) -> str:
    """The log's file name and value column ("log.csv · column 4 (ch3)"), else ``fallback``."""
    if isinstance(measurement, Measurement) and measurement.provenance.path:
        name = Path(measurement.provenance.path).name
        column = column_text(measurement)
        return f"{name} \u00b7 {column}" if column else name
    return fallback


def tool_footer(analysis_time: datetime | None) -> str:
    """Footer of a figure drawn from several inputs or none: tool version and analysis date."""

    return f"stability {__version__} · analysed {analysis_date(analysis_time)}"


def check_text(**texts: object) -> None:
    """Raise an InputError naming the first of ``texts`` (title, footer) not a str or None."""
    for name, value in texts.items():
        if value is not None and not isinstance(value, str):
            raise InputError(f"{name} must be a str or None, got {type(value).__name__}")
