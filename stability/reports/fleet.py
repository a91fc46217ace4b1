"""The fleet report: ``fleet.md`` and ``fleet.html``, one page for a whole fleet of devices.

:func:`fleet_markdown` writes the counts, the ranking, the table and links to
the figures as Markdown. :func:`fleet_html` writes one self-contained HTML page
that a browser opens without any network access: the figures are embedded as
``data:`` URIs (RFC 2397) of base64 PNG, the style sheet and a short script
that sorts the table by a clicked column are inline, and every text from the
logs is escaped. Both take the fleet table as the fleet's code made it (a
pandas DataFrame with the columns of :mod:`stability.fleet.table`).
:func:`fleet_fragment` and :func:`fleet_text` are a fleet's display in a
notebook (``stability.fleet.Fleet``): the counts, the worst devices and the
sortable table in one fragment (the same sorting script as the page, which
binds each table once), and the same as plain text.
"""

from __future__ import annotations

import base64
import html
import math
from collections.abc import Mapping, Sequence
from typing import Any

import pandas as pd

from .._version import __version__
from ..figures.style import VERDICT_COLORS

__all__ = [
    "fleet_markdown",
    "fleet_html",
    "CAUTION",
    "fleet_counts",
    "format_cell",
    "settings_line",
    "fleet_fragment",
    "fleet_text",
]

CAUTION = (
    "Each verdict covers one statistic at the listed taus of its specification, from this "
    "analysis of this log; it is not a calibration of the device. Where a verdict matters "
    "for a calibration record, the laboratory's accredited procedure decides."
)
#: Columns of the readable table (fleet.md and fleet.html), with their headings.
_SHOWN = (
    ("device", "device"),
    ("status", "status"),
    ("readings", "readings"),
    ("span_s", "span (s)"),
    ("gaps", "gaps"),
    ("outliers_removed", "outliers"),
    ("offset", "offset"),
    ("drift_per_day", "drift/day"),
)
_TAIL = (
    ("noise", "noise types"),
    ("verdict", "verdict"),
    ("limit_ratio", "worst / limit"),
    ("population_z", "z vs fleet"),
    ("error", "error"),
)


def fleet_counts(frame: pd.DataFrame) -> dict[str, int]:
    """Logs in all, finished, failed, and (when judged) passing and failing devices."""
    out = {
        "logs": len(frame),
        "ok": int((frame["status"] == "ok").sum()),
        "error": int((frame["status"] == "error").sum()),
    }
    if "verdict" in frame:
        for word in ("pass", "fail", "inconclusive"):
            out[word] = int((frame["verdict"] == word).sum())
    return out


def format_cell(value: Any) -> str:
    """A table cell as text: numbers to 4 significant digits, empty for missing values."""
    if value is None or value is pd.NA:
        return ""
    if isinstance(value, float):
        if math.isnan(value):
            return ""
        return f"{value:.4g}"
    return str(value)


def _columns(frame: pd.DataFrame, statistic: str, taus: Sequence[float]) -> list[tuple[str, str]]:
    keyed = []
    for tau in taus:
        name = f"{statistic}_{tau:g}s"
        if name in frame:
            keyed.append((name, f"{statistic} {tau:g} s"))
    return [(c, h) for c, h in (*_SHOWN, *keyed, *_TAIL) if c in frame]


def _interval(frame: pd.DataFrame, name: str, index: Any) -> str:
    low, high = frame.at[index, f"{name}_low"], frame.at[index, f"{name}_high"]
    if isinstance(low, float) and isinstance(high, float) and not (math.isnan(low + high)):
        return f" [{low:.3g}, {high:.3g}]"
    return ""


def settings_line(settings: Mapping[str, Any]) -> str:
    """The fleet's shared settings in one line (each log's own are in its summary.json)."""
    shown = ", ".join(
        f"{k} {format_cell(v) if v is not None else 'default'}" for k, v in settings.items()
    )
    return f"Settings of every log: {shown}; each log's reading in its summary.json."


def _md_escape(text: str) -> str:
    return text.replace("|", "\\|").replace("\n", " ")


def _counts_line(counts: Mapping[str, int]) -> str:
    line = f"{counts['logs']} logs: {counts['ok']} analysed, {counts['error']} failed"
    if "pass" in counts:
        line += (
            f"; verdicts: {counts['pass']} pass, {counts['fail']} fail, "
            f"{counts['inconclusive']} inconclusive"
        )
    return line


def fleet_markdown(
    frame: pd.DataFrame,
    ranking: pd.DataFrame,
    *,
    statistic: str,
    key_taus: Sequence[float],
    figures: Mapping[str, str],
    title: str = "Fleet",
    generated: str = "",
    settings: Mapping[str, Any] | None = None,
) -> str:
    """``fleet.md``: counts, ranking, the table (value [interval] at the key taus), figures.

    ``figures`` maps a caption to the figure's file name beside the page;
    ``settings`` are the fleet's shared settings, listed under the counts.
    """
    counts = fleet_counts(frame)
    lines = [f"# {_md_escape(title)}", "", _counts_line(counts) + ".", ""]
    if generated:
        lines += [f"Made by stability {__version__} on {generated}.", ""]
    if settings:
        lines += [_md_escape(settings_line(settings)), ""]
    for caption, name in figures.items():
        lines += [f"![{_md_escape(caption)}]({name})", ""]
    if len(ranking):
        lines += ["## Furthest from the limit or the fleet", ""]
        heads = list(ranking.columns)
        lines += ["| rank | " + " | ".join(heads) + " |", "|---" * (len(heads) + 1) + "|"]
        for k, row in enumerate(ranking.itertuples(index=False), 1):
            cells = [_md_escape(format_cell(v)) for v in row]
            lines.append(f"| {k} | " + " | ".join(cells) + " |")
        lines.append("")
    columns = _columns(frame, statistic, key_taus)
    keyed = {f"{statistic}_{tau:g}s" for tau in key_taus}
    lines += ["## Every log", ""]
    lines += ["| " + " | ".join(h for _, h in columns) + " |", "|---" * len(columns) + "|"]
    for index in frame.index:
        cells = []
        for name, _ in columns:
            text = format_cell(frame.at[index, name])
            if name in keyed and text:
                text += _interval(frame, name, index)
            cells.append(_md_escape(text))
        lines.append("| " + " | ".join(cells) + " |")
    lines += [
        "",
        "Intervals are the analysis's confidence intervals; "
        "offset is the mean fractional frequency.",
        "",
    ]
    if "verdict" in frame:
        lines += ["## Caution", "", CAUTION, ""]
    return "\n".join(lines)


_STYLE = """
body{font-family:system-ui,sans-serif;margin:1.5em;color:#222}
h1{font-size:1.4em}h2{font-size:1.15em;margin-top:1.5em}
table{border-collapse:collapse;font-size:0.85em}
th,td{border:1px solid #ccc;padding:2px 6px;text-align:right;white-space:nowrap}
th{background:#f0f0f0;cursor:pointer;user-select:none}
td.t{text-align:left}tr.error td{background:#fbeaea}
td.v-pass{color:#2e7d4f}td.v-fail{color:#b23a3a;font-weight:bold}
td.v-inconclusive{color:#a06a10}
img{max-width:100%;height:auto;border:1px solid #eee;margin:0.5em 0}
p.caution{max-width:50em;color:#555}
"""

_SCRIPT = """
document.querySelectorAll('table.sortable:not([data-sortable])').forEach(function (table) {
  table.setAttribute('data-sortable', 'ready');
  table.querySelectorAll('th').forEach(function (th, col) {
    th.addEventListener('click', function () {
      var body = table.tBodies[0];
      var rows = Array.prototype.slice.call(body.rows);
      var up = th.getAttribute('data-order') !== 'up';
      table.querySelectorAll('th').forEach(function (h) { h.removeAttribute('data-order'); });
      th.setAttribute('data-order', up ? 'up' : 'down');
      rows.sort(function (a, b) {
        var x = a.cells[col].getAttribute('data-v'), y = b.cells[col].getAttribute('data-v');
        var nx = parseFloat(x), ny = parseFloat(y);
        var c = (!isNaN(nx) && !isNaN(ny)) ? nx - ny
          : (isNaN(nx) - isNaN(ny)) || x.localeCompare(y);
        return up ? c : -c;
      });
      rows.forEach(function (r) { body.appendChild(r); });
    });
  });
});
"""


def _cell(value: Any, css: str = "") -> str:
    raw = value
    if isinstance(raw, float) and math.isnan(raw):
        raw = ""
    sort_value = html.escape(str(raw) if raw is not None and raw is not pd.NA else "", quote=True)
    text = html.escape(format_cell(value))
    klass = f' class="{css}"' if css else ""
    return f'<td{klass} data-v="{sort_value}">{text}</td>'


def _html_table(frame: pd.DataFrame, columns: Sequence[tuple[str, str]], css_id: str) -> str:
    head = "".join(f"<th>{html.escape(h)}</th>" for _, h in columns)
    rows = []
    for index in frame.index:
        status = str(frame.at[index, "status"]) if "status" in frame else ""
        cells = []
        for name, _ in columns:
            value = frame.at[index, name]
            css = "t" if isinstance(value, str) else ""
            if name == "verdict" and value:
                css += f" v-{html.escape(str(value)).replace(' ', '-')}"
            cells.append(_cell(value, css.strip()))
        klass = ' class="error"' if status == "error" else ""
        rows.append(f"<tr{klass}>{''.join(cells)}</tr>")
    return (
        f'<table class="sortable" id="{css_id}"><thead><tr>{head}</tr></thead>'
        f"<tbody>{''.join(rows)}</tbody></table>"
    )


def fleet_html(
    frame: pd.DataFrame,
    ranking: pd.DataFrame,
    *,
    statistic: str,
    key_taus: Sequence[float],
    figures: Mapping[str, bytes],
    title: str = "Fleet",
    generated: str = "",
    settings: Mapping[str, Any] | None = None,
) -> str:
    """``fleet.html``: one self-contained page (see the module doc).

    ``figures`` maps a caption to the PNG bytes of the figure.
    """
    counts = fleet_counts(frame)
    parts = [
        "<!DOCTYPE html>",
        '<html lang="en"><head><meta charset="utf-8">',
        '<meta name="viewport" content="width=device-width, initial-scale=1">',
        f"<title>{html.escape(title)}</title><style>{_STYLE}</style></head><body>",
        f"<h1>{html.escape(title)}</h1>",
        f'<p id="counts">{html.escape(_counts_line(counts))}.</p>',
    ]
    if generated:
        parts.append(
            f"<p>Made by stability {html.escape(__version__)} on {html.escape(generated)}.</p>"
        )
    if settings:
        parts.append(f'<p id="settings">{html.escape(settings_line(settings))}</p>')
    for caption, data in figures.items():
        encoded = base64.b64encode(data).decode("ascii")
        parts.append(
            f'<figure><img alt="{html.escape(caption, quote=True)}" '
            f'src="data:image/png;base64,{encoded}"><figcaption>{html.escape(caption)}'
            "</figcaption></figure>"
        )
    if len(ranking):
        parts.append("<h2>Furthest from the limit or the fleet</h2>")
        ranked = ranking.copy()
        ranked.insert(0, "rank", range(1, len(ranked) + 1))
        parts.append(_html_table(ranked, [(c, c) for c in ranked.columns], "ranking"))
    parts.append("<h2>Every log</h2><p>Click a heading to sort by that column.</p>")
    parts.append(_html_table(frame, _columns(frame, statistic, key_taus), "fleet"))
    if "verdict" in frame:
        parts.append(f'<p class="caution">{html.escape(CAUTION)}</p>')
    parts.append(f"<script>{_SCRIPT}</script></body></html>")
    return "\n".join(parts) + "\n"


def _fragment_style() -> str:
    """The page's table style, scoped to a fleet's notebook display, verdicts in their colours."""
    rules = [
        ".stability-fleet table{border-collapse:collapse;font-size:0.85em}",
        ".stability-fleet th,.stability-fleet td{border:1px solid #ccc;padding:2px 6px;"
        "text-align:right;white-space:nowrap}",
        ".stability-fleet th{background:#f0f0f0;cursor:pointer}",
        ".stability-fleet td.t{text-align:left}",
        ".stability-fleet tr.error td{background:#fbeaea}",
    ]
    for word in ("pass", "fail", "inconclusive"):
        color = VERDICT_COLORS.get(word, "#555555")
        rules.append(f".stability-fleet td.v-{word}{{color:{color};font-weight:bold}}")
    return "".join(rules)


def fleet_fragment(
    frame: pd.DataFrame,
    ranking: pd.DataFrame,
    *,
    statistic: str,
    key_taus: Sequence[float],
    title: str = "Fleet",
    settings: Mapping[str, Any] | None = None,
) -> str:
    """A fleet's display in a notebook: counts, worst devices, the sortable table (escaped)."""
    counts = fleet_counts(frame)
    parts = [
        f'<div class="stability-result stability-fleet" style="font-family:sans-serif">'
        f"<style>{_fragment_style()}</style>",
        f"<p><b>{html.escape(title)}</b></p>",
        f"<p>{html.escape(_counts_line(counts))}.</p>",
    ]
    if settings:
        parts.append(f"<p>{html.escape(settings_line(settings))}</p>")
    failed = frame[frame["status"] == "error"] if "status" in frame else frame.iloc[:0]
    if len(failed):
        items = "".join(
            f"<li>{html.escape(str(d))}: {html.escape(str(e))}</li>"
            for d, e in zip(failed["device"], failed["error"], strict=True)
        )
        parts.append(f"<p><b>failed</b></p><ul>{items}</ul>")
    if len(ranking):
        parts.append("<p><b>Furthest from the limit or the fleet</b></p>")
        ranked = ranking.copy()
        ranked.insert(0, "rank", range(1, len(ranked) + 1))
        parts.append(_html_table(ranked, [(c, c) for c in ranked.columns], "ranking"))
    parts.append("<p><b>Every log</b> (click a heading to sort)</p>")
    parts.append(_html_table(frame, _columns(frame, statistic, key_taus), "fleet"))
    if "verdict" in frame:
        parts.append(f"<p><i>{html.escape(CAUTION)}</i></p>")
    parts.append(f"<script>{_SCRIPT}</script></div>")
    return "".join(parts)


def fleet_text(frame: pd.DataFrame, ranking: pd.DataFrame, *, title: str = "Fleet") -> str:
    """A fleet as plain text: the counts, the failed logs and the worst devices."""
    lines = [title, "  " + _counts_line(fleet_counts(frame))]
    if "status" in frame:
        for d, e in zip(
            *(frame[frame["status"] == "error"][c] for c in ("device", "error")), strict=True
        ):
            lines.append(f"  failed {d}: {e}")
    if len(ranking):
        lines.append("  furthest from the limit or the fleet:")
        for k, row in enumerate(ranking.itertuples(index=False), start=1):
            cells = "  ".join(
                f"{c} {format_cell(v)}"
                for c, v in zip(ranking.columns, row, strict=True)
                if c != "device"
            )
            lines.append(f"  {k:>3}. {row[0]}  {cells}")
    return "\n".join(lines)
