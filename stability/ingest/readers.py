"""Read a counter or time-interval log into a :class:`~stability.measurement.Measurement`.

The reader sniffs the file (container, encoding, dialect; see
:mod:`stability.ingest.sniff`), picks the time and value columns, recognises the
time format and the kind and unit of the values, parses the whole file with
pandas' C parser in chunks (fixed-width date-time stamps are read straight from
the bytes when every line allows it, see :mod:`stability.ingest.fixed_stamps`),
turns instrument errors into reported gaps, places the samples on a uniform
grid, unwraps wrap-arounds and converts to the canonical phase in seconds:
fractional frequency y = (f - f0)/f0 for absolute frequency, x = cycles/f0 for
carrier phase.

References
----------
1. W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065 (2008),
   sections 5.2 (phase and frequency data) and 5.14 (gaps).
2. IEEE Std 1139-2008 (fractional frequency deviation y = (f - f0)/f0; carrier
   phase and time error x = phi/(2 pi f0)).
"""

from __future__ import annotations

import codecs
import hashlib
import math
import os
import re
import threading
import warnings
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from ..errors import InputError
from ..measurement import Measurement, Provenance
from ..units import format_duration, format_frequency, parse_duration, parse_frequency
from . import fixed_stamps as fs
from . import timestamps as ts
from . import values as vals
from .grid import build_grid, unwrap
from .report import ColumnInfo, LogReport
from .sniff import Dialect, RawSource, _field_kind, open_source, sniff_dialect, split_fields

__all__ = ["read_log", "inspect_log", "validate_read_args", "KINDS"]

KINDS = ("auto", "phase", "frequency", "fractional")
_CHUNK_ROWS = 1_000_000
_PROGRESS_BYTES = 50 * 1024 * 1024
_NOMINAL_TOLERANCE = 1e-4
# A given nominal further than this from the readings is a mistake (fractional).
_GIVEN_NOMINAL_LIMIT = 1e-2
# Read fixed-width date-time stamps from the bytes when every line allows it (see
# _fixed_stamp_ticks); False forces the general path, which gives the same result.
_FAST_STAMPS = True


@dataclass
class _Hints:
    kind: str = "auto"
    column: int | str | None = None
    time_column: int | str | None = None
    tau0: float | None = None
    nominal: float | None = None
    wrap: float | None = None
    strict: bool = False
    progress: bool = False
    extra: dict[str, Any] = field(default_factory=dict)


def validate_read_args(
    kind: Any = "auto",
    column: Any = None,
    time_column: Any = None,
    tau0: Any = None,
    nominal: Any = None,
    wrap: Any = None,
    strict: Any = False,
    progress: Any = False,
) -> _Hints:
    """Check the options of :func:`read_log`; raise :class:`InputError` naming the bad one."""
    k = str(kind).strip().lower() if kind is not None else "auto"
    if k not in KINDS:
        raise InputError(f"kind must be one of {', '.join(KINDS)}, got {kind!r}")
    for name, value in (("column", column), ("time_column", time_column)):
        if value is not None and not isinstance(value, (int, str)) or isinstance(value, bool):
            raise InputError(f"{name} must be a 1-based number or a header name, got {value!r}")
        if isinstance(value, int) and value < 1:
            raise InputError(f"{name} numbers start at 1, got {value!r}")
    return _Hints(
        kind=k,
        column=column,
        time_column=time_column,
        tau0=None if tau0 is None else parse_duration(tau0, "tau0"),
        nominal=None if nominal is None else parse_frequency(nominal, "nominal"),
        wrap=None if wrap is None else parse_duration(wrap, "wrap"),
        strict=bool(strict),
        progress=bool(progress),
    )


def _sha256(path: str) -> str:
    digest = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 22), b""):
            digest.update(block)
    return digest.hexdigest()


class _Lines:
    """Raw text of chosen lines, found through a vectorised newline index."""

    def __init__(self, src: RawSource) -> None:
        self.src = src
        self._buf: bytes | None = None
        self._starts: np.ndarray | None = None

    def get(self, numbers: np.ndarray) -> list[str]:
        if self._buf is None:
            self._buf = self.src.all_bytes()
            nl = np.flatnonzero(np.frombuffer(self._buf, dtype=np.uint8) == 10)
            self._starts = np.concatenate(([0], nl + 1, [len(self._buf) + 1]))
        starts = self._starts
        enc = "latin-1" if self.src.pandas_encoding == "latin-1" else "utf-8"
        out = []
        for n in np.asarray(numbers, dtype=np.int64):  # only the few reported lines
            if n < 1 or n >= starts.size:
                out.append("")
                continue
            raw = self._buf[starts[n - 1] : max(starts[n - 1], starts[n] - 1)]
            text = raw.decode(enc, errors="replace").rstrip("\r").lstrip("\ufeff")
            out.append(text[:200])
        return out


# ---------------------------------------------------------------------------- columns
def _column_samples(src: RawSource, d: Dialect) -> list[list[str]]:
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


def _resolve(spec: int | str, names: list[str], what: str, path: str) -> int:
    listing = ", ".join(f"{i + 1}={n!r}" if n else str(i + 1) for i, n in enumerate(names))
    if isinstance(spec, int) or (isinstance(spec, str) and spec.strip().isdigit()):
        num = int(spec)
        if 1 <= num <= len(names):
            return num - 1
        raise InputError(
            f"{what} {spec} does not exist: the log has {len(names)} column(s)",
            path=path,
            hint=f"choose one of {listing}",
        )
    want = spec.strip().lower()
    for i, n in enumerate(names):
        if n.strip().lower() == want:
            return i
    raise InputError(f"no {what} named {spec!r}", path=path, hint=f"choose one of {listing}")


@dataclass
class _Plan:
    names: list[str]
    time_cols: list[int]
    time_fmt: ts.TimeFormat | None
    value_col: int
    channels: list[int]
    roles: dict[int, str]


def _plan_columns(src: RawSource, d: Dialect, hints: _Hints, rep: LogReport) -> _Plan:
    samples = _column_samples(src, d)
    names = [n if n else "" for n in (d.header or [""] * d.ncols)]
    names += [""] * (d.ncols - len(names))
    display = [n or f"column {i + 1}" for i, n in enumerate(names)]
    empty = [not any(s for s in samples[i]) and not names[i] for i in range(d.ncols)]
    roles: dict[int, str] = {}
    time_cols: list[int] = []
    fmt: ts.TimeFormat | None = None
    if hints.time_column is not None:
        t = _resolve(hints.time_column, names, "time column", src.path)
        fmt = ts.detect_time_format(samples[t], names[t])
        if fmt is None and t + 1 < d.ncols and ts.is_date_only(samples[t]):
            fmt = ts.detect_time_format(
                [a + " " + b for a, b in zip(samples[t], samples[t + 1], strict=False)]
            )
            time_cols = [t, t + 1] if fmt else []
        if fmt is None:
            raise InputError(
                f"column {display[t]!r} does not hold time stamps in a known format",
                path=src.path,
                column=display[t],
                hint="use ISO 8601, dd.mm.yyyy hh:mm:ss, epoch seconds, MJD or elapsed seconds",
            )
        time_cols = time_cols or [t]
    else:
        order = sorted(range(d.ncols), key=lambda i: (not ts.is_time_name(names[i]), i))
        for i in order:
            if empty[i]:
                continue
            if (
                i + 1 < d.ncols
                and ts.is_date_only(samples[i])
                and ts.is_time_of_day(samples[i + 1])
            ):
                fmt = ts.detect_time_format(
                    [a + " " + b for a, b in zip(samples[i], samples[i + 1], strict=False)]
                )
                if fmt:
                    time_cols = [i, i + 1]
                    break
            f = ts.detect_time_format(samples[i], names[i])
            if f is None:
                continue
            named = ts.is_time_name(names[i])
            if (
                f.style == "datetime"
                or named
                or (
                    i == 0
                    and d.ncols >= 2
                    and vals.kind_from_name(names[i]) is None
                    and _numeric_others(samples, empty, i)
                )
            ):
                fmt, time_cols = f, [i]
                break
    for t in time_cols:
        roles[t] = "time"
    if len(time_cols) == 2:
        roles[time_cols[0]], roles[time_cols[1]] = "date", "time of day"
    channels = [
        i
        for i in range(d.ncols)
        if i not in time_cols and not empty[i] and _mostly_numbers(samples[i], d.decimal)
    ]
    if hints.column is not None:
        v = _resolve(hints.column, names, "column", src.path)
        if v in time_cols:
            raise InputError(
                f"column {display[v]!r} is the time column, not a value column",
                path=src.path,
                hint="pass --column with a value column",
            )
    else:
        if not channels:
            raise InputError(
                "no column of numeric values found",
                path=src.path,
                hint="pass --column with the value column's number or name",
            )
        v = channels[0]
        if len(channels) > 1:
            rep.note(
                f"The log has {len(channels)} value columns "
                f"({', '.join(display[c] for c in channels)}); analysing the first, "
                f"{display[v]!r} (choose another with --column)."
            )
    if v not in channels:
        channels.insert(0, v)
    for c in channels:
        roles[c] = "value" if c == v else "channel"
    return _Plan(names, time_cols, fmt, v, channels, roles)


def _mostly_numbers(sample: list[str], decimal: str) -> bool:
    kinds = [_field_kind(s, decimal) for s in sample]
    return bool(kinds) and sum(k in ("num", "bad", "empty") for k in kinds) >= 0.5 * len(kinds)


def _numeric_others(samples: list[list[str]], empty: list[bool], skip: int) -> bool:
    return any(
        not empty[j] and _mostly_numbers(samples[j], ".") or _mostly_numbers(samples[j], ",")
        for j in range(len(samples))
        if j != skip and not empty[j]
    )


# ---------------------------------------------------------------------------- kinds
_SUFFIX_SAMPLE = re.compile(
    r"^[-+]?(?:\d+(?:[.,]\d*)?|[.,]\d+)(?:[eE][-+]?\d+)?\s*([A-Za-zµμ%]{1,7})$"
)


def _decide_kind(
    sample: list[str], name: str, d: Dialect, hints: _Hints, path: str
) -> tuple[vals.ValueKind, bool]:
    """Kind and unit of the value column, and whether each value carries a unit suffix."""
    suffixes = [m.group(1) for s in sample if (m := _SUFFIX_SAMPLE.match(s.strip()))]
    suffix = len(suffixes) >= 0.5 * max(1, len([s for s in sample if s.strip()]))
    found: vals.ValueKind | None = None
    if suffix:
        unit = max(set(suffixes), key=suffixes.count)
        k = vals.kind_from_unit(unit)
        if k:
            found = vals.ValueKind(k[0], unit, k[1], f"unit {unit!r} written after each value")
    if found is None:
        found = vals.kind_from_name(name) if name else None
    numbers = _sample_numbers(sample, d.decimal)
    if hints.kind != "auto":
        compatible = {
            "phase": ("phase", "carrier"),
            "frequency": ("frequency",),
            "fractional": ("fractional",),
        }[hints.kind]
        if found is not None and found.kind in compatible:
            found.reason += f"; kind {hints.kind} as given"
            return found, suffix
        if found is not None and found.unit:
            # A written unit contradicts --kind: reading Hz as seconds (say) would give
            # numbers that look plausible and mean nothing.
            raise InputError(
                f"--kind {hints.kind} contradicts the unit {found.unit!r} of column {name!r} "
                f"({found.reason})",
                path=path,
                column=name,
                hint="drop --kind, or pick another column with --column",
            )
        default = {"phase": ("s", 1.0), "frequency": ("Hz", 1.0), "fractional": ("", 1.0)}
        unit, scale = default[hints.kind]
        why = "given with --kind" + (f" (the header suggested {found.kind})" if found else "")
        return vals.ValueKind(hints.kind, unit, scale, why), suffix
    if found is not None:
        return found, suffix
    if numbers.size:
        med = float(np.median(numbers))
        nominal = hints.nominal or vals.infer_nominal(med)
        if nominal and np.all(np.abs(numbers - nominal) <= _NOMINAL_TOLERANCE * nominal):
            return vals.ValueKind(
                "frequency",
                "Hz",
                1.0,
                f"values lie within {_NOMINAL_TOLERANCE:g} of {format_frequency(nominal)}",
            ), suffix
    raise InputError(
        f"cannot tell what the values in column {name or 'of values'!r} are",
        path=path,
        hint="pass --kind phase (seconds), --kind frequency (Hz) or --kind fractional",
    )


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


# ---------------------------------------------------------------------------- reading
def _read_chunks(
    src: RawSource, d: Dialect, plan: _Plan, as_text: set[int], hints: _Hints, with_time: bool
) -> pd.io.parsers.TextFileReader:
    usecols = sorted((set(plan.time_cols) if with_time else set()) | {plan.value_col})
    dtype = {c: str for c in usecols if c in as_text}
    return pd.read_csv(
        src.handle(),
        sep=r"\s+" if d.delimiter == " " else d.delimiter,
        decimal=d.decimal,
        header=None,
        names=list(range(d.ncols)),
        usecols=usecols,
        skiprows=d.first_data_line - 1,
        skip_blank_lines=False,
        quoting=3,
        index_col=False,
        dtype=dtype or None,
        encoding=src.pandas_encoding,
        chunksize=_CHUNK_ROWS,
        engine="c",
        on_bad_lines="warn",
    )


def _check_given_nominal(readings: np.ndarray, nominal: float, path: Any, column: Any) -> None:
    """A given nominal must match absolute frequency readings to within 1 %.

    A counter log of a 5 MHz oscillator read with ``--nominal 10MHz`` would
    otherwise be analysed as a fractional offset of -0.5.
    """
    if readings.size == 0:
        return
    typical = float(np.median(readings))
    if abs(typical - nominal) <= _GIVEN_NOMINAL_LIMIT * nominal:
        return
    guess = vals.infer_nominal(typical)
    near = (
        f"pass --nominal {format_frequency(guess).replace(' ', '')}"
        if guess is not None and abs(typical - guess) <= _NOMINAL_TOLERANCE * guess
        else "pass the nominal frequency of the oscillator with --nominal"
    )
    raise InputError(
        f"absolute frequency readings near {format_frequency(typical)} lie "
        f"{abs(typical - nominal) / nominal:.3g} (fractional) from the given nominal "
        f"{format_frequency(nominal)}",
        path=path,
        column=column,
        hint=f"{near}, or --kind fractional if the column is not in Hz",
    )


def _progress(src: RawSource, hints: _Hints):
    if not hints.progress or src.size < _PROGRESS_BYTES:
        return None
    try:
        from rich.progress import Progress
    except ImportError:  # pragma: no cover - rich comes with typer
        return None
    return Progress(transient=True)


class _Hasher(threading.Thread):
    """SHA-256 of a file on a second thread: hashlib releases the GIL on large
    blocks, so hashing overlaps with parsing instead of adding a pass."""

    def __init__(self, path: str, data: bytes | None = None) -> None:
        super().__init__(daemon=True)
        self.path = path
        self.data = data  # the file's bytes when already in memory
        self.digest: str | None = None
        self.error: OSError | None = None
        self.start()

    def run(self) -> None:
        try:
            if self.data is not None:
                self.digest = hashlib.sha256(self.data).hexdigest()
                return
            self.digest = _sha256(self.path)
        except OSError as exc:  # reported when the digest is asked for
            self.error = exc

    def result(self) -> str:
        self.join()
        if self.error is not None:
            raise self.error
        return str(self.digest)


def _fixed_stamp_ticks(src: RawSource, d: Dialect, plan: _Plan) -> np.ndarray | None:
    """Int64 ns stamps of every data line read from the bytes, or None for the general path.

    Taken only when it is exact: date-time stamps in the leading column(s), an
    encoding in which every ASCII byte stands for itself, no quoting, and every
    line from the first data line to the end of the file starting with a stamp of
    the same fixed-width layout with valid fields (:mod:`stability.ingest.fixed_stamps`).
    """
    fmt = plan.time_fmt
    if not _FAST_STAMPS or fmt is None or fmt.style != "datetime" or d.quoted:
        return None
    if plan.time_cols not in ([0], [0, 1]) or plan.value_col in plan.time_cols:
        return None
    if src.buffer is None and src.pandas_encoding not in ("utf-8", "utf-8-sig", "latin-1"):
        return None
    try:
        raw = src.all_bytes()
    except OSError:
        return None
    buf = np.frombuffer(raw, dtype=np.uint8)
    skip = len(codecs.BOM_UTF8) if src.buffer is None and raw.startswith(codecs.BOM_UTF8) else 0
    starts = fs.line_starts(buf, d.first_data_line, skip=skip)
    if starts is None:
        return None
    head = raw[int(starts[0]) : int(starts[0]) + 256].split(b"\n", 1)[0].rstrip(b"\r")
    tpl = fs.template_from_line(
        head.decode("latin-1"),
        fmt,
        two_columns=len(plan.time_cols) == 2,
        delimiter=d.delimiter,
    )
    if tpl is None:
        return None
    return fs.parse_fixed_stamps(buf, starts, tpl)


def _parse_chunks(
    src: RawSource,
    d: Dialect,
    plan: _Plan,
    as_text: set[int],
    hints: _Hints,
    exact: bool,
    suffix: bool,
    stamps: np.ndarray | None,
) -> tuple[list, list, list, list, list, list, list, list[int]] | None:
    """Parse the log in chunks: row line numbers, ticks, tick flags, values and extras.

    With ``stamps`` (ticks read from the bytes for every data line) pandas reads
    the value column only; the result is None, asking for the general path, when
    its rows do not pair one to one with the stamps or anything fails.
    """
    lines_l, ticks_l, tok_l, v_l, bad_l, text_l, fac_l = [], [], [], [], [], [], []
    fast = stamps is not None
    done = 0
    bar = _progress(src, hints)
    try:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            reader = _read_chunks(src, d, plan, as_text, hints, with_time=not fast)
            if bar is not None:
                bar.start()
                avg = max(1.0, src.size / max(1, len(src.sample)))
                job = bar.add_task("reading", total=src.size / avg)
            with reader:
                for chunk in reader:
                    n = len(chunk)
                    lines_l.append(
                        np.arange(n, dtype=np.int64) + int(chunk.index[0]) + d.first_data_line
                        if n
                        else np.empty(0, dtype=np.int64)
                    )
                    if fast:
                        ticks_l.append(stamps[done : done + n])
                        tok_l.append(np.ones(ticks_l[-1].size, dtype=bool))
                    elif plan.time_fmt is not None:
                        if len(plan.time_cols) == 2:
                            col = ts.combine_date_time(
                                chunk[plan.time_cols[0]], chunk[plan.time_cols[1]]
                            )
                        else:
                            col = chunk[plan.time_cols[0]]
                        t, ok = ts.parse_times(col, plan.time_fmt)
                        ticks_l.append(t)
                        tok_l.append(ok)
                    done += n
                    v, bad, text, fac = vals.parse_numbers(chunk[plan.value_col], d.decimal, suffix)
                    v_l.append(v)
                    bad_l.append(bad)
                    if exact:
                        text_l.append(
                            np.asarray(text, dtype=object)
                            if text is not None
                            else chunk[plan.value_col].astype(str).to_numpy()
                        )
                    if fac is not None:
                        fac_l.append(fac)
                    if bar is not None:
                        bar.update(job, advance=n)
    except InputError:
        if fast:
            return None
        raise
    except (
        ValueError,
        TypeError,
        UnicodeError,
        OSError,
        pd.errors.ParserError,
        pd.errors.EmptyDataError,
        OverflowError,
        MemoryError,
    ) as exc:
        if fast:
            return None
        raise InputError(
            f"cannot parse the log: {str(exc).splitlines()[0] if str(exc) else type(exc).__name__}",
            path=src.path,
            hint="check the delimiter and columns with 'stability inspect'",
        ) from None
    finally:
        if bar is not None:
            bar.stop()
    skipped = []
    for w in caught:
        for m in re.finditer(r"line (\d+)", str(w.message)):
            skipped.append(int(m.group(1)))
    if fast and (skipped or done != stamps.size):
        return None
    return lines_l, ticks_l, tok_l, v_l, bad_l, text_l, fac_l, skipped


def _read(path: str | os.PathLike[str], hints: _Hints) -> tuple[Measurement, LogReport]:
    src = open_source(path)
    rep = LogReport(path=str(path), size_bytes=src.size)
    hasher = _Hasher(str(path), src.raw)
    rep.container, rep.member = src.container, src.member
    rep.encoding, rep.line_endings = src.encoding, src.line_endings
    d = sniff_dialect(src)
    rep.delimiter, rep.decimal_mark, rep.comment_prefix = d.delimiter_name, d.decimal, d.comment
    rep.preamble = [{"line": n, "text": t[:200]} for n, t in d.preamble]
    rep.header_line, rep.header = d.header_line, list(d.header)
    plan = _plan_columns(src, d, hints, rep)
    display = [n or f"column {i + 1}" for i, n in enumerate(plan.names)]
    vname = display[plan.value_col]
    samples = _column_samples(src, d)
    vk, suffix = _decide_kind(
        samples[plan.value_col], plan.names[plan.value_col], d, hints, src.path
    )
    rep.kind, rep.unit, rep.kind_reason = vk.kind, vk.unit, vk.reason
    digits = max(
        (
            vals.significant_digits(s)
            for s in samples[plan.value_col]
            if _field_kind(s, d.decimal) == "num"
        ),
        default=0,
    )
    # decimal text when float64 rounding (2.2e-16) exceeds ~1e-3 of the last written digit
    exact = digits >= 14 or (vk.kind in ("phase", "carrier") and digits >= 10)
    as_text = set(plan.time_cols) if plan.time_fmt and plan.time_fmt.style == "datetime" else set()
    if exact or suffix:
        as_text.add(plan.value_col)
    # ---------------------------------------------------------------- parse in chunks
    parsed = None
    stamps = _fixed_stamp_ticks(src, d, plan)
    if stamps is not None:
        parsed = _parse_chunks(src, d, plan, as_text, hints, exact, suffix, stamps)
        del stamps
    if parsed is None:  # the general path: pandas parses the time column(s) as text
        parsed = _parse_chunks(src, d, plan, as_text, hints, exact, suffix, None)
    lines_l, ticks_l, tok_l, v_l, bad_l, text_l, fac_l, skipped = parsed
    if not lines_l:
        raise InputError(
            "no data rows below the header",
            path=src.path,
            hint="give a log with at least two data rows",
        )
    lines = np.concatenate(lines_l)
    # lines skipped by the parser (too many fields) shift the numbering of the rows after them
    if skipped:
        lines = _shift_lines(lines, np.sort(np.asarray(skipped, dtype=np.int64)))
    values = np.concatenate(v_l)
    bad = np.concatenate(bad_l)
    fetch = _Lines(src)
    rep.blank_or_comment_lines = 0
    # ---------------------------------------------------------------- classify rows
    if plan.time_fmt is not None:
        ticks = np.concatenate(ticks_l)
        tok = np.concatenate(tok_l)
        nondata = ~tok
    else:
        ticks = tok = None
        nondata = bad.copy()
    junk_candidates = np.flatnonzero(nondata)
    is_junk = np.zeros(values.size, dtype=bool)
    if junk_candidates.size:
        texts = fetch.get(lines[junk_candidates])
        blank = np.array([_blank_or_comment(t, d) for t in texts], dtype=bool)
        rep.blank_or_comment_lines = int(blank.sum())
        if plan.time_fmt is None:
            # without time stamps every non-blank row is a sample; unreadable ones are gaps
            blank_rows = junk_candidates[blank]
            keep_rows = np.ones(values.size, dtype=bool)
            keep_rows[blank_rows] = False
        else:
            for idx, t in zip(
                junk_candidates[~blank], np.asarray(texts, dtype=object)[~blank], strict=True
            ):
                rep.add_junk(int(lines[idx]), t)
            is_junk[junk_candidates[~blank]] = True
            keep_rows = tok
    else:
        keep_rows = np.ones(values.size, dtype=bool)
    for ln in skipped:
        rep.add_junk(ln, fetch.get(np.array([ln]))[0])
    total_rows = int(keep_rows.sum()) + rep.junk_line_count
    # unit suffixes per row
    if fac_l:
        fac = np.concatenate(fac_l)
        factor_map = {u: (vals.kind_from_unit(u) or (None, math.nan))[1] for u in set(fac)}
        factor_map[""] = vk.scale
        row_scale = (
            np.array([factor_map[u] for u in fac], dtype=np.float64)
            if len(factor_map) > 2
            else np.full(values.size, vk.scale)
        )
        values = values * (row_scale / vk.scale)
        newly_bad = ~np.isfinite(values) & ~bad
        bad = bad | newly_bad
    bad_rows = np.flatnonzero(bad & keep_rows)
    if hints.strict:
        # the first bad line in file order: a junk or skipped line may come before
        # the first unreadable value
        firsts = [e["line"] for e in rep.junk_lines[:1]] + ([min(skipped)] if skipped else [])
        if bad_rows.size:
            firsts.append(int(lines[bad_rows[0]]))
        first_bad = min(firsts, default=None)
        if first_bad is not None:
            text = fetch.get(np.array([first_bad]))[0]
            raise InputError(
                f"unreadable row {text!r}",
                path=src.path,
                line=first_bad,
                column=vname,
                hint="fix the row, or drop --strict to turn unreadable rows into gaps",
            )
    if bad_rows.size:
        shown = bad_rows[:1000]
        texts = fetch.get(lines[shown])
        for r, t in zip(shown, texts, strict=True):
            field_text = _field_of(t, d, plan.value_col)
            rep.add_bad_value(int(lines[r]), field_text, _why_bad(field_text))
        rep.bad_value_count = int(bad_rows.size)
    data_rows = int(keep_rows.sum())
    if data_rows - bad_rows.size < 2:
        raise InputError(
            f"fewer than two readable data rows ({data_rows - bad_rows.size})",
            path=src.path,
            column=vname,
            hint="a stability analysis needs at least two samples",
        )
    if bad_rows.size > 0.5 * data_rows:
        raise InputError(
            f"{bad_rows.size} of {data_rows} values are unreadable",
            path=src.path,
            column=vname,
            hint="check the column with --column, or the dialect with 'stability inspect'",
        )
    rep.rows_read = data_rows
    # ---------------------------------------------------------------- keep data rows only
    all_rows = bool(keep_rows.all())
    rows = np.flatnonzero(keep_rows)
    if not all_rows:
        lines = lines[rows]
        values = values[rows]
        bad = bad[rows]
    delta = None
    ref_text = None
    if exact:
        text_all = np.concatenate(text_l)[rows]
        if d.decimal == ",":
            text_all = np.char.replace(text_all.astype(str), ",", ".").astype(object)
        res = vals.exact_delta(text_all, ~bad)
        if res is not None:
            ref_text, delta, ok_exact = res
            approx = values - float(values[np.argmax(~bad)])
            delta = np.where(ok_exact, delta, approx)
            delta[bad] = np.nan
            rep.exact_decimal = True
            rep.note("Values were parsed as decimal text, so every written digit is kept.")
    # ---------------------------------------------------------------- time grid
    start = None
    n_grid = values.size
    position = np.arange(values.size)
    if plan.time_fmt is not None:
        if not all_rows:
            ticks = ticks[rows]
        first = 0
        seconds, start = ts.to_seconds(ticks, plan.time_fmt, first)
        rep.time_column = " + ".join(display[c] for c in plan.time_cols)
        rep.time_format = plan.time_fmt.description
        grid = build_grid(seconds, lines, hints.tau0, src.path, rep.time_column)
        rep.median_spacing = grid.median_spacing
        if hints.tau0 is not None:
            rep.tau0_source = (
                f"given (median spacing of the time stamps is "
                f"{format_duration(grid.median_spacing)})"
            )
            if abs(grid.median_spacing - hints.tau0) > 1e-6 * hints.tau0:
                rep.note(
                    f"tau0 {format_duration(hints.tau0)} as given overrides the median "
                    f"spacing of the time stamps, {format_duration(grid.median_spacing)}."
                )
        else:
            rep.tau0_source = "median spacing of the time stamps"
        dup = grid.duplicates
        rep.duplicate_count = int(dup.size)
        rep.duplicates = [{"line": int(lines[i])} for i in dup[:1000]]
        if dup.size:
            rep.note(f"{dup.size} duplicated or crowded time stamp(s) dropped (first kept).")
        oi, oo = grid.off_grid
        rep.off_grid_count = int(oi.size)
        rep.off_grid = [
            {"line": int(lines[i]), "offset_s": float(o)}
            for i, o in zip(oi[:1000], oo[:1000], strict=True)
        ]
        if oi.size:
            rep.note(f"{oi.size} sample(s) lie off the grid by more than 10% of tau0.")
        keep = grid.keep
        if grid.duplicates.size:  # otherwise every row is kept
            lines, values, bad = lines[keep], values[keep], bad[keep]
            if delta is not None:
                delta = delta[keep]
            seconds = seconds[keep]
        position = grid.position
        n_grid = grid.size
        rep.gaps_inserted = [
            {"after_line": int(lines[i]) if i >= 0 else None, "missing": m}
            for i, m in ((_pos_in_kept(grid.keep, i), m) for i, m in grid.gaps)
        ]
        rep.gap_samples = int(n_grid - position.size)
        if rep.gap_samples:
            rep.note(f"{rep.gap_samples} missing sample(s) in the time stamps inserted as gaps.")
        tau0 = grid.tau0
        end = seconds[-1]
        rep.first_time = _stamp(start, 0.0, plan.time_fmt)
        rep.last_time = _stamp(start, float(end), plan.time_fmt)
    else:
        if hints.tau0 is None:
            raise InputError(
                "the log has no time column, so the sample interval is unknown",
                path=src.path,
                hint="pass --tau0, e.g. --tau0 1s",
            )
        tau0 = hints.tau0
        rep.tau0_source = "given (the log has no time stamps)"
    rep.tau0 = tau0
    # ---------------------------------------------------------------- wrap-around
    src_vals = delta if delta is not None else values
    nominal = hints.nominal
    if vk.kind in ("phase", "carrier"):
        if vk.kind == "carrier":
            period = 1.0 / vk.scale  # one cycle in the written unit
            if hints.wrap is not None and nominal:
                period = hints.wrap * nominal / vk.scale
        else:
            period = (hints.wrap if hints.wrap is not None else 1.0) / vk.scale
        absolute = values[np.isfinite(values)] * vk.scale
        applies = (
            hints.wrap is not None
            or vk.kind == "carrier"
            or (absolute.size and float(np.max(np.abs(absolute))) <= 1.0)
        )
        if applies:
            src_vals, where = unwrap(src_vals, period)
            if where.size:
                rep.wrap_period = float(period * vk.scale)
                rep.wrap_count = int(where.size)
                rep.wraps = [{"line": int(lines[i])} for i in where[:1000]]
                rep.note(
                    f"{where.size} wrap-around(s) of one period "
                    f"({period:g} {vk.unit or 'units'}) unwrapped."
                )
    # ---------------------------------------------------------------- canonical form
    if vk.kind == "frequency":
        if nominal is None:
            finite = values[np.isfinite(values)] * vk.scale
            guess = vals.infer_nominal(float(np.median(finite)))
            if guess is None or np.any(np.abs(finite - guess) > _NOMINAL_TOLERANCE * guess):
                raise InputError(
                    f"absolute frequency readings near {format_frequency(float(np.median(finite)))}"
                    " match no standard nominal frequency",
                    path=src.path,
                    column=vname,
                    hint="pass --nominal, e.g. --nominal 10MHz",
                )
            nominal = guess
            rep.nominal_source = "inferred: nearest standard value to the readings"
            rep.note(
                f"Nominal frequency {format_frequency(nominal)} inferred from the readings"
                " (pass --nominal to set it)."
            )
        else:
            _check_given_nominal(values[np.isfinite(values)] * vk.scale, nominal, src.path, vname)
            rep.nominal_source = "given"
        if delta is not None and ref_text is not None:
            off = vals.decimal_offset(ref_text, vk.scale, nominal)
            series = (off + src_vals * vk.scale) / nominal
        else:
            series = (src_vals * vk.scale - nominal) / nominal
    elif vk.kind == "fractional":
        series = src_vals * vk.scale
    elif vk.kind == "carrier":
        if nominal is None:
            raise InputError(
                f"carrier phase in {vk.unit} needs the nominal frequency",
                path=src.path,
                column=vname,
                hint="pass --nominal, e.g. --nominal 10MHz",
            )
        rep.nominal_source = "given"
        series = src_vals * vk.scale / nominal
    else:
        series = src_vals * vk.scale
        if nominal is not None:
            rep.nominal_source = "given"
    rep.nominal = nominal
    grid_vals = np.full(n_grid, np.nan)
    grid_vals[position] = series
    grid_lines = np.zeros(n_grid, dtype=np.int64)
    grid_lines[position] = lines
    rep.samples = n_grid
    rep.value_column = vname
    rep.channels = [display[c] for c in plan.channels]
    rep.columns = _columns_info(plan, display, vk, rep)
    if rep.bad_value_count:
        rep.note(
            f"{rep.bad_value_count} unreadable value(s) (instrument errors, sentinels, "
            "empty fields) turned into gaps."
        )
    if rep.junk_line_count:
        rep.note(f"{rep.junk_line_count} line(s) that are not data rows skipped.")
    rep.note(f"Values read as {vk.kind} in {vk.unit or 'no unit'} ({vk.reason}).")
    rep.sha256 = hasher.result()
    meta = dict(
        nominal=nominal,
        start=start,
        lines=grid_lines,
        provenance=Provenance(
            path=str(path),
            sha256=rep.sha256,
            rows=total_rows,
            reader=rep.summary(),
            details=rep.to_dict(),
        ),
        notes=list(rep.notes),
    )
    if n_grid < 2:
        raise InputError(
            "a single data row: at least two samples are needed",
            path=src.path,
            hint="give a longer log",
        )
    if vk.kind in ("frequency", "fractional"):
        m = Measurement.from_frequency(grid_vals, tau0, **meta)
    else:
        m = Measurement.from_phase(grid_vals, tau0, **meta)
    return m, rep


def _shift_lines(lines: np.ndarray, skipped: np.ndarray) -> np.ndarray:
    """Row line numbers when the parser dropped ``skipped`` lines (sorted) without a row."""
    # the row that would sit on line L moves down by the skipped lines at or before it
    out = lines.copy()
    for s in skipped:  # loop over the few skipped lines, not over samples
        out = np.where(out >= s, out + 1, out)
    return out


def _pos_in_kept(keep: np.ndarray, row: int) -> int:
    return int(np.count_nonzero(keep[:row]))


def _blank_or_comment(text: str, d: Dialect) -> bool:
    s = text.strip()
    if not s:
        return True
    if any(s.startswith(p) for p in ("#", "//", "%")):
        return True
    if s.startswith(";") and d.delimiter != ";":
        return True
    if s.startswith(";") and d.delimiter == ";":
        return not any(ch.isdigit() for ch in s[:3])
    return all(not f for f in split_fields(s, d.delimiter))


def _field_of(text: str, d: Dialect, col: int) -> str:
    fields = split_fields(text, d.delimiter)
    return fields[col] if col < len(fields) else ""


def _why_bad(text: str) -> str:
    if not text:
        return "empty field"
    try:
        v = float(text.replace(",", "."))
    except ValueError:
        return "not a number"
    if math.isnan(v):
        return "not a number"
    if abs(v) >= vals.SENTINEL:
        return "instrument overflow or not-a-number sentinel"
    return "unreadable"


def _stamp(start: Any, offset: float, fmt: ts.TimeFormat) -> str:
    if start is not None:
        return (pd.Timestamp(start) + pd.Timedelta(seconds=offset)).isoformat()
    return f"{offset:.9g} s"


def _columns_info(
    plan: _Plan, display: list[str], vk: vals.ValueKind, rep: LogReport
) -> list[ColumnInfo]:
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
            detail = f"{k.kind}, {k.unit or 'no unit'}" if k else ""
        out.append(ColumnInfo(i + 1, name, role, detail))
    return out


# ---------------------------------------------------------------------------- public
def read_log(
    path: str | os.PathLike[str],
    *,
    kind: str = "auto",
    column: int | str | None = None,
    time_column: int | str | None = None,
    tau0: float | str | None = None,
    nominal: float | str | None = None,
    wrap: float | str | None = None,
    strict: bool = False,
    progress: bool = False,
) -> Measurement:
    """Read a frequency-counter or time-interval log into a :class:`Measurement`.

    Parameters
    ----------
    path
        The log: CSV-like text, optionally gzip, bz2, xz or single-file zip.
    kind
        ``auto``, ``phase`` (time error, seconds), ``frequency`` (absolute, Hz)
        or ``fractional`` (fractional frequency).
    column, time_column
        Value and time columns: 1-based number or header name.
    tau0
        Sample interval (seconds or ``"100ms"``); needed without time stamps,
        overrides the median spacing otherwise.
    nominal
        Nominal frequency (Hz or ``"10MHz"``) for absolute-frequency and carrier-phase logs.
    wrap
        Period of wrap-around of time-interval readings (seconds or ``"1s"``).
    strict
        Make the first unreadable row an error instead of a reported gap.
    progress
        Show a progress bar while reading files over 50 MB.

    Returns
    -------
    Measurement
        With ``provenance.details`` holding the :class:`LogReport` as a dictionary
        and ``notes`` saying everything reading did.

    Raises
    ------
    InputError
        The file cannot be read as a log, or a hint is invalid.
    """
    hints = validate_read_args(kind, column, time_column, tau0, nominal, wrap, strict, progress)
    return _read(path, hints)[0]


def inspect_log(
    path: str | os.PathLike[str],
    *,
    kind: str = "auto",
    column: int | str | None = None,
    time_column: int | str | None = None,
    tau0: float | str | None = None,
    nominal: float | str | None = None,
    wrap: float | str | None = None,
    strict: bool = False,
    progress: bool = False,
) -> LogReport:
    """Say what is in a log and how :func:`read_log` reads it.

    Takes the same options as :func:`read_log` and returns the :class:`LogReport`.
    """
    hints = validate_read_args(kind, column, time_column, tau0, nominal, wrap, strict, progress)
    return _read(path, hints)[1]
