"""Specification masks, device information and confidence-aware verdicts.

A *specification* is an upper limit on one statistic (for example the
overlapping Allan deviation) at listed averaging times, read from a TOML file
[1]_ of this project's own layout (:func:`load_spec`). An *information file*
(:func:`load_info`) identifies the device, the reference it was measured
against, the instrument, the lab and the procedure; its ``[reference]`` table
may state the reference's own stability.

:func:`judge` compares a :class:`~stability.table.StabilityTable` with a
specification. The verdict at each tau uses the confidence interval of the
estimate, recomputed at the specification's confidence level from the stored
equivalent degrees of freedom (chi-squared interval, [2]_ section 5.3):

``pass``
    the upper bound of the interval is at or below the limit;
``fail``
    the lower bound is above the limit;
``inconclusive``
    the limit lies inside the interval (the data cannot decide at that
    confidence), or the row has a deviation but no interval (no EDF);
``not measured``
    the record has no estimate at that tau (too short, or the tau is neither
    measured nor, with interpolation on, between two measured taus).

This is the guarded-acceptance idea of decision rules that take the
measurement uncertainty into account ([3]_ section 7.8.6, [4]_): a result
is only called conforming when its whole interval is inside the limit.

Interpolation (``interpolate = true``, the default): the limit is a
straight line on log-log axes between listed taus; every measured tau of the
statistic within the specification's tau range is judged against that line,
and a listed tau that was not itself measured is judged on the estimate,
lower and upper bound interpolated log-log between the neighbouring measured
taus (flagged ``interpolated``). With ``interpolate = false`` only the listed
taus are judged, and only where the table has a row at that tau (to 1e-9
relative).

The overall verdict is ``fail`` when any judged tau fails, ``pass`` when every
judged tau passes (and at least one was judged), ``not measured`` when no tau
could be judged, and ``inconclusive`` otherwise.

Reference contribution: a measurement against a reference shows the
combined instability of both. A reference should be at least three times
more stable than the device (common practice, [2]_ section 5.13); taus where
the reference's stated stability exceeds one third of the measured value are
flagged ``reference-limited``, and the device-only estimate
``sqrt(max(0, measured^2 - reference^2))`` (independent noises add in
variance, [2]_ section 5.13) is reported beside the measured value, never in
its place.

References
----------
.. [1] TOML v1.0.0 specification, https://toml.io/en/v1.0.0 (read with
   Python's ``tomllib``).
.. [2] W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065
   (2008), sections 5.3 (confidence intervals) and 5.13 (reference and
   measurement-system noise).
.. [3] ISO/IEC 17025:2017, *General requirements for the competence of
   testing and calibration laboratories*, 7.1.3 and 7.8.6 (decision rules).
.. [4] JCGM 106:2012, *Evaluation of measurement data - The role of
   measurement uncertainty in conformity assessment*, section 8 (guarded
   acceptance).
"""

from __future__ import annotations

import hashlib
import math
import os
import re
import tomllib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from .errors import InputError, SpecError
from .table import StabilityTable

__all__ = [
    "VERDICTS",
    "REFERENCE_RATIO",
    "Spec",
    "Reference",
    "Info",
    "Check",
    "Judgement",
    "load_spec",
    "load_info",
    "parse_spec",
    "parse_info",
    "judge",
    "reference_contribution",
    "verdict_for",
    "overall_verdict",
]

#: The verdict words, in the order they are reported.
VERDICTS = ("pass", "fail", "inconclusive", "not measured")

#: A reference should be at least this many times more stable than the device (common practice).
REFERENCE_RATIO = 3.0

_REL_TOL = 1e-9
_SPEC_KEYS = ("statistic", "confidence", "interpolate", "limit", "description")
_LIMIT_KEYS = ("tau_s", "max")
_INFO_TABLES = {
    "device": ("id", "description", "nominal", "serial", "model"),
    "reference": ("id", "description", "stability", "levels", "f_h"),
    "instrument": ("description", "gate_time", "id"),
    "lab": ("name", "operator", "ambient_temperature", "location"),
}
_INFO_KEYS = (*_INFO_TABLES, "procedure", "notes")
_LEVEL_NAMES = {"h2": 2, "h1": 1, "h0": 0, "h_1": -1, "h_2": -2}


# ---------------------------------------------------------------------- data types
@dataclass
class Spec:
    """A specification mask: upper limits of one statistic at listed taus.

    Attributes
    ----------
    statistic
        Statistic identifier the limits apply to (e.g. ``"oadev"``).
    confidence
        Two-sided confidence level of the intervals the verdicts use.
    interpolate
        Judge between listed taus against the log-log line through the limits.
    limits
        ``(tau_s, max)`` pairs, taus strictly increasing.
    path, sha256
        The file it was read from and its SHA-256 (None when built in code).
    description
        Free text (optional).
    """

    statistic: str
    confidence: float
    interpolate: bool
    limits: list[tuple[float, float]]
    path: str | None = None
    sha256: str | None = None
    description: str = ""

    def limit_at(self, tau: Any) -> np.ndarray:
        """The limit at ``tau``: log-log interpolated between listed taus, NaN outside."""
        tau = np.asarray(tau, dtype=float)
        taus = np.log([t for t, _ in self.limits])
        tops = np.log([m for _, m in self.limits])
        inside = (tau >= self.limits[0][0] * (1 - _REL_TOL)) & (
            tau <= self.limits[-1][0] * (1 + _REL_TOL)
        )
        with np.errstate(divide="ignore", invalid="ignore"):
            value = np.exp(np.interp(np.log(np.where(tau > 0, tau, np.nan)), taus, tops))
        return np.where(inside, value, np.nan)

    def to_dict(self) -> dict[str, Any]:
        return {
            "statistic": self.statistic,
            "confidence": self.confidence,
            "interpolate": self.interpolate,
            "limits": [{"tau_s": t, "max": m} for t, m in self.limits],
            "description": self.description,
            "path": self.path,
            "sha256": self.sha256,
        }


@dataclass
class Reference:
    """The reference oscillator and, optionally, its stated stability.

    Either ``points`` (``(tau_s, deviation)`` pairs, interpolated log-log and
    held flat outside their range) or ``levels`` (power-law coefficients
    alpha -> h_alpha, turned into an Allan deviation by
    :func:`stability.powerlaw.model_from_levels`) or neither.
    """

    id: str = ""
    description: str = ""
    points: list[tuple[float, float]] | None = None
    levels: dict[int, float] | None = None
    f_h: float | None = None

    @property
    def has_stability(self) -> bool:
        return bool(self.points) or bool(self.levels)

    def deviation(self, tau: Any, *, f_h: float = 0.5) -> tuple[np.ndarray, list[str]]:
        """The reference's stability at ``tau`` and notes on how it was obtained.

        ``f_h`` (Hz) is used for level models without their own ``f_h``.
        Returns NaN everywhere when no stability is stated.
        """
        tau = np.atleast_1d(np.asarray(tau, dtype=float))
        notes: list[str] = []
        if self.points:
            t = np.array([p[0] for p in self.points])
            d = np.array([p[1] for p in self.points])
            if t.size == 1:
                value = np.full(tau.shape, d[0])
            else:
                value = np.exp(np.interp(np.log(tau), np.log(t), np.log(d)))
            outside = (tau < t[0] * (1 - _REL_TOL)) | (tau > t[-1] * (1 + _REL_TOL))
            if outside.any():
                notes.append(
                    "reference stability held flat outside its stated taus "
                    f"({t[0]:g} s to {t[-1]:g} s)"
                )
            return value, notes
        if self.levels:
            from .powerlaw import model_from_levels

            model = model_from_levels(self.levels, self.f_h or f_h)
            return model.deviation(tau), notes
        return np.full(tau.shape, np.nan), notes

    def to_dict(self) -> dict[str, Any]:
        return {
            "id": self.id,
            "description": self.description,
            "stability": None if self.points is None else [list(p) for p in self.points],
            "levels": None
            if self.levels is None
            else {_level_name(a): v for a, v in self.levels.items()},
            "f_h_hz": self.f_h,
        }


def _level_name(alpha: int) -> str:
    return {v: k for k, v in _LEVEL_NAMES.items()}[alpha]


@dataclass
class Info:
    """Identification of a calibration: device, reference, instrument, lab, procedure, notes."""

    device: dict[str, Any]
    reference: Reference | None = None
    instrument: dict[str, Any] = field(default_factory=dict)
    lab: dict[str, Any] = field(default_factory=dict)
    procedure: str = ""
    notes: str = ""
    path: str | None = None
    sha256: str | None = None

    @property
    def device_id(self) -> str:
        return str(self.device["id"])

    def to_dict(self) -> dict[str, Any]:
        return {
            "device": dict(self.device),
            "reference": None if self.reference is None else self.reference.to_dict(),
            "instrument": dict(self.instrument),
            "lab": dict(self.lab),
            "procedure": self.procedure,
            "notes": self.notes,
            "path": self.path,
            "sha256": self.sha256,
        }


@dataclass
class Check:
    """The verdict at one tau.

    Attributes
    ----------
    tau_s, limit
        Where and against what limit the estimate is judged.
    listed
        True for a tau listed in the specification, False for a measured tau
        judged against the interpolated limit line.
    deviation, ci_low, ci_high, edf
        The estimate and its interval at the specification's confidence (NaN
        where there is none).
    interpolated
        The estimate and bounds were interpolated log-log between measured taus.
    verdict
        One of :data:`VERDICTS`.
    reference, reference_limited, device_only
        The reference's stated stability at this tau, whether it exceeds one
        third of the measured value, and the device-only estimate
        sqrt(max(0, measured^2 - reference^2)) (NaN without a stated reference).
    note
        Why the verdict is what it is, where that is not obvious.
    """

    tau_s: float
    limit: float
    listed: bool
    deviation: float
    ci_low: float
    ci_high: float
    edf: float
    interpolated: bool
    verdict: str
    reference: float = math.nan
    reference_limited: bool = False
    device_only: float = math.nan
    note: str = ""

    def to_dict(self) -> dict[str, Any]:
        from .files import jsonable

        return jsonable(
            {
                "tau_s": self.tau_s,
                "limit": self.limit,
                "listed": self.listed,
                "deviation": self.deviation,
                "ci_low": self.ci_low,
                "ci_high": self.ci_high,
                "edf": self.edf,
                "interpolated": self.interpolated,
                "verdict": self.verdict,
                "reference": self.reference,
                "reference_limited": self.reference_limited,
                "device_only": self.device_only,
                "note": self.note,
            }
        )


@dataclass
class Judgement:
    """All verdicts of one table against one specification."""

    spec: Spec
    checks: list[Check]
    overall: str
    notes: list[str] = field(default_factory=list)

    @property
    def statistic(self) -> str:
        return self.spec.statistic

    @property
    def confidence(self) -> float:
        return self.spec.confidence

    @property
    def listed(self) -> list[Check]:
        """The checks at the specification's own taus, in order."""
        return [c for c in self.checks if c.listed]

    def plot_limits(self) -> list[tuple[float, float, str | None]]:
        """``(tau_s, max, verdict)`` rows for :func:`stability.plots.stability_figure`."""
        return [
            (c.tau_s, c.limit, None if c.verdict == "not measured" else c.verdict)
            for c in self.listed
        ]

    def verdict_at(self, tau: float) -> Check | None:
        """The check at ``tau`` (to 1e-9 relative), if any."""
        for c in self.checks:
            if math.isclose(c.tau_s, tau, rel_tol=_REL_TOL):
                return c
        return None

    def to_dict(self) -> dict[str, Any]:
        return {
            "statistic": self.statistic,
            "confidence": self.confidence,
            "overall": self.overall,
            "checks": [c.to_dict() for c in self.checks],
            "notes": list(self.notes),
        }


# ---------------------------------------------------------------------- reading files
def _read_toml(path: str | os.PathLike[str], what: str) -> tuple[dict[str, Any], str, str]:
    source = Path(path)
    try:
        data = source.read_bytes()
    except FileNotFoundError:
        raise SpecError(f"no such {what} file", path=str(source), hint="check the path") from None
    except IsADirectoryError:
        raise SpecError(f"the {what} file is a folder", path=str(source)) from None
    except OSError as exc:
        raise SpecError(
            f"cannot read the {what} file: {exc.strerror or exc}", path=str(source)
        ) from None
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
    number = float(value)
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
    from .deviations import get_statistic

    try:
        statistic = get_statistic(str(statistic)).name
    except InputError as exc:
        raise bad(
            f"key 'statistic': unknown statistic {table['statistic']!r}", "statistic", hint=exc.hint
        ) from None
    confidence = table.get("confidence", 0.95)
    level = _number(confidence)
    if level is None or not 0.0 < level < 1.0:
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
        if tau is None or tau <= 0:
            raise bad(
                f"key 'tau_s' in [[limit]] number {i + 1} must be a positive number of seconds, "
                f"got {row['tau_s']!r}",
                "tau_s",
                i,
                "limit",
            )
        top = _number(row["max"])
        if top is None or top <= 0:
            raise bad(
                f"key 'max' in [[limit]] number {i + 1} must be a positive number, "
                f"got {row['max']!r}",
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
        for item in points:
            ok = isinstance(item, list) and len(item) == 2
            tau = _number(item[0]) if ok else None
            dev = _number(item[1]) if ok else None
            if tau is None or dev is None or tau <= 0 or dev <= 0:
                raise SpecError(
                    f"key 'reference.stability' must be [[tau_s, deviation], ...] with positive "
                    f"numbers, got {item!r}",
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
            if number is None or number < 0:
                raise SpecError(
                    f"key 'reference.levels.{key}' must be a non-negative number, got {value!r}",
                    path=where,
                    line=line,
                )
            out[_LEVEL_NAMES[key]] = number
        ref.levels = out
    if "f_h" in raw:
        f_h = _number(raw["f_h"])
        if f_h is None or f_h <= 0:
            raise SpecError(
                f"key 'reference.f_h' must be a positive frequency in Hz, got {raw['f_h']!r}",
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
    return Info(
        device=device,
        reference=reference,
        instrument=instrument,
        lab=lab,
        procedure=procedure,
        notes=notes,
        path=path,
    )


def load_info(path: str | os.PathLike[str]) -> Info:
    """Read an information file (TOML).

    Layout (everything optional except ``[device]`` ``id``)::

        procedure = "TF-CAL-07"          # or [procedure] with id, description
        notes = "free text"
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


# ---------------------------------------------------------------------- verdicts
def verdict_for(low: float, high: float, limit: float, deviation: float = math.nan) -> str:
    """The verdict of one estimate against one limit (see the module notes).

    ``pass`` when ``high <= limit``, ``fail`` when ``low > limit``,
    ``inconclusive`` otherwise or when the interval is missing but the
    estimate exists, ``not measured`` when neither exists.
    """
    if math.isfinite(low) and math.isfinite(high):
        if high <= limit:
            return "pass"
        if low > limit:
            return "fail"
        return "inconclusive"
    if math.isfinite(deviation):
        return "inconclusive"
    return "not measured"


def overall_verdict(verdicts: list[str]) -> str:
    """``fail`` if any fails; ``pass`` if all pass; ``not measured`` if none judged."""
    judged = [v for v in verdicts if v != "not measured"]
    if any(v == "fail" for v in verdicts):
        return "fail"
    if not judged:
        return "not measured"
    if all(v == "pass" for v in verdicts):
        return "pass"
    return "inconclusive"


def _validate_judge_args(table: Any, spec: Any) -> None:
    if not isinstance(table, StabilityTable):
        raise InputError(
            f"table must be a stability.StabilityTable, got {type(table).__name__}",
            hint="build one with stability.analyze",
        )
    if not isinstance(spec, Spec):
        raise InputError(
            f"spec must be a stability.spec.Spec, got {type(spec).__name__}",
            hint="read one with stability.spec.load_spec",
        )
    if spec.statistic not in table.results:
        raise SpecError(
            f"the specification is for {spec.statistic!r}, which the analysis did not compute",
            path=spec.path,
            hint=f"add {spec.statistic} to --stats",
        )


def _loglog(x: float, xs: np.ndarray, ys: np.ndarray) -> float:
    return float(np.exp(np.interp(math.log(x), np.log(xs), np.log(ys))))


def reference_contribution(deviation: Any, reference: Any) -> tuple[np.ndarray, np.ndarray]:
    """Reference-limited flags and device-only estimates.

    Returns ``(limited, device_only)``: ``limited`` is True where the reference
    exceeds one third of the measured deviation (:data:`REFERENCE_RATIO`,
    common practice); ``device_only`` is sqrt(max(0, measured^2 - reference^2))
    (independent noises add in variance, NIST SP 1065 section 5.13), NaN where
    either is missing.
    """
    dev = np.asarray(deviation, dtype=float)
    ref = np.asarray(reference, dtype=float)
    ok = np.isfinite(dev) & np.isfinite(ref)
    limited = ok & (ref * REFERENCE_RATIO > dev)
    with np.errstate(invalid="ignore"):
        device = np.where(ok, np.sqrt(np.maximum(0.0, dev**2 - ref**2)), np.nan)
    return limited, device


def judge(table: StabilityTable, spec: Spec, *, reference: Reference | None = None) -> Judgement:
    """Judge a results table against a specification.

    Parameters
    ----------
    table
        The qualified results (from :func:`stability.analyze`).
    spec
        The specification (from :func:`load_spec`).
    reference
        The reference oscillator (``Info.reference``); when it states a
        stability, every check carries the reference-limited flag and the
        device-only estimate.

    Returns
    -------
    Judgement
        One :class:`Check` per listed tau (in order) and, with interpolation
        on, one per measured tau between them; the overall verdict.
    """
    _validate_judge_args(table, spec)
    result = table[spec.statistic]
    low_all, high_all = result.interval(spec.confidence)
    low_all = np.atleast_1d(np.asarray(low_all, dtype=float))
    high_all = np.atleast_1d(np.asarray(high_all, dtype=float))
    taus = result.tau
    dev = result.deviation
    usable = np.isfinite(dev) & (dev > 0)
    bounded = usable & np.isfinite(low_all) & np.isfinite(high_all) & (low_all > 0)
    notes: list[str] = []
    checks: list[Check] = []

    def row_index(tau: float) -> int | None:
        close = np.flatnonzero(np.abs(taus - tau) <= _REL_TOL * tau)
        return int(close[0]) if close.size else None

    def from_row(i: int, tau: float, limit: float, listed: bool) -> Check:
        d, lo, hi = float(dev[i]), float(low_all[i]), float(high_all[i])
        verdict = verdict_for(lo, hi, limit, d)
        note = ""
        if verdict == "inconclusive" and not (math.isfinite(lo) and math.isfinite(hi)):
            note = "no confidence interval at this tau (no EDF)"
        if verdict == "not measured":
            note = "no estimate at this tau"
        return Check(
            tau_s=float(tau),
            limit=float(limit),
            listed=listed,
            deviation=d,
            ci_low=lo,
            ci_high=hi,
            edf=float(result.edf[i]),
            interpolated=False,
            verdict=verdict,
            note=note,
        )

    for tau, limit in spec.limits:
        i = row_index(tau)
        if i is not None:
            checks.append(from_row(i, tau, limit, True))
            continue
        check = Check(
            tau_s=tau,
            limit=limit,
            listed=True,
            deviation=math.nan,
            ci_low=math.nan,
            ci_high=math.nan,
            edf=math.nan,
            interpolated=False,
            verdict="not measured",
        )
        measured = taus[usable]
        if not spec.interpolate:
            check.note = "tau not in the analysis grid and interpolation is off"
        elif measured.size < 2 or not measured.min() < tau < measured.max():
            check.note = "outside the measured taus (record too short or grid too narrow)"
        else:
            # Neighbouring measured taus with an estimate; bounds only if both have them.
            below = np.flatnonzero(usable & (taus < tau))[-1]
            above = np.flatnonzero(usable & (taus > tau))[0]
            pair = np.array([below, above])
            check.deviation = _loglog(tau, taus[pair], dev[pair])
            check.interpolated = True
            if bounded[pair].all():
                check.ci_low = _loglog(tau, taus[pair], low_all[pair])
                check.ci_high = _loglog(tau, taus[pair], high_all[pair])
                check.note = (
                    f"estimate and bounds interpolated log-log between {taus[below]:g} s "
                    f"and {taus[above]:g} s"
                )
            else:
                check.note = "estimate interpolated; a neighbour has no confidence interval"
            check.verdict = verdict_for(check.ci_low, check.ci_high, limit, check.deviation)
        checks.append(check)
    if spec.interpolate and len(spec.limits) > 1:
        listed = [t for t, _ in spec.limits]
        between = [
            i
            for i in range(len(taus))
            if spec.limits[0][0] < taus[i] < spec.limits[-1][0]
            and not any(math.isclose(taus[i], t, rel_tol=_REL_TOL) for t in listed)
        ]
        for i in between:
            limit = float(spec.limit_at(taus[i]))
            checks.append(from_row(i, float(taus[i]), limit, False))
        if between:
            notes.append(
                f"{len(between)} measured tau(s) between the listed limits judged against "
                "the limit line interpolated log-log"
            )
    checks.sort(key=lambda c: c.tau_s)
    if reference is not None and reference.has_stability:
        f_h = float(table.settings.get("f_h_hz") or 0.0) or 0.5 / float(
            getattr(table.measurement, "tau0", 1.0) or 1.0
        )
        values, ref_notes = reference.deviation([c.tau_s for c in checks], f_h=f_h)
        limited, device = reference_contribution([c.deviation for c in checks], values)
        for c, r, lim, d in zip(checks, values, limited, device, strict=True):
            c.reference, c.reference_limited, c.device_only = float(r), bool(lim), float(d)
        notes.extend(ref_notes)
        if limited.any():
            notes.append(
                "reference-limited at "
                + ", ".join(f"{c.tau_s:g} s" for c in checks if c.reference_limited)
                + ": the reference's stated stability exceeds one third of the measured value"
            )
    return Judgement(
        spec=spec, checks=checks, overall=overall_verdict([c.verdict for c in checks]), notes=notes
    )
