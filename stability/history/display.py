"""A reviewed device in a figure and in a notebook: what ``stability history --device`` shows.

:func:`review_figure` is the one call of :func:`stability.figures.history_figure`
for a :class:`~stability.history.review.DeviceReview` (its calibrations, aging
fit, due date, tolerance and confidence); the command and
:meth:`DeviceReview.plot` both draw through it. :func:`review_html` shows the
review in a notebook. Importing this module registers both with
:mod:`stability.display` (the package face names it as a provider), so that
``stability.history`` itself stays free of matplotlib on import.
"""

from __future__ import annotations

from html import escape
from typing import Any

from ..display import register_html, register_plot, register_text
from ..errors import InputError
from ..figures import HistoryDrawn, history_figure
from ..reports.html import verdict_badge
from .review import DeviceReview

__all__ = ["review_figure", "review_html", "review_text"]


def review_figure(
    review: DeviceReview, ax: Any = None, figure: Any = None, **options: Any
) -> HistoryDrawn:
    """The calibration history of a reviewed device (:func:`history_figure`).

    ``ax`` (one ``Axes`` or two: the offsets, then the key taus) and ``figure``
    (a ``Figure`` or ``SubFigure``) draw into a caller's figure; ``options``
    are those of :func:`history_figure` (title, footer, analysis_time).
    """
    if not isinstance(review, DeviceReview):
        raise InputError(
            f"review must be a stability.history.DeviceReview, got {type(review).__name__}",
            hint="make one with stability.history.review_device",
        )
    return history_figure(
        review.calibrations,
        review.fit,
        due=review.due,
        tolerance=review.tolerance,
        confidence=review.confidence,
        axes=ax,
        into=figure,
        **options,
    )


def _signed(value: float | None, u: float | None) -> str:
    if value is None:
        return ""
    return f"{value:.4g}" + ("" if u is None else f" ± {u:.2g}")


def _review_facts(review: DeviceReview) -> list[tuple[str, str]]:
    device = review.device
    facts = [
        ("device", f"{device.device_id} {device.description or ''}".strip()),
        ("calibrations", str(len(review.calibrations))),
        ("interval", f"{review.interval.text} ({review.interval_from})"),
        ("due", review.due.date().isoformat()),
        ("aging model", review.fit_note),
    ]
    if review.at_due is not None:
        p = review.at_due
        level = f"{100 * review.confidence:.3g} %"
        facts.append(
            ("offset at due date", f"{p.mean[0]:.4g}, {level} [{p.low[0]:.4g}, {p.high[0]:.4g}]")
        )
    if review.tolerance is not None and review.within is not None:
        word = "stays within" if review.within else "does not stay within"
        facts.append(("tolerance", f"±{review.tolerance:.3g}: prediction {word} it until due"))
    return facts


def review_text(review: DeviceReview) -> str:
    """The review as plain text: the facts, then one line per calibration."""
    lines = [f"Calibration history of {review.device.device_id}"]
    lines += [f"  {k}: {v}" for k, v in _review_facts(review)]
    for c in review.calibrations:
        offset = _signed(c.offset, c.u_offset) or "no offset"
        when = c.when.date().isoformat()
        lines.append(f"  {c.number:>3}  {when}  {offset}  {c.verdict}".rstrip())
    return "\n".join(lines)


def review_html(review: DeviceReview) -> str:
    """The review as HTML: the device, due date and aging verdicts, one row per calibration."""
    device = review.device
    facts = _review_facts(review)
    head = "".join(
        f'<tr><th style="text-align:left;padding:1px 8px">{escape(k)}</th>'
        f'<td style="padding:1px 8px">{escape(v)}</td></tr>'
        for k, v in facts
    )
    rows = "".join(
        f'<tr><td style="padding:1px 8px">{c.number}</td>'
        f'<td style="padding:1px 8px">{escape(c.when.date().isoformat())}</td>'
        f'<td style="padding:1px 8px;text-align:right">'
        f"{escape(_signed(c.offset, c.u_offset))}</td>"
        f'<td style="padding:1px 8px">{verdict_badge(c.verdict) if c.verdict else ""}</td></tr>'
        for c in review.calibrations
    )
    table = (
        "<table><thead><tr><th>record</th><th>date</th><th>frequency offset</th>"
        f"<th>verdict</th></tr></thead><tbody>{rows}</tbody></table>"
    )
    return (
        '<div class="stability-result" style="font-family:sans-serif;font-size:90%">'
        f"<p><b>Calibration history of {escape(device.device_id)}</b></p>"
        f"<table>{head}</table>{table}</div>"
    )


register_plot(DeviceReview, review_figure)
register_html(DeviceReview, review_html)
register_text(DeviceReview, review_text)
