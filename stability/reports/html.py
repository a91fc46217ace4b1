"""How results show themselves in a notebook: HTML and plain text, registered on import.

The result types sit floors below the reports, so their ``_repr_html_`` (and
IPython's plain text) look the renderers up in :mod:`stability.display`; this
module registers them when it is imported (the package face names it as a
provider). The results table is shown as ``table.md`` shows it
(:func:`stability.reports.tables.people_rows`: four significant digits, time
statistics with a time unit, the interval at the table's confidence), verdicts
in the colours of the figures (:data:`stability.figures.style.VERDICT_COLORS`).
Every text that comes from a file or a user (paths, notes, names) is escaped
with :func:`html.escape`.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from html import escape
from typing import Any

import numpy as np

from ..display import register_html, register_text
from ..dynamic import DynamicResult
from ..figures.style import VERDICT_COLORS
from ..hat import HatResult
from ..ingest import LogReport
from ..measurement import Measurement
from ..phase_noise import PhaseNoiseStability
from ..prepare import PreparationReport
from ..run import AnalysisRun
from ..spec import Judgement
from ..table import StabilityTable
from ..units import format_duration, format_frequency
from .record import CAUTION
from .tables import BIAS_NOTE, format_tau, format_value, people_rows, statistic_unit, terminal_table

__all__ = [
    "measurement_html",
    "measurement_text",
    "table_html",
    "judgement_html",
    "judgement_text",
    "run_html",
    "run_text",
    "hat_html",
    "phase_noise_html",
    "dynamic_html",
    "verdict_badge",
    "result_box",
    "facts_table",
    "log_report_html",
    "preparation_html",
    "preparation_text",
]

_BOX = 'class="stability-result" style="font-family:sans-serif;font-size:90%"'
_CELL = 'style="padding:1px 8px;text-align:{align};border-bottom:1px solid #ddd"'


# ---------------------------------------------------------------------- pieces
def _cells(row: Sequence[str], tag: str, numeric: set[int]) -> str:
    out = []
    for j, cell in enumerate(row):
        style = _CELL.format(align="right" if j in numeric else "left")
        out.append(f"<{tag} {style}>{cell}</{tag}>")
    return "<tr>" + "".join(out) + "</tr>"


def _table(header: Sequence[str], rows: Iterable[Sequence[str]], numeric: set[int]) -> str:
    """An HTML table; header and cells are escaped here unless already marked up."""
    head = _cells([escape(h) for h in header], "th", numeric)
    body = "".join(_cells(row, "td", numeric) for row in rows)
    return f"<table><thead>{head}</thead><tbody>{body}</tbody></table>"


def facts_table(pairs: Iterable[tuple[str, str]]) -> str:
    """An HTML table of label/value rows (both escaped here)."""
    rows = "".join(
        f'<tr><th style="text-align:left;padding:1px 8px">{escape(k)}</th>'
        f'<td style="text-align:left;padding:1px 8px">{escape(v)}</td></tr>'
        for k, v in pairs
    )
    return f"<table>{rows}</table>"


def _notes(notes: Iterable[str], title: str = "notes") -> str:
    items = "".join(f"<li>{escape(str(n))}</li>" for n in notes)
    return f"<p><b>{escape(title)}</b></p><ul>{items}</ul>" if items else ""


def result_box(title: str, *parts: str) -> str:
    """A result's display: its title (escaped) over HTML ``parts`` already made safe."""
    return f"<div {_BOX}><p><b>{escape(title)}</b></p>{''.join(parts)}</div>"


def verdict_badge(verdict: Any) -> str:
    """A verdict word on its figure colour (white text), escaped."""
    word = str(getattr(verdict, "value", verdict))
    color = VERDICT_COLORS.get(word, "#9a9a9a")
    return (
        f'<span class="verdict" style="background:{color};color:#ffffff;'
        f'padding:0 5px;border-radius:3px">{escape(word)}</span>'
    )


def _number(value: float, unit: str = "") -> str:
    return format_value(float(value), unit) if math.isfinite(float(value)) else "n/a"


# ---------------------------------------------------------------------- measurement
def _measurement_facts(m: Measurement) -> list[tuple[str, str]]:
    prov = m.provenance
    facts = [
        ("source", prov.path or "made in memory"),
        ("kind", f"{m.kind} (phase in seconds inside)"),
        ("samples N", f"{m.n} phase samples"),
        ("tau0", format_tau(m.tau0)),
        ("span", format_duration(m.span)),
        (
            "gaps",
            f"{m.gap_count()} missing" + (" (terms across them dropped)" if m.has_gaps else ""),
        ),
    ]
    if prov.sha256:
        facts.insert(1, ("SHA-256", prov.sha256[:16] + "…"))
    if prov.reader:
        facts.append(("read as", prov.reader))
    if m.start is not None:
        facts.append(("start", m.start.isoformat(sep=" ")))
    if m.nominal is not None:
        facts.append(("nominal", format_frequency(m.nominal)))
    if m.frequency_offset:
        facts.append(
            ("frequency offset", f"{m.frequency_offset:.4g} (kept aside, see phase_with_offset)")
        )
    return facts


def measurement_html(m: Measurement) -> str:
    return result_box("Measurement", facts_table(_measurement_facts(m)), _notes(m.notes))


def measurement_text(m: Measurement) -> str:
    width = max(len(k) for k, _ in _measurement_facts(m))
    lines = ["Measurement"] + [f"  {k.ljust(width)}  {v}" for k, v in _measurement_facts(m)]
    lines += [f"  - {n}" for n in m.notes]
    return "\n".join(lines)


# ---------------------------------------------------------------------- reading, preparing
def log_report_html(report: LogReport) -> str:
    """What ``stability inspect`` prints, as preformatted text."""
    return result_box("What is in the log", f"<pre>{escape(report.to_text())}</pre>")


def _preparation_facts(prep: PreparationReport) -> list[tuple[str, str]]:
    return [
        ("samples", f"{prep.samples_before} before, {prep.samples_after} after"),
        ("gaps", f"{prep.gaps_before} before, {prep.gaps_after} after"),
        ("outliers removed", str(len(prep.outliers.samples))),
        ("phase steps found", str(len(prep.steps))),
        ("drift removed", prep.drift_model),
        ("averaged", "no" if prep.average_factor == 1 else f"{prep.average_factor} samples"),
    ]


def preparation_html(prep: PreparationReport) -> str:
    return result_box("Preparation", facts_table(_preparation_facts(prep)), _notes(prep.notes))


def preparation_text(prep: PreparationReport) -> str:
    lines = ["Preparation"] + [f"  {k}: {v}" for k, v in _preparation_facts(prep)]
    return "\n".join(lines + [f"  - {n}" for n in prep.notes])


# ---------------------------------------------------------------------- results table
def _table_title(table: StabilityTable) -> str:
    source = getattr(getattr(table.measurement, "provenance", None), "path", None)
    title = f"Stability table: {', '.join(table.statistics) or 'no statistics'}"
    return f"{title} · {source}" if source else title


def _model_text(table: StabilityTable) -> list[str]:
    out = []
    stated = table.extras.get("offset_drift")
    if stated is not None:
        out.append(
            f"frequency offset {stated.offset:.4g} ± {stated.u_offset:.2g}, "
            f"drift {stated.drift_per_day:.4g} ± {stated.u_drift_per_day:.2g} per day"
        )
    return out


#: A results table longer than this shows its first and last rows in a notebook.
HTML_ROWS = 120
_HEAD, _TAIL = 60, 20


def table_html(table: StabilityTable) -> str:
    header, rows = people_rows(table)
    cells = [[escape(c) for c in row] for row in rows]
    omitted = len(cells) - _HEAD - _TAIL if len(cells) > HTML_ROWS else 0
    if omitted:
        gap = ["…"] + [""] * (len(header) - 1)
        cells = [*cells[:_HEAD], gap, *cells[-_TAIL:]]
    parts = [_table(header, cells, {1, 2, 3, 4, 6, 7})]
    if omitted:
        parts.append(f"<p>{omitted} rows not shown; to_frame() holds every row.</p>")
    if len(header) == 8:
        parts.append(f"<p>Rows with a bias factor are {escape(BIAS_NOTE)}.</p>")
    parts.append(_notes(_model_text(table), "offset and drift"))
    return result_box(_table_title(table), *parts)


def table_text(table: StabilityTable) -> str:
    return f"{_table_title(table)}\n{terminal_table(table)}"


# ---------------------------------------------------------------------- judgement
def _check_rows(judgement: Judgement, *, badge: bool) -> list[list[str]]:
    unit = statistic_unit(judgement.statistic)
    rows = []
    for c in judgement.checks:
        interval = (
            f"[{_number(c.ci_low, unit)}, {_number(c.ci_high, unit)}]"
            if math.isfinite(c.ci_low) and math.isfinite(c.ci_high)
            else ""
        )
        flags = ", ".join(
            f
            for f, on in (
                ("listed", c.listed),
                ("interpolated", c.interpolated),
                ("reference-limited", c.reference_limited),
            )
            if on
        )
        cells = [
            format_tau(c.tau_s),
            _number(c.limit, unit),
            _number(c.deviation, unit),
            interval,
            flags,
            c.note,
        ]
        cells = [escape(x) for x in cells] if badge else cells
        verdict = verdict_badge(c.verdict) if badge else c.verdict.value
        rows.append([*cells[:4], verdict, *cells[4:]])
    return rows


_CHECK_HEADER = ["tau", "limit", "deviation", "interval", "verdict", "flags", "note"]


def judgement_html(judgement: Judgement) -> str:
    level = 100 * judgement.confidence
    header = [*_CHECK_HEADER]
    header[3] = f"{level:.3g} % interval"
    title = f"Judgement of {judgement.statistic.upper()} against the specification"
    return result_box(
        title,
        f"<p>overall: {verdict_badge(judgement.overall)}</p>",
        _table(header, _check_rows(judgement, badge=True), {0, 1, 2, 3}),
        _notes(judgement.notes),
        f"<p><i>{escape(CAUTION)}</i></p>",
    )


def judgement_text(judgement: Judgement) -> str:
    lines = [f"Judgement of {judgement.statistic.upper()}: {judgement.overall.value}"]
    for row in _check_rows(judgement, badge=False):
        lines.append("  " + "  ".join(cell for cell in row[:5]))
    lines += [f"  - {n}" for n in judgement.notes]
    return "\n".join([*lines, CAUTION])


# ---------------------------------------------------------------------- run
def _run_facts(run: AnalysisRun) -> list[tuple[str, str]]:
    prep = run.preparation
    return [
        ("analysed", run.analysis_time.isoformat(sep=" ", timespec="seconds")),
        ("drift removed", prep.drift_model),
        ("outliers removed", str(len(prep.outliers.samples))),
        ("samples", f"{prep.samples_before} read, {prep.samples_after} analysed"),
    ]


def run_html(run: AnalysisRun) -> str:
    return result_box(
        "Analysis run",
        measurement_html(run.source),
        facts_table(_run_facts(run)),
        _notes(run.preparation.notes, "preparation"),
        table_html(run.table),
    )


def run_text(run: AnalysisRun) -> str:
    facts = "\n".join(f"  {k}: {v}" for k, v in _run_facts(run))
    return f"Analysis run\n{measurement_text(run.source)}\n{facts}\n{table_text(run.table)}"


# ---------------------------------------------------------------------- studies
@dataclass(frozen=True)
class _Shown:
    """A study's display as data: shown as HTML in a notebook, as aligned text elsewhere."""

    title: str
    facts: list[tuple[str, str]]
    header: list[str]
    rows: list[list[str]]
    numeric: set[int]
    notes: list[str]

    def html(self) -> str:
        cells = [[escape(c) for c in row] for row in self.rows]
        facts = facts_table(self.facts) if self.facts else ""
        return result_box(
            self.title, facts, _table(self.header, cells, self.numeric), _notes(self.notes)
        )

    def text(self) -> str:
        lines = [self.title] + [f"  {k}: {v}" for k, v in self.facts]
        table = [self.header, *self.rows]
        widths = [max(len(row[j]) for row in table) for j in range(len(self.header))]
        for row in table:
            cells = [
                c.rjust(w) if j in self.numeric else c.ljust(w)
                for j, (c, w) in enumerate(zip(row, widths, strict=True))
            ]
            lines.append("  " + "  ".join(cells).rstrip())
        return "\n".join(lines + [f"  - {n}" for n in self.notes])


def _hat(result: HatResult) -> _Shown:
    unit = statistic_unit(result.statistic)
    rows = []
    for name, osc in result.oscillators.items():
        for i, tau in enumerate(osc.tau):
            below = osc.status[i] == "below resolution"
            value = _number(osc.upper_bound[i] if below else osc.deviation[i], unit)
            interval = f"[{_number(osc.ci_low[i], unit)}, {_number(osc.ci_high[i], unit)}]"
            rows.append(
                [name, format_tau(float(tau)), f"< {value}" if below else value, interval,
                 osc.status[i]]
            )  # fmt: skip
    level = f"{100 * result.confidence:.3g} % interval"
    return _Shown(
        f"Three-cornered hat: {result.statistic.upper()} of {', '.join(result.names)}",
        [],
        ["oscillator", "tau", "deviation", level, "status"],
        rows,
        {1, 2, 3},
        list(result.notes),
    )


def _phase_noise(result: PhaseNoiseStability) -> _Shown:
    rows = [
        [format_tau(float(tau))]
        + [_number(result.deviations[s][i], statistic_unit(s)) for s in result.statistics]
        for i, tau in enumerate(result.tau)
    ]
    facts = [
        ("carrier", format_frequency(result.nominal)),
        ("bandwidth f_h", format_frequency(result.f_h)),
        ("above the last offset", result.beyond),
    ]
    header = ["tau", *(s.upper() for s in result.statistics)]
    return _Shown(
        "Stability from a phase-noise table",
        facts,
        header,
        rows,
        set(range(len(header))),
        list(result.notes),
    )


def _dynamic(result: DynamicResult) -> _Shown:
    windows, taus = result.shape
    unit = statistic_unit(result.statistic)
    rows = []
    for j, tau in enumerate(result.tau):
        column = result.deviation[:, j]
        good = column[np.isfinite(column)]
        low, high = (float(good.min()), float(good.max())) if good.size else (math.nan, math.nan)
        rows.append(
            [format_tau(float(tau)), _number(low, unit), _number(high, unit), str(good.size)]
        )
    facts = [
        ("windows", str(windows)),
        ("window", f"{result.window_points} phase samples"),
        ("step", f"{result.step_points} phase samples"),
    ]
    return _Shown(
        f"Stability over time: {result.statistic.upper()}, {windows} windows x {taus} taus",
        facts,
        ["tau", "smallest", "largest", "windows with a value"],
        rows,
        {0, 1, 2, 3},
        list(result.notes),
    )


def hat_html(result: HatResult) -> str:
    return _hat(result).html()


def phase_noise_html(result: PhaseNoiseStability) -> str:
    return _phase_noise(result).html()


def dynamic_html(result: DynamicResult) -> str:
    return _dynamic(result).html()


register_html(LogReport, log_report_html)
register_text(LogReport, LogReport.to_text)
register_html(PreparationReport, preparation_html)
register_text(PreparationReport, preparation_text)
register_html(Measurement, measurement_html)
register_text(Measurement, measurement_text)
register_html(StabilityTable, table_html)
register_text(StabilityTable, table_text)
register_html(Judgement, judgement_html)
register_text(Judgement, judgement_text)
register_html(AnalysisRun, run_html)
register_text(AnalysisRun, run_text)
register_html(HatResult, hat_html)
register_html(PhaseNoiseStability, phase_noise_html)
register_html(DynamicResult, dynamic_html)
register_text(HatResult, lambda result: _hat(result).text())
register_text(PhaseNoiseStability, lambda result: _phase_noise(result).text())
register_text(DynamicResult, lambda result: _dynamic(result).text())
