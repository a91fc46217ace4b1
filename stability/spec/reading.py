"""Reading and checking specification and information files (TOML).

A specification file (:func:`load_spec`) lists upper limits of one statistic
at averaging times; an information file (:func:`load_info`) identifies the
device, the reference, the instrument, the lab and the procedure. Both are
TOML [1]_ in this project's own layout, read with Python's ``tomllib``.
Unknown keys are errors (they are usually typos), and every error is one
:class:`~stability.errors.SpecError` naming the file, the line where it can
be found, and the key.

References
----------
.. [1] TOML v1.0.0 specification, https://toml.io/en/v1.0.0.
"""

from __future__ import annotations

import datetime
import hashlib
import math
import os
import re
import tomllib
from pathlib import Path
from typing import Any

from ..deviations import get_statistic
from ..errors import InputError, SpecError
from ..files import special_file
from ..intervals import MAX_CONFIDENCE
from .model import _LEVEL_NAMES, Info, Reference, Spec

__all__ = ["load_spec", "load_info", "parse_spec", "parse_info"]

_SPEC_KEYS = ("statistic", "confidence", "interpolate", "limit", "description")
_LIMIT_KEYS = ("tau_s", "max")
_INFO_TABLES = {
    "device": ("id", "description", "nominal", "serial", "model"),
    "reference": ("id", "description", "stability", "statistic", "levels", "f_h"),
    "instrument": ("description", "gate_time", "id"),
    "lab": ("name", "operator", "ambient_temperature", "location"),
}
#: Optional top-level keys of the record's number and approval fields (text; date also a date).
_RECORD_KEYS = ("record_number", "measured_by", "checked_by", "date")
_INFO_KEYS = (*_INFO_TABLES, "procedure", "notes", *_RECORD_KEYS)


#: Bytes a specification or information file may hold (they are a few hundred).
MAX_FILE_BYTES = 1 << 20
#: Limits of a specification and points of a reference's stated stability: a mask
#: lists a handful of taus (common practice), so thousands are a mistake (and the
#: record would print every one: 10 000 limits take half a minute to typeset).
MAX_POINTS = 1_000
#: The ranges a number of these files may take: averaging times from a femtosecond
#: to thirty million years, deviations (fractional, or seconds for the time
#: statistics) up to 1000, power-law levels up to 1000 and f_h from 1e-15 Hz to
#: 1e15 Hz. Anything beyond is a slip of the exponent, and squaring it overflows.
_TAU_RANGE = (1e-15, 1e15)
_DEVIATION_RANGE = (1e-30, 1e3)
_LEVEL_MAX = 1e3
_F_H_RANGE = (1e-15, 1e15)


def _within(value: float | None, bounds: tuple[float, float]) -> bool:
    return value is not None and bounds[0] <= value <= bounds[1]


def _read_toml(path: str | os.PathLike[str], what: str) -> tuple[dict[str, Any], str, str]:
    source = Path(path)
    special = special_file(source)
    if special is not None:
        raise SpecError(f"the {what} file is {special}", path=str(source)) from None
    try:
        with open(source, "rb") as handle:
            data = handle.read(MAX_FILE_BYTES + 1)
    except FileNotFoundError:
        raise SpecError(f"no such {what} file", path=str(source), hint="check the path") from None
    except IsADirectoryError:
        raise SpecError(f"the {what} file is a folder", path=str(source)) from None
    except OSError as exc:
        raise SpecError(
            f"cannot read the {what} file: {exc.strerror or exc}", path=str(source)
        ) from None
    if len(data) > MAX_FILE_BYTES:
        raise SpecError(
            f"the {what} file holds more than {MAX_FILE_BYTES:,} bytes, far more than "
            f"a {what} needs",
            path=str(source),
            hint="check that this is the right file",
        )
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise SpecError(
            f"the {what} file is not UTF-8 text (byte {exc.start})",
            path=str(source),
            hint="save it as UTF-8",
        ) from None
    try:
        table = tomllib.loads(text)
    except RecursionError:
        raise SpecError(
            f"the {what} file nests tables or arrays too deeply",
            path=str(source),
            hint="check the file; a specification nests at most a few levels",
        ) from None
    except tomllib.TOMLDecodeError as exc:
        message = str(exc)
        found = re.search(r"\(at line (\d+), column (\d+)\)", message)
        line = int(found.group(1)) if found else None
        column = int(found.group(2)) if found else None
        if found is None and "end of document" in message:
            line = max(1, len(text.splitlines()))
        reason = re.sub(r"\s*\((at line \d+, column \d+|at end of document)\)", "", message)
        reason = reason or "syntax error"
        raise SpecError(
            f"TOML syntax error in the {what} file: {reason}",
            path=str(source),
            line=line,
            column=column,
            hint="see https://toml.io for the syntax",
        ) from None
    return table, text, hashlib.sha256(data).hexdigest()


def _line_of(text: str | None, key: str, occurrence: int = 0, header: str | None = None) -> int:
    """1-based line of the ``occurrence``-th ``key =`` (after the n-th ``[[header]]``)."""
    if not text:
        return 0
    lines = text.splitlines()
    start = 0
    if header is not None:
        heads = [i for i, s in enumerate(lines) if re.match(rf"\s*\[\[\s*{header}\s*\]\]", s)]
        if occurrence < len(heads):
            start = heads[occurrence]
            occurrence = 0
    pattern = re.compile(rf"\s*\"?{re.escape(key)}\"?\s*=")
    seen = 0
    for i in range(start, len(lines)):
        if pattern.match(lines[i]):
            if seen == occurrence:
                return i + 1
            seen += 1
    return start + 1 if header is not None else 0


def _header_line(text: str | None, name: str) -> int:
    """1-based line of the table header ``[name]`` (0 when absent)."""
    pattern = re.compile(rf"\s*\[\s*{re.escape(name)}\s*\]")
    for i, line in enumerate((text or "").splitlines()):
        if pattern.match(line):
            return i + 1
    return 0


def _number(value: Any) -> float | None:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        return None
    try:
        number = float(value)
    except OverflowError:  # an integer of hundreds of digits
        return None
    return number if math.isfinite(number) else None


def parse_spec(table: dict[str, Any], *, path: str | None = None, text: str | None = None) -> Spec:
    """Build a :class:`Spec` from a parsed TOML table; see :func:`load_spec` for the layout."""
    where = path or "<spec>"

    def bad(message: str, key: str, occurrence: int = 0, header: str | None = None, hint=None):
        line = _line_of(text, key, occurrence, header) or None
        return SpecError(message, path=where, line=line, hint=hint)

    unknown = [k for k in table if k not in _SPEC_KEYS]
    if unknown:
        raise bad(
            f"unknown key {unknown[0]!r} in the specification",
            unknown[0],
            hint=f"allowed keys: {', '.join(_SPEC_KEYS)}",
        )
    if "statistic" not in table:
        raise SpecError(
            "missing key 'statistic' in the specification",
            path=where,
            hint='add e.g. statistic = "oadev"',
        )
    statistic = table["statistic"]
    try:
        statistic = get_statistic(str(statistic)).name
    except InputError as exc:
        raise bad(
            f"key 'statistic': unknown statistic {table['statistic']!r}", "statistic", hint=exc.hint
        ) from None
    confidence = table.get("confidence", 0.95)
    level = _number(confidence)
    if level is None or not 0.0 < level <= MAX_CONFIDENCE:
        raise bad(
            f"key 'confidence' must be a number between 0 and 1 (exclusive), got {confidence!r}",
            "confidence",
            hint="e.g. confidence = 0.95",
        )
    interpolate = table.get("interpolate", True)
    if not isinstance(interpolate, bool):
        raise bad(f"key 'interpolate' must be true or false, got {interpolate!r}", "interpolate")
    description = table.get("description", "")
    if not isinstance(description, str):
        raise bad(f"key 'description' must be text, got {description!r}", "description")
    rows = table.get("limit")
    if rows is None:
        raise SpecError(
            "missing key 'limit' in the specification",
            path=where,
            hint="add one [[limit]] table per tau with tau_s and max",
        )
    if not isinstance(rows, list) or not rows or not all(isinstance(r, dict) for r in rows):
        raise bad(
            "key 'limit' must be one or more [[limit]] tables with tau_s and max",
            "limit",
            hint="write [[limit]] on its own line, then tau_s = ... and max = ...",
        )
    if len(rows) > MAX_POINTS:
        raise bad(
            f"the specification lists {len(rows):,} limits, more than the {MAX_POINTS:,} "
            "a specification may hold",
            "limit",
            hint="list the limits at the taus that matter (interpolate = true fills between)",
        )
    limits: list[tuple[float, float]] = []
    for i, row in enumerate(rows):
        for key in row:
            if key not in _LIMIT_KEYS:
                raise bad(
                    f"unknown key {key!r} in [[limit]] number {i + 1}",
                    key,
                    i,
                    "limit",
                    hint="each [[limit]] has tau_s and max",
                )
        for key in _LIMIT_KEYS:
            if key not in row:
                raise bad(
                    f"missing key {key!r} in [[limit]] number {i + 1}",
                    "limit",
                    i,
                    "limit",
                    hint="each [[limit]] has tau_s and max",
                )
        tau = _number(row["tau_s"])
        if not _within(tau, _TAU_RANGE):
            raise bad(
                f"key 'tau_s' in [[limit]] number {i + 1} must be a positive number of seconds "
                f"from {_TAU_RANGE[0]:g} to {_TAU_RANGE[1]:g}, got {row['tau_s']!r}",
                "tau_s",
                i,
                "limit",
            )
        top = _number(row["max"])
        if not _within(top, _DEVIATION_RANGE):
            raise bad(
                f"key 'max' in [[limit]] number {i + 1} must be a positive number from "
                f"{_DEVIATION_RANGE[0]:g} to {_DEVIATION_RANGE[1]:g}, got {row['max']!r}",
                "max",
                i,
                "limit",
            )
        if limits and tau <= limits[-1][0]:
            raise bad(
                f"key 'tau_s' in [[limit]] number {i + 1}: taus must increase, got {tau:g} s "
                f"after {limits[-1][0]:g} s",
                "tau_s",
                i,
                "limit",
                hint="list the limits in increasing tau, each tau once",
            )
        limits.append((tau, top))
    return Spec(
        statistic=statistic,
        confidence=float(level),
        interpolate=interpolate,
        limits=limits,
        path=path,
        description=description,
    )


def load_spec(path: str | os.PathLike[str]) -> Spec:
    """Read a specification file (TOML).

    Layout::

        statistic = "oadev"        # required: the statistic the limits apply to
        confidence = 0.95          # optional (default 0.95), in (0, 1)
        interpolate = true         # optional (default true): log-log between listed taus
        description = "..."        # optional
        [[limit]]                  # one per tau, taus increasing
        tau_s = 1
        max = 1e-11

    Raises
    ------
    SpecError
        One message naming the file, the line where known, and the key.
    """
    table, text, digest = _read_toml(path, "specification")
    spec = parse_spec(table, path=str(path), text=text)
    spec.sha256 = digest
    return spec


def _check_table(
    table: dict[str, Any], name: str, allowed: tuple[str, ...], where: str, text: str | None
) -> dict[str, Any]:
    if not isinstance(table, dict):
        raise SpecError(
            f"key {name!r} must be a table ([{name}])",
            path=where,
            line=_line_of(text, name) or None,
        )
    for key in table:
        if key not in allowed:
            raise SpecError(
                f"unknown key {key!r} in [{name}]",
                path=where,
                line=_line_of(text, key) or None,
                hint=f"allowed keys: {', '.join(allowed)}",
            )
    return table


def _text(value: Any, key: str, where: str, text: str | None) -> str:
    if isinstance(value, (str, int, float)) and not isinstance(value, bool):
        return str(value)
    raise SpecError(
        f"key {key!r} must be text, got {value!r}",
        path=where,
        line=_line_of(text, key.split(".")[-1]) or None,
    )


def _reference_statistic(
    raw: dict[str, Any], ref: Reference, where: str, text: str | None
) -> str | None:
    """The statistic a reference's stated stability is; required with ``stability``.

    Figures of a time statistic (TDEV, MTIE, in seconds) and of a fractional
    frequency deviation cannot be combined, so the file must say which it gives.
    """
    line = _line_of(text, "statistic") or None
    if "statistic" not in raw:
        if ref.points:
            raise SpecError(
                "[reference] gives 'stability' without saying which statistic it is",
                path=where,
                line=_line_of(text, "stability") or None,
                hint='add statistic = "oadev" (or the statistic the figures are) to [reference]',
            )
        return None
    name = raw["statistic"]
    if not isinstance(name, str):
        raise SpecError(
            f"key 'reference.statistic' must be a statistic name, got {name!r}",
            path=where,
            line=line,
        )
    try:
        stat = get_statistic(name)
    except InputError as exc:
        raise SpecError(exc.message, path=where, line=line, hint=exc.hint) from None
    if ref.levels and stat.estimates != "AVAR":
        raise SpecError(
            f"[reference] levels describe the Allan variance, not {stat.name}",
            path=where,
            line=line,
            hint='drop the statistic key or set statistic = "oadev"',
        )
    return stat.name


def _parse_reference(raw: dict[str, Any], where: str, text: str | None) -> Reference:
    ref = Reference(
        id=_text(raw.get("id", ""), "reference.id", where, text),
        description=_text(raw.get("description", ""), "reference.description", where, text),
    )
    if "stability" in raw and "levels" in raw:
        raise SpecError(
            "[reference] states both 'stability' and 'levels'",
            path=where,
            line=_line_of(text, "levels") or None,
            hint="give one of them",
        )
    if "stability" in raw:
        points = raw["stability"]
        line = _line_of(text, "stability") or None
        pairs: list[tuple[float, float]] = []
        if not isinstance(points, list) or not points:
            points = [None]
        if len(points) > MAX_POINTS:
            raise SpecError(
                f"key 'reference.stability' lists {len(points):,} points, more than the "
                f"{MAX_POINTS:,} it may hold",
                path=where,
                line=line,
                hint="list the stated stability at the taus that matter",
            )
        for item in points:
            ok = isinstance(item, list) and len(item) == 2
            tau = _number(item[0]) if ok else None
            dev = _number(item[1]) if ok else None
            if not (_within(tau, _TAU_RANGE) and _within(dev, _DEVIATION_RANGE)):
                raise SpecError(
                    f"key 'reference.stability' must be [[tau_s, deviation], ...] with taus "
                    f"from {_TAU_RANGE[0]:g} to {_TAU_RANGE[1]:g} s and deviations from "
                    f"{_DEVIATION_RANGE[0]:g} to {_DEVIATION_RANGE[1]:g}, got {item!r}",
                    path=where,
                    line=line,
                    hint="e.g. stability = [[1, 2e-13], [100, 5e-14]]",
                )
            if pairs and tau <= pairs[-1][0]:
                raise SpecError(
                    f"key 'reference.stability': taus must increase, got {tau:g} s after "
                    f"{pairs[-1][0]:g} s",
                    path=where,
                    line=line,
                )
            pairs.append((tau, dev))
        ref.points = pairs
    if "levels" in raw:
        levels = raw["levels"]
        line = _line_of(text, "levels") or None
        if not isinstance(levels, dict) or not levels:
            raise SpecError(
                "key 'reference.levels' must be a table such as {h0 = 1e-24}",
                path=where,
                line=line,
                hint=f"names: {', '.join(_LEVEL_NAMES)}",
            )
        out: dict[int, float] = {}
        for key, value in levels.items():
            if key not in _LEVEL_NAMES:
                raise SpecError(
                    f"unknown key {key!r} in reference.levels",
                    path=where,
                    line=line,
                    hint=f"names: {', '.join(_LEVEL_NAMES)} (h_alpha of S_y(f) = h_alpha f^alpha)",
                )
            number = _number(value)
            if number is None or not 0 <= number <= _LEVEL_MAX:
                raise SpecError(
                    f"key 'reference.levels.{key}' must be a number from 0 to {_LEVEL_MAX:g}, "
                    f"got {value!r}",
                    path=where,
                    line=line,
                )
            out[_LEVEL_NAMES[key]] = number
        ref.levels = out
    ref.statistic = _reference_statistic(raw, ref, where, text)
    if "f_h" in raw:
        f_h = _number(raw["f_h"])
        if not _within(f_h, _F_H_RANGE):
            raise SpecError(
                f"key 'reference.f_h' must be a positive frequency from {_F_H_RANGE[0]:g} to "
                f"{_F_H_RANGE[1]:g} Hz, got {raw['f_h']!r}",
                path=where,
                line=_line_of(text, "f_h") or None,
            )
        ref.f_h = f_h
    return ref


def parse_info(table: dict[str, Any], *, path: str | None = None, text: str | None = None) -> Info:
    """Build an :class:`Info` from a parsed TOML table; see :func:`load_info` for the layout."""
    where = path or "<info>"
    for key in table:
        if key not in _INFO_KEYS:
            raise SpecError(
                f"unknown key {key!r} in the information file",
                path=where,
                line=_line_of(text, key) or _header_line(text, key) or None,
                hint=f"allowed keys: {', '.join(_INFO_KEYS)}",
            )
    if "device" not in table:
        raise SpecError(
            "missing table [device] in the information file",
            path=where,
            hint='add [device] with id = "..."',
        )
    parts: dict[str, dict[str, Any]] = {}
    for name, allowed in _INFO_TABLES.items():
        if name in table:
            parts[name] = _check_table(table[name], name, allowed, where, text)
    device = parts["device"]
    if "id" not in device or not str(device["id"]).strip():
        raise SpecError(
            "missing key 'id' in [device]",
            path=where,
            line=_header_line(text, "device") or None,
            hint='add id = "..." (serial or asset number)',
        )
    device = {k: _text(v, f"device.{k}", where, text) for k, v in device.items()}
    instrument = {
        k: _text(v, f"instrument.{k}", where, text) for k, v in parts.get("instrument", {}).items()
    }
    lab = {k: _text(v, f"lab.{k}", where, text) for k, v in parts.get("lab", {}).items()}
    reference = None
    if "reference" in parts:
        reference = _parse_reference(parts["reference"], where, text)
    procedure = table.get("procedure", "")
    if isinstance(procedure, dict):
        unknown = [k for k in procedure if k not in ("id", "description")]
        if unknown:
            raise SpecError(
                f"unknown key {unknown[0]!r} in [procedure]",
                path=where,
                line=_line_of(text, unknown[0]) or None,
                hint="allowed keys: id, description",
            )
        procedure = " - ".join(
            _text(procedure[k], f"procedure.{k}", where, text)
            for k in ("id", "description")
            if k in procedure
        )
    else:
        procedure = _text(procedure, "procedure", where, text)
    notes = _text(table.get("notes", ""), "notes", where, text)
    record = {}
    for key in _RECORD_KEYS:
        value = table.get(key, "")
        if isinstance(value, (datetime.date, datetime.datetime)) and key == "date":
            value = value.isoformat()
        record[key] = _text(value, key, where, text).strip()
    return Info(
        device=device,
        reference=reference,
        instrument=instrument,
        lab=lab,
        procedure=procedure,
        notes=notes,
        path=path,
        **record,
    )


def load_info(path: str | os.PathLike[str]) -> Info:
    """Read an information file (TOML).

    Layout (everything optional except ``[device]`` ``id``)::

        procedure = "TF-CAL-07"          # or [procedure] with id, description
        notes = "free text"
        record_number = "SR-2026-0042"   # default: analysis date and input hash
        measured_by = "J. Doe"           # default: a line to sign on
        checked_by = "A. N. Other"       # default: a line to sign on
        date = 2026-03-04                # TOML date or text; default: a line
        [device]        id, description, nominal, serial, model
        [reference]     id, description, and either
                        stability = [[tau_s, deviation], ...]   (log-log, flat outside)
                        or levels = {h0 = ..., h_2 = ...} (with optional f_h in Hz)
        [instrument]    description, gate_time, id
        [lab]           name, operator, ambient_temperature, location

    Unknown keys are errors (they are usually typos).

    Raises
    ------
    SpecError
        One message naming the file, the line where known, and the key.
    """
    table, text, digest = _read_toml(path, "information")
    info = parse_info(table, path=str(path), text=text)
    info.sha256 = digest
    return info
