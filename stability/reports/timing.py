"""Text outputs of a time-error analysis: CSV rows, a Markdown report, terminal lines, JSON.

``time_error.csv`` has one row per (statistic, tau) with the columns of
:data:`TIMING_COLUMNS` (values in seconds, every digit kept, empty cells for
NaN); ``time_error.md`` and the terminal show the time-error metrics, the
sawtooth correction's effect, the mask verdict with its least margin and
coverage, and the MTIE/TDEV rows rounded for reading; ``time_error.json``
holds everything with the input's provenance (strict JSON).
"""

from __future__ import annotations

import csv
import io
import math
from collections.abc import Mapping
from datetime import UTC, datetime
from typing import Any

from .._version import __version__
from ..errors import InputError
from ..files import jsonable
from ..summary import input_section, summary_json
from ..timing import MASK_CAUTION, TimeErrorAnalysis
from ..units import format_duration
from .tables import format_tau, format_value

__all__ = [
    "TIMING_COLUMNS",
    "time_error_csv",
    "time_error_markdown",
    "time_error_lines",
    "time_error_summary",
    "time_error_json",
    "mask_lines",
]

TIMING_COLUMNS = (
    "statistic", "tau_s", "m", "value_s", "count", "limit_s", "margin", "verdict",
    "offset_removed",
)  # fmt: skip


def _check(result: Any) -> TimeErrorAnalysis:
    if not isinstance(result, TimeErrorAnalysis):
        raise InputError(
            f"result must be a stability.timing.TimeErrorAnalysis, got {type(result).__name__}"
        )
    return result


def _cell(value: Any) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, float):
        return "" if not math.isfinite(value) else repr(value)
    return str(value)


def time_error_csv(result: TimeErrorAnalysis) -> str:
    """One row per (statistic, tau), every digit kept."""
    out = io.StringIO()
    writer = csv.writer(out, lineterminator="\n")
    writer.writerow(TIMING_COLUMNS)
    for row in _check(result).rows():
        writer.writerow([_cell(row[c]) for c in TIMING_COLUMNS])
    return out.getvalue()


def _seconds(value: float) -> str:
    return format_value(value, "s") or "n/a"


def _metric_lines(result: TimeErrorAnalysis) -> list[tuple[str, str, str]]:
    rows = [(name, _seconds(v), what) for name, v, what in result.metrics.rows()]
    if not result.absolute:
        rows = [(n, v, w + " (relative to the first sample)") for n, v, w in rows]
    return rows


def mask_lines(result: TimeErrorAnalysis) -> list[str]:
    """The verdict lines: overall, per statistic with least margin and coverage, the caution."""
    j = result.judgement
    if j is None:
        return []
    mask = j.mask
    lines = [f"mask {mask.name}: {mask.title or mask.standard}", f"verdict: {j.verdict}"]
    for name in ("mtie", "tdev"):
        if mask.curve(name) is None:
            continue
        text = f"  {name.upper()}: {j.verdict_of(name)}"
        cover = j.coverage(name)
        if cover is not None:
            text += f" (judged {format_tau(cover[0])} to {format_tau(cover[1])})"
        least = j.least_margin(name)
        if least is not None:
            text += f"; least margin {least.margin:.3g} at {format_tau(least.tau)}"
            text += f" ({_seconds(least.measured)} of {_seconds(least.limit)})"
        missing = j.not_measured(name)
        if missing:
            text += "; not measured up to " + format_tau(max(missing))
        lines.append(text)
    for c in j.of("max_abs_te"):
        lines.append(
            f"  max|TE|: {c.verdict} ({_seconds(c.measured)} of {_seconds(c.limit)}"
            + (f", margin {c.margin:.3g})" if math.isfinite(c.margin) else ")")
        )
    lines.append(f"caution: {MASK_CAUTION}")
    return lines


def time_error_lines(result: TimeErrorAnalysis) -> list[str]:
    """What the terminal shows: metrics, sawtooth effect, offset, verdict."""
    result = _check(result)
    lines = [
        f"time error of {result.te.size} samples at {format_duration(result.tau0)}, "
        f"{format_duration(result.span)}"
    ]
    width = max(len(n) for n, _, _ in _metric_lines(result))
    lines += [f"  {n:<{width}}  {v}" for n, v, _ in _metric_lines(result)]
    lines.append(f"  {result.metrics.dte_note}")
    saw = result.sawtooth
    if saw is not None:
        lines.append(
            f"sawtooth correction ({saw.column}): TDEV at {format_tau(result.tau0)} "
            f"{_seconds(saw.tdev_before)} -> {_seconds(saw.tdev_after)} "
            f"(x{saw.tdev_ratio:.2f}), MTIE at {format_tau(result.tau0)} "
            f"{_seconds(saw.mtie_before)} -> {_seconds(saw.mtie_after)}"
        )
    lines.append(
        result.offset.describe()
        if result.offset is not None
        else "frequency offset not removed before MTIE"
    )
    lines.append(
        f"TDEV judged up to {format_tau(result.tdev_judged_to())} "
        "(a record of 12 tau, rule of thumb, from memory); MTIE up to the record"
    )
    return lines + mask_lines(result)


def _escape(text: str) -> str:
    return text.replace("|", "\\|")


def time_error_markdown(result: TimeErrorAnalysis, title: str = "Time-error analysis") -> str:
    """A Markdown report: metrics table, sawtooth, offset, verdict, MTIE/TDEV rows."""
    result = _check(result)
    out = [f"# {title}", "", "| metric | value | what |", "| --- | --- | --- |"]
    out += [f"| {_escape(n)} | {v} | {w} |" for n, v, w in _metric_lines(result)]
    out += ["", result.metrics.dte_note + ".", ""]
    for line in time_error_lines(result)[len(_metric_lines(result)) + 2 :]:
        out.append(f"- {line.strip()}")
    out += [
        "",
        "| statistic | tau | value | windows/terms | limit | margin | verdict |",
        "| --- | --- | --- | --- | --- | --- | --- |",
    ]
    for r in result.rows():
        margin = f"{r['margin']:.3g}" if math.isfinite(r["margin"]) else ""
        value, limit = format_value(r["value_s"], "s"), format_value(r["limit_s"], "s")
        out.append(
            f"| {r['statistic'].upper()} | {format_tau(r['tau_s'])} | {value} "
            f"| {r['count']} | {limit} | {margin} | {r['verdict']} |"
        )
    return "\n".join(out) + "\n"


def time_error_summary(
    result: TimeErrorAnalysis,
    measurement: Any,
    settings: Mapping[str, Any],
    analysis_time: datetime | None = None,
) -> dict[str, Any]:
    """The machine-readable summary: tool, time, input provenance, settings, the analysis."""
    moment = analysis_time or datetime.now(UTC)
    return {
        "tool": {"name": "stability", "version": __version__},
        "analysis_time": moment.astimezone(UTC).isoformat(),
        "input": input_section(measurement),
        "settings": jsonable(dict(settings)),
        "time_error": jsonable(_check(result).to_dict()),
    }


def time_error_json(summary: Mapping[str, Any]) -> str:
    """Strict JSON text of :func:`time_error_summary`."""
    return summary_json(summary)
