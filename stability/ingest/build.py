"""From the data rows of a log to the canonical :class:`~stability.measurement.Measurement`.

The rows are placed on a uniform time grid (:mod:`stability.ingest.grid`: gaps
inserted, duplicated stamps dropped), wrap-arounds of time-interval readings and
carrier phase are unwrapped, and the readings are converted to the canonical
form: fractional frequency y = (f - f0)/f0 for absolute frequency, time error
x = cycles/f0 for carrier phase, seconds for time error. The measurement carries
the file's SHA-256 and the whole reading report as its provenance.

References
----------
1. W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065 (2008),
   sections 5.2 (phase and frequency data) and 5.14 (gaps).
2. IEEE Std 1139-2008 (fractional frequency deviation y = (f - f0)/f0; carrier
   phase and time error x = phi/(2 pi f0)).
"""

from __future__ import annotations

import hashlib
import threading
import warnings
from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from ..errors import InputError, StabilityWarning
from ..files import sha256_file
from ..measurement import Measurement, Provenance
from ..units import format_duration, format_frequency, format_seconds
from . import timestamps as ts
from . import values as vals
from .columns import ColumnPlan, columns_info
from .grid import DEFAULT_STAMP_TOLERANCE, Grid, build_grid, unwrap
from .hints import ReadHints
from .local_time import daylight_saving_step
from .report import LIST_LIMIT, LogReport
from .rows import DataRows
from .timing import check_stamps

__all__ = [
    "InputHasher",
    "GridPlacement",
    "place_on_grid",
    "unwrap_readings",
    "canonical_series",
    "finish_report",
    "make_measurement",
]

# A given nominal further than this from the readings is a mistake (fractional).
_GIVEN_NOMINAL_LIMIT = 1e-2


class InputHasher(threading.Thread):
    """SHA-256 of a file on a second thread: hashlib releases the GIL on large
    blocks, so hashing overlaps with parsing instead of adding a pass."""

    def __init__(self, path: str, data: bytes | None = None) -> None:
        super().__init__(daemon=True)
        self.path = path
        self.data = data  # the file's bytes when already in memory
        self.digest: str | None = None
        self.error: Exception | None = None
        self.start()

    def run(self) -> None:
        try:
            if self.data is not None:
                self.digest = hashlib.sha256(self.data).hexdigest()
                return
            self.digest = sha256_file(self.path)
        except (OSError, InputError) as exc:  # reported when the digest is asked for
            self.error = exc

    def result(self) -> str:
        """The hex digest, once hashing is done."""
        self.join()
        if self.error is not None:
            raise self.error
        return str(self.digest)


@dataclass
class GridPlacement:
    """Where the data rows land on the uniform grid.

    Attributes
    ----------
    tau0
        Sample interval, seconds.
    size
        Length of the grid.
    position
        Grid index of each data row, or None when row i lands in slot i for every
        row (nothing inserted or dropped).
    start
        Time of the first sample (a pandas Timestamp), or None without date-time stamps.
    """

    tau0: float
    size: int
    position: np.ndarray | None
    start: Any = None


def place_on_grid(
    rows: DataRows,
    plan: ColumnPlan,
    hints: ReadHints,
    path: str,
    rep: LogReport,
    stated: list[tuple[str, str, float]] | None = None,
) -> tuple[DataRows, GridPlacement]:
    """The rows kept on the grid (duplicated stamps dropped) and where they land.

    ``stated`` holds what the log says about the interval elsewhere (source,
    words, seconds), for the hint when tau0 cannot be found.

    Raises
    ------
    InputError
        No time column and no ``tau0``; a time stamp out of order (see
        :func:`stability.ingest.grid.build_grid`).
    """
    if plan.time_fmt is None:
        if hints.tau0 is None:
            raise _no_tau0(plan, hints, path, stated or [])
        rep.tau0_source = (
            "as given (rows read in sequence: --time-column none)"
            if plan.time_reason.startswith("none")
            else "as given (the log has no time stamps)"
        )
        rep.tau0 = hints.tau0
        return rows, GridPlacement(hints.tau0, rows.values.size, None)
    rep.time_column = " + ".join(plan.display[c] for c in plan.time_cols)
    rep.time_format = plan.time_fmt.description
    check_stamps(rows.ticks, plan.time_fmt, rows.lines, path, rep.time_column, hints.allow_unusual)
    seconds, start = ts.to_seconds(rows.ticks, plan.time_fmt, 0)
    rows.ticks = None  # not needed once they are seconds: freed before the grid is built
    if plan.time_fmt.style == "datetime" and not plan.time_fmt.aware:
        _refuse_daylight_saving(seconds, start, rows.lines, hints, path, rep.time_column)
    tolerance = DEFAULT_STAMP_TOLERANCE if hints.stamp_tolerance is None else hints.stamp_tolerance
    grid = build_grid(
        seconds, rows.lines, hints.tau0, path, rep.time_column, tolerance, hints.allow_unusual
    )
    rep.stamp_tolerance = tolerance
    _report_spacing(grid, hints.tau0, rep)
    _report_dropped(grid, rows.lines, rep)
    if grid.duplicates.size:  # otherwise every row is kept
        rows, seconds = rows.take(grid.keep), seconds[grid.keep]
    _report_gaps(grid, rows.lines, rep)
    rep.tau0 = grid.tau0
    rep.first_time = _stamp(start, 0.0)
    rep.last_time = _stamp(start, float(seconds[-1]))
    return rows, GridPlacement(grid.tau0, grid.size, grid.position, start)


def _refuse_daylight_saving(
    seconds: np.ndarray, start: Any, lines: np.ndarray, hints: ReadHints, path: str, column: str
) -> None:
    """A one-hour step of zone-less stamps at a daylight-saving change is an error."""
    found = daylight_saving_step(seconds, start, hints.tau0)
    if found is None:
        return
    row, jump = found
    at = pd.Timestamp(start) + pd.Timedelta(seconds=float(seconds[row - 1]))
    way = "forward" if jump > 0 else "back"
    raise InputError(
        f"the time stamps step {way} by one hour after {at.isoformat()}, a daylight-saving "
        "change: they are local time without a zone, and would become "
        + ("3600 s of invented gaps" if jump > 0 else "time going backward"),
        path=path,
        line=int(lines[row]),
        column=column,
        hint="pass --timezone with the zone of the logging clock, e.g. --timezone "
        "Europe/Berlin (or --timezone UTC if the stamps are UTC and the hour a real pause)",
    )


def _no_tau0(
    plan: ColumnPlan, hints: ReadHints, path: str, stated: list[tuple[str, str, float]]
) -> InputError:
    """The error for a log read without a time axis and without a given tau0."""
    if plan.time_reason.startswith("none"):
        what = "--time-column none reads the rows in sequence, so the sample interval is needed"
    else:
        what = "the log has no time column, so the sample interval is unknown"
        if plan.row_numbers:
            c = plan.row_numbers[0]
            what += f" (column {plan.display[c]!r} counts rows, not seconds)"
    if stated:
        source, says, seconds = stated[0]
        step = format_duration(seconds).replace(" ", "")
        hint = f"pass --tau0 {step} if the {source} ({says}) is right"
    else:
        hint = "pass --tau0 with the interval between rows, e.g. --tau0 1s"
    if plan.row_numbers and not plan.time_reason.startswith("none"):
        hint += f", or --time-column {plan.row_numbers[0] + 1} if that column counts seconds"
    return InputError(what, path=path, hint=hint)


def _report_spacing(grid: Grid, tau0: float | None, rep: LogReport) -> None:
    rep.median_spacing = grid.median_spacing
    stamps = f"{grid.placed} stamps"
    if tau0 is None:
        if abs(grid.tau0 - grid.median_spacing) <= 1e-9 * grid.tau0:
            rep.tau0_source = f"from column {rep.time_column!r} (median spacing of {stamps})"
        else:
            rep.tau0_source = (
                f"from column {rep.time_column!r} (mean spacing of {stamps} to the "
                f"resolution of the stamps; median {format_duration(grid.median_spacing)})"
            )
        return
    rep.tau0_source = (
        f"as given (median spacing of {stamps} in column {rep.time_column!r} is "
        f"{format_duration(grid.median_spacing)})"
    )
    if abs(grid.median_spacing - tau0) > 1e-6 * tau0:
        rep.note(
            f"tau0 {format_duration(tau0)} as given overrides the median "
            f"spacing of the time stamps, {format_duration(grid.median_spacing)}."
        )


def _report_dropped(grid: Grid, lines: np.ndarray, rep: LogReport) -> None:
    """Duplicated stamps (dropped) and samples off the grid, by line (before dropping)."""
    dup = grid.duplicates
    rep.duplicate_count = int(dup.size)
    rep.duplicates = [{"line": int(lines[i])} for i in dup[:LIST_LIMIT]]
    if dup.size:
        rep.note(f"{dup.size} duplicated or crowded time stamp(s) dropped (first kept).")
    tol = f"{rep.stamp_tolerance:.3g} of tau0"
    oi, oo = grid.off_grid
    rep.off_grid_count = int(oi.size)
    rep.off_grid = [
        {"line": int(lines[i]), "offset_s": float(o)}
        for i, o in zip(oi[:LIST_LIMIT], oo[:LIST_LIMIT], strict=True)
    ]
    if oi.size:
        rep.note(
            f"{oi.size} sample(s) lie off the grid by more than the stamp tolerance ({tol}); "
            "each is placed in its nearest slot."
        )
    ji, jo = grid.jitter
    rep.jitter_count = int(ji.size)
    rep.jitter_max_s = float(np.max(np.abs(jo))) if ji.size else 0.0
    rep.jitter = [
        {"line": int(lines[i]), "offset_s": float(o)}
        for i, o in zip(ji[:LIST_LIMIT], jo[:LIST_LIMIT], strict=True)
    ]
    if ji.size:
        rep.note(
            f"stamp jitter: max {format_seconds(rep.jitter_max_s)}, {ji.size} rows "
            f"(within the stamp tolerance, {tol}; snapped to their slots)."
        )
    if grid.ambiguous:
        rep.note(
            f"{grid.ambiguous} stamp(s) lie more than the stamp tolerance ({tol}) from their "
            "slot, next to an empty slot, and were read as a duplicate and a gap; if the PC "
            "stamped them late, pass --stamp-tolerance 0.7 or --time-column none with --tau0."
        )


def _report_gaps(grid: Grid, kept_lines: np.ndarray, rep: LogReport) -> None:
    """Missing samples inserted as gaps, after the line of the row before each gap."""
    rep.gaps_inserted = [
        {"after_line": int(kept_lines[i]) if i >= 0 else None, "missing": m}
        for i, m in ((_pos_in_kept(grid.keep, i), m) for i, m in grid.gaps)
    ]
    rep.gap_samples = int(grid.size - grid.placed)
    if rep.gap_samples:
        rep.note(f"{rep.gap_samples} missing sample(s) in the time stamps inserted as gaps.")


def _pos_in_kept(keep: np.ndarray, row: int) -> int:
    return int(np.count_nonzero(keep[:row]))


def _stamp(start: Any, offset: float) -> str:
    if start is not None:
        return (pd.Timestamp(start) + pd.Timedelta(seconds=offset)).isoformat()
    return f"{offset:.9g} s"


def unwrap_readings(
    rows: DataRows, vk: vals.ValueKind, hints: ReadHints, rep: LogReport
) -> np.ndarray:
    """The readings (their exact differences where kept) with wrap-arounds removed.

    Time error wraps at the counter's period (``wrap``, else 1 s when every
    reading lies within 1 s); carrier phase at one cycle (NIST SP 1065, 5.13).
    """
    readings = rows.delta if rows.delta is not None else rows.values
    if vk.kind not in ("phase", "carrier"):
        return readings
    if vk.kind == "carrier":
        period = 1.0 / vk.scale  # one cycle in the written unit
        if hints.wrap is not None and hints.nominal:
            period = hints.wrap * hints.nominal / vk.scale
    else:
        period = (hints.wrap if hints.wrap is not None else 1.0) / vk.scale
    absolute = rows.values[np.isfinite(rows.values)] * vk.scale
    applies = (
        hints.wrap is not None
        or vk.kind == "carrier"
        or (absolute.size and float(np.max(np.abs(absolute))) <= 1.0)
    )
    if not applies:
        return readings
    readings, where = unwrap(readings, period)
    if where.size:
        rep.wrap_period = float(period * vk.scale)
        rep.wrap_count = int(where.size)
        rep.wraps = [{"line": int(rows.lines[i])} for i in where[:LIST_LIMIT]]
        rep.note(
            f"{where.size} wrap-around(s) of one period "
            f"({period:g} {vk.unit or 'units'}) unwrapped."
        )
    return readings


def canonical_series(
    rows: DataRows,
    readings: np.ndarray,
    vk: vals.ValueKind,
    hints: ReadHints,
    path: str,
    column: str,
    rep: LogReport,
    more_hint: str = "",
) -> tuple[np.ndarray, float | None]:
    """Fractional frequency or time error in seconds, and the nominal frequency used.

    y = (f - f0)/f0 for absolute frequency and x = cycles/f0 for carrier phase
    (IEEE Std 1139-2008).
    """
    nominal = hints.nominal
    if vk.kind == "frequency":
        hz = rows.values if vk.scale == 1.0 else rows.values * vk.scale
        nominal = _frequency_nominal(hz, nominal, path, column, rep, more_hint)
        del hz
        series = readings * vk.scale  # then in place: one array of the log's length
        if rows.delta is not None and rows.ref_text is not None:
            series += vals.decimal_offset(rows.ref_text, vk.scale, nominal)
        else:
            series -= nominal
        series /= nominal
    elif vk.kind == "fractional":
        _check_fractional(rows, vk, path, column, more_hint, given=hints.kind == "fractional")
        # unscaled readings are the series as they are: the measurement never changes them
        series = readings if vk.scale == 1.0 else readings * vk.scale
    elif vk.kind == "carrier":
        if nominal is None:
            raise InputError(
                f"carrier phase in {vk.unit} needs the nominal frequency",
                path=path,
                column=column,
                hint="pass --nominal, e.g. --nominal 10MHz",
            )
        rep.nominal_source = "given"
        with np.errstate(over="ignore"):
            series = readings * vk.scale / nominal
        _check_time_error(series, rows, path, column)
    else:
        with np.errstate(over="ignore"):
            series = readings * vk.scale
        _check_time_error(series, rows, path, column)
        if nominal is not None:
            rep.nominal_source = "given"
    rep.nominal = nominal
    return series, nominal


#: The largest time error read, seconds: a century (beyond it no clock is compared).
_TIME_ERROR_LIMIT = 100 * 365.25 * 86400.0


def _check_time_error(series: np.ndarray, rows: DataRows, path: str, column: str) -> None:
    """Time error beyond a century (or beyond float64) is a column of another kind."""
    with np.errstate(invalid="ignore"):
        wild = np.flatnonzero(np.isinf(series) | (np.abs(series) > _TIME_ERROR_LIMIT))
    if not wild.size:
        return
    i = int(wild[0])
    raise InputError(
        f"a time error of {series[i]:.6g} s is more than a "
        "century: this column does not hold the time error of a clock",
        path=path,
        line=int(rows.lines[i]),
        column=column,
        hint="check the column (--column), its unit, or --kind",
    )


#: Rows a block of the range checks handles at once (a block-sized temporary, not the log's).
_BLOCK = 1 << 18


def _not_below_one(values: np.ndarray, scale: float) -> np.ndarray:
    """Indices where ``|values * scale| >= 1``, found a block at a time."""
    found = [np.empty(0, dtype=np.int64)]
    with np.errstate(invalid="ignore", over="ignore"):
        for lo in range(0, values.size, _BLOCK):
            part = values[lo : lo + _BLOCK] * scale
            found.append(np.flatnonzero(np.abs(part, out=part) >= 1.0) + lo)
    return np.concatenate(found)


def _check_fractional(
    rows: DataRows, vk: vals.ValueKind, path: str, column: str, more_hint: str, given: bool
) -> None:
    """Fractional frequency (f - f0)/f0 is far below 1 in size: a reading of 1 or more
    is a column of another kind (hertz, a count), and its digits would swamp the rest.

    When the reader chose the kind this is an error; when the user said
    ``--kind fractional`` (test data sets such as NBS14 are unitless numbers of
    hundreds) it is a warning and the readings are taken as given.
    """
    big = _not_below_one(rows.values, vk.scale)
    if not big.size:
        return
    i = int(big[0])
    error = InputError(
        f"{big.size} reading(s) of {rows.values[i] * vk.scale:.6g} or the like are not a "
        "fractional frequency, which is (f - f0)/f0 and far below 1 in size",
        path=path,
        line=int(rows.lines[i]),
        column=column,
        hint="pass --kind frequency (with --nominal) if the column holds hertz, --kind "
        "fractional if the numbers are meant as written, or check the unit" + more_hint,
    )
    if not given:
        raise error
    warnings.warn(
        error.one_line().replace(" (pass", "; read as given (--kind fractional) (pass", 1),
        StabilityWarning,
        stacklevel=2,
    )


def _frequency_nominal(
    hz: np.ndarray, given: float | None, path: str, column: str, rep: LogReport, more_hint: str
) -> float:
    """The nominal frequency of absolute frequency readings: checked if given, else inferred."""
    if given is not None:
        _check_given_nominal(hz[np.isfinite(hz)], given, path, column)
        rep.nominal_source = "given"
        return given
    guess = _nominal_near(hz)
    if guess is None:
        finite = hz[np.isfinite(hz)]
        guess = vals.infer_nominal(float(np.median(finite)))
        if guess is None or np.any(np.abs(finite - guess) > vals.NOMINAL_TOLERANCE * guess):
            raise InputError(
                f"absolute frequency readings near {format_frequency(float(np.median(finite)))}"
                " match no standard nominal frequency",
                path=path,
                column=column,
                hint="pass --nominal, e.g. --nominal 10MHz" + more_hint,
            )
    rep.nominal_source = "inferred: nearest standard value to the readings"
    rep.note(
        f"Nominal frequency {format_frequency(guess)} inferred from the readings"
        " (pass --nominal to set it)."
    )
    return guess


def _nominal_near(hz: np.ndarray) -> float | None:
    """The standard nominal of the median reading, found without sorting; None if unsure.

    When every finite reading lies within :data:`~stability.ingest.values.NOMINAL_TOLERANCE`
    of the nominal nearest one of them, the median lies there too, and the
    standard nominals lie much further apart than twice the tolerance: that
    nominal is the one nearest the median.
    """
    first = np.flatnonzero(np.isfinite(hz[:1000]))
    if not first.size:
        return None
    guess = vals.infer_nominal(float(hz[first[0]]))
    if guess is None:
        return None
    with np.errstate(invalid="ignore"):
        far = np.abs(hz - guess) > vals.NOMINAL_TOLERANCE * guess  # NaN is never far
    return None if far.any() else guess


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
        if guess is not None and abs(typical - guess) <= vals.NOMINAL_TOLERANCE * guess
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


def finish_report(
    rep: LogReport, plan: ColumnPlan, vk: vals.ValueKind, samples: int, sha256: str
) -> None:
    """The last fields and notes of the reading report."""
    rep.samples = samples
    rep.value_column = plan.display[plan.value_col]
    rep.channels = [plan.display[c] for c in plan.channels]
    rep.columns = columns_info(plan, vk, rep)
    if rep.bad_value_count:
        rep.note(
            f"{rep.bad_value_count} unreadable value(s) (instrument errors, sentinels, "
            "empty fields) turned into gaps."
        )
    if rep.junk_line_count:
        rep.note(f"{rep.junk_line_count} line(s) that are not data rows skipped.")
    unit = f"in {vk.unit}" if vk.unit else "(no unit)"
    rep.note(f"Values read as {vk.kind} {unit} ({vk.reason}).")
    rep.sha256 = sha256


def make_measurement(
    series: np.ndarray,
    lines: np.ndarray,
    placement: GridPlacement,
    vk: vals.ValueKind,
    nominal: float | None,
    total_rows: int,
    rep: LogReport,
) -> Measurement:
    """The measurement on the grid (NaN in the gaps), with the report as provenance.

    Raises
    ------
    InputError
        Fewer than two samples on the grid.
    """
    n_grid = placement.size
    if placement.position is None:  # every row in its own slot: the arrays are the grid's
        grid_vals, grid_lines = series, lines
    else:
        grid_vals = np.full(n_grid, np.nan)
        grid_vals[placement.position] = series
        grid_lines = np.zeros(n_grid, dtype=lines.dtype)
        grid_lines[placement.position] = lines
    meta = dict(
        nominal=nominal,
        start=placement.start,
        lines=grid_lines,
        adopt=True,  # the arrays were made for this measurement: handed over, not copied
        provenance=Provenance(
            path=rep.path,
            sha256=rep.sha256,
            rows=total_rows,
            reader=rep.summary(),
            details=rep.to_dict(),
        ),
        notes=list(rep.notes),
    )
    if n_grid < 2:
        if total_rows >= 2:  # every row landed in one slot of the grid
            raise InputError(
                f"the {total_rows} data rows all fall in one slot of the time grid "
                f"(tau0 {format_duration(placement.tau0)}): one sample, and two are needed",
                path=rep.path,
                hint="pass the interval between rows as --tau0, or leave it out",
            )
        raise InputError(
            "a single data row: at least two samples are needed",
            path=rep.path,
            hint="give a longer log",
        )
    if vk.kind in ("frequency", "fractional"):
        return Measurement.from_frequency(grid_vals, placement.tau0, **meta)
    return Measurement.from_phase(grid_vals, placement.tau0, **meta)
