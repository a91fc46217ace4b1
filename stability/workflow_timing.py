"""Write a time-error analysis's outputs, all or nothing: what ``stability time-error`` does.

::

    result, files = time_error_into("pps.csv.gz", "out/", column="pps_te_ns",
                                    mask="g8272-prtc-a", sawtooth="qerr_ns")

The log is read as it is (no outlier screening, drift removal or averaging:
a time-error judgement needs every excursion); the sawtooth column, when
named, is read from the same log on the same time grid. Five files are
written through :class:`stability.outputs.OutputSet`: ``time_error.csv``,
``time_error.md``, ``time_error.json``, ``tie.<fmt>`` and ``mtie_tdev.<fmt>``.
"""

from __future__ import annotations

import os
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

import numpy as np

from .figures import save_figure
from .figures.labels import default_footer, default_title
from .figures.timing import mask_figure, tie_figure
from .ingest import read_log
from .outputs import OutputSet
from .prepare.pipeline import require_variation
from .reports.timing import (
    time_error_csv,
    time_error_json,
    time_error_markdown,
    time_error_summary,
)
from .run import ReadProgress
from .settings import RunSettings
from .timing import (
    CTE_WINDOW,
    DTE_BANDWIDTH,
    Mask,
    TimeErrorAnalysis,
    analyze_time_error,
    read_sawtooth,
)
from .workflow import PLOT_FORMATS, check_plot_format

__all__ = ["time_error_into", "TIMING_OUTPUTS", "timing_output_names"]

#: The text outputs of a time-error analysis; the two figures are ``tie`` and ``mtie_tdev``.
TIMING_OUTPUTS = ("time_error.csv", "time_error.md", "time_error.json")
_FIGURES = ("tie", "mtie_tdev")


def timing_output_names(fmt: str) -> tuple[list[str], list[str]]:
    """(files a time-error analysis writes, figures of other formats it replaces)."""
    names = [*TIMING_OUTPUTS, *(f"{f}.{fmt}" for f in _FIGURES)]
    stale = [f"{f}.{o}" for f in _FIGURES for o in PLOT_FORMATS if o != fmt]
    return names, stale


def time_error_into(
    log: str | os.PathLike[str],
    folder: str | os.PathLike[str],
    settings: RunSettings | None = None,
    *,
    mask: Mask | str | None = None,
    remove_offset: bool = False,
    sawtooth: str | None = None,
    sawtooth_sign: int = -1,
    sawtooth_applies_to: str = "next",
    cte_window: float = CTE_WINDOW,
    bandwidth: float = DTE_BANDWIDTH,
    taus: Any = None,
    plot_format: str = "png",
    title: str | None = None,
    on_progress: ReadProgress | None = None,
    **options: Any,
) -> tuple[TimeErrorAnalysis, dict[str, Path]]:
    """Read ``log``, analyse its time error, judge it against ``mask``, write five files.

    ``settings`` (or the reading keywords of :func:`stability.read_log`) say how
    to read; ``taus`` defaults to the settings' grid when it is not the octave
    default, else ``dense``.
    """
    fmt = check_plot_format(plot_format)
    settings = settings if settings is not None else RunSettings.from_options(**options)
    if taus is None:
        grid = settings.analysis.taus
        taus = "dense" if grid == "octave" else grid
    read = settings.read.as_kwargs()
    names, stale = timing_output_names(fmt)
    inputs = [log] + ([mask] if isinstance(mask, str) and Path(mask).is_file() else [])
    with OutputSet(folder, names, inputs=inputs, stale=stale) as out:
        meas = read_log(log, **read, on_progress=on_progress)
        require_variation(meas)
        saw = read_sawtooth(log, sawtooth, read, meas) if sawtooth else None
        result = analyze_time_error(
            meas,
            taus=taus,
            remove_offset=remove_offset,
            mask=mask,
            cte_window=cte_window,
            bandwidth=bandwidth,
            sawtooth=saw,
            sawtooth_column=sawtooth or "",
            sawtooth_sign=sawtooth_sign,
            sawtooth_applies_to=sawtooth_applies_to,
        )
        moment = datetime.now(UTC)
        flat = {
            **settings.read.describe(),
            "taus": taus if isinstance(taus, str) else list(np.atleast_1d(taus)),
            "mask": None if result.judgement is None else result.judgement.mask.name,
            "remove_offset": remove_offset,
            "sawtooth": sawtooth,
            "sawtooth_sign": sawtooth_sign,
            "sawtooth_applies_to": sawtooth_applies_to,
            "cte_window_s": cte_window,
            "dte_bandwidth_hz": bandwidth,
        }
        head = title or default_title(meas, "time error")
        texts = {
            "time_error.csv": time_error_csv(result),
            "time_error.md": time_error_markdown(result, title=f"Time-error analysis: {head}"),
            "time_error.json": time_error_json(time_error_summary(result, meas, flat, moment)),
        }
        for name, text in texts.items():
            out.write_text(name, text)
        footer = default_footer(meas, analysis_time=moment)
        save_figure(tie_figure(result, title=head, footer=footer), out.path(f"tie.{fmt}"), fmt)
        save_figure(
            mask_figure(result, title=head, footer=footer), out.path(f"mtie_tdev.{fmt}"), fmt
        )
        files = out.commit()
    return result, files
