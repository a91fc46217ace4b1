"""What the history keeps of one calibration record, read and checked from its record.json.

:func:`entry_from_record` takes the content of a ``record.json`` (schema
``"1"``, :mod:`stability.reports.record`) and returns a :class:`RecordEntry`:
the fields the history indexes (device, dates, input SHA-256, settings hash,
tool version, reference, specification, verdict, offset and drift with their
uncertainties) and one :class:`CheckRow` per judged tau with the noise type
identified nearest to it. Anything missing or of the wrong type is one
:class:`~stability.errors.InputError` naming the field.
"""

from __future__ import annotations

import json
import math
import re
from dataclasses import dataclass
from datetime import UTC, datetime
from typing import Any

from ..errors import InputError

__all__ = ["RECORD_SCHEMAS", "CheckRow", "RecordEntry", "entry_from_record", "parse_record_text"]

#: The record.json schema versions the history reads.
RECORD_SCHEMAS = ("1",)
_SHA256 = re.compile(r"^[0-9a-f]{64}$")


@dataclass(frozen=True)
class CheckRow:
    """One judged tau of a record: estimate, interval, limit, verdict, noise type nearby."""

    statistic: str
    tau_s: float
    listed: bool
    interpolated: bool
    limit: float | None
    deviation: float | None
    ci_low: float | None
    ci_high: float | None
    verdict: str | None
    noise: str


@dataclass(frozen=True)
class RecordEntry:
    """The indexed fields of one record.json (see the module docstring)."""

    device_id: str
    description: str | None
    calibrated_at: datetime
    measurement_start: str | None
    span_s: float | None
    analysis_time: str | None
    input_sha256: str
    settings_hash: str
    tool_version: str | None
    reference_id: str | None
    spec_statistic: str | None
    spec_sha256: str | None
    confidence: float | None
    overall_verdict: str
    offset: float | None
    u_offset: float | None
    drift_per_day: float | None
    u_drift_per_day: float | None
    checks: tuple[CheckRow, ...]


def parse_record_text(text: str, *, source: str | None = None) -> dict[str, Any]:
    """The JSON object of a record.json text; one clear line when it is not one."""
    try:
        value = json.loads(text)
    except json.JSONDecodeError as exc:
        raise InputError(
            f"not valid JSON ({exc.msg})", path=source, line=exc.lineno, hint="pass a record.json"
        ) from None
    if not isinstance(value, dict):
        raise InputError("not a calibration record (the JSON is not an object)", path=source)
    return value


def _bad(source: str | None, field: str, what: str) -> InputError:
    return InputError(f"record field {field} {what}", path=source, hint="pass a record.json")


def _section(record: dict[str, Any], key: str, source: str | None) -> dict[str, Any]:
    value = record.get(key)
    if not isinstance(value, dict):
        raise _bad(source, key, "is missing or not an object")
    return value


def _text(value: Any, field: str, source: str | None, *, required: bool = False) -> str | None:
    if value is None and not required:
        return None
    if not isinstance(value, str) or (required and not value.strip()):
        raise _bad(source, field, "must be a non-empty text" if required else "must be a text")
    return value


def _number(value: Any, field: str, source: str | None) -> float | None:
    if value is None:
        return None
    if isinstance(value, bool) or not isinstance(value, int | float) or not math.isfinite(value):
        raise _bad(source, field, f"must be a finite number or null, got {value!r}")
    return float(value)


def _moment(text: str | None, field: str, source: str | None) -> datetime | None:
    if text is None:
        return None
    try:
        moment = datetime.fromisoformat(text)
    except ValueError:
        raise _bad(source, field, f"is not an ISO 8601 date and time: {text!r}") from None
    return moment.replace(tzinfo=UTC) if moment.tzinfo is None else moment.astimezone(UTC)


def _noise_near(results: Any, statistic: str | None, tau: float) -> str:
    """The noise type of the results row of ``statistic`` nearest ``tau`` (in log tau)."""
    if not isinstance(results, list) or statistic is None or tau <= 0:
        return ""
    best, label = math.inf, ""
    for row in results:
        if not isinstance(row, dict) or row.get("statistic") != statistic:
            continue
        other = row.get("tau_s")
        if isinstance(other, int | float) and other > 0:
            distance = abs(math.log(other / tau))
            if distance < best:
                best, label = distance, str(row.get("noise") or "")
    return label


def _checks(record: dict[str, Any], statistic: str | None, source: str | None) -> list[CheckRow]:
    raw = record.get("checks", [])
    if not isinstance(raw, list):
        raise _bad(source, "checks", "must be a list")
    rows: dict[float, CheckRow] = {}
    for i, check in enumerate(raw):
        where = f"checks[{i}]"
        if not isinstance(check, dict):
            raise _bad(source, where, "must be an object")
        tau = _number(check.get("tau_s"), f"{where}.tau_s", source)
        if tau is None or tau <= 0:
            raise _bad(source, f"{where}.tau_s", "must be a positive number")
        rows[tau] = CheckRow(
            statistic=statistic or "",
            tau_s=tau,
            listed=bool(check.get("listed", False)),
            interpolated=bool(check.get("interpolated", False)),
            limit=_number(check.get("limit"), f"{where}.limit", source),
            deviation=_number(check.get("deviation"), f"{where}.deviation", source),
            ci_low=_number(check.get("ci_low"), f"{where}.ci_low", source),
            ci_high=_number(check.get("ci_high"), f"{where}.ci_high", source),
            verdict=_text(check.get("verdict"), f"{where}.verdict", source),
            noise=_noise_near(record.get("results"), statistic, tau),
        )
    return [rows[tau] for tau in sorted(rows)]


def entry_from_record(record: Any, *, source: str | None = None) -> RecordEntry:
    """Check a record.json's content and take out what the history indexes.

    Parameters
    ----------
    record
        The parsed JSON object of a record.json.
    source
        Where it came from, for the messages.

    Raises
    ------
    InputError
        A record of another schema version, or a field missing or of the wrong type.
    """
    if not isinstance(record, dict):
        raise InputError("not a calibration record (the JSON is not an object)", path=source)
    schema = record.get("schema_version")
    if schema not in RECORD_SCHEMAS:
        raise InputError(
            f"not a calibration record this version reads (schema_version {schema!r}, "
            f"expected {' or '.join(RECORD_SCHEMAS)})",
            path=source,
        )
    ident = _section(record, "identification", source)
    device = ident.get("device")
    if not isinstance(device, dict):
        raise _bad(source, "identification.device", "is missing or not an object")
    reference = ident.get("reference") if isinstance(ident.get("reference"), dict) else {}
    inputs = _section(record, "input", source)
    sha = inputs.get("sha256")
    if not isinstance(sha, str) or not _SHA256.match(sha):
        raise _bad(
            source, "input.sha256", "must be the input's SHA-256 (64 hex digits); a record "
            "without it cannot be told apart from another",
        )  # fmt: skip
    measurement = _section(record, "measurement", source)
    spec = record.get("specification") if isinstance(record.get("specification"), dict) else {}
    tool = record.get("tool") if isinstance(record.get("tool"), dict) else {}
    start = _text(measurement.get("start"), "measurement.start", source)
    analysed = _text(record.get("analysis_time"), "analysis_time", source)
    when = _moment(start, "measurement.start", source) or _moment(analysed, "analysis_time", source)
    if when is None:
        raise _bad(source, "measurement.start", "and analysis_time are both missing")
    statistic = _text(spec.get("statistic"), "specification.statistic", source)
    return RecordEntry(
        device_id=_text(device.get("id"), "identification.device.id", source, required=True),
        description=_text(device.get("description"), "identification.device.description", source),
        calibrated_at=when,
        measurement_start=start,
        span_s=_number(measurement.get("span_s"), "measurement.span_s", source),
        analysis_time=analysed,
        input_sha256=sha,
        settings_hash=_text(record.get("settings_hash"), "settings_hash", source, required=True),
        tool_version=_text(tool.get("version"), "tool.version", source),
        reference_id=_text(reference.get("id"), "identification.reference.id", source),
        spec_statistic=statistic,
        spec_sha256=_text(spec.get("sha256"), "specification.sha256", source),
        confidence=_number(record.get("confidence"), "confidence", source),
        overall_verdict=_text(
            record.get("overall_verdict"), "overall_verdict", source, required=True
        ),
        offset=_number(measurement.get("offset"), "measurement.offset", source),
        u_offset=_number(measurement.get("u_offset"), "measurement.u_offset", source),
        drift_per_day=_number(
            measurement.get("drift_per_day"), "measurement.drift_per_day", source
        ),
        u_drift_per_day=_number(
            measurement.get("u_drift_per_day"), "measurement.u_drift_per_day", source
        ),
        checks=tuple(_checks(record, statistic, source)),
    )
