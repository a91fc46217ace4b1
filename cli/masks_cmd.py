"""``stability masks [NAME|FILE]``: the bundled time-error masks, or one mask as a table.

The bundled figures are recalled from the ITU-T Recommendations, not read from
them; every listing says so. A mask file of one's own (the format is in
:mod:`stability.timing.masks`) is shown the same way, which checks it.
"""

from __future__ import annotations

import json
import math
from typing import Annotated

import typer

from stability.files import jsonable
from stability.reports.tables import format_tau
from stability.timing import Mask, bundled_mask_names, load_mask
from stability.units import TIME_UNITS

from .common import echo
from .options import JSON, RunOptions, command

__all__ = ["masks"]

MaskArg = Annotated[
    str | None,
    typer.Argument(
        help="A bundled mask name or a mask file (TOML) to show; leave out to list the "
        "bundled masks.",
        metavar="NAME|FILE",
        show_default=False,
    ),
]

_RECALLED = (
    "The bundled limits are recalled from the ITU-T Recommendations, not read from them: "
    "check every figure against your copy before relying on a verdict."
)


def _limit_text(a: float, b: float, k: float, unit: str, scale: float) -> str:
    a, b = a / scale, b / scale
    if b == 0:
        return f"{a:.6g} {unit}"
    term = f"{b:.6g} tau" if k == 1 else f"{b:.6g} tau^{k:g}"
    return f"{a:.6g} + {term} {unit}" if a else f"{term} {unit}"


def mask_table(mask: Mask) -> list[str]:
    """The lines of one mask as a table: one row per segment, with its source."""
    lines = [f"{mask.name}: {mask.title}", f"  standard: {mask.standard}"]
    if mask.recalled:
        lines.append(f"  figures: {mask.recalled}")
    if mask.note:
        lines.append(f"  note: {mask.note}")
    if mask.max_abs_te is not None:
        lines.append(f"  max|TE| <= {mask.max_abs_te * 1e9:.6g} ns  ({mask.max_abs_te_source})")
    for curve in mask.curves:
        scale = TIME_UNITS[curve.unit]
        lines.append(f"  {curve.statistic.upper()} ({curve.source})")
        lines.append(f"    {'tau from':>10}  {'tau to':>10}  limit")
        for seg in curve.segments:
            upper = "open" if not math.isfinite(seg.tau_to) else format_tau(seg.tau_to)
            limit = _limit_text(seg.a, seg.b, seg.k, curve.unit, scale)
            lines.append(f"    {format_tau(seg.tau_from):>10}  {upper:>10}  {limit}")
    return lines


@command(JSON.but(help="Print the mask (or the list) as JSON instead."), subject="mask")
def masks(mask: MaskArg = None, *, opts: RunOptions) -> None:
    """List the bundled time-error masks, or show one mask (or a mask file) as a table.

    Example: stability masks g8272-prtc-a
    """
    if mask is None:
        found = [load_mask(name) for name in bundled_mask_names()]
        if opts.json:
            echo(json.dumps(jsonable([m.to_dict() for m in found]), indent=2))
            return
        width = max(len(m.name) for m in found)
        for m in found:
            stats = ", ".join(s.upper() for s in m.statistics)
            extra = ", max|TE|" if m.max_abs_te is not None else ""
            echo(f"{m.name:<{width}}  {stats}{extra}  {m.title}")
        echo("")
        echo(_RECALLED)
        echo("Show one with: stability masks NAME")
        return
    found_mask = load_mask(mask)
    if opts.json:
        echo(json.dumps(jsonable(found_mask.to_dict()), indent=2))
        return
    for line in mask_table(found_mask):
        echo(line)
    if found_mask.recalled:
        echo("")
        echo(_RECALLED)
