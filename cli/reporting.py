"""What several commands print or write: the summary block, the calibration record, footers.

``analyze`` and ``demo`` print the same summary block under the table;
``record`` and ``demo`` make a calibration record the same way
(:func:`stability.workflow.record_into`); the figure footers of ``separate``, ``phase-noise`` and
``timeline`` say the same things in the same words (:func:`footer`). Command
modules import these from here, never from each other.
"""

from __future__ import annotations

import warnings
from collections.abc import Iterable
from datetime import datetime
from typing import Any

import stability
from stability.causes import CauseSettings, cause_notes
from stability.figures.labels import column_text
from stability.reports.tables import format_tau, format_value, statistic_unit
from stability.reports.timing import mask_lines
from stability.run import AnalysisRun
from stability.table import NOISE_LABELS as NOISE_NAMES
from stability.units import format_duration, format_frequency, format_seconds
from stability.workflow import RecordOutcome

__all__ = [
    "summary_block",
    "counter_warning",
    "spectrum_lines",
    "record_lines",
    "footer",
    "text_table",
]


def _plus_minus(value: float | None, u: float | None) -> str:
    if value is None:
        return "n/a"
    return f"{value:.4g} +/- {u:.2g}" if u is not None else f"{value:.4g}"


#: What the log's values were, in words (the reader's kind names).
_KINDS = {
    "fractional": "fractional frequency",
    "frequency": "frequency (Hz)",
    "phase": "phase (time error, s)",
}


def summary_block(run: AnalysisRun) -> str:
    """The short summary printed under the table.

    Counts say what they count: readings (the log's values) and the phase
    points they span; gaps as missing readings in the log, as the series
    figure and summary.json count them; the drift removed (by its model) told
    apart from the linear drift estimate, each with where its uncertainty
    comes from.
    """
    source, prep = run.source, run.preparation
    od = run.table.extras.get("offset_drift")
    readings = source.n - 1 if source.kind == "frequency" else source.n
    read_as = (source.provenance.details or {}).get("kind") or source.kind
    kind = _KINDS.get(read_as, read_as)
    if source.nominal:
        kind += f", nominal {format_frequency(source.nominal)}"
    span = format_duration(run.measurement.span)
    removed = prep.removed_drift
    lines = [
        f"file        {source.provenance.path or 'data from memory'}",
        f"column      {column_text(source) or 'n/a'}",
        f"format      {source.provenance.reader or 'n/a'}",
        f"kind        {kind}",
        f"readings    {readings} ({source.n} phase points)  tau0 "
        f"{format_seconds(run.measurement.tau0)}  span {span}",
        f"gaps        {prep.gaps_before} missing readings in the log",
        f"outliers    {len(prep.outliers.samples)} removed",
        "drift       "
        + (f"removed ({removed.model} model)" if removed is not None else "none removed"),
    ]
    if od is not None:
        lines += [
            f"offset      {_plus_minus(od.offset, od.u_offset)} (mean fractional frequency)",
            f"drift/day   {_plus_minus(od.drift_per_day, od.u_drift_per_day)} "
            "(linear drift estimate; uncertainty from the noise model)",
        ]
    lines += [f"noted       {note}" for note in cause_notes(run.table)]
    return "\n".join(lines)


def counter_warning(causes: CauseSettings) -> None:
    """Warn on standard error when the counter type changes what the Allan deviation means."""
    if causes.counter == "lambda":
        warnings.warn(
            "a lambda-type (averaging) counter: the Allan deviation of its readings behaves "
            "like the modified Allan deviation, not the Allan deviation",
            UserWarning,
            stacklevel=2,
        )


def record_lines(outcome: RecordOutcome) -> list[str]:
    """The verdict lines printed after a record is made."""
    judgement, info = outcome.judgement, outcome.info
    if judgement is None:  # a time-error record: judged against the mask alone
        lines = [
            f"device {info.device_id}: the time error of the log as read against a mask "
            "(no specification)"
        ]
        lines += [f"  {line}" for line in mask_lines(outcome.timing)]
        lines.append(f"overall verdict: {outcome.verdict} (the mask's)")
        return lines
    unit = statistic_unit(judgement.statistic)
    level = 100 * judgement.confidence
    lines = [
        f"device {info.device_id}: {judgement.statistic} against {outcome.spec_path} "
        f"at {level:.3g} % confidence"
    ]
    for check in judgement.listed:
        shown = format_value(check.deviation, unit) or "n/a"
        extra = " (interpolated)" if check.interpolated else ""
        extra += " (reference-limited)" if check.reference_limited else ""
        lines.append(
            f"  tau {format_tau(check.tau_s):>8}  limit {format_value(check.limit, unit):>9}  "
            f"measured {shown:>9}  {check.verdict}{extra}"
        )
    others = [c for c in judgement.checks if not c.listed]
    if others:
        failing = sum(c.verdict == "fail" for c in others)
        lines.append(
            f"  {len(others)} measured tau(s) between the limits judged on the limit line"
            + (f", {failing} fail" if failing else "")
        )
    lines.append(f"overall verdict: {judgement.overall}")
    if outcome.timing is not None:
        lines.append("time error of the log as read, against a mask:")
        lines += [f"  {line}" for line in mask_lines(outcome.timing)]
    return lines


def footer(hashes: Iterable[str | None], moment: datetime, *, several: bool = False) -> str:
    """A figure footer: the inputs' SHA-256 prefixes, the tool version, the analysis time."""
    shown = [h[:12] for h in hashes if h]
    word = "inputs" if several else "input"
    where = f"{word} SHA-256 {', '.join(shown)}" if shown else f"{word} SHA-256 n/a"
    return (
        f"{where} · stability {stability.__version__} · "
        f"analysed {moment.strftime('%Y-%m-%d %H:%M UTC')}"
    )


def text_table(header: list[str], rows: list[list[str]]) -> str:
    """Right-aligned columns under a header and a rule, for the terminal."""
    widths = [max([len(header[j])] + [len(r[j]) for r in rows]) for j in range(len(header))]
    out = ["  ".join(h.rjust(w) for h, w in zip(header, widths, strict=True))]
    out.append("  ".join("-" * w for w in widths))
    for row in rows:
        out.append("  ".join(c.rjust(w) for c, w in zip(row, widths, strict=True)).rstrip())
    return "\n".join(out)


def spectrum_lines(run: AnalysisRun, spectrum: Any) -> str:
    """What ``stability spectrum`` prints: the Welch settings, the two views of the noise
    model side by side, and the periodic components."""
    causes = run.table.extras.get("causes") or {}
    periodic = causes.get("periodic") or {}
    d = spectrum.describe()
    lines = [
        f"file        {run.source.provenance.path or 'data from memory'}",
        f"spectrum    Welch, Hann window, {d['segments_used']} segments of "
        f"{format_duration(d['segment_s'])} at 50 % overlap, {d['edf']:.3g} degrees of "
        f"freedom, resolution {d['resolution_hz']:.3g} Hz",
    ]
    if d["segments_left_out_for_gaps"]:
        lines.append(
            f"gaps        {d['segments_left_out_for_gaps']} segment(s) holding a gap left out"
        )
    rows = periodic.get("model_comparison") or []
    if rows:
        lines.append("noise model h_alpha: fit to the spectrum | model of the Allan deviation")
        for row in rows:
            z = row["z"]
            lines.append(
                f"  alpha {row['alpha']:+d} {NOISE_NAMES.get(row['alpha'], ''):<5} "
                f"{_plus_minus(row['h_spectrum'], row['u_spectrum'])} | "
                f"{_plus_minus(row['h_allan'], row['u_allan'])}"
                + ("" if z is None else f"  ({z:+.1f} combined standard uncertainties)")
            )
    found = periodic.get("lines") or []
    p = periodic.get("false_alarm")
    if not found:
        lines.append(
            f"periodic    none above the local background (false-alarm chance {p:g} "
            "over the spectrum)"
        )
    for line in found:
        lines.append(
            f"periodic    {line['summary']}; Allan-deviation bump near tau = "
            f"{line['adev_peak_tau_s']:.4g} s (0.371 T), height {line['adev_peak']:.2g}"
        )
    lines += [f"noted       {note}" for note in cause_notes(run.table) if "periodic" not in note]
    return "\n".join(lines)
