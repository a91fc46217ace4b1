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
(:func:`record_pages`) is drawn with matplotlib's ``PdfPages`` alone on A4
portrait pages (ISO 216): identification and overall verdict; the stability
plot with the limits and their verdicts; the results table (over as many
pages as it needs); the data over time. Every page carries a footer with the
input SHA-256, tool version, settings hash, analysis time and "page k of n".
Both files are written atomically and are never overwritten without
``force`` (:func:`write_record`).

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

import io
import json
import math
import os
from datetime import UTC, datetime
from pathlib import Path
from typing import IO, Any

import matplotlib
import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure

from .._version import __version__
from ..errors import InputError
from ..figures import VERDICT_COLORS, series_figure, stability_figure
from ..files import jsonable, settings_hash
from ..outputs import OutputSet
from ..run import AnalysisRun
from ..spec import Info, Judgement, reference_contribution
from .tables import format_tau, format_value, statistic_unit

__all__ = [
    "CAUTION",
    "SCHEMA_VERSION",
    "RECORD_NAMES",
    "build_record",
    "record_json",
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

_A4 = (8.27, 11.69)  # inches, ISO 216
_ROWS_PER_PAGE = 48
_MONO = "DejaVu Sans Mono"


# ---------------------------------------------------------------------- content
def _validate_record_args(run: Any, judgement: Any, info: Any) -> None:
    if not isinstance(run, AnalysisRun):
        raise InputError(
            f"run must be a stability.AnalysisRun, got {type(run).__name__}",
            hint="build one with stability.run_analysis",
        )
    if not isinstance(judgement, Judgement):
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


def record_rows(run: Any, judgement: Judgement, info: Info) -> list[dict[str, Any]]:
    """The results table of the record: every (statistic, tau) row, intervals at the spec level.

    Rows of the specification's statistic carry the verdict where that tau was
    judged and, when the reference states a stability, the reference value,
    the reference-limited flag and the device-only estimate.
    """
    level = judgement.confidence
    rows: list[dict[str, Any]] = []
    reference = info.reference
    for result in run.table:
        low, high = result.interval(level)
        low = np.atleast_1d(np.asarray(low, dtype=float))
        high = np.atleast_1d(np.asarray(high, dtype=float))
        ref = np.full(len(result), np.nan)
        if result.statistic == judgement.statistic and reference and reference.has_stability:
            f_h = float(run.table.settings.get("f_h_hz") or 0.5 / run.measurement.tau0)
            ref, _ = reference.deviation(result.tau, f_h=f_h)
        limited, device = reference_contribution(result.deviation, ref)
        for i in range(len(result)):
            tau = float(result.tau[i])
            check = judgement.verdict_at(tau) if result.statistic == judgement.statistic else None
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
    }


def build_record(run: Any, judgement: Judgement, info: Info) -> dict[str, Any]:
    """Everything the record shows, as JSON types (the content of record.json)."""

    _validate_record_args(run, judgement, info)
    provenance = run.source.provenance
    limits = [c.to_dict() for c in judgement.listed]
    record = {
        "schema_version": SCHEMA_VERSION,
        "tool": {"name": "stability", "version": __version__},
        "analysis_time": run.analysis_time,
        "input": {
            "path": provenance.path,
            "sha256": provenance.sha256,
            "rows": provenance.rows,
        },
        "identification": info.to_dict(),
        "specification": judgement.spec.to_dict(),
        "measurement": _measurement_summary(run),
        "settings": run.settings,
        "settings_hash": settings_hash(run.settings),
        "confidence": judgement.confidence,
        "results": record_rows(run, judgement, info),
        "limits": limits,
        "checks": [c.to_dict() for c in judgement.checks],
        "overall_verdict": judgement.overall,
        "reference_limited_taus": [c.tau_s for c in judgement.checks if c.reference_limited],
        "notes": list(judgement.notes),
        "caution": CAUTION,
    }
    return jsonable(record)


def record_json(record: dict[str, Any]) -> str:
    """record.json text: strict JSON, two-space indent, keys in record order."""
    return json.dumps(record, indent=2, ensure_ascii=False, allow_nan=False) + "\n"


# ---------------------------------------------------------------------- PDF pages
def _page(title: str | None = None) -> Figure:
    fig = Figure(figsize=_A4)
    FigureCanvasAgg(fig)
    if title:
        fig.text(0.07, 0.955, title, fontsize=15, weight="bold", va="top")
    return fig


def _footer_text(record: dict[str, Any], k: int, n: int) -> str:
    return (
        f"input SHA-256 {record['input']['sha256'] or 'none (data from memory)'}\n"
        f"stability {record['tool']['version']} · settings {record['settings_hash']} · "
        f"analysed {record['analysis_time']} · page {k} of {n}"
    )


def _sci(value: Any, digits: int = 3) -> str:
    if value is None:
        return "n/a"
    return f"{float(value):.{digits}g}"


def _plus_minus(value: Any, u: Any) -> str:
    if value is None:
        return "n/a"
    return f"{_sci(value, 4)} ± {_sci(u, 2)}" if u is not None else _sci(value, 4)


def _key_values(fig: Figure, y: float, heading: str, items: list[tuple[str, str]]) -> float:
    fig.text(0.07, y, heading, fontsize=11, weight="bold", va="top")
    y -= 0.026
    for key, value in items:
        if value in (None, ""):
            continue
        fig.text(0.09, y, key, fontsize=8.5, va="top", color="#444444")
        fig.text(0.34, y, _wrap(str(value), 80), fontsize=8.5, va="top")
        y -= 0.019 * (1 + str(_wrap(str(value), 80)).count("\n"))
    return y - 0.012


def _wrap(text: str, width: int) -> str:
    import textwrap

    return "\n".join(textwrap.wrap(text, width)) if text else ""


def _identification_page(record: dict[str, Any]) -> Figure:
    ident = record["identification"]
    spec = record["specification"]
    meas = record["measurement"]
    fig = _page("Frequency stability calibration record")
    y = 0.915
    device = ident["device"]
    y = _key_values(
        fig,
        y,
        "Device",
        [(k, device.get(k)) for k in ("id", "description", "model", "serial", "nominal")],
    )
    ref = ident["reference"] or {}
    ref_stab = ""
    if ref.get("stability"):
        ref_stab = ", ".join(f"{t:g} s: {d:.3g}" for t, d in ref["stability"])
    elif ref.get("levels"):
        ref_stab = ", ".join(f"{k} = {v:.3g}" for k, v in ref["levels"].items())
    y = _key_values(
        fig,
        y,
        "Reference, instrument, laboratory",
        [
            ("reference", " - ".join(x for x in (ref.get("id"), ref.get("description")) if x)),
            ("reference stability", ref_stab),
            ("instrument", ident["instrument"].get("description")),
            ("gate time", ident["instrument"].get("gate_time")),
            ("laboratory", ident["lab"].get("name")),
            ("operator", ident["lab"].get("operator")),
            ("ambient temperature", ident["lab"].get("ambient_temperature")),
            ("procedure", ident["procedure"]),
            ("notes", ident["notes"]),
        ],
    )
    outliers = meas["outliers_removed"]
    shown = ", ".join(f"line {o['line']} ({_sci(o['value'])})" for o in outliers[:6])
    if len(outliers) > 6:
        shown += f" and {len(outliers) - 6} more (see record.json)"
    y = _key_values(
        fig,
        y,
        "Measurement",
        [
            ("input file", record["input"]["path"]),
            ("start", meas["start"] or "not stated in the log"),
            ("span", format_tau(meas["span_s"])),
            ("samples", str(meas["samples"])),
            ("sample interval (tau0)", format_tau(meas["tau0_s"])),
            ("gaps (log / prepared)", f"{meas['gaps_in_log']} / {meas['gaps_after_preparation']}"),
            ("outliers removed", f"{len(outliers)}" + (f": {shown}" if outliers else "")),
            ("drift model removed", meas["drift_model"]),
            ("frequency offset", _plus_minus(meas["offset"], meas["u_offset"])),
            ("linear drift per day", _plus_minus(meas["drift_per_day"], meas["u_drift_per_day"])),
        ],
    )
    limits = ", ".join(f"{format_tau(c['tau_s'])}: {c['verdict']}" for c in record["limits"])
    y = _key_values(
        fig,
        y,
        "Specification",
        [
            ("file", spec["path"]),
            ("statistic", spec["statistic"]),
            ("confidence level", f"{100 * spec['confidence']:.3g} %"),
            ("interpolation", "log-log between listed taus" if spec["interpolate"] else "off"),
            ("limits", limits),
        ],
    )
    verdict = record["overall_verdict"]
    fig.text(0.07, y - 0.005, "Overall verdict", fontsize=11, weight="bold", va="top")
    fig.text(
        0.5,
        y - 0.035,
        verdict.upper(),
        fontsize=30,
        weight="bold",
        ha="center",
        va="top",
        color=VERDICT_COLORS.get(verdict, "black"),
    )
    limited = record["reference_limited_taus"]
    if limited:
        fig.text(
            0.07,
            y - 0.095,
            _wrap(
                "Reference-limited at "
                + ", ".join(format_tau(t) for t in limited)
                + ": the reference's stated stability exceeds one third of the measured value; "
                "device-only estimates are listed separately in the table.",
                100,
            ),
            fontsize=8.5,
            va="top",
            color="#b54708",
        )
    fig.text(0.07, 0.135, "Caution", fontsize=10, weight="bold", va="top")
    fig.text(0.07, 0.115, _wrap(record["caution"], 105), fontsize=8.5, va="top")
    return fig


def _image_page(source: Figure, title: str, caption: str) -> Figure:
    buffer = io.BytesIO()
    FigureCanvasAgg(source)
    source.savefig(buffer, format="png", dpi=170)
    buffer.seek(0)
    image = matplotlib.image.imread(buffer, format="png")
    fig = _page(title)
    height, width = image.shape[:2]
    box_w = 0.86
    box_h = box_w * (height / width) * (_A4[0] / _A4[1])
    ax = fig.add_axes((0.07, 0.9 - box_h, box_w, box_h))
    ax.imshow(image, interpolation="antialiased")
    ax.set_axis_off()
    fig.text(0.07, 0.88 - box_h, _wrap(caption, 105), fontsize=8.5, va="top")
    return fig


def _table_lines(record: dict[str, Any]) -> tuple[str, list[str]]:
    level = 100 * record["confidence"]
    header = (
        f"{'statistic':<9} {'tau':>10} {'deviation':>10} {f'{level:.3g} % interval':>22} "
        f"{'edf':>7} {'noise':<9} {'limit':>9} {'verdict':<12} {'ref-lim':<7} "
        f"{'device-only':>11}"
    )
    lines = []
    for row in record["results"]:
        unit = statistic_unit(row["statistic"])
        dev = format_value(row["deviation"], unit) if row["deviation"] is not None else ""
        interval = ""
        if row["ci_low"] is not None and row["ci_high"] is not None:
            interval = (
                f"[{format_value(row['ci_low'], unit)}, {format_value(row['ci_high'], unit)}]"
            )
        edf = "" if row["edf"] is None else f"{row['edf']:.4g}"
        noise = row["noise"] + (f" ({row['noise_method']})" if row["noise_method"] else "")
        limit = "" if row["limit"] is None else format_value(row["limit"], unit)
        device = "" if row["device_only"] is None else format_value(row["device_only"], unit)
        limited = "yes" if row["reference_limited"] else ""
        lines.append(
            f"{row['statistic']:<9} {format_tau(row['tau_s']):>10} {dev:>10} {interval:>22} "
            f"{edf:>7} {noise:<9.9} {limit:>9} {(row['verdict'] or ''):<12} {limited:<7} "
            f"{device:>11}"
        )
    return header, lines


def _table_pages(record: dict[str, Any]) -> list[Figure]:
    header, lines = _table_lines(record)
    chunks = [lines[i : i + _ROWS_PER_PAGE] for i in range(0, len(lines), _ROWS_PER_PAGE)] or [[]]
    pages = []
    for j, chunk in enumerate(chunks):
        title = "Results" + (f" (continued, part {j + 1})" if j else "")
        fig = _page(title)
        fig.text(
            0.07,
            0.925,
            _wrap(
                f"Intervals are two-sided at {100 * record['confidence']:.3g} % from the "
                "equivalent degrees of freedom (edf). Verdicts: pass when the upper bound is at "
                "or below the limit, fail when the lower bound is above it, inconclusive "
                "otherwise. Device-only = sqrt(measured^2 - reference^2), shown beside the "
                "measured value, never in its place.",
                115,
            ),
            fontsize=7.5,
            va="top",
        )
        text = "\n".join([header, "-" * len(header), *chunk])
        fig.text(0.04, 0.87, text, fontsize=6.3, family=_MONO, va="top", linespacing=1.5)
        pages.append(fig)
    return pages


def record_pages(run: Any, judgement: Judgement, record: dict[str, Any]) -> list[Figure]:
    """The pages of record.pdf as A4 figures, footers included."""
    pages = [_identification_page(record)]
    plot = stability_figure(
        run.table,
        model_curve=run.model_curves(),
        limits=judgement.plot_limits(),
        limits_statistic=judgement.statistic,
        analysis_time=run.analysis_time,
    )
    checks = ", ".join(f"{format_tau(c.tau_s)} {c.verdict}" for c in judgement.listed)
    pages.append(
        _image_page(
            plot.figure,
            "Stability",
            f"Limits of {judgement.statistic} marked with their verdicts ({checks}). Error bars "
            f"are at the analysis confidence level {100 * run.table.confidence:.3g} %.",
        )
    )
    pages.extend(_table_pages(record))
    shown, drift, outliers = run.series_inputs()
    series = series_figure(
        shown, drift_curve=drift, outlier_indices=outliers, analysis_time=run.analysis_time
    )
    pages.append(
        _image_page(
            series.figure,
            "Data over time",
            "Fractional frequency and phase residual as read; removed outliers are marked and "
            "gaps shaded.",
        )
    )
    total = len(pages)
    for k, fig in enumerate(pages, start=1):
        fig.text(
            0.07, 0.02, _footer_text(record, k, total), fontsize=6.5, color="#555555", va="bottom"
        )
    return pages


def _save_pdf(pages: list[Figure], handle: IO[bytes], record: dict[str, Any]) -> None:
    """Write the pages into an open binary file (the step an interruption would hit)."""
    stamp = record.get("analysis_time")
    try:
        when = datetime.fromisoformat(stamp) if stamp else datetime.now(UTC)
    except ValueError:
        when = datetime.now(UTC)
    metadata = {
        "Title": f"Frequency stability record {record['identification']['device']['id']}",
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
    run: Any, judgement: Judgement, info: Info, pdf_path: Path, json_path: Path
) -> None:
    """Write record.pdf and record.json to the given (pending) paths of an output set."""
    _validate_record_args(run, judgement, info)
    record = build_record(run, judgement, info)
    text = record_json(record)
    pages = record_pages(run, judgement, record)
    with open(pdf_path, "wb") as handle:
        _save_pdf(pages, handle, record)
    json_path.write_text(text, encoding="utf-8")


def write_record(
    run: Any,
    judgement: Judgement,
    info: Info,
    folder: str | os.PathLike[str],
    *,
    force: bool = False,
) -> dict[str, Path]:
    """Write record.pdf and record.json into ``folder``, both or neither.

    Raises
    ------
    InputError
        Before anything is written, when either file exists and ``force`` is false.
    """
    _validate_record_args(run, judgement, info)
    inputs = [run.source.provenance.path] if run.source.provenance.path else []
    with OutputSet(folder, RECORD_NAMES, inputs=inputs, force=force) as out:
        write_record_files(run, judgement, info, out.path("record.pdf"), out.path("record.json"))
        return out.commit()
