"""The pages of ``validation.pdf``, typeset with :mod:`stability.reports.typeset`.

1. summary: the overall result in one word, what ran where, a table of the check
   groups with their acceptance rules, any failed checks, the scope and the caution;
2. review and approval: what the reviewer confirms, and lines for name, signature
   and date (reviewed by, approved by) and the decision;
3. one section per group of checks: how it was done, the sources (numbered), and
   every check in a table (reference value, value computed in this run,
   difference, result);
4. the environment: tool, source hash, Python and library versions, platform.

Every page carries one footer: tool version, source hash, time of the run and
"page k of n". The layout follows what ISO/IEC 17025 [1]_ 7.8.2 asks a report to
show and 7.11.2 asks of software validation records (common practice).

References
----------
.. [1] ISO/IEC 17025:2017, *General requirements for the competence of testing
   and calibration laboratories*, 7.8 (reporting) and 7.11 (control of data and
   information management: software validated before use).
"""

from __future__ import annotations

import re
from typing import Any

from matplotlib.figure import Figure
from matplotlib.lines import Line2D

from ..figures.style import VERDICT_COLORS
from ..reports.typeset import A4, MARGIN, Column, PageFlow, Table
from .checks import BASES, GROUPS

__all__ = ["validation_pages", "summary_pages", "review_page", "group_pages", "add_footers"]

_SOFT = "#555555"


def _color(result: str) -> str | None:
    return VERDICT_COLORS["fail"] if result == "fail" else None


# ---------------------------------------------------------------------- page 1
def _big_result(flow: PageFlow, report: dict[str, Any]) -> None:
    result = report["result"]
    summary = report["summary"]
    flow.need(0.6)
    word = flow.page.text(
        MARGIN / A4[0], flow.y / A4[1], result.upper(), fontsize=24, weight="bold",
        ha="left", va="top", color=VERDICT_COLORS[result],
    )  # fmt: skip
    box = word.get_window_extent(flow.page.canvas.get_renderer())
    left = MARGIN + box.width / flow.page.dpi + 0.25
    flow.y -= 0.08
    flow.text(
        left,
        f"{summary['passed']} of {summary['checks']} checks passed, {summary['failed']} failed "
        "(exit code 0 only when every check passes)",
        width=A4[0] - MARGIN - left,
        size=9.5,
        color=_SOFT,
    )
    flow.skip(0.55)


def summary_pages(report: dict[str, Any]) -> list[Figure]:
    """Page 1: result, identification of the run, the groups, failures, scope and caution."""
    env, settings = report["environment"], report["settings"]
    flow = PageFlow("Software validation report: stability")
    _big_result(flow, report)
    flow.title("What was validated, where and when")
    flow.key_values(
        [
            ("tool", f"stability {env['version']} (distribution {env['distribution']})"),
            ("source SHA-256", f"{env['source_sha256']} ({env['source_files']} files)"),
            ("installed at", "; ".join(env["installed_at"].values())),
            ("machine", f"{env['host']} · {env['platform']} · {env['processors']} processors"),
            ("Python", f"{env['python']} ({env['python_implementation']})"),
            ("libraries", ", ".join(f"{k} {v}" for k, v in env["libraries"].items())),
            ("run", f"{report['started']} to {report['finished']} ({report['duration_s']:.1f} s)"),
            (
                "coverage statistics",
                f"{', '.join(settings['stats'])} ({settings['stats_from']})",
            ),
            ("coverage run", "thorough (long)" if settings["thorough"] else "default (short)"),
        ]  # fmt: skip
    )
    flow.title("Checks")
    rows, colors = [], []
    for group in report["summary"]["groups"]:
        result = "fail" if group["failed"] else "pass"
        rows.append((group["title"], str(group["checks"]), str(group["passed"]),
                     str(group["failed"]), result))  # fmt: skip
        colors.append(_color(result))
    flow.table(
        Table(
            (
                Column("group"),
                Column("checks", "right"),
                Column("passed", "right"),
                Column("failed", "right"),
                Column("result"),
            ),  # fmt: skip
            tuple(rows),
            fontsize=8.0,
            colors=tuple(colors),
        )
    )
    for group in report["summary"]["groups"]:
        flow.paragraph(f"{group['title']}: {report['acceptance'][group['group']]}", size=7.5)
    failed = [c for c in report["checks"] if c["result"] == "fail"]
    if failed:
        flow.title("Failed checks", size=10)
        for check in failed[:12]:
            flow.paragraph(
                f"{check['name']}: expected {check['expected']}, computed {check['computed']} "
                f"({check['difference']}); tolerance {check['tolerance']}",
                size=8,
                color=VERDICT_COLORS["fail"],
            )
        if len(failed) > 12:
            flow.paragraph(f"and {len(failed) - 12} more (see the tables and validation.json)")
    wide = report["summary"]["conservative_intervals"]
    if wide:
        flow.paragraph(
            f"{wide} coverage case(s) passed as conservative: their intervals held the true "
            "value significantly more often than their level (wider than needed); see the "
            "coverage table.",
            size=8,
        )
    for note in report["notes"]:
        flow.paragraph(note, size=8, color=_SOFT)
    flow.title("Scope and caution", size=10)
    flow.paragraph(report["caution"])
    return flow.pages


# ---------------------------------------------------------------------- review page
def _sign_lines(flow: PageFlow, labels: tuple[str, ...], widths: tuple[float, ...]) -> None:
    flow.need(0.8)
    x = MARGIN
    for label, width in zip(labels, widths, strict=True):
        flow.page.text(x / A4[0], flow.y / A4[1], label, fontsize=8, color=_SOFT, va="top")
        y_line = flow.y - 0.5
        flow.page.add_artist(
            Line2D([x / A4[0], (x + width - 0.25) / A4[0]], [y_line / A4[1]] * 2,
                   transform=flow.page.transFigure, color="#333333", linewidth=0.6)
        )  # fmt: skip
        x += width
    flow.skip(0.75)


def review_page(report: dict[str, Any]) -> list[Figure]:
    """Page 2: what the reviewer confirms, and the lines to sign on."""
    flow = PageFlow("Review and approval")
    flow.paragraph(
        "The reviewer confirms that this report was produced on the installation named on "
        "page 1 (version and source SHA-256), that every check listed was run and its "
        "result read, and decides whether the software is accepted for its intended use in "
        "the laboratory. Failed checks, and checks whose reference value is marked as "
        "recalled rather than read from its source, are to be assessed before acceptance."
    )
    flow.key_values(
        [
            (
                "result of this run",
                f"{report['result']} ({report['summary']['passed']} of "
                f"{report['summary']['checks']} checks passed)",
            ),
            ("source SHA-256", report["environment"]["source_sha256"]),
            ("run", report["started"]),
        ]  # fmt: skip
    )
    widths = (3.0, 2.6, 1.45)
    flow.title("Reviewed by", size=10)
    _sign_lines(flow, ("name", "signature", "date"), widths)
    flow.title("Approved for use by", size=10)
    _sign_lines(flow, ("name", "signature", "date"), widths)
    flow.title("Decision", size=10)
    flow.paragraph("[  ] accepted for use          [  ] not accepted          remarks:")
    flow.skip(0.6)
    flow.title("Caution", size=10)
    flow.paragraph(report["caution"])
    return flow.pages


# ---------------------------------------------------------------------- check tables
def _short_tolerance(text: str) -> str:
    """A tolerance in a few characters for a table cell (the full text is in the JSON)."""
    text = re.sub(r" \(.*\)$", "", text)
    text = re.sub(r"relative difference at most ([^ ,]+)", "rel. \u2264 \\1", text)
    text = re.sub(r", plus ([^ ]+) absolute", " + \\1 abs.", text)
    text = re.sub(r"within ([^ ,]+ s), the resolution of the stamps", "\u00b1 \\1", text)
    return re.sub(r"^within ", "abs. \u2264 ", text)


def _numbered_sources(checks: list[dict[str, Any]]) -> dict[str, int]:
    numbers: dict[str, int] = {}
    for check in checks:
        numbers.setdefault(check["source"], len(numbers) + 1)
    return numbers


def _rows(group: str, checks: list[dict[str, Any]], sources: dict[str, int]):
    if group == "published":
        columns = (Column("check"), Column("published", "right"), Column("computed", "right"),
                   Column("difference"), Column("src", "right"), Column("result"))  # fmt: skip
        rows = [(c["name"], c["expected"], c["computed"], c["difference"],
                 str(sources[c["source"]]), c["result"]) for c in checks]  # fmt: skip
    elif group == "coverage":
        columns = (Column("statistic, noise, m, level"), Column("EDF", "right"),
                   Column("hits", "right"), Column("expected range", "right"),
                   Column("p (too few)", "right"), Column("result"))  # fmt: skip
        rows = []
        for c in checks:
            v = c["values"]
            low = v["accepted_hits"][0]
            result = "pass (wide)" if c["result"] == "pass" and v["conservative"] else c["result"]
            rows.append((c["name"], f"{v['edf']:.1f}", c["computed"],
                         f"{low} to {v['conservative_above']}", f"{v['p_value']:.3g}",
                         result))  # fmt: skip
    elif group == "reading":
        columns = (Column("log: quantity"), Column("expected", "right"), Column("read", "right"),
                   Column("difference"), Column("tolerance"), Column("result"))  # fmt: skip
        rows = [(c["name"], c["expected"], c["computed"], c["difference"],
                 _short_tolerance(c["tolerance"]), c["result"]) for c in checks]  # fmt: skip
    else:
        columns = (Column("relation"), Column("basis"), Column("tolerance"),
                   Column("worst difference"), Column("src", "right"),
                   Column("result"))  # fmt: skip
        rows = [(c["name"], c["basis"], _short_tolerance(c["tolerance"]), c["difference"],
                 str(sources[c["source"]]), c["result"]) for c in checks]  # fmt: skip
    return columns, rows


_HOW = {
    "published": "Each statistic with published values is computed from the data set read as "
    "fractional frequency and again as the phase it integrates to; the raw estimate is "
    "rounded to the digits the source prints. Difference: computed minus published, in "
    "units of the last published digit.",
    "closed_form": "Each relation is evaluated by the tool and by the closed form at the "
    "listed points; the worst relative difference is shown (dB differences for L(f)). The "
    "values compared are in validation.json.",
    "coverage": "Hits: records whose interval holds the exact expected value. Expected range: "
    "from the fewest hits the one-sided test accepts to the most it does not mark as "
    "conservative. 'pass (wide)': more hits than the range, the interval wider than needed.",
    "reading": "Each invented log is read with the tool's reader (options as stated in "
    "logs.toml) and compared with the values it was generated with.",
}


def group_pages(report: dict[str, Any]) -> list[Figure]:
    """One section per group of checks: method, numbered sources, the table of checks."""
    pages: list[Figure] = []
    for group, title in GROUPS.items():
        checks = [c for c in report["checks"] if c["group"] == group]
        if not checks:
            continue
        flow = PageFlow(title)
        rule = report["acceptance"][group]
        flow.paragraph(rule[:1].upper() + rule[1:], size=8)
        flow.paragraph(_HOW[group], size=8, color=_SOFT)
        sources = _numbered_sources(checks)
        if group in ("published", "closed_form"):
            for source, k in sources.items():
                flow.paragraph(f"[{k}] {source}", size=7.5, color=_SOFT)
        else:
            flow.paragraph(f"Source: {next(iter(sources))}", size=7.5, color=_SOFT)
        bases = sorted({c["basis"] for c in checks})
        for basis in bases:
            flow.paragraph(f"Basis '{basis}': {BASES[basis]}.", size=7.5, color=_SOFT)
        columns, rows = _rows(group, checks, sources)
        colors = tuple(_color(c["result"]) for c in checks)
        flow.table(Table(columns, tuple(rows), fontsize=7.0, colors=colors), rows_per_page=60)
        pages.extend(flow.pages)
    return pages


def _environment_page(report: dict[str, Any]) -> list[Figure]:
    env = report["environment"]
    flow = PageFlow("Environment")
    flow.key_values(
        [
            ("tool", f"stability {env['version']}"),
            ("distribution", env["distribution"]),
            ("source SHA-256", env["source_sha256"]),
            ("files hashed", str(env["source_files"])),
            *((f"package {k}", v) for k, v in env["installed_at"].items()),
            ("Python", f"{env['python']} ({env['python_implementation']})"),
            *((k, v) for k, v in env["libraries"].items()),
            ("platform", env["platform"]),
            ("machine", env["machine"]),
            ("host", env["host"]),
            ("processors", str(env["processors"])),
            ("run started", report["started"]),
            ("run finished", report["finished"]),
            ("duration", f"{report['duration_s']:.1f} s"),
            (
                "settings",
                ", ".join(f"{k} = {v}" for k, v in report["settings"].items() if k != "coverage"),
            ),  # fmt: skip
            (
                "coverage plan",
                ", ".join(f"{k} = {v}" for k, v in report["settings"]["coverage"].items()),
            ),  # fmt: skip
        ]
    )
    flow.paragraph(
        "The source SHA-256 is the hash of the list of every installed file of the stability "
        "and stability_cli packages with the SHA-256 of each, sorted by path: the same hash "
        "means the same code and data.",
        size=8,
        color=_SOFT,
    )
    return flow.pages


def add_footers(pages: list[Figure], report: dict[str, Any]) -> None:
    """One footer per page: version, source hash, time of the run, page k of n."""
    env = report["environment"]
    total = len(pages)
    for k, page in enumerate(pages, start=1):
        page.text(
            MARGIN / A4[0], 0.25 / A4[1],
            f"stability {env['version']} · source {env['source_sha256'][:16]} · validation "
            f"run {report['started']} · page {k} of {total}",
            fontsize=6.5, color=_SOFT, va="bottom", gid="page-footer",
        )  # fmt: skip


def validation_pages(report: dict[str, Any]) -> list[Figure]:
    """Every page of validation.pdf, footers drawn."""
    pages = [
        *summary_pages(report),
        *review_page(report),
        *group_pages(report),
        *_environment_page(report),
    ]
    add_footers(pages, report)
    return pages
