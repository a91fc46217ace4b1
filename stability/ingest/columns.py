"""Which columns of a log to read, and what the value column holds.

From the first lines of the log (the sniffer's sample) the reader picks the time
column (a named time column first, then date + time-of-day pairs, then the first
column of stamps beside numeric columns), the value column (as given, else the
first numeric column; the others are reported as channels), and the kind and
unit of the values: from a unit written after each value, from the header, or,
for absolute frequency, from readings that lie near a standard nominal frequency.

References
----------
1. W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065 (2008),
   section 5.2 (phase and frequency data).
2. IEEE Std 1139-2008 (fractional frequency y = (f - f0)/f0).
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field

import numpy as np

from ..errors import InputError
from ..units import format_frequency
from . import timestamps as ts
from . import values as vals
from .auxiliary import aux_quantity_of
from .hints import ReadHints
from .report import ColumnInfo, LogReport
from .sniff import Dialect, RawSource, _field_kind, split_fields

__all__ = [
    "ColumnPlan",
    "TimeCandidate",
    "column_samples",
    "plan_columns",
    "decide_kind",
    "columns_info",
    "other_columns_hint",
]


@dataclass
class TimeCandidate:
    """A column (or date + time-of-day pair) that may hold the time axis."""

    cols: list[int]
    fmt: ts.TimeFormat
    rank: int  # 0 date-time, 1 epoch or MJD, 2 elapsed time by its header, 3 elapsed by position
    counter: bool = False  # integers rising by one per row


@dataclass
class ColumnPlan:
    """The columns to read (0-based numbers) and the role of each.

    Attributes
    ----------
    names
        Header names, ``""`` where a column has none.
    time_cols
        The time column, or the date and time-of-day columns, or empty.
    time_fmt
        Format of the time stamps, or None without a time column.
    value_col
        The value column analysed.
    channels
        Every numeric value column, the analysed one included.
    roles
        Role of each column by number (``"time"``, ``"value"``, ``"channel"``,
        ``"row number"`` ...).
    time_reason
        Why the time column was chosen, in plain words ("" without one).
    other_times
        Other columns that hold time: evidence to check the sample interval
        against, never read as values.
    row_numbers
        Columns that count rows (integers rising by one per row).
    """

    names: list[str]
    time_cols: list[int]
    time_fmt: ts.TimeFormat | None
    value_col: int
    channels: list[int]
    roles: dict[int, str]
    time_reason: str = ""
    other_times: list[TimeCandidate] = field(default_factory=list)
    row_numbers: list[int] = field(default_factory=list)

    @property
    def display(self) -> list[str]:
        """Column names for messages: the header name, else ``column N``."""
        return [n or f"column {i + 1}" for i, n in enumerate(self.names)]


def column_samples(src: RawSource, d: Dialect) -> list[list[str]]:
    """The fields of each column in the sampled data rows of full width."""
    cols: list[list[str]] = [[] for _ in range(d.ncols)]
    for ln in src.sample[d.first_data_line - 1 :]:
        if not ln.strip():
            continue
        fields = split_fields(ln, d.delimiter)
        if len(fields) != d.ncols:
            continue
        for j, f in enumerate(fields):
            cols[j].append(f)
    return cols


def _listing(names: list[str]) -> str:
    return ", ".join(f"{i + 1}={n!r}" if n else str(i + 1) for i, n in enumerate(names))


def _resolve(spec: int | str, names: list[str], what: str, path: str, option: str) -> int:
    listing = _listing(names)
    if isinstance(spec, int) or (isinstance(spec, str) and spec.strip().isdigit()):
        num = int(spec)
        if 1 <= num <= len(names):
            return num - 1
        raise InputError(
            f"{what} {spec} does not exist: the log has {len(names)} column(s)",
            path=path,
            hint=f"pass {option} with one of {listing}",
        )
    want = spec.strip().lower()
    for i, n in enumerate(names):
        if n.strip().lower() == want:
            return i
    raise InputError(
        f"no {what} named {spec!r}", path=path, hint=f"pass {option} with one of {listing}"
    )


_COMMA_NUMBER = re.compile(r"^[-+]?\d+,\d+$")


def _point(value: str) -> str:
    """A decimal-comma number with a point instead (other text unchanged)."""
    v = value.strip()
    return v.replace(",", ".") if _COMMA_NUMBER.match(v) else value


def _no_time(spec: int | str | None) -> bool:
    return isinstance(spec, str) and spec.strip().lower() == "none"


def plan_columns(src: RawSource, d: Dialect, hints: ReadHints, rep: LogReport) -> ColumnPlan:
    """Pick the time and value columns of a log (notes a choice among several channels).

    The time axis is chosen by evidence: a date-time column beats epoch or MJD
    numbers, which beat elapsed time named by its header; a column of integers
    rising by one per row is a row number unless its header names a time unit.
    A given ``column`` is never taken as the time axis, and a given
    ``time_column`` never as the value column, so either can be given alone.
    """
    raw = column_samples(src, d)
    samples = raw
    if d.decimal == ",":  # elapsed seconds written 0,1 are numbers to the time detector
        samples = [[_point(v) for v in col] for col in raw]
    names = [n if n else "" for n in (d.header or [""] * d.ncols)]
    names += [""] * (d.ncols - len(names))
    empty = [not any(s for s in samples[i]) and not names[i] for i in range(d.ncols)]
    given_v = (
        None
        if hints.column is None
        else _resolve(hints.column, names, "column", src.path, "--column")
    )
    found = _time_candidates(samples, names, empty, d.decimal, given_v)
    row_numbers = [
        i
        for i in range(d.ncols)
        if i != given_v
        and not empty[i]
        and ts.is_counter(samples[i])
        and not ts.says_seconds(names[i])
    ]
    time_cols: list[int] = []
    fmt: ts.TimeFormat | None = None
    reason = ""
    if _no_time(hints.time_column):
        reason = "none: rows read in sequence (--time-column none)"
    elif hints.time_column is not None:
        time_cols, fmt = _given_time_columns(hints.time_column, samples, names, src.path)
        if given_v is not None and given_v in time_cols:
            shown = names[given_v] or f"column {given_v + 1}"
            raise InputError(
                f"column {shown!r} is given both as the time column and as the value column",
                path=src.path,
                hint=f"pass --column and --time-column with different columns ({_listing(names)})",
            )
        reason = "given with --time-column"
    elif found:
        best = min(found, key=lambda c: (c.rank, c.cols[0]))
        time_cols, fmt, reason = best.cols, best.fmt, _why_time(best, names)
    row_numbers = [i for i in row_numbers if i not in time_cols]
    others = [
        c
        for c in found
        if c.cols != time_cols and not set(c.cols) & set(time_cols) and c.cols[0] not in row_numbers
    ]
    not_values = set(time_cols) | set(row_numbers) | {c for o in others for c in o.cols}
    channels = [
        i
        for i in range(d.ncols)
        if i not in not_values and not empty[i] and _mostly_numbers(raw[i], d.decimal)
    ]
    v = _value_column(given_v, names, time_cols, channels, row_numbers, src.path, rep)
    if v not in channels:
        channels.insert(0, v)
    roles: dict[int, str] = {t: "time" for t in time_cols}
    if len(time_cols) == 2:
        roles[time_cols[0]], roles[time_cols[1]] = "date", "time of day"
    for o in others:
        for c in o.cols:
            roles[c] = "time (checked against the time column)" if time_cols else "time (not used)"
    for c in row_numbers:
        roles[c] = "row number"
    for c in channels:
        roles[c] = "value" if c == v else "channel"
    return ColumnPlan(names, time_cols, fmt, v, channels, roles, reason, others, row_numbers)


def _why_time(c: TimeCandidate, names: list[str]) -> str:
    what = {
        0: "date-time stamps",
        1: "stamps on an absolute scale",
        2: "its header names time",
        3: "the first column, rising numbers beside value columns",
    }[c.rank]
    if c.counter:
        what += ", counting in whole units"
    return what


def _given_time_columns(
    spec: int | str, samples: list[list[str]], names: list[str], path: str
) -> tuple[list[int], ts.TimeFormat]:
    """The time column the user named (with the next one when it is a date-only column)."""
    t = _resolve(spec, names, "time column", path, "--time-column")
    time_cols: list[int] = []
    fmt = ts.detect_time_format(samples[t], names[t] or "time")
    if fmt is None and t + 1 < len(names) and ts.is_date_only(samples[t]):
        fmt = ts.detect_time_format(
            [a + " " + b for a, b in zip(samples[t], samples[t + 1], strict=False)]
        )
        time_cols = [t, t + 1] if fmt else []
    if fmt is None:
        shown = names[t] or f"column {t + 1}"
        raise InputError(
            f"column {shown!r} does not hold time stamps in a known format",
            path=path,
            column=shown,
            hint="use ISO 8601, dd.mm.yyyy hh:mm:ss, epoch seconds, MJD or elapsed seconds, "
            "or pass --time-column none --tau0 with the sample interval",
        )
    return time_cols or [t], fmt


def _time_candidates(
    samples: list[list[str]],
    names: list[str],
    empty: list[bool],
    decimal: str,
    exclude: int | None,
) -> list[TimeCandidate]:
    """Every column (or date + time-of-day pair) that holds time, with its rank."""
    ncols = len(names)
    out: list[TimeCandidate] = []
    paired: set[int] = set()
    for i in range(ncols):
        if empty[i] or i == exclude or i in paired:
            continue
        if (
            i + 1 < ncols
            and i + 1 != exclude
            and ts.is_date_only(samples[i])
            and ts.is_time_of_day(samples[i + 1])
        ):
            fmt = ts.detect_time_format(
                [a + " " + b for a, b in zip(samples[i], samples[i + 1], strict=False)]
            )
            if fmt:
                out.append(TimeCandidate([i, i + 1], fmt, 0))
                paired.add(i + 1)
                continue
        f = ts.detect_time_format(samples[i], names[i])
        if f is None:
            continue
        counter = ts.is_counter(samples[i])
        if f.style == "datetime":
            out.append(TimeCandidate([i], f, 0))
        elif vals.kind_from_name(names[i]) is not None and not ts.is_time_name(names[i]):
            continue  # a value column with a unit of its own (TI (ns), Frequency [Hz])
        elif ts.is_time_name(names[i]) and (not counter or ts.says_seconds(names[i])):
            out.append(TimeCandidate([i], f, 1 if f.style in ("epoch", "mjd") else 2, counter))
        elif (
            i == 0
            and ncols >= 2
            and not counter
            and vals.kind_from_name(names[i]) is None
            and _numeric_others(samples, empty, i)
        ):
            out.append(TimeCandidate([i], f, 1 if f.style in ("epoch", "mjd") else 3))
    return out


def _value_column(
    given: int | None,
    names: list[str],
    time_cols: list[int],
    channels: list[int],
    row_numbers: list[int],
    path: str,
    rep: LogReport,
) -> int:
    """The value column: as given, else the first numeric one."""
    display = [n or f"column {i + 1}" for i, n in enumerate(names)]
    if given is not None:
        return given
    if not channels:
        skipped = [c for c in row_numbers if c not in time_cols]
        extra = (
            f" (column {', '.join(repr(display[c]) for c in skipped)} counts rows)"
            if skipped
            else ""
        )
        raise InputError(
            f"no column of numeric values found{extra}",
            path=path,
            hint=f"pass --column with the value column's number or name ({_listing(names)})",
        )
    # a column whose header names an auxiliary quantity (temperature_C ...) is not the value
    plain = [c for c in channels if aux_quantity_of(names[c]) is None] or channels
    v = plain[0]
    if len(plain) > 1:
        rep.note(
            f"The log has {len(plain)} value columns "
            f"({', '.join(display[c] for c in plain)}); analysing the first, "
            f"{display[v]!r} (choose another with --column)."
        )
    aux = [c for c in channels if c not in plain]
    if aux:
        rep.note(
            f"Auxiliary column(s) {', '.join(repr(display[c]) for c in aux)} beside the values "
            "(read with --aux or --regress)."
        )
    return v


def _mostly_numbers(sample: list[str], decimal: str) -> bool:
    kinds = [_field_kind(s, decimal) for s in sample]
    return bool(kinds) and sum(k in ("num", "bad", "empty") for k in kinds) >= 0.5 * len(kinds)


def _numeric_others(samples: list[list[str]], empty: list[bool], skip: int) -> bool:
    return any(
        not empty[j] and _mostly_numbers(samples[j], ".") or _mostly_numbers(samples[j], ",")
        for j in range(len(samples))
        if j != skip and not empty[j]
    )


def other_columns_hint(plan: ColumnPlan) -> str:
    """``--column N`` choices other than the value column, for an error's hint ("" if none)."""
    others = [c for c in plan.channels if c != plan.value_col]
    if not others:
        return ""
    shown = " or ".join(f"--column {c + 1}" for c in others[:3])
    return f"; if {plan.display[plan.value_col]!r} is not the value column, pass {shown}"


# ---------------------------------------------------------------------------- kinds
_SUFFIX_SAMPLE = re.compile(
    r"^[-+]?(?:\d+(?:[.,]\d*)?|[.,]\d+)(?:[eE][-+]?\d+)?\s*([A-Za-zµμ%]{1,7})$"
)


def decide_kind(
    sample: list[str], name: str, d: Dialect, hints: ReadHints, path: str, more_hint: str = ""
) -> tuple[vals.ValueKind, bool]:
    """Kind and unit of the value column, and whether each value carries a unit suffix."""
    suffixes = [m.group(1) for s in sample if (m := _SUFFIX_SAMPLE.match(s.strip()))]
    suffix = len(suffixes) >= 0.5 * max(1, len([s for s in sample if s.strip()]))
    found: vals.ValueKind | None = None
    if suffix:
        unit = max(set(suffixes), key=suffixes.count)
        k = vals.kind_from_unit(unit)
        if k:
            found = vals.ValueKind(
                k[0], vals.unit_spelling(unit), k[1], f"unit {unit!r} written after each value"
            )
    if found is None:
        found = vals.kind_from_name(name) if name else None
    if hints.kind != "auto":
        return _given_kind(hints.kind, found, name, path), suffix
    if found is None:
        found = _kind_from_readings(_sample_numbers(sample, d.decimal), hints.nominal)
    if found is not None:
        return found, suffix
    raise InputError(
        f"cannot tell what the values in {f'column {name!r}' if name else 'the value column'} are",
        path=path,
        hint="pass --kind phase (seconds), --kind frequency (Hz) or --kind fractional" + more_hint,
    )


def _given_kind(kind: str, found: vals.ValueKind | None, name: str, path: str) -> vals.ValueKind:
    """The kind given with ``--kind``, checked against a unit written in the log."""
    compatible = {
        "phase": ("phase", "carrier"),
        "frequency": ("frequency",),
        "fractional": ("fractional",),
    }[kind]
    if found is not None and found.kind in compatible:
        found.reason += f"; kind {kind} as given"
        return found
    if found is not None and found.unit:
        # A written unit contradicts --kind: reading Hz as seconds (say) would give
        # numbers that look plausible and mean nothing.
        raise InputError(
            f"--kind {kind} contradicts the unit {found.unit!r} of column {name!r} "
            f"({found.reason})",
            path=path,
            column=name,
            hint="drop --kind, or pick another column with --column",
        )
    default = {"phase": ("s", 1.0), "frequency": ("Hz", 1.0), "fractional": ("", 1.0)}
    unit, scale = default[kind]
    why = "given with --kind" + (f" (the header suggested {found.kind})" if found else "")
    return vals.ValueKind(kind, unit, scale, why)


def _kind_from_readings(numbers: np.ndarray, nominal: float | None) -> vals.ValueKind | None:
    """Absolute frequency when every sampled reading lies near one nominal frequency."""
    if not numbers.size:
        return None
    nominal = nominal or vals.infer_nominal(float(np.median(numbers)))
    tol = vals.NOMINAL_TOLERANCE
    if nominal and np.all(np.abs(numbers - nominal) <= tol * nominal):
        return vals.ValueKind(
            "frequency", "Hz", 1.0, f"values lie within {tol:g} of {format_frequency(nominal)}"
        )
    return None


def _sample_numbers(sample: list[str], decimal: str) -> np.ndarray:
    out = []
    for s in sample:
        t = s.strip().replace(",", ".") if decimal == "," else s.strip()
        try:
            v = float(t)
        except ValueError:
            continue
        if math.isfinite(v) and abs(v) < vals.SENTINEL:
            out.append(v)
    return np.asarray(out, dtype=np.float64)


def columns_info(plan: ColumnPlan, vk: vals.ValueKind, rep: LogReport) -> list[ColumnInfo]:
    """Every column of the log with its role and, for time and values, its format."""
    out = []
    for i, name in enumerate(plan.names):
        role = plan.roles.get(i, "other")
        detail = ""
        if role in ("time", "date", "time of day"):
            detail = rep.time_format or ""
        elif role == "value":
            detail = f"{vk.kind}, {vk.unit or 'no unit'}"
        elif role == "channel":
            k = vals.kind_from_name(name)
            q = aux_quantity_of(name)
            detail = f"{k.kind}, {k.unit or 'no unit'}" if k else ""
            detail = f"auxiliary: {q[0]}, {q[1]}" if q else detail
        out.append(ColumnInfo(i + 1, name, role, detail))
    return out
