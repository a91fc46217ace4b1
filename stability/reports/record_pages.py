"""The pages of ``record.pdf``: identification, limits, figures and the results table.

Every page is an A4 matplotlib figure typeset by :mod:`stability.reports.typeset`:

1. identification and approval: the record number, which judgements the
   record contains, device, reference, instrument and lab, the measurement
   and what preparation did, the specification (or, for a record judged
   against a time-error mask alone, the mask and its verdicts), the limits
   table (limit, estimate, interval and verdict at every listed tau,
   interpolated estimates marked), the overall verdict,
   the reference-limited taus, the caution, and the fields for "measured by",
   "checked by" and the date (filled from the information file, else lines to
   sign on);
2. the stability plot, drawn on the page as vector graphics (its panels are
   matplotlib axes of the page, not an image), with the limits and their
   verdicts and the reference's stated stability;
3. the results table, typeset in aligned columns with one number format per
   column, over as many pages as it needs;
4. the data over time as analysed;
5. with a time-error mask, its pages (:func:`~.record_timing.timing_pages`):
   last, or right after page 1 in a record judged against the mask alone.

Each page carries one footer, drawn by :func:`add_footers`: input SHA-256,
tool version, settings hash, analysis time, record number and "page k of n".
The layout follows what ISO/IEC 17025 [1]_ 7.8.2 asks a report to show.

References
----------
.. [1] ISO/IEC 17025:2017, *General requirements for the competence of testing
   and calibration laboratories*, 7.8 (reporting of results).
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
from matplotlib.figure import Figure
from matplotlib.lines import Line2D

from ..figures import VERDICT_COLORS, run_series_figure, stability_figure
from ..figures.ticks import power_of_ten
from ..run import AnalysisRun
from ..spec import Judgement
from .record_timing import mask_section, timing_pages
from .tables import format_tau, format_value, statistic_unit
from .typeset import A4, MARGIN, Column, PageFlow, Table

__all__ = [
    "ROWS_PER_PAGE",
    "number_text",
    "edf_text",
    "identification_pages",
    "limits_table",
    "results_table",
    "table_pages",
    "figure_page",
    "add_footers",
    "record_pages",
    "judgements_text",
]

#: Rows of the results table on one page.
ROWS_PER_PAGE = 48
_SOFT = "#555555"
_WARN = "#8a4b08"


# ---------------------------------------------------------------------- numbers
def number_text(value: Any, unit: str = "", digits: int = 4) -> str:
    """A result in one format: 1.064×10⁻¹² (fractional), 982.4 ps (seconds); "" when missing."""
    if value is None or not math.isfinite(float(value)):
        return ""
    value = float(value)
    if unit == "s":
        return format_value(value, "s")
    if value == 0.0:
        return "0"
    exponent = math.floor(math.log10(abs(value)))
    mantissa = round(value / 10.0**exponent, digits - 1)
    if abs(mantissa) >= 10.0:
        mantissa, exponent = mantissa / 10.0, exponent + 1
    return f"{mantissa:.{digits - 1}f}\u00d7{power_of_ten(exponent)}"


def edf_text(value: Any) -> str:
    """Equivalent degrees of freedom with one decimal, thousands set apart: 44 879.7."""
    if value is None or not math.isfinite(float(value)):
        return ""
    return f"{float(value):,.1f}".replace(",", "\u2009")


def _plus_minus(value: Any, u: Any) -> str:
    if value is None:
        return "n/a"
    shown = number_text(value, digits=4)
    return f"{shown} ± {number_text(u, digits=2)}" if u is not None else shown


# ---------------------------------------------------------------------- page 1
def _counter_text(meas: dict[str, Any]) -> str:
    kind = meas.get("counter_type")
    if not kind:
        return "not stated"
    if kind == "lambda":
        return "lambda (averaging): its Allan deviation behaves like the modified Allan deviation"
    return {"pi": "pi (plain gate)", "omega": "omega (least squares)"}.get(kind, kind)


def _dead_time_text(meas: dict[str, Any]) -> str:
    if meas.get("dead_time_s") is None:
        return "not stated: no correction applied"
    done = ", ".join(meas.get("dead_time_corrected") or []) or "nothing"
    return (
        f"{number_text(meas['dead_time_s'], 's', 3)} (r = T/tau = {meas['dead_time_ratio']:.5g}); "
        f"{done} corrected with Barnes' bias functions"
    )


def _identification(flow: PageFlow, record: dict[str, Any]) -> None:
    ident, meas = record["identification"], record["measurement"]
    device = ident["device"]
    flow.title("Device")
    flow.key_values([(k, device.get(k)) for k in ("id", "description", "model", "serial")] +
                    [("nominal", device.get("nominal"))])  # fmt: skip
    ref = ident["reference"] or {}
    stated = ""
    if ref.get("stability"):
        stated = ", ".join(
            f"{format_tau(t)}: {number_text(d, digits=2)}" for t, d in ref["stability"]
        )
    elif ref.get("levels"):
        stated = ", ".join(f"{k} = {number_text(v, digits=2)}" for k, v in ref["levels"].items())
    flow.title("Reference, instrument, laboratory")
    flow.key_values(
        [
            ("reference", " - ".join(x for x in (ref.get("id"), ref.get("description")) if x)),
            ("reference stability", stated),
            ("instrument", ident["instrument"].get("description")),
            ("gate time", ident["instrument"].get("gate_time")),
            ("laboratory", ident["lab"].get("name")),
            ("operator", ident["lab"].get("operator")),
            ("ambient temperature", ident["lab"].get("ambient_temperature")),
            ("procedure", ident["procedure"]),
            ("notes", ident["notes"]),
        ]
    )
    outliers = meas["outliers_removed"]
    shown = ", ".join(f"line {o['line']} ({o['value']:.3g})" for o in outliers[:6])
    if len(outliers) > 6:
        shown += f" and {len(outliers) - 6} more (see record.json)"
    flow.title("Measurement")
    flow.key_values(
        [
            ("input file", record["input"]["path"]),
            ("start", meas["start"] or "not stated in the log"),
            ("span", format_tau(meas["span_s"])),
            ("readings", f"{meas['readings']} ({meas['samples']} phase points)"),
            ("sample interval (tau0)", format_tau(meas["tau0_s"])),
            ("gaps in the log", f"{meas['gaps_in_log']} missing readings"),
            ("outliers removed", f"{len(outliers)}" + (f": {shown}" if outliers else "")),
            (
                "drift removed",
                f"{meas['drift_model']} model" if meas["drift_model"] != "none" else "none",
            ),
            ("counter type", _counter_text(meas)),
            ("counter dead time", _dead_time_text(meas)),
            ("frequency offset", _plus_minus(meas["offset"], meas["u_offset"])),
            (
                "linear drift estimate",
                _plus_minus(meas["drift_per_day"], meas["u_drift_per_day"]) + " per day",
            ),
        ]  # fmt: skip
    )


def limits_table(record: dict[str, Any]) -> Table:
    """Limit, estimate, interval and verdict at every listed tau, interpolated ones marked."""
    spec = record["specification"]
    unit = statistic_unit(spec["statistic"])
    level = f"{100 * record['confidence']:.3g} %"
    with_ref = any(c.get("reference") is not None for c in record["limits"])
    columns = [
        Column("tau", "right"),
        Column("limit", "right"),
        Column("estimate", "right"),
        Column(f"low ({level})", "right"),
        Column(f"high ({level})", "right"),
        Column("verdict"),
        Column("estimate from"),
    ]
    if with_ref:
        columns += [Column("reference", "right"), Column("device only", "right")]
    rows, colors = [], []
    for c in record["limits"]:
        how = "interpolated (*)" if c["interpolated"] else "measured"
        if c["deviation"] is None:
            how = "no estimate"
        row = [
            format_tau(c["tau_s"]),
            number_text(c["limit"], unit),
            number_text(c["deviation"], unit),
            number_text(c["ci_low"], unit),
            number_text(c["ci_high"], unit),
            c["verdict"],
            how,
        ]
        if with_ref:
            flag = " (!)" if c.get("reference_limited") else ""
            row += [number_text(c.get("reference"), unit) + flag, number_text(c.get("device_only"))]
        rows.append(tuple(row))
        colors.append(VERDICT_COLORS.get(c["verdict"]) if c["verdict"] == "fail" else None)
    return Table(tuple(columns), tuple(rows), fontsize=7.5, colors=tuple(colors))


def _verdict_basis(record: dict[str, Any]) -> str:
    """What the overall verdict judged, in one line."""
    spec = record["specification"]
    if spec is not None:
        return (
            f"overall verdict: {spec['statistic']} against the {len(record['limits'])} limit(s) "
            f"of the specification at {100 * spec['confidence']:.3g} % confidence"
        )
    return (
        f"overall verdict: the time error against the mask {record['time_error_mask']['mask']}, "
        "judged on the measured values"
    )


def judgements_text(record: dict[str, Any]) -> str:
    """Which judgements the record contains, said plainly (page 1 of every record)."""
    judged = record["judgements"]
    spec = record["specification"]
    timing = record.get("time_error_mask")
    parts = []
    if spec is not None:
        parts.append(f"{spec['statistic']} against the specification (the overall verdict above)")
    if timing is not None:
        where = (
            "the overall verdict above" if spec is None
            else f"verdict {timing['verdict']}, on its own page"
        )  # fmt: skip
        parts.append(
            f"the time error of the log as read against the mask {timing['mask']} ({where})"
        )
    count = "one judgement" if len(judged) == 1 else "two judgements"
    text = f"This record contains {count}: " + " and ".join(parts) + "."
    if spec is None:
        text += (
            " No specification was given: the stability figure and the results table show "
            "the analysis without limits or verdicts."
        )
    return text


def _verdict(flow: PageFlow, record: dict[str, Any]) -> None:
    """The overall verdict in one large word, what it judged, and the reference-limited taus."""
    verdict = record["overall_verdict"]
    flow.need(0.55)
    word = flow.page.text(
        MARGIN / A4[0],
        flow.y / A4[1],
        verdict.upper(),
        fontsize=22,
        weight="bold",
        ha="left",
        va="top",
        color=VERDICT_COLORS.get(verdict, "black"),
    )
    box = word.get_window_extent(flow.page.canvas.get_renderer())
    left = MARGIN + box.width / flow.page.dpi + 0.25
    flow.y -= 0.08
    flow.text(left, _verdict_basis(record), width=A4[0] - MARGIN - left, size=9, color=_SOFT)
    flow.skip(0.5)
    flow.paragraph(judgements_text(record), size=8.5)
    limited = record["reference_limited_taus"]
    if limited:
        flow.paragraph(
            "Reference-limited at "
            + ", ".join(format_tau(t) for t in limited)
            + ": the reference's stated stability exceeds one third of the measured value there; "
            "device-only estimates are listed beside the measured values, never in their place.",
            color=_WARN,
        )


def _approval(flow: PageFlow, record: dict[str, Any]) -> None:
    """The caution, then measured by / checked by / date: filled in, or lines to sign on."""
    flow.title("Caution", size=10)
    flow.paragraph(record["caution"])
    sign = record["signatures"]
    flow.need(0.9)
    flow.skip(0.12)
    x = MARGIN
    for key, label in (("measured_by", "measured by"), ("checked_by", "checked by"),
                       ("date", "date")):  # fmt: skip
        width = 2.5 if key != "date" else 1.6
        flow.page.text(x / A4[0], flow.y / A4[1], label, fontsize=8, color=_SOFT, va="top")
        value = sign.get(key) or ""
        y_line = flow.y - 0.42
        if value:
            flow.page.text(x / A4[0], (y_line + 0.05) / A4[1], value, fontsize=9, va="bottom")
        flow.page.add_artist(
            Line2D([x / A4[0], (x + width - 0.25) / A4[0]], [y_line / A4[1]] * 2,
                   transform=flow.page.transFigure, color="#333333", linewidth=0.6)
        )  # fmt: skip
        x += width
    flow.skip(0.6)


def _specification(flow: PageFlow, record: dict[str, Any]) -> None:
    """The specification and its limits table."""
    spec = record["specification"]
    verdicts = ", ".join(
        f"{format_tau(c['tau_s'])}: {c['verdict']}" + (" (*)" if c["interpolated"] else "")
        for c in record["limits"]
    )
    flow.title("Specification")
    flow.key_values(
        [
            ("file", spec["path"]),
            ("statistic", spec["statistic"]),
            ("confidence level", f"{100 * spec['confidence']:.3g} %"),
            ("interpolation", "log-log between listed taus" if spec["interpolate"] else "off"),
            ("verdicts", verdicts),
        ]
    )
    flow.title("Limits")
    flow.table(limits_table(record))
    if any(c["interpolated"] for c in record["limits"]):
        flow.paragraph(
            "(*) tau not on the measured grid: estimate and interval interpolated log-log "
            "between the two nearest measured taus.",
            size=7.5,
            color=_SOFT,
        )


#: Inches kept at the foot of the first page for the caution and the signatures.
_APPROVAL = 1.9
#: Inches of caution text that room holds (three lines).
_CAUTION = 0.5


def identification_pages(record: dict[str, Any]) -> list[Figure]:
    """Page 1 (and its continuation when the identification is long).

    The caution and the signature fields always sit at the foot of the first
    page: the room for them is kept before anything else is placed.
    """
    footer_room = 0.75
    spec = record["specification"]
    heading = (
        "Frequency stability calibration record" if spec is not None
        else "Time-error calibration record"
    )  # fmt: skip
    flow = PageFlow(heading, bottom=footer_room + _APPROVAL)
    # a caution longer than three lines (a record of a mask alone) takes more of the foot
    probe = flow.text(MARGIN, record["caution"], width=flow.width)
    approval = _APPROVAL + max(0.0, probe.get_window_extent().height / flow.page.dpi - _CAUTION)
    probe.remove()
    flow.bottom = footer_room + approval
    flow.page.text(
        1 - MARGIN / A4[0],
        1 - 0.45 / A4[1],
        f"record {record['record_number']}",
        fontsize=10,
        ha="right",
        va="top",
        color=_SOFT,
    )
    _verdict(flow, record)
    _identification(flow, record)
    if spec is not None:
        _specification(flow, record)
    else:
        mask_section(flow, record)
    foot = PageFlow(
        flow.heading, first=flow.pages[0], top=footer_room + approval - 0.1, bottom=footer_room
    )
    _approval(foot, record)
    return flow.pages


# ---------------------------------------------------------------------- results table
def results_table(record: dict[str, Any]) -> Table:
    """Every (statistic, tau) row: one number format per column, noise labels whole.

    A record without a specification has no limit, verdict or reference columns.
    """
    level = f"{100 * record['confidence']:.3g} %"
    judged = record["specification"] is not None
    columns = (
        Column("statistic"),
        Column("tau", "right"),
        Column("deviation", "right"),
        Column(f"low ({level})", "right"),
        Column(f"high ({level})", "right"),
        Column("edf", "right"),
        Column("noise"),
    )
    if judged:
        columns += (
            Column("limit", "right"),
            Column("verdict"),
            Column("ref.-limited"),
            Column("device only", "right"),
        )
    rows = []
    for row in record["results"]:
        unit = statistic_unit(row["statistic"])
        noise = row["noise"] + (f" ({row['noise_method']})" if row["noise_method"] else "")
        cells = (
            row["statistic"],
            format_tau(row["tau_s"]),
            number_text(row["deviation"], unit),
            number_text(row["ci_low"], unit),
            number_text(row["ci_high"], unit),
            edf_text(row["edf"]),
            noise,
        )
        if judged:
            cells += (
                number_text(row["limit"], unit),
                row["verdict"] or "",
                "yes" if row["reference_limited"] else "",
                number_text(row["device_only"], unit),
            )
        rows.append(cells)
    return Table(columns, tuple(rows), fontsize=6.5)


def table_pages(record: dict[str, Any]) -> list[Figure]:
    """The results table over as many pages as it needs (:data:`ROWS_PER_PAGE` rows each)."""
    flow = PageFlow("Results")
    text = (
        f"Intervals are two-sided at {100 * record['confidence']:.3g} % from the equivalent "
        "degrees of freedom (edf). "
    )
    if record["specification"] is not None:
        text += (
            "Verdicts: pass when the upper bound is at or below the limit, fail when the lower "
            "bound is above it, inconclusive otherwise. Device only = sqrt(measured² - "
            "reference²), shown beside the measured value, never in its place."
        )
    else:
        text += "No specification was given: the rows carry no limits or verdicts."
    flow.paragraph(text, size=7.5)
    flow.table(results_table(record), rows_per_page=ROWS_PER_PAGE)
    return flow.pages


# ---------------------------------------------------------------------- figures
def figure_page(title: str, caption: str, height: float) -> tuple[Figure, Any, PageFlow]:
    """A page with a title, a region of ``height`` inches for a figure, and its caption."""
    flow = PageFlow(title)
    region = flow.region(height)
    flow.paragraph(caption, size=8.5)
    return flow.page, region, flow


def _reference_curve(record: dict[str, Any]) -> tuple[np.ndarray, np.ndarray] | None:
    if record["specification"] is None:
        return None
    statistic = record["specification"]["statistic"]
    rows = [r for r in record["results"] if r["statistic"] == statistic and r["reference"]]
    if not rows:
        return None
    return np.array([r["tau_s"] for r in rows]), np.array([r["reference"] for r in rows])


def record_pages(
    run: AnalysisRun, judgement: Judgement | None, record: dict[str, Any], *, timing: Any = None
) -> list[Figure]:
    """The pages of record.pdf as A4 figures, each with one footer.

    ``timing`` (a time-error analysis judged against a mask) adds its pages:
    last when there is a specification, else right after the first page (the
    mask is then what the record judges).
    """
    pages = identification_pages(record)
    mask_pages = timing_pages(timing) if timing is not None else []
    if judgement is None:
        pages.extend(mask_pages)
    level = f"{100 * run.table.confidence:.3g} %"
    if judgement is not None:
        checks = ", ".join(f"{format_tau(c.tau_s)} {c.verdict}" for c in judgement.listed)
        caption = (
            f"Limits of {judgement.statistic} marked in their verdicts' colours ({checks}). "
            f"Error bars are two-sided {level} confidence intervals."
        )
    else:
        caption = (
            "No specification was given: the statistics are shown without limits. "
            f"Error bars are two-sided {level} confidence intervals."
        )
    reference = _reference_curve(record)
    if reference is not None:
        caption += (
            " The dash-dot line is the reference's stated stability at the measured taus "
            "(held flat beyond the stated taus)."
        )
    kinds = {statistic_unit(name) for name in run.table.results}
    page, region, _ = figure_page("Stability", caption, 6.2 if len(kinds) == 1 else 9.0)
    stability_figure(
        run.table,
        model_curve=run.model_curves(),
        limits=judgement.plot_limits() if judgement is not None else None,
        limits_statistic=judgement.statistic if judgement is not None else None,
        reference=reference,
        title="",
        footer="",
        into=region,
    )
    pages.append(page)
    pages.extend(table_pages(record))
    page, region, _ = figure_page(
        "Data over time",
        "The data as analysed: fractional frequency after outlier screening with the drift "
        "model over it (removed outliers marked along the top, gaps in the log shaded), and "
        "the phase after the drift model (and, for time-interval logs, the time error).",
        6.8,
    )
    run_series_figure(run, title="", footer="", into=region)
    pages.append(page)
    if judgement is not None:
        pages.extend(mask_pages)
    add_footers(pages, record)
    return pages


def add_footers(pages: list[Figure], record: dict[str, Any]) -> None:
    """One footer per page: input SHA-256, version, settings hash, time, record number, page."""
    total = len(pages)
    for k, page in enumerate(pages, start=1):
        text = (
            f"input SHA-256 {record['input']['sha256'] or 'none (data from memory)'}\n"
            f"stability {record['tool']['version']} · settings {record['settings_hash']} · "
            f"analysed {record['analysis_time']} · record {record['record_number']} · "
            f"page {k} of {total}"
        )
        page.text(
            MARGIN / A4[0], 0.25 / A4[1], text, fontsize=6.5, color=_SOFT, va="bottom",
            gid="page-footer",
        )  # fmt: skip
