"""The machine-readable summary of one analysis (``summary.json``).

The summary carries what a calibration record needs to be traced back [1]_:
the input's SHA-256 [2]_, the tool version, every setting, what preparation
did, and the results table. It is strict JSON [3]_: NaN and infinities become
``null``, times are ISO 8601 in UTC [4]_.

Fields
------
================================  ============================================================
field                             meaning
================================  ============================================================
``tool.name``                     ``"stability"``
``tool.version``                  version of the package that made the summary
``analysis_time``                 when the analysis ran, ISO 8601 UTC (``...+00:00``)
``input.path``                    the log file as given (null for data made in memory)
``input.sha256``                  hex SHA-256 of the log file's bytes (null in memory)
``input.rows``                    data rows read from the file
``input.reader``                  what the reader detected (format, in short)
``input.dialect``                 the detected dialect: container, encoding, line endings,
                                  delimiter, decimal mark, comment prefix, header line
``input.details``                 everything the reader reported (columns, units, bad rows ...)
``input.report``                  a reading report passed in besides the reader's, or null
``input.kind``                    what the source values were: ``phase`` or ``frequency``
``input.nominal_hz``              nominal frequency in Hz, or null
``input.tau0_s``                  sample interval in seconds
``input.start``                   time of the first sample, ISO 8601, or null
``input.span_s``                  record length (n - 1) * tau0 in seconds
``input.readings``                values in the log's grid, gaps included (frequency
                                  readings for frequency logs, time errors for phase logs)
``input.n``                       phase points, gaps included (readings + 1 for frequency logs:
                                  n frequency readings span n + 1 phase points)
``input.gaps``                    missing readings in the log (as the figures count them)
``input.frequency_offset``        mean fractional frequency removed for numerical care
``input.notes``                   what reading and preparation did, in sentences
``preparation``                   what preparation did (outliers, drift ...), as passed in
``settings``                      the analysis settings (statistics, taus, confidence, ...)
``settings_hash``                 first 16 hex digits of SHA-256 of the settings (canonical JSON)
``offset_drift``                  offset and drift estimates from the analysis, or null
``power_law_model``               fitted power-law noise model, or null
``causes``                        where the instability comes from, or null: auxiliary
                                  columns, environmental sensitivity, spectrum and periodic
                                  components, dead time and counter type
``statistics.<id>.title``         full name of the statistic
``statistics.<id>.unit``          ``""`` fractional frequency, ``"s"`` time
``statistics.<id>.confidence``    two-sided confidence level of the intervals
``statistics.<id>.bias_corrected``  whether the deviations carry a bias correction
``statistics.<id>.unconfirmed_model``  what of its EDF or bias model is recalled or a
                                  stand-in, not confirmed against the printed source
``statistics.<id>.taus``          number of rows of the statistic
``statistics.<id>.notes``         what the estimator noted (dropped taus, ...)
``table``                         one object per row with the results-table columns
                                  (``statistic, tau_s, m, n_terms, deviation, ci_low,
                                  ci_high, edf, alpha, noise, noise_method``); null where
                                  a value is missing
================================  ============================================================

References
----------
.. [1] ISO/IEC 17025:2017, *General requirements for the competence of testing and
   calibration laboratories*, clause 7.5 (technical records) and 7.8 (reporting).
.. [2] NIST FIPS 180-4, *Secure Hash Standard* (2015).
.. [3] RFC 8259, *The JavaScript Object Notation (JSON) Data Interchange Format* (2017).
.. [4] ISO 8601-1:2019, *Date and time - Representations for information interchange*.
"""

from __future__ import annotations

import json
import math
from collections.abc import Mapping
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

from ._version import __version__
from .deviations.registry import get_statistic
from .errors import InputError
from .files import jsonable, settings_hash
from .measurement import Measurement
from .table import COLUMNS, StabilityTable

__all__ = ["build_summary", "summary_json", "SUMMARY_FIELDS", "input_section", "table_rows"]

#: Top-level fields of the summary, in order.
SUMMARY_FIELDS = (
    "tool",
    "analysis_time",
    "input",
    "preparation",
    "settings",
    "settings_hash",
    "offset_drift",
    "power_law_model",
    "causes",
    "statistics",
    "table",
)


def _tool_version() -> str:

    return __version__


def _validate_summary_args(
    table: Any, preparation: Any, input_report: Any, analysis_time: Any, tool_version: Any
) -> None:
    if not isinstance(table, StabilityTable):
        raise InputError(
            f"table must be a stability.StabilityTable, got {type(table).__name__}",
            hint="build one with stability.analyze",
        )
    for name, value in (("preparation", preparation), ("input_report", input_report)):
        if value is not None and not isinstance(value, Mapping):
            raise InputError(f"{name} must be a mapping or None, got {type(value).__name__}")
    if analysis_time is not None and not isinstance(analysis_time, datetime):
        raise InputError(
            f"analysis_time must be a datetime or None, got {type(analysis_time).__name__}"
        )
    if tool_version is not None and not isinstance(tool_version, str):
        raise InputError(f"tool_version must be a str, got {type(tool_version).__name__}")


def _iso_utc(moment: datetime) -> str:
    if moment.tzinfo is None:  # naive times are taken as local time
        moment = moment.astimezone()
    return moment.astimezone(UTC).isoformat()


def input_section(measurement: Any, input_report: Mapping[str, Any] | None = None) -> dict:
    """The ``input`` section of the summary for a measurement (all null when there is none)."""
    keys = (
        "path", "sha256", "rows", "reader", "dialect", "details", "report", "kind",
        "nominal_hz", "tau0_s", "start", "span_s", "readings", "n", "gaps", "frequency_offset",
        "notes",
    )  # fmt: skip
    section: dict[str, Any] = dict.fromkeys(keys)
    section["report"] = jsonable(dict(input_report)) if input_report is not None else None
    if measurement is None:
        return section
    prov = measurement.provenance
    details = dict(prov.details or {})
    section.update(
        path=None if prov.path is None else str(Path(prov.path)),
        sha256=prov.sha256,
        rows=prov.rows,
        reader=prov.reader,
        dialect=jsonable(details.get("dialect") or _dialect(details)),
        details=jsonable(details),
        kind=measurement.kind,
        nominal_hz=measurement.nominal,
        tau0_s=float(measurement.tau0),
        start=None if measurement.start is None else _iso_utc(measurement.start),
        span_s=float(measurement.span),
        readings=int(measurement.n - 1 if measurement.kind == "frequency" else measurement.n),
        n=int(measurement.n),
        gaps=int(measurement.gap_count()),
        frequency_offset=float(measurement.frequency_offset),
        notes=list(measurement.notes),
    )
    return section


#: What the reader reports about a text file's dialect, by key.
_DIALECT_KEYS = (
    "container", "encoding", "line_endings", "delimiter", "decimal_mark", "comment_prefix",
    "header_line",
)  # fmt: skip


def _dialect(details: Mapping[str, Any]) -> dict[str, Any] | None:
    """The dialect part of a reader's report (None when the reader gave none)."""
    found = {k: details[k] for k in _DIALECT_KEYS if k in details}
    return found or None


def table_rows(table: StabilityTable) -> list[dict[str, Any]]:
    """The results table as a list of row objects (NaN and missing -> None)."""
    frame = table.to_frame()
    columns = [frame[name].tolist() for name in COLUMNS]
    rows = []
    for values in zip(*columns, strict=True):
        row = {}
        for name, value in zip(COLUMNS, values, strict=True):
            value = jsonable(value)
            if isinstance(value, float) and not math.isfinite(value):
                value = None
            if name in ("noise", "noise_method") and value == "":
                value = None
            row[name] = value
        rows.append(row)
    return rows


def _statistics_section(table: StabilityTable) -> dict[str, Any]:
    section = {}
    for result in table:
        stat = get_statistic(result.statistic)
        section[result.statistic] = {
            "title": stat.title,
            "unit": stat.unit,
            "confidence": float(result.confidence),
            "bias_corrected": bool(result.bias_corrected),
            "unconfirmed_model": stat.unconfirmed or None,
            "taus": len(result),
            "notes": list(result.notes),
        }
    return section


def build_summary(
    table: StabilityTable,
    *,
    preparation: Mapping[str, Any] | None = None,
    input_report: Mapping[str, Any] | None = None,
    analysis_time: datetime | None = None,
    tool_version: str | None = None,
    source: Any = None,
) -> dict[str, Any]:
    """Gather the summary of one analysis (fields in the module docstring).

    Parameters
    ----------
    table
        The analysis result; its ``measurement`` gives the input section unless
        ``source`` is given.
    preparation
        What preparation did (outliers removed, drift model, ...), passed through.
    input_report
        What reading reported (bad rows, detected units, ...), passed through.
    analysis_time
        When the analysis ran (default: now). Naive times are taken as local.
    tool_version
        Version string to record (default: the installed package version).
    source
        The measurement as read, for the input section (the log's readings and
        gaps, before preparation took outliers out).

    Returns
    -------
    dict
        JSON-ready (see :func:`summary_json`); NaN values already replaced by None.
    """
    _validate_summary_args(table, preparation, input_report, analysis_time, tool_version)
    if source is not None and not isinstance(source, Measurement):
        raise InputError(
            f"source must be a stability.Measurement or None, got {type(source).__name__}"
        )
    moment = analysis_time if analysis_time is not None else datetime.now(UTC)
    settings = jsonable(dict(table.settings))
    extras = table.extras or {}
    summary = {
        "tool": {"name": "stability", "version": tool_version or _tool_version()},
        "analysis_time": _iso_utc(moment),
        "input": input_section(table.measurement if source is None else source, input_report),
        "preparation": None if preparation is None else jsonable(dict(preparation)),
        "settings": settings,
        "settings_hash": settings_hash(settings),
        "offset_drift": jsonable(extras.get("offset_drift")),
        "power_law_model": jsonable(extras.get("power_law_model")),
        "causes": jsonable(extras.get("causes")),
        "statistics": _statistics_section(table),
        "table": table_rows(table),
    }
    return summary


def summary_json(summary: Mapping[str, Any]) -> str:
    """Strict JSON text of a summary (2-space indent, UTF-8 safe, trailing newline)."""
    if not isinstance(summary, Mapping):
        raise InputError(f"summary must be a mapping, got {type(summary).__name__}")
    return json.dumps(jsonable(summary), indent=2, ensure_ascii=False, allow_nan=False) + "\n"
