"""``stability history``: calibration history per device, aging trend, due dates.

* ``stability history`` lists the devices of the history with their last
  record, verdict and due date;
* ``stability history --device ID`` shows one device's records as a table, fits
  the aging model to the offsets, predicts the offset at the next due date,
  says with ``--tolerance`` whether it stays within it until then and the
  longest interval for which it does, and writes ``history.png``;
* ``history import``, ``history export``, ``history show`` and
  ``history set-interval`` bring records in, write them out, write one stored
  record out (its record.pdf as issued), and store a device's interval.

Which file: ``--history FILE``, else ``$STABILITY_HISTORY``, else the default
location (:mod:`stability.history.location`). The library does the work
(:mod:`stability.history`, :mod:`stability.aging`); this module prints.
"""

from __future__ import annotations

import json
from datetime import UTC, datetime
from pathlib import Path
from typing import Annotated, Any

import typer

from stability.aging import AGING_MODELS, parse_interval
from stability.errors import InputError
from stability.figures import save_figure
from stability.figures.labels import tool_footer
from stability.files import jsonable
from stability.history import (
    DeviceReview,
    HistoryStore,
    due_date,
    export_history,
    history_to_read,
    import_records,
    interval_in_force,
    open_history,
    review_device,
    write_stored_record,
)
from stability.history.display import review_figure
from stability.outputs import OutputSet
from stability.reports.tables import format_tau, format_value, statistic_unit

from .common import UsageProblem
from .options import CONFIDENCE, JSON, OUT, PLOT_FORMAT, TITLE, RunOptions, checked, command
from .reporting import text_table

__all__ = [
    "history",
    "history_import",
    "history_export",
    "history_show",
    "history_set_interval",
    "METHOD_NOTE",
]

#: Printed under a suggested interval: what the method is and what it is not.
METHOD_NOTE = (
    "method: weighted regression of the offset over calendar time and its prediction "
    "interval, the approach of the control-chart method (method 2) of ILAC-G24 / OIML D 10 "
    "(from memory); statistical, assumes the aging model; the interval is the laboratory's "
    "decision under its own procedure"
)

HistoryFileOpt = Annotated[
    str | None,
    typer.Option(
        "--history",
        help="Calibration history file (default: $STABILITY_HISTORY, else "
        "$XDG_DATA_HOME/stability/history.sqlite or ~/.local/share/stability/history.sqlite; "
        "the word default names that location).",
        metavar="FILE",
        show_default=False,
    ),
]
DeviceOpt = Annotated[
    str | None,
    typer.Option(
        "--device",
        help="Show this device's records, aging fit and due date, and write history.png.",
        metavar="ID",
        show_default=False,
    ),
]


def _interval(value: str) -> str:
    return parse_interval(value).text


def _tolerance(value: float) -> float:
    if not value > 0 or value != value or value == float("inf"):
        raise InputError(f"--tolerance must be a positive number, got {value!r}")
    return float(value)


def _model(value: str) -> str:
    word = str(value).strip().lower()
    if word not in AGING_MODELS:
        raise InputError(f"--model must be one of {', '.join(AGING_MODELS)}, got {value!r}")
    return word


IntervalOpt = Annotated[
    str | None,
    typer.Option(
        "--interval",
        help="Calibration interval of the due dates, e.g. 12mo, 1y, 26w or 90d (default: each "
        "device's stored interval, else 12 months).",
        metavar="INTERVAL",
        callback=checked(_interval),
        show_default=False,
    ),
]
ToleranceOpt = Annotated[
    float | None,
    typer.Option(
        "--tolerance",
        help="Tolerance of the fractional frequency offset, e.g. 1e-9: whether the predicted "
        "offset stays within it until the due date, and the longest interval it does.",
        metavar="VALUE",
        callback=checked(_tolerance),
        show_default=False,
    ),
]
ModelOpt = Annotated[
    str,
    typer.Option(
        "--model",
        help="Aging model: linear, log (young quartz: a + b ln(1 + t/30 d)), or auto "
        "(log when its weighted residual sum of squares is smaller, four records or more).",
        metavar="|".join(AGING_MODELS),
        callback=checked(_model),
    ),
]
ForceOpt = Annotated[
    bool, typer.Option("--force", help="Replace stored records of the same input and settings.")
]

#: Options of the review: the level of the prediction interval and where history.png goes.
REVIEW_CONFIDENCE = CONFIDENCE.but(
    default=0.95,
    help="Two-sided confidence level of the fit's band and the prediction interval.",
)
REVIEW_OUT = OUT.but(help="Folder for history.png (default: the current folder).")
REVIEW_TITLE = TITLE.but(help="Title of history.png (default: the device id).")
REVIEW_JSON = JSON.but(help="Print the devices, or the device's review, as JSON.")


def _store(given: str | None, *, create: bool = False) -> HistoryStore:
    return open_history(history_to_read(given), create=create)


def _day(moment: datetime | None) -> str:
    return "" if moment is None else moment.astimezone(UTC).strftime("%Y-%m-%d")


def _pm(value: float | None, u: float | None) -> str:
    if value is None:
        return "n/a"
    return f"{value:.4g} +/- {u:.2g}" if u is not None else f"{value:.4g}"


# ---------------------------------------------------------------------- list
def _list_devices(store: HistoryStore, given_interval: str | None, opts: RunOptions) -> None:
    devices = store.devices()
    now = datetime.now(UTC)
    rows = []
    for d in devices:
        interval, source = interval_in_force(given_interval, d.interval)
        due = due_date(d.last_calibrated, interval) if d.last_calibrated else None
        rows.append(
            {
                "device_id": d.device_id,
                "description": d.description,
                "records": d.records,
                "last_record": d.last_number,
                "last_calibration": d.last_calibrated,
                "last_verdict": d.last_verdict,
                "interval": interval.text,
                "interval_from": source,
                "due": due,
                "overdue": due is not None and due < now,
            }
        )
    if opts.json:
        typer.echo(json.dumps(jsonable(rows), indent=2, ensure_ascii=False))
        return
    typer.echo(f"calibration history {store.path}: {len(devices)} device(s)")
    if not rows:
        typer.echo("no record yet: stability record ... --history FILE, or history import")
        return
    typer.echo(
        text_table(
            ["device", "records", "last", "calibrated", "verdict", "interval", "due"],
            [
                [
                    r["device_id"],
                    str(r["records"]),
                    f"no. {r['last_record']}",
                    _day(r["last_calibration"]),
                    r["last_verdict"] or "",
                    r["interval"]
                    + {"given": "", "stored": " (stored)", "default": ""}[r["interval_from"]],
                    _day(r["due"]) + (" (overdue)" if r["overdue"] else ""),
                ]
                for r in rows
            ],
        )
    )


# ---------------------------------------------------------------------- one device
def _record_table(review: DeviceReview) -> str:
    keys = sorted({(k.statistic, k.tau_s) for c in review.calibrations for k in c.key_taus})
    header = ["no.", "calibrated", "verdict", "offset", "drift/day"]
    header += [f"{s} {format_tau(t)}" for s, t in keys]
    rows = []
    for c in review.calibrations:
        found = {(k.statistic, k.tau_s): k for k in c.key_taus}
        cells = [str(c.number), _day(c.when), c.verdict, _pm(c.offset, c.u_offset)]
        cells.append(_pm(c.drift_per_day, c.u_drift_per_day))
        for key in keys:
            k = found.get(key)
            value = "" if k is None or k.deviation is None else format_value(
                k.deviation, statistic_unit(key[0])
            )  # fmt: skip
            mark = "" if k is None or k.verdict in (None, "pass") else f" {k.verdict}"
            cells.append(value + mark)
        rows.append(cells)
    return text_table(header, rows)


def _fit_lines(review: DeviceReview) -> list[str]:
    fit = review.fit
    level = f"{100 * review.confidence:.3g} %"
    source = {"given": "given", "stored": "stored for the device", "default": "default"}
    lines = [
        f"interval {review.interval.text} ({source[review.interval_from]}): last calibration "
        f"{_day(review.last.when)}, due {_day(review.due)}"
        + (" (overdue)" if review.overdue() else "")
    ]
    if fit is None:
        return [*lines, f"no aging fit: {review.fit_note}"]
    rate, u_rate = fit.rate_per_day()
    lines.append(
        f"aging model: {review.fit_note}; {fit.dof + 2} records fitted, Birge ratio {fit.scale:.3g}"
    )
    lines.append(
        f"aging rate at the last record {_pm(rate, u_rate)} per day "
        f"({_pm(rate * 365.25, u_rate * 365.25)} per year)"
    )
    if review.at_due is not None:
        p = review.at_due
        lines.append(
            f"predicted offset at the due date {p.mean[0]:.4g}, {level} prediction interval "
            f"[{p.low[0]:.4g}, {p.high[0]:.4g}]"
        )
    if review.tolerance is not None and review.within is not None:
        word = "stays within" if review.within else "does NOT stay within"
        lines.append(
            f"tolerance +/-{review.tolerance:.3g}: the {level} prediction interval {word} "
            f"it until the due date"
        )
    if review.longest is not None:
        months, days = review.longest
        if months == 0 and days == 0:
            lines.append("longest interval within tolerance: none (already outside at the last)")
        else:
            lines.append(
                f"longest interval within tolerance: {months} months ({days:.0f} days)"
                + (" or more (the search stops there)" if months >= 60 else "")
            )
        lines.append(f"  {METHOD_NOTE}")
    return lines


def _draw(review: DeviceReview, store: HistoryStore, opts: RunOptions) -> Path:
    folder = opts.folder(Path.cwd())
    fmt = opts.plot_format
    now = datetime.now(UTC)
    drawn = review_figure(
        review,
        title=opts.title or f"calibration history of {review.device.device_id}",
        footer=f"{len(review.calibrations)} records from {store.path.name} · {tool_footer(now)}",
    )
    name = f"history.{fmt}"
    with OutputSet(folder, [name], inputs=[store.path]) as out:
        save_figure(drawn, out.path(name), fmt)
        return out.commit()[name]


def _show_device(
    store: HistoryStore, device: str, settings: dict[str, Any], opts: RunOptions
) -> None:
    review = review_device(store, device, **settings)
    figure = _draw(review, store, opts)
    if opts.json:
        typer.echo(json.dumps({**review.to_dict(), "figure": str(figure)}, ensure_ascii=False))
        return
    d = review.device
    typer.echo(f"device {d.device_id}: {d.description or ''} ({d.records} record(s))")
    typer.echo(_record_table(review))
    for line in _fit_lines(review):
        typer.echo(line)
    typer.echo(f"wrote {figure}")


@command(REVIEW_CONFIDENCE, REVIEW_OUT, PLOT_FORMAT, REVIEW_TITLE, REVIEW_JSON, subject="history")
def history(
    ctx: typer.Context,
    history: HistoryFileOpt = None,
    device: DeviceOpt = None,
    interval: IntervalOpt = None,
    tolerance: ToleranceOpt = None,
    model: ModelOpt = "auto",
    *,
    opts: RunOptions,
) -> None:
    """Calibration history: devices with their last record and due date, or one device.

    Example: stability history --device HM-OCXO-0417 --tolerance 5e-9 --interval 12mo
    """
    if ctx.invoked_subcommand is not None:
        given = [n for n, v in (("--device", device), ("--interval", interval),
                                ("--tolerance", tolerance)) if v is not None]  # fmt: skip
        if given:
            raise UsageProblem(
                f"{', '.join(given)} belong to 'stability history' without a subcommand, "
                f"not to 'history {ctx.invoked_subcommand}'"
            )
        return
    if device is None and tolerance is not None:
        raise UsageProblem("--tolerance needs --device ID")
    with _store(history) as store:
        if device is None:
            _list_devices(store, interval, opts)
            return
        settings = {
            "interval": interval,
            "tolerance": tolerance,
            "model": model,
            "confidence": opts.given["confidence"],
        }
        _show_device(store, device, settings, opts)


# ---------------------------------------------------------------------- subcommands
FilesArg = Annotated[
    list[Path],
    typer.Argument(help="record.json files of earlier records.", metavar="RECORD.json..."),
]


@command(subject="files")
def history_import(
    files: FilesArg, history: HistoryFileOpt = None, force: ForceOpt = False, *, opts: RunOptions
) -> None:
    """Store earlier records (record.json, with the record.pdf beside it) in the history.

    All or nothing: one file that is not a record, or already stored (without
    --force), stores none.

    Example: stability history import old/*/record.json
    """
    with _store(history, create=True) as store:
        stored = import_records(store, list(files), force=force)
        for path, entry, pdf in stored:
            what = "replaced" if entry.replaced else "stored"
            typer.echo(
                f"{what} {path} as record {entry.number} of {entry.device_id} "
                f"({_day(entry.calibrated_at)}{', with its record.pdf' if pdf else ''})"
            )
        typer.echo(f"{len(stored)} record(s) in {store.path}")


ExportOutOpt = Annotated[
    Path, typer.Option("--out", help="Folder to write into.", metavar="DIR", show_default=False)
]


@command(subject="history")
def history_export(
    out: ExportOutOpt,
    history: HistoryFileOpt = None,
    device: Annotated[
        str | None, typer.Option("--device", help="Only this device.", metavar="ID")
    ] = None,
    *,
    opts: RunOptions,
) -> None:
    """Write the history as devices.csv, records.csv, checks.csv and history.json.

    Example: stability history export --out history-export
    """
    with _store(history) as store:
        files = export_history(store, out, device=device)
    typer.echo(f"wrote {', '.join(p.name for p in files.values())} in {out}")


@command(subject="history")
def history_show(
    record: Annotated[
        int,
        typer.Option("--record", help="Record number.", metavar="N", show_default=False, min=1),
    ],
    history: HistoryFileOpt = None,
    pdf: Annotated[
        Path | None,
        typer.Option("--pdf", help="Write the record.pdf issued with it here.", metavar="FILE"),
    ] = None,
    json_file: Annotated[
        Path | None,
        typer.Option("--json-file", help="Write its record.json here.", metavar="FILE"),
    ] = None,
    force: Annotated[bool, typer.Option("--force", help="Overwrite those files.")] = False,
    *,
    opts: RunOptions,
) -> None:
    """Show a stored record; write its record.pdf (as issued) or record.json.

    Example: stability history show --record 3 --pdf record-3.pdf
    """
    with _store(history) as store:
        row, text, stored_pdf = store.record(record)
        typer.echo(
            f"record {row.number}: device {row.device_id}, calibrated {_day(row.calibrated_at)}, "
            f"verdict {row.overall_verdict}{_verdict_of(text)}, "
            f"offset {_pm(row.offset, row.u_offset)}"
        )
        typer.echo(
            f"input SHA-256 {row.input_sha256}, settings {row.settings_hash}, "
            f"stability {row.tool_version}, reference {row.reference_id or 'n/a'}, "
            f"record.pdf {'kept' if stored_pdf is not None else 'not kept'}"
        )
        for k in store.checks(record):
            unit = statistic_unit(k.statistic) if k.statistic else ""
            shown = "n/a" if k.deviation is None else format_value(k.deviation, unit)
            limit = "" if k.limit is None else format_value(k.limit, unit)
            typer.echo(
                f"  {k.statistic} tau {format_tau(k.tau_s):>8}  limit {limit:>9}  "
                f"measured {shown:>9}  {k.verdict or ''}  {k.noise}".rstrip()
            )
        if pdf is None and json_file is None:
            return
        written = write_stored_record(store, record, pdf=pdf, json_path=json_file, force=force)
    for path in written.values():
        typer.echo(f"wrote {path}")


def _verdict_of(text: str) -> str:
    """ " (of the time-error mask NAME)" for a record judged against a mask alone, else ""."""
    try:
        data = json.loads(text)
    except ValueError:
        return ""
    if not isinstance(data, dict) or data.get("overall_verdict_of") != "time_error_mask":
        return ""
    section = data.get("time_error_mask")
    name = section.get("mask") if isinstance(section, dict) else None
    return f" (of the time-error mask {name}; no specification)" if name else ""


@command(subject="history")
def history_set_interval(
    device: Annotated[
        str, typer.Option("--device", help="The device.", metavar="ID", show_default=False)
    ],
    interval: Annotated[
        str,
        typer.Option(
            "--interval",
            help="Its calibration interval, e.g. 12mo, 18mo, 26w or 90d.",
            metavar="INTERVAL",
            callback=checked(_interval),
            show_default=False,
        ),
    ],
    history: HistoryFileOpt = None,
    *,
    opts: RunOptions,
) -> None:
    """Store a device's calibration interval (used for its due date when none is given).

    Example: stability history set-interval --device HM-OCXO-0417 --interval 6mo
    """
    with _store(history) as store:
        value = store.set_interval(device, interval)
        summary = store.device(device)
    due = value.after(summary.last_calibrated) if summary.last_calibrated else None
    typer.echo(f"interval of {device}: {value.text}; next due {_day(due) or 'n/a'}")
