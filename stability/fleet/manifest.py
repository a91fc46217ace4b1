"""What a fleet is made of: one job per log, from a manifest file or from file-name patterns.

A manifest lists the logs of a fleet, one per row, each with its device id and,
where it differs from the rest, how to read it and the specification to judge
it against. It is a CSV file with a header row::

    path,device,column,tau0,spec
    logs/ocxo-0001.csv,OCXO-0001,2,,ocxo.toml
    logs/ocxo-0002.csv,OCXO-0002,,1s,

or a TOML file with optional defaults and one ``[[log]]`` table per log::

    [defaults]
    nominal = "10MHz"
    spec = "ocxo.toml"

    [[log]]
    path = "logs/ocxo-0001.csv"
    device = "OCXO-0001"
    column = 2

The fields are ``path`` (required), ``device`` (default: from the file name),
``spec`` and ``info`` (a specification and an information file, as
``stability record`` takes them) and the reading hints of
:class:`stability.settings.ReadSettings` (``kind``, ``column``,
``time_column``, ``tau0``, ``nominal``, ...). Relative paths are taken from the
manifest's folder. An empty CSV cell leaves the field unset. Whether a log can
be read is found out when it is analysed: a missing or unreadable log is one
failed row of the fleet, not an error of the manifest.
"""

from __future__ import annotations

import csv
import dataclasses
import glob
import os
import re
import tomllib
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from ..errors import InputError
from ..settings import ReadSettings, RunSettings

__all__ = [
    "FleetJob",
    "MANIFEST_FIELDS",
    "read_manifest",
    "jobs_from_patterns",
    "device_from_name",
    "check_device_id",
]

#: Reading hints a manifest row may set (the names of :class:`ReadSettings`).
_READ_FIELDS = tuple(f.name for f in dataclasses.fields(ReadSettings))
_FLAGS = ("strict", "allow_unusual")
#: Every field a manifest row may hold.
MANIFEST_FIELDS = ("path", "device", "spec", "info", *_READ_FIELDS)
#: Characters a device id may hold: it names the device's output folder.
_DEVICE = re.compile(r"^[A-Za-z0-9_][A-Za-z0-9_.+\-@ ]*$")
_TRUE = {"true": True, "yes": True, "1": True, "false": False, "no": False, "0": False}


@dataclass(frozen=True)
class FleetJob:
    """One log of a fleet: where it is, whose it is, how to read it, what it is judged against.

    Attributes
    ----------
    device
        The device id; its outputs go into ``OUT/<device>/``.
    path
        The log file.
    settings
        The reading, preparation and analysis settings of this log.
    spec, info
        The specification (and information file for a full calibration
        record), or None.
    where
        Where the job was defined (``manifest.csv:3``, or the pattern).
    """

    device: str
    path: Path
    settings: RunSettings
    spec: Path | None = None
    info: Path | None = None
    where: str = ""


def check_device_id(device: Any, where: str | None = None) -> str:
    """A device id usable as a folder name, or an :class:`InputError` saying why not."""
    text = str(device).strip() if device is not None else ""
    if not _DEVICE.match(text) or len(text) > 120:
        raise InputError(
            f"device id {text!r} cannot name an output folder",
            path=where,
            hint="use letters, digits and - _ . + @ or spaces, starting with a letter or digit, "
            "up to 120 characters",
        )
    return text


def _stem(name: str) -> str:
    """A file name without its extensions (``ocxo-7.csv.gz`` -> ``ocxo-7``)."""
    return name.split(".", 1)[0] if not name.startswith(".") else name


def device_from_name(path: str | os.PathLike[str], rule: str | None = None) -> str:
    """The device id a file name gives: ``rule`` searched in the name, or the name's stem.

    ``rule`` is a regular expression; the device id is its group ``id`` when it
    has one, else its first group, else the whole match. A name the rule does
    not match is an :class:`InputError`.
    """
    name = Path(path).name
    if rule is None:
        return check_device_id(_stem(name), str(path))
    pattern = compile_device_rule(rule)
    found = pattern.search(name)
    if found is None:
        raise InputError(
            f"the device-id rule {rule!r} does not match the file name",
            path=str(path),
            hint="change --device-id or rename the log",
        )
    if "id" in pattern.groupindex:
        text = found.group("id")
    elif pattern.groups:
        text = found.group(1)
    else:
        text = found.group(0)
    return check_device_id(text, str(path))


def compile_device_rule(rule: str) -> re.Pattern[str]:
    """The device-id rule as a compiled regular expression (an :class:`InputError` if bad)."""
    try:
        return re.compile(rule)
    except re.error as exc:
        raise InputError(
            f"the device-id rule {rule!r} is not a regular expression: {exc}",
            hint="e.g. --device-id 'OCXO-(\\d+)' or --device-id '(?P<id>[^_]+)_'",
        ) from None


def _value(name: str, value: Any, where: str) -> Any:
    """A manifest value in the type the settings take."""
    if isinstance(value, str):
        value = value.strip()
        if name in _FLAGS:
            if value.lower() not in _TRUE:
                raise InputError(
                    f"{name} must be true or false, got {value!r}", path=where, column=name
                )
            return _TRUE[value.lower()]
    elif name in _FLAGS and not isinstance(value, bool):
        raise InputError(f"{name} must be true or false, got {value!r}", path=where, column=name)
    elif not isinstance(value, (bool, int, float)):
        raise InputError(
            f"{name} must be a text or a number, got {type(value).__name__}",
            path=where,
            column=name,
        )
    return value


def _resolve(base: Path, value: Any) -> Path:
    path = Path(os.path.expanduser(str(value)))
    return path if path.is_absolute() else base / path


def _job(
    fields: Mapping[str, Any],
    settings: RunSettings,
    base: Path,
    where: str,
    rule: str | None,
) -> FleetJob:
    unknown = sorted(set(fields) - set(MANIFEST_FIELDS))
    if unknown:
        raise InputError(
            f"unknown field(s) {', '.join(unknown)}",
            path=where,
            hint=f"known fields: {', '.join(MANIFEST_FIELDS)}",
        )
    given = {k: _value(k, v, where) for k, v in fields.items() if v is not None and v != ""}
    if "path" not in given:
        raise InputError("no path given for this log", path=where, hint="add a path field")
    path = _resolve(base, given.pop("path"))
    device = given.pop("device", None)
    device = check_device_id(device, where) if device is not None else device_from_name(path, rule)
    spec = _resolve(base, given.pop("spec")) if "spec" in given else None
    info = _resolve(base, given.pop("info")) if "info" in given else None
    if info is not None and spec is None:
        raise InputError(
            "an information file without a specification", path=where, hint="add a spec field"
        )
    own = settings.replace(**given) if given else settings
    return FleetJob(device, path, own, spec, info, where)


def _unique(jobs: list[FleetJob]) -> list[FleetJob]:
    seen: dict[str, FleetJob] = {}
    for job in jobs:
        if job.device in seen:
            raise InputError(
                f"device id {job.device!r} is given twice (also at {seen[job.device].where})",
                path=job.where,
                hint="each log needs its own device id (it names the output folder)",
            )
        seen[job.device] = job
    if not jobs:
        raise InputError("the fleet has no logs", hint="list at least one log")
    return jobs


def _read_text(path: Path) -> str:
    try:
        return path.read_text(encoding="utf-8-sig")
    except FileNotFoundError:
        raise InputError("no such manifest file", path=str(path)) from None
    except (OSError, UnicodeDecodeError) as exc:
        reason = exc.strerror if isinstance(exc, OSError) else "not UTF-8 text"
        raise InputError(f"cannot read the manifest: {reason or exc}", path=str(path)) from None


def _csv_rows(path: Path, text: str) -> Iterable[tuple[str, dict[str, Any]]]:
    lines = [(n, line) for n, line in enumerate(text.splitlines(), 1)]
    lines = [(n, line) for n, line in lines if line.strip() and not line.lstrip().startswith("#")]
    if not lines:
        raise InputError("the manifest is empty", path=str(path), hint="add a header row")
    reader = csv.reader([line for _, line in lines])
    header = [h.strip().lower() for h in next(reader)]
    if "path" not in header:
        raise InputError(
            "the manifest's header has no path column",
            path=str(path),
            line=lines[0][0],
            hint=f"a header row naming fields of: {', '.join(MANIFEST_FIELDS)}",
        )
    for (number, _), cells in zip(lines[1:], reader, strict=True):
        where = f"{path}:{number}"
        if len(cells) != len(header):
            raise InputError(f"{len(cells)} cells where the header has {len(header)}", path=where)
        yield where, dict(zip(header, cells, strict=True))


def _toml_rows(path: Path, text: str) -> Iterable[tuple[str, dict[str, Any]]]:
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"not a valid TOML manifest: {exc}", path=str(path)) from None
    extra = sorted(set(data) - {"defaults", "log"})
    if extra:
        raise InputError(
            f"unknown table(s) {', '.join(extra)}",
            path=str(path),
            hint="a manifest holds [defaults] and [[log]] tables",
        )
    defaults = data.get("defaults", {})
    logs = data.get("log", [])
    if not isinstance(defaults, dict) or not isinstance(logs, list):
        raise InputError(
            "[defaults] must be a table and log an array of tables ([[log]])", path=str(path)
        )
    for number, entry in enumerate(logs, 1):
        if not isinstance(entry, dict):
            raise InputError(f"log entry {number} is not a table", path=str(path))
        yield f"{path} log {number}", {**defaults, **entry}


def read_manifest(
    path: str | os.PathLike[str],
    settings: RunSettings | None = None,
    *,
    device_rule: str | None = None,
    spec: str | os.PathLike[str] | None = None,
    info: str | os.PathLike[str] | None = None,
) -> list[FleetJob]:
    """The jobs of a manifest file (``.toml``: TOML, anything else: CSV); see the module doc.

    ``settings`` are the fleet's settings; a row's reading hints replace theirs
    for that log. ``device_rule`` gives the device id of rows without one
    (:func:`device_from_name`); ``spec`` and ``info`` apply to the rows that
    name none (taken as given, not from the manifest's folder).
    """
    source = Path(path)
    text = _read_text(source)
    base = source.parent
    rows = _toml_rows(source, text) if source.suffix.lower() == ".toml" else _csv_rows(source, text)
    settings = settings if settings is not None else RunSettings()
    fallback = {
        k: str(Path(v).absolute()) for k, v in (("spec", spec), ("info", info)) if v is not None
    }
    jobs = []
    for where, fields in rows:
        given = {k: v for k, v in fields.items() if v is not None and v != ""}
        jobs.append(_job({**fallback, **given}, settings, base, where, device_rule))
    return _unique(jobs)


def jobs_from_patterns(
    patterns: Iterable[str | os.PathLike[str]],
    settings: RunSettings | None = None,
    *,
    device_rule: str | None = None,
    spec: str | os.PathLike[str] | None = None,
    info: str | os.PathLike[str] | None = None,
) -> list[FleetJob]:
    """One job per file matching the glob ``patterns`` (``**`` descends), sorted by name.

    The device id comes from each file name (:func:`device_from_name`). A
    pattern that matches no file is an :class:`InputError` naming it.
    """
    settings = settings if settings is not None else RunSettings()
    jobs = []
    seen: set[Path] = set()
    for pattern in patterns:
        text = os.path.expanduser(str(pattern))
        found = sorted(Path(p) for p in glob.glob(text, recursive=True) if Path(p).is_file())
        if not found:
            raise InputError(
                "no log matches this pattern", path=str(pattern), hint="check the pattern"
            )
        for path in found:
            if path.resolve() in seen:
                continue
            seen.add(path.resolve())
            device = device_from_name(path, device_rule)
            jobs.append(
                FleetJob(
                    device,
                    path,
                    settings,
                    Path(spec) if spec is not None else None,
                    Path(info) if info is not None else None,
                    str(path),
                )
            )
    return _unique(jobs)
