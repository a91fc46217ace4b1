"""The time-error part of a calibration record (``stability record --mask``).

A record made with a mask carries, besides the specification's verdicts, the
time error of the log as read (no preparation) judged against the mask:
``record.json`` gets a ``time_error_mask`` section (:func:`timing_record`) and
``record.pdf`` a page (:func:`timing_pages`) with the mask's verdict in one
word, the verdict and least margin per statistic, the max|TE| check, the
time-error metrics, the MTIE and TDEV panels with the mask in the verdict
colours, and the caution on recalled limits and what a verdict covers.
"""

from __future__ import annotations

from typing import Any

from matplotlib.figure import Figure

from ..figures import VERDICT_COLORS
from ..figures.timing import mask_figure
from ..files import jsonable
from ..timing import MASK_CAUTION, TimeErrorAnalysis
from .tables import format_value
from .timing import mask_lines
from .typeset import A4, MARGIN, Column, PageFlow, Table

__all__ = ["timing_record", "timing_pages"]


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
    return flow.pages
