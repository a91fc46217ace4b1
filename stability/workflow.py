"""Write an analysis's outputs: the tables, the summary and the two figures, all or nothing.

``analyze_into`` is what ``stability analyze`` does::

    run, files = stability.workflow.analyze_into("counter.csv", "out/", nominal="10MHz")

The files of a run are written all or nothing through
:class:`stability.outputs.OutputSet`: a failed or interrupted run leaves no file
of its own behind and changes no earlier output, and folders made for the run
are removed again. Figures are drawn in this process.
"""

from __future__ import annotations

import contextlib
import os
from dataclasses import dataclass
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

from .causes import CauseSettings, analyse_with_causes, periodic_marks
from .display import Displayable, register_html, register_text
from .errors import InputError
from .figures import (
    run_environment_figure,
    run_series_figure,
    run_spectrum_figure,
    run_stability_figure,
    save_figure,
)
from .figures.labels import default_footer, default_title
from .history import HistoryStore, StoredRecord, open_history
from .measurement import Measurement
from .outputs import OutputSet
from .reports.html import facts_table, judgement_html, judgement_text, result_box
from .reports.record import RECORD_NAMES, judgements_of, write_record_files
from .reports.tables import table_csv, table_markdown
from .reports.timing_display import time_error_html, time_error_text
from .run import (
    AnalysisRun,
    ReadProgress,
    StepProgress,
    analyse_prepared,
    read_and_prepare,
    resolve_settings,
)
from .settings import RunSettings
from .spec import Info, Judgement, Spec, judge, load_info, load_spec
from .summary import summary_json
from .timing import Mask, TimeErrorAnalysis, analyze_time_error, load_mask, read_sawtooth

__all__ = [
    "analyze_into",
    "spectrum_into",
    "spectrum_drawing",
    "environment_drawing",
    "record_into",
    "spec_settings",
    "RecordOutcome",
    "write_analysis",
    "output_names",
    "PLOT_FORMATS",
    "OUTPUT_NAMES",
    "check_plot_format",
]

PLOT_FORMATS = ("png", "svg", "pdf")
OUTPUT_NAMES = ("table.csv", "table.md", "summary.json", "sigma_tau", "series")

#: The text outputs of an analysis.
_TEXT_NAMES = ("table.csv", "table.md", "summary.json")


def check_plot_format(plot_format: Any) -> str:
    """A plot format name of :data:`PLOT_FORMATS` in lower case."""
    fmt = str(plot_format).lower()
    if fmt not in PLOT_FORMATS:
        raise InputError(
            f"unknown plot format {plot_format!r}", hint=f"choose {', '.join(PLOT_FORMATS)}"
        )
    return fmt


def _draw_series(
    target: Path, fmt: str, run: AnalysisRun, title: str | None, footer: str | None
) -> Path:
    fig = run_series_figure(run, analysis_time=run.analysis_time, title=title, footer=footer)
    return save_figure(fig, target, fmt)


def _draw_stability(
    target: Path,
    fmt: str,
    run: AnalysisRun,
    limits: Any,
    limits_statistic: str | None,
    title: str | None,
    footer: str | None,
    noise_labels: Any = None,
) -> Path:
    fig = run_stability_figure(
        run,
        limits=limits,
        limits_statistic=limits_statistic,
        title=title,
        footer=footer,
        noise_labels=noise_labels,
        marks=periodic_marks(run.table),
    )
    return save_figure(fig, target, fmt)


def _write_all(
    run: AnalysisRun,
    paths: dict[str, Path],
    fmt: str,
    limits: Any,
    limits_statistic: str | None,
    titled: bool,
    title: str | None = None,
    noise_labels: Any = None,
) -> None:
    """Write the five outputs to the given paths (keys: :data:`OUTPUT_NAMES`).

    ``title`` replaces the stability figure's title (the default names the log
    and its column); ``noise_labels`` says whose noise types it writes.
    """
    texts = {
        "table.csv": lambda: table_csv(run.table),
        "table.md": lambda: table_markdown(run.table),
        "summary.json": lambda: summary_json(run.summary()),
    }
    for name in _TEXT_NAMES:
        paths[name].write_text(texts[name](), encoding="utf-8")  # a pending file of the set
    shown = run.measurement
    series_title = default_title(shown, "data over time") if titled else None
    series_footer = default_footer(shown, analysis_time=run.analysis_time) if titled else None
    stab_title = default_title(run.table.measurement, "stability") if titled else None
    stab_title = title if title is not None else stab_title
    stab_footer = default_footer(run.table, analysis_time=run.analysis_time) if titled else None
    _draw_stability(
        paths["sigma_tau"],
        fmt,
        run,
        limits,
        limits_statistic,
        stab_title,
        stab_footer,
        noise_labels,
    )
    _draw_series(paths["series"], fmt, run, series_title, series_footer)


def output_names(plot_format: str) -> tuple[list[str], list[str]]:
    """(files an analysis writes, files of another plot format it replaces)."""
    fmt = check_plot_format(plot_format)
    names = [*_TEXT_NAMES, f"sigma_tau.{fmt}", f"series.{fmt}"]
    stale = [f"{fig}.{other}" for fig in ("sigma_tau", "series") for other in PLOT_FORMATS]
    return names, [n for n in stale if n not in names]


def _paths(files: dict[str, Path], fmt: str) -> dict[str, Path]:
    """Output key (:data:`OUTPUT_NAMES`) -> path, from file name -> path."""
    return {key: files[key if key in _TEXT_NAMES else f"{key}.{fmt}"] for key in OUTPUT_NAMES}


def analyze_into(
    log: str | os.PathLike[str] | Measurement,
    folder: str | os.PathLike[str],
    settings: RunSettings | None = None,
    *,
    plot_format: str = "png",
    limits: Any = None,
    limits_statistic: str | None = None,
    title: str | None = None,
    noise_labels: Any = None,
    spec: Spec | None = None,
    on_progress: ReadProgress | None = None,
    on_step: StepProgress | None = None,
    causes: CauseSettings | None = None,
    **options: Any,
) -> tuple[AnalysisRun, dict[str, Path]]:
    """Read, prepare, analyse and write the five outputs into ``folder``: (run, files).

    ``settings`` (or keyword settings as :func:`stability.run_analysis` takes
    them) say what to do; ``title`` replaces the stability figure's title and
    ``noise_labels`` says whose noise types it writes (see
    :func:`stability.figures.stability_figure`). With ``spec`` (settings made
    with :func:`spec_settings`) the stability figure draws the specification's
    limits coloured by their verdicts, as the calibration record does. The
    five files appear together or not at all
    (:class:`stability.outputs.OutputSet`): an output that would overwrite the
    log is refused before anything is read, a folder another run is writing
    into is refused, and the figures of another plot format from an earlier
    run in the folder are removed, so the folder describes this run only.

    With ``causes`` (:class:`stability.causes.CauseSettings`) the run also says
    where the instability comes from (:func:`stability.causes.run_with_causes`);
    a regression on an auxiliary quantity adds ``environment.<format>``.
    """
    fmt = check_plot_format(plot_format)
    settings = resolve_settings(settings, options)
    names, stale = output_names(fmt)
    if causes is not None and causes.regress:
        names.append(f"environment.{fmt}")
    if isinstance(log, Measurement):  # the file it was read from is protected all the same
        inputs = [log.provenance.path] if log.provenance.path else []
    else:
        inputs = [log]
    _refuse_record_folder(Path(folder))
    with OutputSet(folder, names, inputs=inputs, stale=stale) as out:
        source, prepared, report = read_and_prepare(log, settings, on_progress=on_progress)
        moment = datetime.now(UTC)
        if causes is None:
            run = analyse_prepared(
                source, prepared, report, settings, moment=moment, on_step=on_step
            )
        else:
            run = analyse_with_causes(
                source, prepared, report, settings, causes, moment=moment, on_step=on_step
            )
            if causes.regress:
                _draw_environment(out.pending[f"environment.{fmt}"], fmt, run)
        if spec is not None:
            limits, limits_statistic = judge(run.table, spec).plot_limits(), spec.statistic
        pending = _paths(out.pending, fmt)
        _write_all(
            run,
            pending,
            fmt,
            limits,
            limits_statistic,
            titled=True,
            title=title,
            noise_labels=noise_labels,
        )
        files = out.commit()
    result = _paths(files, fmt)
    if f"environment.{fmt}" in files:
        result["environment"] = files[f"environment.{fmt}"]
    return run, result


def environment_drawing(run: AnalysisRun) -> Any:
    """The environment figure of a run with a regression: frequency and the quantity
    (:func:`stability.figures.run_environment_figure`, also ``Causes.plot(view="environment")``)."""
    return run_environment_figure(run)


def _draw_environment(target: Path, fmt: str, run: AnalysisRun) -> Path:
    return save_figure(environment_drawing(run), target, fmt)


def spectrum_drawing(run: AnalysisRun, title: str | None = None) -> Any:
    """The spectrum figure of a run made by :func:`stability.causes.run_with_causes`
    (:func:`stability.figures.run_spectrum_figure`, also ``Causes.plot()``)."""
    return run_spectrum_figure(run, title=title)


def spectrum_into(
    log: str | os.PathLike[str] | Measurement,
    folder: str | os.PathLike[str],
    settings: RunSettings | None = None,
    causes: CauseSettings | None = None,
    *,
    plot_format: str = "png",
    title: str | None = None,
    on_progress: ReadProgress | None = None,
) -> tuple[AnalysisRun, Any, dict[str, Path]]:
    """The spectrum of a log into ``folder``: (run, spectrum, files).

    Writes ``spectrum.csv`` (f, S_y with its band, S_x, L(f) with a nominal
    frequency), ``summary.json`` (the analysis summary, whose ``causes`` field
    holds the spectrum's settings, its power-law fit beside the Allan-deviation
    model, and the periodic components) and ``spectrum.<format>``, all or nothing.
    """
    fmt = check_plot_format(plot_format)
    settings = resolve_settings(settings, {})
    causes = causes or CauseSettings()
    names = ["spectrum.csv", "summary.json", f"spectrum.{fmt}"]
    stale = [f"spectrum.{other}" for other in PLOT_FORMATS if other != fmt]
    inputs = [] if isinstance(log, Measurement) else [log]
    with OutputSet(folder, names, inputs=inputs, stale=stale) as out:
        source, prepared, report = read_and_prepare(log, settings, on_progress=on_progress)
        run = analyse_with_causes(source, prepared, report, settings, causes)
        drawn = spectrum_drawing(run, title)
        spectrum = run.table.extras["cause_objects"]["spectrum"]
        out.pending["spectrum.csv"].write_text(
            spectrum.to_frame().to_csv(index=False, float_format="%.6g"), encoding="utf-8"
        )
        out.pending["summary.json"].write_text(summary_json(run.summary()), encoding="utf-8")
        save_figure(drawn, out.pending[f"spectrum.{fmt}"], fmt)
        files = out.commit()
    return run, spectrum, dict(files)


def write_analysis(
    run: AnalysisRun,
    folder: str | os.PathLike[str],
    *,
    plot_format: str = "png",
    limits: Any = None,
    limits_statistic: str | None = None,
    title: str | None = None,
    noise_labels: Any = None,
) -> dict[str, Path]:
    """Write table.csv, table.md, summary.json and both plots of a run into ``folder``.

    ``title`` replaces the stability figure's title; ``noise_labels`` says whose
    noise types it writes.
    """
    fmt = check_plot_format(plot_format)
    names, stale = output_names(fmt)
    inputs = [run.source.provenance.path] if run.source.provenance.path else []
    with OutputSet(folder, names, inputs=inputs, stale=stale) as out:
        _write_all(
            run,
            _paths(out.pending, fmt),
            fmt,
            limits,
            limits_statistic,
            titled=False,
            title=title,
            noise_labels=noise_labels,
        )
        files = out.commit()
    return _paths(files, fmt)


def _refuse_record_folder(folder: Path) -> None:
    """An analysis into a folder that holds a calibration record would replace its figures."""
    if (folder / "record.json").exists():
        raise InputError(
            "holds a calibration record; analyze would replace its tables and figures",
            path=str(folder),
            hint="pass another --out, or make the record again with stability record --force",
        )


def spec_settings(
    settings: RunSettings, spec: Spec, confidence: float | None = None
) -> RunSettings:
    """The settings of a run judged against ``spec``, as the calibration record makes them.

    The specification's statistic is added to the statistics when missing, and
    its confidence level is used unless ``confidence`` is given.
    """
    stats = settings.analysis.stats
    wanted = [s.strip() for s in (stats.split(",") if isinstance(stats, str) else stats)]
    wanted = [s for s in wanted if s]
    if spec.statistic not in wanted:
        wanted.append(spec.statistic)
    level = spec.confidence if confidence is None else confidence
    return settings.replace(stats=",".join(wanted), confidence=level)


@dataclass(frozen=True)
class RecordOutcome(Displayable):
    """A calibration record made by :func:`record_into` (shows itself in a notebook)."""

    run: AnalysisRun
    #: The specification's judgement (None: a record judged against a mask alone).
    judgement: Judgement | None
    info: Info
    #: The specification file (None: no specification).
    spec_path: Path | None
    files: dict[str, Path]
    #: Where the record was stored in the calibration history (None: history not asked for).
    history: StoredRecord | None = None
    #: The time error judged against the mask (None: no --mask).
    timing: TimeErrorAnalysis | None = None

    @property
    def judgements(self) -> tuple[str, ...]:
        """What the record judges: ``specification`` and/or ``time_error_mask``."""
        return tuple(judgements_of(self.judgement, self.timing))

    @property
    def verdict(self) -> str:
        """The record's overall verdict: the specification's, else the mask's."""
        if self.judgement is not None:
            return str(self.judgement.overall)
        return str(self.timing.judgement.verdict)  # type: ignore[union-attr]


def _store_in_history(
    store: HistoryStore, out: OutputSet, force: bool
) -> tuple[StoredRecord, dict[str, Path]]:
    """Add the pending record.json and record.pdf to the history; commit the files inside.

    The history's transaction is open while the files are moved into place, so
    a record refused by the history (a duplicate without ``force``) writes no
    file, and a failed file commit rolls the history back.
    """
    text = out.path("record.json").read_text(encoding="utf-8")
    pdf = out.path("record.pdf").read_bytes()
    with store.transaction():
        stored = store.add(text, pdf=pdf, force=force)
        files = out.commit()
    return stored, files


def record_into(
    log: str | os.PathLike[str],
    folder: str | os.PathLike[str],
    spec_path: str | os.PathLike[str] | None,
    info_path: str | os.PathLike[str],
    settings: RunSettings | None = None,
    *,
    confidence: float | None = None,
    force: bool = False,
    plot_format: str = "png",
    title: str | None = None,
    history: str | os.PathLike[str] | None = None,
    noise_labels: Any = None,
    on_progress: ReadProgress | None = None,
    on_step: StepProgress | None = None,
    mask: Mask | str | None = None,
    timing_options: dict[str, Any] | None = None,
    causes: CauseSettings | None = None,
    **options: Any,
) -> RecordOutcome:
    """Analyse ``log``, judge it against a specification and/or a mask, write the record.

    The specification's statistic is added to the statistics when missing, and its
    confidence level is used unless ``confidence`` is given. The seven files (the
    five analysis outputs, with the limits drawn on the stability figure, and
    ``record.pdf``, ``record.json``) are written as one set: all or none, the
    folder locked for the run, nothing overwritten without ``force`` (refused
    before anything is computed), and no output may be one of the inputs.

    With ``history`` (a file, :mod:`stability.history`) the record is also
    stored in that calibration history in the same all-or-nothing step: a
    record of the same input and settings already there is refused unless
    ``force`` (which replaces it). The history file is checked before the
    analysis starts.

    With ``mask`` (a bundled name, a mask file or a :class:`stability.timing.Mask`)
    the time error of the log as read is also judged against it
    (:func:`stability.timing.analyze_time_error`, dense taus) and the record
    carries that verdict too; ``timing_options`` are that function's keywords
    (``remove_offset``, ``cte_window``, ``bandwidth``, ``sawtooth_sign``,
    ``sawtooth_applies_to``) plus ``sawtooth``, the log's sawtooth column.

    ``spec_path`` may be None when ``mask`` is given: a time-error record,
    judged against the mask alone. The analysis runs with the given statistics
    and confidence level and its outputs are written all the same, without
    limits; the record's overall verdict is the mask's, and a history stores
    that verdict (with no specification and no per-tau checks of its own).
    """
    fmt = check_plot_format(plot_format)
    settings = resolve_settings(settings, options)
    if spec_path is None and mask is None:
        raise InputError(
            "a calibration record judges against a specification, a time-error mask or both; "
            "neither was given",
            hint="pass --spec FILE, --mask NAME|FILE or both",
        )
    spec = load_spec(spec_path) if spec_path is not None else None
    info = load_info(info_path)
    mask_file = [mask] if isinstance(mask, str | os.PathLike) and Path(mask).is_file() else []
    mask = load_mask(mask) if isinstance(mask, str | os.PathLike) else mask
    names, stale = output_names(fmt)
    given = [p for p in (spec_path, info_path, history) if p is not None]
    inputs = [log, *given, *mask_file]
    if spec is not None:
        settings = spec_settings(settings, spec, confidence)
    elif confidence is not None:
        settings = settings.replace(confidence=confidence)
    store = open_history(history) if history is not None else None
    # the record's own files first: they are what --force is about
    with (
        store if store is not None else contextlib.nullcontext(),
        OutputSet(folder, [*RECORD_NAMES, *names], inputs=inputs, force=force, stale=stale) as out,
    ):
        source, prepared, report = read_and_prepare(log, settings, on_progress=on_progress)
        if causes is None:
            run = analyse_prepared(source, prepared, report, settings, on_step=on_step)
        else:  # the record states the counter type and dead time (stability.causes)
            run = analyse_with_causes(source, prepared, report, settings, causes, on_step=on_step)
        judgement = None
        if spec is not None:
            judgement = judge(run.table, spec, reference=info.reference)
        timing = None
        if mask is not None:
            extra = dict(timing_options or {})
            column = extra.pop("sawtooth", None)
            if column:
                extra["sawtooth"] = read_sawtooth(log, column, settings.read.as_kwargs(), source)
                extra["sawtooth_column"] = column
            timing = analyze_time_error(source, mask=mask, **extra)
        _write_all(
            run,
            _paths(out.pending, fmt),
            fmt,
            judgement.plot_limits() if judgement is not None else None,
            judgement.statistic if judgement is not None else None,
            titled=True,
            title=title,
            noise_labels=noise_labels,
        )
        write_record_files(
            run, judgement, info, out.path("record.pdf"), out.path("record.json"), timing
        )
        stored = None
        if store is None:
            files = out.commit()
        else:
            stored, files = _store_in_history(store, out, force)
    paths = {**_paths(files, fmt), **{name: files[name] for name in RECORD_NAMES}}
    spec_file = Path(spec_path) if spec_path is not None else None
    return RecordOutcome(run, judgement, info, spec_file, paths, history=stored, timing=timing)


def _outcome_facts(outcome: RecordOutcome) -> list[tuple[str, str]]:
    folder = next(iter(outcome.files.values())).parent
    facts = [
        ("device", outcome.info.device_id),
        ("folder", str(folder)),
        ("files", ", ".join(sorted(p.name for p in outcome.files.values()))),
        ("judgements", ", ".join(j.replace("_", " ") for j in outcome.judgements)),
        ("overall verdict", outcome.verdict),
    ]
    if outcome.spec_path is not None:
        facts.append(("specification", outcome.spec_path.name))
    if outcome.timing is not None and outcome.timing.judgement is not None:
        facts.append(("time-error mask", outcome.timing.judgement.mask.name))
    if outcome.history is not None:
        facts.append(("stored in the history", f"record {outcome.history.number}"))
    return facts


def _outcome_html(outcome: RecordOutcome) -> str:
    parts = [facts_table(_outcome_facts(outcome))]
    if outcome.judgement is not None:
        parts.append(judgement_html(outcome.judgement))
    if outcome.timing is not None:
        parts.append(time_error_html(outcome.timing))
    return result_box("Calibration record", *parts)


def _outcome_text(outcome: RecordOutcome) -> str:
    facts = "\n".join(f"  {k}: {v}" for k, v in _outcome_facts(outcome))
    parts = [f"Calibration record\n{facts}"]
    if outcome.judgement is not None:
        parts.append(judgement_text(outcome.judgement))
    if outcome.timing is not None:
        parts.append(time_error_text(outcome.timing))
    return "\n".join(parts)


register_html(RecordOutcome, _outcome_html)
register_text(RecordOutcome, _outcome_text)
