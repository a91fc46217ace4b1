"""How a time-error analysis shows itself in a notebook: HTML and plain text.

:class:`~stability.timing.TimeErrorAnalysis` sits on the judging floor, below
the reports, so its ``_repr_html_`` and IPython's plain text look the
renderers up in :mod:`stability.display`; this module registers them when it
is imported (the package face names it as a provider). The display holds what
``stability time-error`` prints: the record, the time-error metrics, the
sawtooth correction's effect, whether the frequency offset was removed, and,
when a mask was judged, the verdict per statistic in the verdict colours of
the figures (:data:`stability.figures.style.VERDICT_COLORS`), the least
margins, the taus the record is too short for, and the caution (the bundled
limits are recalled from the Recommendations, from memory). Every text is
escaped with :func:`html.escape`.
"""

from __future__ import annotations

import math
from html import escape

from ..display import register_html, register_text
from ..figures.style import VERDICT_COLORS
from ..timing import MASK_CAUTION, TimeErrorAnalysis
from ..units import format_duration
from .html import facts_table, result_box, verdict_badge
from .tables import format_tau, format_value
from .timing import time_error_lines

__all__ = ["time_error_html", "time_error_text"]

_CELL = 'style="padding:1px 8px;text-align:{align};border-bottom:1px solid #ddd"'


def _seconds(value: float) -> str:
    return format_value(value, "s") if math.isfinite(value) else "n/a"


def _title(result: TimeErrorAnalysis) -> str:
    return (
        f"Time-error analysis: {result.te.size} samples at {format_duration(result.tau0)}, "
        f"{format_duration(result.span)}"
    )


def _row(cells: list[str], tag: str = "td", right: frozenset[int] = frozenset()) -> str:
    out = "".join(
        f"<{tag} {_CELL.format(align='right' if j in right else 'left')}>{c}</{tag}>"
        for j, c in enumerate(cells)
    )
    return f"<tr>{out}</tr>"


def _facts(result: TimeErrorAnalysis) -> list[tuple[str, str]]:
    facts = [
        ("time error", "absolute (a phase log)" if result.absolute else "relative to the first"
         " sample (a frequency log)"),
        ("frequency offset", result.offset.describe() if result.offset is not None
         else "not removed before MTIE"),
        ("TDEV judged up to", f"{format_tau(result.tdev_judged_to())} (a record of 12 tau, rule "
         "of thumb, from memory); MTIE up to the record"),
    ]  # fmt: skip
    saw = result.sawtooth
    if saw is not None:
        facts.append(
            (
                f"sawtooth correction ({saw.column})",
                f"TDEV at {format_tau(result.tau0)} {_seconds(saw.tdev_before)} -> "
                f"{_seconds(saw.tdev_after)} (x{saw.tdev_ratio:.2f})",
            )
        )
    return facts


def _metrics_html(result: TimeErrorAnalysis) -> str:
    rows = [_row(["metric", "value", "what"], "th", frozenset({1}))]
    for name, value, what in result.metrics.rows():
        if not result.absolute:
            what += " (relative to the first sample)"
        rows.append(
            _row([escape(name), escape(_seconds(value)), escape(what)], right=frozenset({1}))
        )
    note = f"<p>{escape(result.metrics.dte_note)}.</p>"
    return f"<p><b>time-error metrics</b></p><table>{''.join(rows)}</table>{note}"


def _verdict_html(result: TimeErrorAnalysis) -> str:
    j = result.judgement
    if j is None:
        return "<p>No mask was judged (pass mask= to judge one).</p>"
    mask = j.mask
    colour = VERDICT_COLORS.get(str(j.verdict), "#9a9a9a")
    head = (
        f"<p><b>mask {escape(mask.name)}</b>: {escape(mask.title or mask.standard)}<br>"
        f'verdict: <span style="color:{colour};font-weight:bold">{escape(str(j.verdict))}'
        f"</span> {verdict_badge(j.verdict)}</p>"
    )
    header = ["judged", "verdict", "taus judged", "least margin", "at", "measured / limit"]
    rows = [_row(header, "th", frozenset({3, 4, 5}))]
    for name in [s for s in ("mtie", "tdev", "max_abs_te") if j.of(s)]:
        least = j.least_margin(name)
        cover = j.coverage(name)
        judged = f"{format_tau(cover[0])} to {format_tau(cover[1])}" if cover else ""
        missing = j.not_measured(name)
        if missing:
            judged += ("; " if judged else "") + f"not measured up to {format_tau(max(missing))}"
        cells = [
            "max|TE|" if name == "max_abs_te" else name.upper(),
            judged,
            f"{least.margin:.3g}" if least is not None else "",
            format_tau(least.tau) if least is not None and math.isfinite(least.tau) else "",
            f"{_seconds(least.measured)} of {_seconds(least.limit)}" if least is not None else "",
        ]
        escaped = [escape(c) for c in cells]
        rows.append(
            _row(
                [escaped[0], verdict_badge(j.verdict_of(name)), *escaped[1:]],
                right=frozenset({3, 4, 5}),
            )
        )
    recalled = f"<p>limits: {escape(mask.recalled)}</p>" if mask.recalled else ""
    return f"{head}<table>{''.join(rows)}</table>{recalled}<p><i>{escape(MASK_CAUTION)}</i></p>"


def time_error_html(result: TimeErrorAnalysis) -> str:
    """The notebook display of a time-error analysis (an HTML fragment, every text escaped)."""
    notes = "".join(f"<li>{escape(n)}</li>" for n in result.notes)
    return result_box(
        _title(result),
        facts_table(_facts(result)),
        _metrics_html(result),
        _verdict_html(result),
        f"<p><b>notes</b></p><ul>{notes}</ul>" if notes else "",
    )


def time_error_text(result: TimeErrorAnalysis) -> str:
    """The plain-text display: what ``stability time-error`` prints, and the mask's source."""
    lines = ["Time-error analysis", *time_error_lines(result)]
    if result.judgement is not None and result.judgement.mask.recalled:
        lines.insert(len(lines) - 1, f"limits: {result.judgement.mask.recalled}")
    return "\n".join(lines)


register_html(TimeErrorAnalysis, time_error_html)
register_text(TimeErrorAnalysis, time_error_text)
