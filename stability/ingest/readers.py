"""Read a counter or time-interval log into a :class:`~stability.measurement.Measurement`.

The reader sniffs the file (container, encoding, dialect; see
:mod:`stability.ingest.sniff`), picks the time and value columns and the kind
and unit of the values (:mod:`stability.ingest.columns`), parses the whole file
with pandas' C parser in chunks (:mod:`stability.ingest.parsing`), turns
instrument errors into reported gaps (:mod:`stability.ingest.rows`), places the
samples on a uniform grid, unwraps wrap-arounds and converts to the canonical
phase in seconds (:mod:`stability.ingest.build`).

References
----------
1. W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065 (2008),
   sections 5.2 (phase and frequency data) and 5.14 (gaps).
2. IEEE Std 1139-2008 (fractional frequency deviation y = (f - f0)/f0; carrier
   phase and time error x = phi/(2 pi f0)).
"""

from __future__ import annotations

import dataclasses
import math
import os
from collections.abc import Callable
from typing import Any

from ..errors import InputError
from ..measurement import Measurement
from ..units import parse_duration, parse_frequency
from .arrow_parsing import ENGINES, arrow_layout_problem, arrow_rows
from .build import (
    InputHasher,
    canonical_series,
    finish_report,
    make_measurement,
    place_on_grid,
    unwrap_readings,
)
from .columns import ColumnPlan, column_samples, decide_kind, other_columns_hint, plan_columns
from .evidence import check_tau0, column_evidence, preamble_evidence
from .hints import ReadHints
from .local_time import check_zone, localize
from .memory import check_memory
from .parsing import ParsedRows, decimal_deltas, needs_decimal_text, parse_rows
from .report import LogReport
from .rows import DataRows, data_rows
from .sniff import Dialect, RawSource, open_source, sniff_dialect
from .timing import check_interval, check_nominal

__all__ = [
    "read_log",
    "inspect_log",
    "validate_read_args",
    "KINDS",
    "ReadingPlan",
    "plan_reading",
    "measurement_from_rows",
]

KINDS = ("auto", "phase", "frequency", "fractional")

#: Called with (bytes parsed, bytes in all) as reading advances.
ProgressCallback = Callable[[int, int], None]


def validate_read_args(
    kind: Any = "auto",
    column: Any = None,
    time_column: Any = None,
    tau0: Any = None,
    nominal: Any = None,
    wrap: Any = None,
    strict: Any = False,
    stamp_tolerance: Any = None,
    timezone: Any = None,
    sheet: Any = None,
    engine: Any = "auto",
    allow_unusual: Any = False,
    max_expansion: Any = None,
) -> ReadHints:
    """Check the options of :func:`read_log`; raise :class:`InputError` naming the bad one."""
    k = str(kind).strip().lower() if kind is not None else "auto"
    if k not in KINDS:
        raise InputError(f"kind must be one of {', '.join(KINDS)}, got {kind!r}")
    for name, value in (("column", column), ("time_column", time_column), ("sheet", sheet)):
        if value is not None and not isinstance(value, (int, str)) or isinstance(value, bool):
            raise InputError(f"{name} must be a 1-based number or a name, got {value!r}")
        if isinstance(value, int) and value < 1:
            raise InputError(f"{name} numbers start at 1, got {value!r}")
    unusual = bool(allow_unusual)
    step = None if tau0 is None else parse_duration(tau0, "tau0")
    if step is not None:
        check_interval(step, "tau0", unusual, tau0)
    carrier = None if nominal is None else parse_frequency(nominal, "nominal")
    if carrier is not None:
        check_nominal(carrier, unusual, nominal)
    return ReadHints(
        kind=k,
        column=column,
        time_column=time_column,
        tau0=step,
        nominal=carrier,
        wrap=None if wrap is None else parse_duration(wrap, "wrap"),
        strict=bool(strict),
        stamp_tolerance=_stamp_tolerance(stamp_tolerance),
        timezone=None if timezone is None else check_zone(timezone),
        sheet=sheet,
        engine=_engine(engine),
        allow_unusual=unusual,
        max_expansion=_max_expansion(max_expansion),
    )


def _engine(value: Any) -> str:
    e = "auto" if value is None else str(value).strip().lower()
    if e not in ENGINES:
        raise InputError(f"engine must be one of {', '.join(ENGINES)}, got {value!r}")
    return e


def _max_expansion(value: Any) -> float | None:
    """The expansion ratio allowed to an archive (a number of at least 1), or None."""
    if value is None:
        return None
    try:
        f = float(value) if not isinstance(value, bool) else math.nan
    except (TypeError, ValueError):
        f = math.nan
    if not (1.0 <= f < math.inf):
        raise InputError(
            f"max_expansion is how many times its size an archive may expand to, a number "
            f"of at least 1, got {value!r}",
            hint="pass --max-expansion 1000 for an archive that expands up to 1000 times",
        )
    return f


def _stamp_tolerance(value: Any) -> float | None:
    """The stamp tolerance as a fraction of tau0 (0 <= f < 1), or None for the default."""
    if value is None:
        return None
    try:
        f = float(value) if not isinstance(value, bool) else math.nan
    except (TypeError, ValueError):
        f = math.nan
    if not (0.0 <= f < 1.0):
        raise InputError(
            f"stamp_tolerance is a fraction of tau0 from 0 to below 1, got {value!r}",
            hint="pass --stamp-tolerance 0.3 for stamps up to 0.3 tau0 from their slot",
        )
    return f


def _check_callback(on_progress: Any) -> ProgressCallback | None:
    if on_progress is not None and not callable(on_progress):
        raise InputError(
            "on_progress must be a function of (bytes parsed, bytes in all) or None, "
            f"got {on_progress!r}"
        )
    return on_progress


@dataclasses.dataclass(frozen=True)
class ReadingPlan:
    """How a log's rows are parsed, decided from its first lines.

    Attributes
    ----------
    dialect, columns
        The sniffed dialect and the chosen time and value columns.
    kind
        The kind and unit of the values.
    suffix
        The values carry a unit suffix.
    exact
        The values are kept as decimal text for exact differences.
    """

    dialect: Dialect
    columns: ColumnPlan
    kind: Any
    suffix: bool
    exact: bool


def plan_reading(src: RawSource, hints: ReadHints, rep: LogReport) -> ReadingPlan:
    """Sniff the dialect, choose the columns and the kind of the values (from the sample)."""
    d = _sniff(src, rep)
    check_memory(src, d)
    plan = plan_columns(src, d, hints, rep)
    sample = column_samples(src, d)[plan.value_col]
    vk, suffix = decide_kind(
        sample, plan.names[plan.value_col], d, hints, src.path, other_columns_hint(plan)
    )
    rep.kind, rep.unit, rep.kind_reason = vk.kind, vk.unit, vk.reason
    exact = needs_decimal_text(sample, d, vk)
    return ReadingPlan(d, plan, vk, suffix, exact)


def _read(
    path: str | os.PathLike[str],
    hints: ReadHints,
    *,
    on_progress: ProgressCallback | None = None,
    stamps: str = "auto",
) -> tuple[Measurement, LogReport]:
    """Read a log: the measurement and the report of how it was read.

    ``stamps`` chooses how date-time stamps are parsed (``"auto"`` or
    ``"general"``, see :data:`stability.ingest.parsing.STAMP_PATHS`); both give
    the same result.
    """
    src = open_source(path, hints.sheet, hints.max_expansion)
    rep = LogReport(path=str(path), size_bytes=src.size)
    if len(src.sheets) > 1:
        rep.note(
            f"The workbook has {len(src.sheets)} sheets ({', '.join(src.sheets)}); reading "
            f"{src.member!r} (choose another with --sheet)."
        )
    hasher = InputHasher(str(path), src.raw)
    how = plan_reading(src, hints, rep)
    # the parsed rows go straight into the call, so the reference dropped there frees them
    return measurement_from_rows(
        src, hints, how, _parse(src, hints, how, on_progress, stamps), rep, hasher.result
    )


def _parse(
    src: RawSource,
    hints: ReadHints,
    how: ReadingPlan,
    on_progress: ProgressCallback | None,
    stamps: str,
) -> ParsedRows:
    """Every row of the log: pyarrow's reader where it applies (engine auto), else pandas."""
    d, plan = how.dialect, how.columns
    if hints.engine != "pandas":
        problem = arrow_layout_problem(src, d, plan, how.exact or how.suffix)
        if not problem:
            parsed = arrow_rows(src, d, plan, on_progress)
            if parsed is not None:
                return parsed
            problem = "a row does not parse cleanly"
        if hints.engine == "pyarrow":
            raise InputError(
                f"the pyarrow engine cannot read this log: {problem}",
                path=src.path,
                hint="pass --engine auto (or pandas), which reads every log",
            )
    return parse_rows(
        src,
        d,
        plan,
        exact=how.exact,
        suffix=how.suffix,
        stamps=stamps,
        on_progress=on_progress,
    )


def measurement_from_rows(
    src: RawSource,
    hints: ReadHints,
    how: ReadingPlan,
    parsed: ParsedRows,
    rep: LogReport,
    sha256: Callable[[], str],
) -> tuple[Measurement, LogReport]:
    """The measurement of a log from its parsed rows (every row of the file, in order).

    The rows may come from one parse of the whole file or be joined from parses
    of its parts (:mod:`stability.live` parses a growing log a chunk at a time);
    ``sha256`` gives the hex digest of the file's bytes when asked.
    """
    d, plan, vk = how.dialect, how.columns, how.kind
    vname = plan.display[plan.value_col]
    rows, total_rows = data_rows(src, d, plan, vk.scale, parsed, hints.strict, rep)
    del parsed
    if hints.timezone is not None:
        plan = _local_time(rows, plan, hints.timezone, src.path, rep)
    if how.exact:
        rows = _exact_differences(rows, d, rep)
    evidence = preamble_evidence(src, d) + column_evidence(column_samples(src, d), plan)
    stated = [(e.source, e.says, e.tau0) for e in evidence]
    rows, placement = place_on_grid(rows, plan, hints, src.path, rep, stated)
    check_tau0(
        placement.tau0,
        rep.tau0_source,
        evidence,
        given=hints.tau0 is not None,
        path=src.path,
        rep=rep,
    )
    readings = unwrap_readings(rows, vk, hints, rep)
    series, nominal = canonical_series(
        rows, readings, vk, hints, src.path, vname, rep, other_columns_hint(plan)
    )
    origin = 0.0
    if rows.delta is not None and rows.ref_text is not None and vk.kind in ("phase", "carrier"):
        # readings were taken relative to the first one: keep it as the time-error origin
        first = float(rows.ref_text) * vk.scale
        origin = first / nominal if vk.kind == "carrier" else first
    lines = rows.lines
    del rows, readings  # the readings live on as the series: freed before the measurement
    finish_report(rep, plan, vk, placement.size, sha256())
    m = make_measurement(series, lines, placement, vk, nominal, total_rows, rep)
    if origin:
        m = m.replace(origin=m.origin + origin)
    return m, rep


def _sniff(src: RawSource, rep: LogReport) -> Dialect:
    """The dialect of the log; container, encoding and dialect go to the report."""
    rep.container, rep.member = src.container, src.member
    rep.encoding, rep.line_endings = src.encoding, src.line_endings
    d = sniff_dialect(src)
    rep.delimiter, rep.decimal_mark, rep.comment_prefix = d.delimiter_name, d.decimal, d.comment
    rep.preamble = [{"line": n, "text": t[:200]} for n, t in d.preamble]
    rep.header_line, rep.header = d.header_line, list(d.header)
    return d


def _local_time(
    rows: DataRows, plan: ColumnPlan, zone: str, path: str, rep: LogReport
) -> ColumnPlan:
    """Zone-less date-time stamps read as local time in ``zone`` and converted to UTC."""
    fmt = plan.time_fmt
    rep.timezone = zone
    if fmt is None:
        rep.note(f"--timezone {zone} not used: the rows are read without time stamps.")
        return plan
    if fmt.style != "datetime" or fmt.aware:
        rep.note(f"--timezone {zone} not used: the time stamps carry their own zone or are UTC.")
        return plan
    column = " + ".join(plan.display[c] for c in plan.time_cols)
    rows.ticks = localize(rows.ticks, rows.lines, zone, path, column)
    rep.note(f"Time stamps read as local time in {zone} and converted to UTC.")
    local = dataclasses.replace(fmt, aware=True, description=f"{fmt.description}, {zone} time")
    return dataclasses.replace(plan, time_fmt=local)


def _exact_differences(rows: DataRows, d: Dialect, rep: LogReport) -> DataRows:
    """The rows with readings minus the first one, exact from the decimal text."""
    res = decimal_deltas(rows.texts, rows.values, rows.bad, d.decimal, rows.decimals)
    rows.texts = rows.decimals = None
    if res is not None:
        rows.ref_text, rows.delta = res
        rep.exact_decimal = True
        rep.note("Values were parsed as decimal text, so every written digit is kept.")
    return rows


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
    stamp_tolerance: float | str | None = None,
    timezone: str | None = None,
    sheet: int | str | None = None,
    engine: str = "auto",
    allow_unusual: bool = False,
    max_expansion: float | str | None = None,
    on_progress: ProgressCallback | None = None,
) -> Measurement:
    """Read a frequency-counter or time-interval log into a :class:`Measurement`.

    Parameters
    ----------
    path
        The log: CSV-like text, optionally gzip, bz2, xz or single-file zip, or
        an .xlsx workbook (recognised by content; needs openpyxl).
    kind
        ``auto``, ``phase`` (time error, seconds), ``frequency`` (absolute, Hz)
        or ``fractional`` (fractional frequency).
    column, time_column
        Value and time columns: 1-based number or header name; each may be
        given alone. ``time_column="none"`` reads the rows in sequence, the
        stamps only labels (``tau0`` is then required).
    tau0
        Sample interval (seconds or ``"100ms"``); needed without time stamps,
        overrides the median spacing otherwise (rows are still placed by
        their stamps).
    nominal
        Nominal frequency (Hz or ``"10MHz"``) for absolute-frequency and carrier-phase logs.
    wrap
        Period of wrap-around of time-interval readings (seconds or ``"1s"``).
    strict
        Make the first bad line (an unreadable value, or a line that is not a
        data row) an error instead of a reported gap.
    stamp_tolerance
        How far a time stamp may sit from its slot on the uniform grid and still
        be snapped to it, as a fraction of tau0 (default 1/3; ``0.7`` also puts
        back stamps written late by more than half tau0). Stamps beyond it are
        reported as off the grid.
    timezone
        IANA zone name (``"Europe/Berlin"``): date-time stamps without a zone
        are local time there, converted to UTC (the hour written twice when
        daylight-saving time ends is resolved by row order). Without it, a
        one-hour step of such stamps at a daylight-saving change is an error.
    sheet
        Sheet of an .xlsx workbook: 1-based number or name (default the first).
    engine
        ``"auto"`` (default): pyarrow's multi-threaded CSV reader when it is
        installed and the log is a clean file of a common layout (one
        delimiter, ISO 8601 or numeric stamps, plain numbers), else pandas;
        ``"pandas"``: always pandas' chunked C parser; ``"pyarrow"``: pyarrow
        or an error saying why not. Every engine gives the same result.
    allow_unusual
        Read a sample interval below 1 ns or above one day (given as ``tau0`` or
        found from the stamps), a record spanning more than a century, or a
        grid mostly made of gaps, instead of refusing it (see
        :mod:`stability.ingest.limits`; ``--unusual-timing``).
    max_expansion
        How many times its stored size a compressed log may expand to (default
        100; ``--max-expansion``); never beyond a third of the available memory.
    on_progress
        Called as parsing advances with (bytes parsed, bytes in all) of the
        log's text; the bytes parsed are estimated from the lines parsed and
        equal the total at the end. It may start again from zero when a fast
        path gives way to the general one.

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
    hints = validate_read_args(**_reading_options(locals()))
    return _read(path, hints, on_progress=_check_callback(on_progress))[0]


def _reading_options(given: dict[str, Any]) -> dict[str, Any]:
    """The reading options among a public entry point's arguments (its ``locals()``)."""
    return {k: v for k, v in given.items() if k not in ("path", "on_progress")}


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
    stamp_tolerance: float | str | None = None,
    timezone: str | None = None,
    sheet: int | str | None = None,
    engine: str = "auto",
    allow_unusual: bool = False,
    max_expansion: float | str | None = None,
    on_progress: ProgressCallback | None = None,
) -> LogReport:
    """Say what is in a log and how :func:`read_log` reads it.

    Takes the same options as :func:`read_log` and returns the :class:`LogReport`.
    """
    hints = validate_read_args(**_reading_options(locals()))
    return _read(path, hints, on_progress=_check_callback(on_progress))[1]
