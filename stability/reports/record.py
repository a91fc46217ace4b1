"""The calibration record: ``record.json`` and ``record.pdf``.

A record files one analysis with its identification (device, reference,
instrument, lab, procedure), what the measurement was and what preparation
did, the settings and their hash, the input's SHA-256, the results table with
intervals at the specification's confidence level, the verdict at every
judged tau and overall, the reference-limited flags with the device-only
estimates, and a caution on what the figures do and do not cover. Reporting
follows the contents asked of calibration certificates in ISO/IEC 17025
[1]_ 7.8.2 and 7.8.4 and of stability analyses in NIST SP 1065 [2]_
section 10.

``record.json`` (:func:`build_record`) is strict JSON [3]_ (no NaN; missing
numbers are null) with ``schema_version`` ``"1"``. ``record.pdf``
(:func:`record_pages`, :mod:`stability.reports.record_pages`) is drawn with
matplotlib's ``PdfPages`` alone on A4 portrait pages (ISO 216), figures as
vector graphics and fonts embedded: identification, limits table, overall
verdict, caution and signature fields; the stability plot with the limits,
their verdicts and the reference's stated stability; the results table (over
as many pages as it needs); the data over time as analysed. Every page
carries one footer with the input SHA-256, tool version, settings hash,
analysis time, the record number (:func:`record_number`) and "page k of n".
Both files are written atomically and are never overwritten without
``force`` (:func:`write_record`).

A record may judge a specification, a time-error mask
(:mod:`stability.reports.record_timing`) or both, and says which
(``judgements``). Judged against a mask alone (``judgement`` None), it holds
everything but the specification's part: the mask's verdict is the overall
verdict, page 1 shows the mask and its verdicts instead of the specification
and limits, the mask's pages follow it, and the caution is
:data:`MASK_RECORD_CAUTION`.

References
----------
.. [1] ISO/IEC 17025:2017, *General requirements for the competence of testing
   and calibration laboratories*, 7.8 (reporting of results) and 7.8.6
   (statements of conformity).
.. [2] W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065
   (2008), section 10 (reporting).
.. [3] RFC 8259, *The JavaScript Object Notation (JSON) Data Interchange Format* (2017).
.. [4] ISO 216:2007, *Writing paper and certain classes of printed matter -
   Trimmed sizes* (A4, 210 mm x 297 mm).
"""

from __future__ import annotations

import json
import math
import os
from datetime import UTC, datetime
from pathlib import Path
from typing import IO, Any

import matplotlib
import numpy as np
from matplotlib.figure import Figure

from .._version import __version__
from ..errors import InputError
from ..files import jsonable, settings_hash
from ..outputs import OutputSet
from ..run import AnalysisRun
from ..spec import Info, Judgement, reference_contribution
from ..timing import TimeErrorAnalysis
from .record_pages import ROWS_PER_PAGE, record_pages, table_pages
from .record_timing import time_error_settings, timing_record

__all__ = [
    "CAUTION",
    "MASK_RECORD_CAUTION",
    "SCHEMA_VERSION",
    "RECORD_NAMES",
    "build_record",
    "judgements_of",
    "record_json",
    "record_number",
    "record_pages",
    "record_rows",
    "write_record",
    "write_record_files",
]

SCHEMA_VERSION = "1"
RECORD_NAMES = ("record.pdf", "record.json")

#: Printed on the first page of every record and stored in record.json.
CAUTION = (
    "The results cover the stated measurement conditions only. The confidence intervals are "
    "statistical and do not include systematic effects of the reference or the counter. "
    "Acceptance decisions follow the laboratory's own accredited procedure and decision rules "
    "(for example ISO/IEC 17025); this tool does not replace them."
)

#: The caution of a record judged against a time-error mask alone (no specification).
MASK_RECORD_CAUTION = (
    "The results cover the stated measurement conditions only and include no systematic "
    "effects of the reference or the counter. The mask is judged on the measured values (no "
    "confidence interval); the bundled limits are recalled from the ITU-T Recommendations, not "
    "read from them: check them against your copy. Acceptance decisions follow the "
    "laboratory's own accredited procedure and the conformance procedure of the "
    "Recommendation; this tool does not replace them."
)


# ---------------------------------------------------------------------- content
def _validate_record_args(run: Any, judgement: Any, info: Any, timing: Any = None) -> None:
    if not isinstance(run, AnalysisRun):
        raise InputError(
            f"run must be a stability.AnalysisRun, got {type(run).__name__}",
            hint="build one with stability.run_analysis",
        )
    if judgement is None:
        if not isinstance(timing, TimeErrorAnalysis) or timing.judgement is None:
            raise InputError(
                "a record judges against a specification, a time-error mask or both; "
                "neither was given",
                hint="pass a judgement (stability.spec.judge), a time-error analysis judged "
                "against a mask (stability.timing.analyze_time_error(..., mask=...)) or both",
            )
    elif not isinstance(judgement, Judgement):
        raise InputError(
            f"judgement must be a stability.spec.Judgement, got {type(judgement).__name__}",
            hint="build one with stability.spec.judge",
        )
    if not isinstance(info, Info):
        raise InputError(
            f"info must be a stability.spec.Info, got {type(info).__name__}",
            hint="read one with stability.spec.load_info",
        )


def _finite(value: Any) -> float | None:
    number = float(value)
    return number if math.isfinite(number) else None


def record_rows(run: Any, judgement: Judgement | None, info: Info) -> list[dict[str, Any]]:
    """The results table of the record: every (statistic, tau) row, intervals at the spec level.

    Rows of the specification's statistic carry the verdict where that tau was
    judged and, when the reference states a stability, the reference value,
    the reference-limited flag and the device-only estimate. Without a
    specification (a record judged against a time-error mask alone) the
    intervals are at the table's level and no row carries a limit or verdict.
    """
    level = judgement.confidence if judgement is not None else run.table.confidence
    judged = judgement.statistic if judgement is not None else None
    rows: list[dict[str, Any]] = []
    reference = info.reference
    for result in run.table:
        low, high = result.interval(level)
        low = np.atleast_1d(np.asarray(low, dtype=float))
        high = np.atleast_1d(np.asarray(high, dtype=float))
        ref = np.full(len(result), np.nan)
        if result.statistic == judged and reference and reference.has_stability:
            f_h = float(run.table.settings.get("f_h_hz") or 0.5 / run.measurement.tau0)
            ref, _ = reference.deviation(result.tau, f_h=f_h)
        limited, device = reference_contribution(result.deviation, ref)
        for i in range(len(result)):
            tau = float(result.tau[i])
            check = judgement.verdict_at(tau) if result.statistic == judged else None
            alpha = float(result.alpha[i])
            rows.append(
                {
                    "statistic": result.statistic,
                    "tau_s": tau,
                    "m": int(result.m[i]),
                    "n_terms": int(result.n_terms[i]),
                    "deviation": _finite(result.deviation[i]),
                    "ci_low": _finite(low[i]),
                    "ci_high": _finite(high[i]),
                    "edf": _finite(result.edf[i]),
                    "alpha": None if math.isnan(alpha) else int(alpha),
                    "noise": result.noise[i],
                    "noise_method": result.noise_method[i],
                    "limit": None if check is None else _finite(check.limit),
                    "verdict": None if check is None else check.verdict,
                    "reference": _finite(ref[i]),
                    "reference_limited": bool(limited[i]),
                    "device_only": _finite(device[i]),
                }
            )
    return rows


def _measurement_summary(run: Any) -> dict[str, Any]:
    source = run.source
    prep = run.preparation
    od = run.table.extras.get("offset_drift")
    start = getattr(source, "start", None)
    return {
        "start": start,
        "span_s": float(source.span),
        "samples": int(source.n),
        "readings": int(source.n - 1 if source.kind == "frequency" else source.n),
        "tau0_s": float(source.tau0),
        "nominal_hz": getattr(source, "nominal", None),
        "gaps_in_log": int(prep.gaps_before),
        "gaps_after_preparation": int(prep.gaps_after),
        "outliers_removed": [
            {"index": int(o.index), "line": o.line, "value": o.value} for o in prep.outliers.samples
        ],
        "outlier_threshold": prep.outliers.threshold,
        "drift_model": prep.drift_model,
        "offset": None if od is None else od.offset,
        "u_offset": None if od is None else od.u_offset,
        "drift_per_day": None if od is None else od.drift_per_day,
        "u_drift_per_day": None if od is None else od.u_drift_per_day,
        "offset_drift_method": None if od is None else od.method,
        "notes": list(prep.notes),
        **_counter_summary(run),
    }


def _counter_summary(run: Any) -> dict[str, Any]:
    """The counter type and dead time as stated (``stability.causes``), and what was done."""
    causes = run.table.extras.get("causes") or {}
    dead = causes.get("dead_time")
    sens = causes.get("sensitivity")
    return {
        "counter_type": causes.get("counter"),
        "counter_note": causes.get("counter_note"),
        "dead_time_s": None if dead is None else dead["dead_time_s"],
        "dead_time_ratio": None if dead is None else dead["ratio_T_over_tau"],
        "dead_time_corrected": [] if dead is None else dead["statistics_corrected"],
        "environment_removed": None
        if not sens or not sens.get("removed")
        else f"{sens['quantity']}, {sens['coefficient_per_unit']:.3g} per {sens['unit']}",
    }


def judgements_of(judgement: Judgement | None, timing: TimeErrorAnalysis | None) -> list[str]:
    """What a record judges: ``specification`` and/or ``time_error_mask``, in that order."""
    judged = ["specification"] if judgement is not None else []
    if timing is not None and timing.judgement is not None:
        judged.append("time_error_mask")
    return judged


def build_record(
    run: Any,
    judgement: Judgement | None,
    info: Info,
    timing: TimeErrorAnalysis | None = None,
) -> dict[str, Any]:
    """Everything the record shows, as JSON types (the content of record.json).

    ``timing`` (a time-error analysis judged against a mask, ``record --mask``)
    adds the ``time_error_mask`` section and its settings (``settings.time_error``).
    ``judgements`` lists what the record judges; ``overall_verdict`` is the
    specification's overall verdict when there is one, else the mask's
    (``overall_verdict_of`` says which). A record judged against a mask alone
    (``judgement`` None) has ``specification`` null, no limits or checks, and
    its intervals at the table's own confidence level.
    """

    _validate_record_args(run, judgement, info, timing)
    provenance = run.source.provenance
    judged = judgements_of(judgement, timing)
    settings = dict(run.settings)
    if timing is not None:
        settings["time_error"] = time_error_settings(timing)
    if judgement is not None:
        spec_part = {
            "specification": judgement.spec.to_dict(),
            "confidence": judgement.confidence,
            "limits": [c.to_dict() for c in judgement.listed],
            "checks": [c.to_dict() for c in judgement.checks],
            "overall_verdict": judgement.overall,
            "reference_limited_taus": [c.tau_s for c in judgement.checks if c.reference_limited],
            "notes": list(judgement.notes),
        }
    else:
        spec_part = {
            "specification": None,
            "confidence": run.table.confidence,
            "limits": [],
            "checks": [],
            "overall_verdict": str(timing.judgement.verdict),
            "reference_limited_taus": [],
            "notes": list(timing.notes),
        }
    record = {
        "schema_version": SCHEMA_VERSION,
        "record_number": record_number(info, provenance.sha256, run.analysis_time),
        "tool": {"name": "stability", "version": __version__},
        "analysis_time": run.analysis_time,
        "input": {
            "path": provenance.path,
            "sha256": provenance.sha256,
            "rows": provenance.rows,
        },
        "identification": info.to_dict(),
        "judgements": judged,
        "overall_verdict_of": judged[0],
        "specification": spec_part["specification"],
        "measurement": _measurement_summary(run),
        "settings": settings,
        "settings_hash": settings_hash(settings),
        "confidence": spec_part["confidence"],
        "results": record_rows(run, judgement, info),
        "limits": spec_part["limits"],
        "checks": spec_part["checks"],
        "overall_verdict": spec_part["overall_verdict"],
        "reference_limited_taus": spec_part["reference_limited_taus"],
        "notes": spec_part["notes"],
        "caution": CAUTION if judgement is not None else MASK_RECORD_CAUTION,
        "signatures": {
            "measured_by": info.measured_by,
            "checked_by": info.checked_by,
            "date": info.date,
        },
    }
    if timing is not None:
        record["time_error_mask"] = timing_record(timing)
    return jsonable(record)


def record_number(info: Info, sha256: str | None, moment: datetime) -> str:
    """The record's number: the information file's ``record_number``, else one derived.

    The derived number is the analysis date and the first eight hex digits of
    the input's SHA-256 (``20260303-65388c0b``): the same log analysed on the
    same day gets the same number, another log or another day another.
    """
    if info.record_number:
        return info.record_number
    if moment.tzinfo is None:
        moment = moment.astimezone()
    day = moment.astimezone(UTC).strftime("%Y%m%d")
    return f"{day}-{(sha256 or '0' * 8)[:8]}"


def record_json(record: dict[str, Any]) -> str:
    """record.json text: strict JSON, two-space indent, keys in record order."""
    return json.dumps(record, indent=2, ensure_ascii=False, allow_nan=False) + "\n"


# ---------------------------------------------------------------------- PDF pages
# The pages are drawn by stability.reports.record_pages; these names stay here
# for code that reaches the results-table pagination through this module.
_ROWS_PER_PAGE = ROWS_PER_PAGE
_table_pages = table_pages


_KIND = {False: "Frequency stability", True: "Time-error"}


def _save_pdf(pages: list[Figure], handle: IO[bytes], record: dict[str, Any]) -> None:
    """Write the pages into an open binary file (the step an interruption would hit)."""
    stamp = record.get("analysis_time")
    try:
        when = datetime.fromisoformat(stamp) if stamp else datetime.now(UTC)
    except ValueError:
        when = datetime.now(UTC)
    metadata = {
        "Title": f"{_KIND[record['specification'] is None]} record "
        f"{record['identification']['device']['id']}",
        "Creator": f"stability {record['tool']['version']}",
        "CreationDate": when,
    }
    # TrueType fonts keep the text extractable and searchable.
    # The PDF backend is imported here: it costs a noticeable part of start-up.
    from matplotlib.backends.backend_pdf import PdfPages

    with matplotlib.rc_context({"pdf.fonttype": 42}):
        with PdfPages(handle, metadata=metadata) as pdf:
            for fig in pages:
                pdf.savefig(fig)


def write_record_files(
    run: Any,
    judgement: Judgement | None,
    info: Info,
    pdf_path: Path,
    json_path: Path,
    timing: TimeErrorAnalysis | None = None,
) -> None:
    """Write record.pdf and record.json to the given (pending) paths of an output set.

    ``judgement`` may be None when ``timing`` is judged against a mask: the
    record of a time error judged against the mask alone.
    """
    _validate_record_args(run, judgement, info, timing)
    record = build_record(run, judgement, info, timing)
    text = record_json(record)
    extra = {"timing": timing} if timing is not None else {}
    pages = record_pages(run, judgement, record, **extra)
    with open(pdf_path, "wb") as handle:
        _save_pdf(pages, handle, record)
    json_path.write_text(text, encoding="utf-8")


def write_record(
    run: Any,
    judgement: Judgement | None,
    info: Info,
    folder: str | os.PathLike[str],
    *,
    force: bool = False,
    timing: TimeErrorAnalysis | None = None,
) -> dict[str, Path]:
    """Write record.pdf and record.json into ``folder``, both or neither.

    ``timing`` (judged against a mask) adds the time-error judgement; with it,
    ``judgement`` may be None (a record judged against the mask alone).

    Raises
    ------
    InputError
        Before anything is written, when either file exists and ``force`` is false.
    """
    _validate_record_args(run, judgement, info, timing)
    inputs = [run.source.provenance.path] if run.source.provenance.path else []
    with OutputSet(folder, RECORD_NAMES, inputs=inputs, force=force) as out:
        write_record_files(
            run, judgement, info, out.path("record.pdf"), out.path("record.json"), timing
        )
        return out.commit()
