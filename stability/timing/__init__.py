"""Timing and synchronisation: time-error metrics, ITU-T masks and their verdicts.

:mod:`.metrics`
    max|TE|, cTE, dTE (the 0.1 Hz filter pair), peak-to-peak TE, frequency-offset
    removal, the observation-window rule, the GNSS sawtooth correction;
:mod:`.masks`
    the mask file format and the bundled masks (``mask_files/``);
:mod:`.judging`
    verdicts on measured MTIE, TDEV and max|TE|;
:mod:`.analysis`
    :func:`analyze_time_error`, all of it on one record.
"""

from __future__ import annotations

from .analysis import (
    MtieCurve,
    SawtoothEffect,
    TimeErrorAnalysis,
    analyze_time_error,
    read_sawtooth,
)
from .judging import MASK_CAUTION, MaskCheck, MaskJudgement, judge_mask
from .masks import (
    MASK_STATISTICS,
    Mask,
    MaskCurve,
    MaskSegment,
    bundled_mask_names,
    load_mask,
    read_mask_text,
)
from .metrics import (
    CTE_WINDOW,
    DTE_BANDWIDTH,
    TDEV_RECORD_FACTOR,
    DteSplit,
    OffsetRemoval,
    TimeErrorMetrics,
    absolute_time_error,
    apply_sawtooth,
    longest_tau,
    remove_frequency_offset,
    split_dte,
    time_error_metrics,
)

__all__ = [
    "analyze_time_error",
    "read_sawtooth",
    "TimeErrorAnalysis",
    "MtieCurve",
    "SawtoothEffect",
    "judge_mask",
    "MaskJudgement",
    "MaskCheck",
    "MASK_CAUTION",
    "Mask",
    "MaskCurve",
    "MaskSegment",
    "MASK_STATISTICS",
    "bundled_mask_names",
    "load_mask",
    "read_mask_text",
    "CTE_WINDOW",
    "DTE_BANDWIDTH",
    "TDEV_RECORD_FACTOR",
    "DteSplit",
    "OffsetRemoval",
    "TimeErrorMetrics",
    "absolute_time_error",
    "apply_sawtooth",
    "longest_tau",
    "remove_frequency_offset",
    "split_dte",
    "time_error_metrics",
]
