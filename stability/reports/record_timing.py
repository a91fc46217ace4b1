"""The time-error part of a calibration record (``stability record --mask``).

A record made with a mask carries, besides any specification's verdicts, the
time error of the log as read (no preparation) judged against the mask:
``record.json`` gets a ``time_error_mask`` section (:func:`timing_record`) and
the settings of that analysis (:func:`time_error_settings`, part of the
settings hash), and ``record.pdf`` the pages of :func:`timing_pages`: the
mask's verdict in one word, the verdict and least margin per statistic, the
max|TE| check, the MTIE and TDEV panels with the mask in the verdict colours,
the time-error metrics, the caution on recalled limits and what a verdict
covers, and the TIE over the record with the worst MTIE window shaded. A
record judged against the mask alone shows the mask and its verdicts on page 1
(:func:`mask_section`), where a specification's limits would be.
"""

from __future__ import annotations

from typing import Any

from matplotlib.figure import Figure

from ..figures import VERDICT_COLORS
from ..figures.timing import mask_figure, tie_figure
from ..files import jsonable, settings_hash
from ..timing import MASK_CAUTION, TimeErrorAnalysis
from ..units import format_duration
from .tables import format_tau, format_value
from .timing import mask_lines
from .typeset import A4, MARGIN, Column, PageFlow, Table

__all__ = ["timing_record", "timing_pages", "time_error_settings", "mask_section"]

_SOFT = "#555555"


def _limits(mask: Any) -> dict[str, Any]:
    return {k: v for k, v in mask.to_dict().items() if k != "path"}


def time_error_settings(timing: TimeErrorAnalysis) -> dict[str, Any]:
    """The settings of the time-error analysis a record carries (in its settings hash)."""
    mask = timing.judgement.mask if timing.judgement is not None else None
    saw = timing.sawtooth
    return jsonable(
        {
            "mask": None if mask is None else mask.name,
            # the limits themselves, wherever the file lies (a changed mask is another setting)
            "mask_limits_hash": None if mask is None else settings_hash(_limits(mask)),
            "remove_offset": timing.offset is not None,
            "sawtooth": None if saw is None else saw.column,
            "sawtooth_sign": None if saw is None else saw.sign,
            "sawtooth_applies_to": None if saw is None else saw.applies_to,
            "cte_window_s": timing.metrics.cte_window,
            "dte_bandwidth_hz": timing.metrics.dte_bandwidth,
        }
    )


def timing_record(timing: TimeErrorAnalysis) -> dict[str, Any]:
    """The ``time_error_mask`` section of record.json."""
    if timing.judgement is None:
        raise ValueError("the time-error analysis of a record must be judged against a mask")
    data = timing.to_dict()
    return jsonable(
        {
            "mask": timing.judgement.mask.name,
            "verdict": str(timing.judgement.verdict),
            "judgement": data["judgement"],
            "metrics": data["metrics"],
            "offset_removed": data["offset_removed"],
            "tdev_judged_up_to_s": data["tdev_judged_up_to_s"],
            "caution": MASK_CAUTION,
        }
    )


def _metrics_table(timing: TimeErrorAnalysis) -> Table:
    rows = tuple((n, format_value(v, "s") or "n/a", w) for n, v, w in timing.metrics.rows())
    return Table((Column("metric"), Column("value", "right"), Column("what")), rows, fontsize=7.5)


def timing_pages(timing: TimeErrorAnalysis) -> list[Figure]:
    """The record page(s) of the mask judgement."""
    j = timing.judgement
    if j is None:
        return []
    flow = PageFlow("Time error against a mask")
    flow.need(0.55)
    flow.page.text(
        MARGIN / A4[0],
        flow.y / A4[1],
        str(j.verdict).upper(),
        fontsize=22,
        weight="bold",
        ha="left",
        va="top",
        color=VERDICT_COLORS.get(str(j.verdict), "black"),
    )
    flow.skip(0.55)
    lines = mask_lines(timing)
    for line in lines[:-1]:  # the caution comes last, as a paragraph of its own
        flow.paragraph(line.strip(), size=8.5)
    region = flow.region(3.6)
    mask_figure(timing, into=region)
    flow.paragraph(
        "MTIE and TDEV of the time error as read (no outlier screening, drift removal or "
        "averaging), on the dense tau grid; the mask's limit line, judged taus in their "
        "verdict colours, open circles where the record is too short.",
        size=8,
    )
    flow.title("Time-error metrics", size=10)
    flow.table(_metrics_table(timing))
    flow.paragraph(timing.metrics.dte_note + ".", size=7.5)
    flow.title("Caution", size=10)
    flow.paragraph(MASK_CAUTION)
    pages = flow.pages
    tie = PageFlow("Time interval error")
    region = tie.region(4.6)
    drawn = tie_figure(timing, into=region)
    shaded = (
        f"The shaded stretch is the worst window of MTIE at {format_duration(drawn.window_tau)}."
        if drawn.window_tau is not None
        else "No MTIE window had a value to shade."
    )
    saw = timing.sawtooth
    what = "as read" if saw is None else f"after the sawtooth correction from {saw.column!r}"
    if timing.offset is not None:
        what += ", the frequency offset removed"
    tie.paragraph(
        f"Time interval error over the record ({what}), relative to its first sample and drawn "
        f"as its minimum and maximum per column. {shaded}",
        size=8.5,
    )
    return [*pages, *tie.pages]


def mask_section(flow: PageFlow, record: dict[str, Any]) -> None:
    """Page 1 of a record judged against a mask alone: the mask and its verdicts per statistic."""
    section = record["time_error_mask"]
    mask = section["judgement"]["mask"]
    flow.title("Time-error mask")
    flow.key_values(
        [
            ("mask", f"{mask['name']} ({mask['path'] or 'bundled with the tool'})"),
            ("clock class", mask["title"]),
            ("standard", mask["standard"]),
            ("limits", mask["recalled"]),
            ("frequency offset", "removed before MTIE" if section["offset_removed"] else "kept"),
        ]
    )
    rows = []
    by_statistic = section["judgement"]["by_statistic"]
    for name in [k for k in ("mtie", "tdev", "max_abs_te") if k in by_statistic]:
        part = by_statistic[name]
        least = part["least_margin"]
        shown = "max|TE|" if name == "max_abs_te" else name.upper()
        judged = ""
        if part["judged_from_s"] is not None:
            judged = f"{format_tau(part['judged_from_s'])} to {format_tau(part['judged_to_s'])}"
        margin, at = "", ""
        if least is not None and least["margin"] is not None:
            margin = f"{least['margin']:.3g}"
            at = format_tau(least["tau_s"]) if least["tau_s"] is not None else ""
        rows.append((shown, part["verdict"], judged, margin, at))
    colors = tuple(VERDICT_COLORS.get(r[1]) if r[1] == "fail" else None for r in rows)
    columns = (
        Column("judged"), Column("verdict"), Column("taus judged"),
        Column("least margin", "right"), Column("at tau", "right"),
    )  # fmt: skip
    flow.table(Table(columns, tuple(rows), fontsize=7.5, colors=colors))
    flow.paragraph(
        "Margin = measured / limit (below 1 passes); the figures, metrics and TIE follow.",
        size=7.5,
        color=_SOFT,
    )
