"""An analysis that also says where the instability comes from.

:func:`run_with_causes` is :func:`stability.run.run_analysis` with four studies
around it, each optional and each said in the results:

1. auxiliary columns (temperature, pressure, humidity, supply voltage) read
   beside the readings (:mod:`stability.ingest.auxiliary`);
2. the sensitivity of frequency to one of them, with its thermal lag
   (:mod:`stability.environment`), and on request its removal before the
   statistics;
3. the Welch spectrum and the periodic components standing above its local
   background (:mod:`stability.spectrum`, :mod:`stability.periodic`), with the
   taus of the stability plot that each one affects;
4. the counter's dead time, corrected in the Allan deviations with Barnes' bias
   functions (:mod:`stability.dead_time`), and the counter type recorded, with
   the warning a Lambda-type counter calls for.

Everything found goes to ``table.extras["causes"]``, which the summary carries
as its ``causes`` field; the objects behind it (the Sensitivity, the Spectrum and
the Lines) to ``table.extras["cause_objects"]``, for the figures.
:func:`causes_of` gathers them as one result, :class:`Causes`, that draws the
command's spectrum and environment figures and shows what was found in a
notebook.
"""

from __future__ import annotations

import dataclasses
import math
import os
import re
from dataclasses import dataclass
from datetime import datetime
from typing import Any

import numpy as np

from .dead_time import check_counter, counter_note, dead_time_bias, gate_ratio, mu_of_alpha
from .display import Displayable
from .display import plot as _plot
from .environment import (
    DEFAULT_LAG_RANGE,
    Sensitivity,
    aux_on_frequency_grid,
    regress,
    remove_effect,
)
from .errors import AnalysisError, InputError
from .ingest.auxiliary import AUX_QUANTITIES, parse_aux_spec, read_auxiliary
from .measurement import Measurement
from .periodic import FALSE_ALARM, Line, affected_taus, find_lines
from .prepare import PreparationReport
from .run import AnalysisRun, analyse_prepared, read_and_prepare, resolve_settings
from .settings import RunSettings
from .spectrum import DEFAULT_SEGMENTS, Spectrum, compare_models, welch_spectrum
from .table import StabilityTable, StatisticResult

__all__ = [
    "CauseSettings",
    "run_with_causes",
    "analyse_with_causes",
    "correct_dead_time",
    "periodic_study",
    "periodic_marks",
    "cause_notes",
    "Causes",
    "causes_of",
]

#: Statistics the dead-time correction applies to (Barnes' B2 is for the Allan variance).
DEAD_TIME_STATISTICS = ("adev", "oadev")
#: Fewest frequency samples for a spectrum and a line search.
MIN_SPECTRUM_SAMPLES = 256


@dataclass(frozen=True)
class CauseSettings:
    """What to study besides the statistics.

    Attributes
    ----------
    aux
        Auxiliary columns to read: ``"temperature"``, ``"temperature=3"``, a comma
        list, or None (only those a regression needs).
    regress
        The auxiliary quantity to regress frequency on, or None.
    lag_range
        Range of the thermal time constant searched, s.
    remove
        Remove the fitted effect before the statistics.
    dead_time, dead_time_ratio
        The counter's dead time in s, or the ratio r = T / tau (one of them).
    counter
        The counter type: ``pi``, ``lambda`` or ``omega`` (None: not stated).
    periodic
        Search the spectrum for periodic components.
    false_alarm
        Chance of a false periodic component in a spectrum of pure noise.
    segments
        Half-overlapping segments of the Welch spectrum.
    """

    aux: str | None = None
    regress: str | None = None
    lag_range: tuple[float, float] = DEFAULT_LAG_RANGE
    remove: bool = False
    dead_time: float | None = None
    dead_time_ratio: float | None = None
    counter: str | None = None
    periodic: bool = True
    false_alarm: float = FALSE_ALARM
    segments: int = DEFAULT_SEGMENTS

    def __post_init__(self) -> None:
        object.__setattr__(self, "counter", check_counter(self.counter))
        if self.dead_time is not None and self.dead_time_ratio is not None:
            raise InputError("give either the dead time or the dead-time ratio, not both")
        if self.remove and not self.regress:
            raise InputError("removing an environmental effect needs the quantity to regress on")
        if self.regress is not None:
            name = str(self.regress).strip().lower()
            if not name:
                raise InputError("the quantity to regress on is empty")
            object.__setattr__(self, "regress", name)

    def aux_spec(self) -> dict[str, Any]:
        wanted = parse_aux_spec(self.aux)
        if self.regress and self.regress not in wanted:
            wanted[self.regress] = None
        return wanted

    def describe(self) -> dict[str, Any]:
        return {
            "aux": self.aux,
            "regress": self.regress,
            "lag_range_s": list(self.lag_range),
            "remove_effect": self.remove,
            "dead_time_s": self.dead_time,
            "dead_time_ratio": self.dead_time_ratio,
            "counter": self.counter,
            "periodic_search": self.periodic,
            "false_alarm": self.false_alarm,
            "spectrum_segments": self.segments,
        }


def _row_mu(result: StatisticResult, model: Any) -> np.ndarray:
    """mu of AVAR ~ tau^mu per row: from the identified noise, else the model's dominant term."""
    out = np.full(len(result), np.nan)
    for i, (a, tau) in enumerate(zip(result.alpha, result.tau, strict=True)):
        alpha = None
        if math.isfinite(a):
            alpha = int(round(a))
        elif model is not None and hasattr(model, "dominant") and any(model.h.values()):
            alpha = model.dominant(float(tau))
        if alpha is not None and alpha in (2, 1, 0, -1, -2):
            out[i] = mu_of_alpha(alpha)
    return out


def correct_dead_time(table: StabilityTable, r: float) -> tuple[StabilityTable, list[str]]:
    """The table with its Allan deviations corrected for dead time ratio r = T / tau.

    Each ADEV/OADEV row is divided by the square root of
    :func:`~stability.dead_time.dead_time_bias` at its averaging factor and the
    mu of its noise type (the identified one, else the fitted model's dominant
    term); its bounds likewise, and ``bias_factor`` carries the factor. Other
    statistics are left as they are and named in the notes.
    """
    if r == 1.0:
        return table, ["No dead time: nothing to correct."]
    model = table.extras.get("power_law_model")
    results = dict(table.results)
    notes = []
    for name, result in table.results.items():
        if name not in DEAD_TIME_STATISTICS or not len(result):
            continue
        mu = _row_mu(result, model)
        factor = np.ones(len(result))
        for i, (m, u) in enumerate(zip(result.m, mu, strict=True)):
            if math.isfinite(u):
                factor[i] = 1.0 / math.sqrt(dead_time_bias(int(m), r, float(u)))
        left = int(np.sum(~np.isfinite(mu)))
        results[name] = dataclasses.replace(
            result,
            deviation=result.deviation * factor,
            ci_low=result.ci_low * factor,
            ci_high=result.ci_high * factor,
            bias_factor=result.bias_factor * factor,
            notes=(
                *result.notes,
                f"corrected for counter dead time, r = T/tau = {r:.6g} (Barnes' bias functions)"
                + (f"; {left} row(s) without a noise type left uncorrected" if left else ""),
            ),
        )
    others = [n for n in table.results if n not in DEAD_TIME_STATISTICS]
    notes.append(
        f"Allan deviations corrected for counter dead time with Barnes' bias functions "
        f"(NBS TN 375), r = T/tau = {r:.6g}."
    )
    if others:
        notes.append(
            f"Not corrected for dead time (Barnes' B2 is for the Allan variance): "
            f"{', '.join(others)}."
        )
    new = StabilityTable(
        results=results,
        confidence=table.confidence,
        settings=table.settings,
        measurement=table.measurement,
        extras=table.extras,
    )
    return new, notes


def periodic_study(
    measurement: Measurement, table: StabilityTable | None, causes: CauseSettings
) -> tuple[Spectrum | None, list[Line], dict[str, Any]]:
    """Welch spectrum, its periodic components and the affected taus of the table:
    (spectrum, lines, summary entry)."""
    if measurement.n - 1 < MIN_SPECTRUM_SAMPLES:
        return None, [], {"lines": [], "note": "too few samples for a spectrum"}
    try:
        spectrum = welch_spectrum(measurement, segments=causes.segments)
    except AnalysisError as exc:
        return None, [], {"lines": [], "note": exc.message}
    lines = find_lines(spectrum, false_alarm=causes.false_alarm) if causes.periodic else []
    taus = np.unique(
        np.concatenate([r.tau for r in table]) if table is not None and len(table) else []
    )
    found = []
    for line in lines:
        entry = line.to_dict()
        entry["summary"] = line.describe()
        entry["affected_taus_s"] = [float(t) for t in taus[affected_taus(line, taus)]]
        found.append(entry)
    model = None if table is None else table.extras.get("power_law_model")
    searched = spectrum.f[spectrum.fit_mask()]
    return (
        spectrum,
        lines,
        {
            "spectrum": spectrum.describe(),
            "longest_period_searched_s": float(1.0 / searched[0]) if searched.size else None,
            "false_alarm": causes.false_alarm,
            "lines": found,
            "model_comparison": compare_models(spectrum.fit, model),
        },
    )


def _sensitivity(
    source: Measurement, prepared: Measurement, causes: CauseSettings
) -> tuple[Measurement, dict[str, Any] | None, Any]:
    if not causes.regress:
        return prepared, None, None
    quantity = causes.regress
    if quantity in (source.auxiliary or {}) and quantity not in (prepared.auxiliary or {}):
        raise AnalysisError(
            f"the {quantity} series is on the log's grid, and preparation changed the grid",
            hint="regress without --average",
        )
    aux = aux_on_frequency_grid(prepared, quantity)
    unit = prepared.auxiliary[quantity].unit  # type: ignore[index]
    coefficient_unit = "K" if unit == "degC" else unit
    sens = regress(
        prepared, aux, quantity=quantity, unit=coefficient_unit, lag_range=causes.lag_range
    )
    info = sens.to_dict()
    info["removed"] = bool(causes.remove)
    if causes.remove:
        prepared = remove_effect(prepared, aux, sens)
    return prepared, info, sens


def run_with_causes(
    log: str | os.PathLike[str] | Measurement,
    settings: RunSettings | None = None,
    causes: CauseSettings | None = None,
    *,
    on_progress: Any = None,
    on_step: Any = None,
    **options: Any,
) -> AnalysisRun:
    """Read, prepare, analyse and study the causes (see the module docstring).

    Returns the :class:`AnalysisRun` whose table carries ``extras["causes"]``
    and, with dead time given, corrected Allan deviations.
    """
    settings = resolve_settings(settings, options)
    source, prepared, report = read_and_prepare(log, settings, on_progress=on_progress)
    return analyse_with_causes(source, prepared, report, settings, causes, on_step=on_step)


def _check_causes(causes: Any) -> CauseSettings:
    causes = causes or CauseSettings()
    if not isinstance(causes, CauseSettings):
        raise InputError(f"causes must be a CauseSettings, got {type(causes).__name__}")
    return causes


def analyse_with_causes(
    source: Measurement,
    prepared: Measurement,
    report: PreparationReport,
    settings: RunSettings,
    causes: CauseSettings | None = None,
    *,
    moment: datetime | None = None,
    on_step: Any = None,
) -> AnalysisRun:
    """:func:`run_with_causes` on data already read and prepared
    (:func:`stability.run.read_and_prepare`)."""
    causes = _check_causes(causes)
    wanted = causes.aux_spec()
    if wanted:
        spec = ",".join(k if v is None else f"{k}={v}" for k, v in wanted.items())
        source = read_auxiliary(source, spec)
    if source.auxiliary and prepared.n == source.n:  # the same grid: they apply as read
        prepared = prepared.replace(auxiliary=source.auxiliary)
    prepared, sensitivity, fitted = _sensitivity(source, prepared, causes)
    run = analyse_prepared(source, prepared, report, settings, moment=moment, on_step=on_step)
    table = run.table
    notes: list[str] = []
    r = None
    if causes.dead_time is not None or causes.dead_time_ratio is not None:
        r = gate_ratio(prepared.tau0, causes.dead_time, causes.dead_time_ratio)
        if causes.counter in ("lambda", "omega"):
            notes.append(
                "Dead-time correction with Barnes' bias functions assumes a Pi-type "
                "counter; the stated counter type is " + str(causes.counter) + "."
            )
        table, dt_notes = correct_dead_time(table, r)
        notes.extend(dt_notes)
    if causes.counter is not None:
        notes.append(str(counter_note(causes.counter)))
    spectrum, lines, periodic = periodic_study(prepared, table, causes)
    extras = dict(table.extras)
    # the objects behind the summary entry, for figures (not written to the summary)
    extras["cause_objects"] = {"sensitivity": fitted, "spectrum": spectrum, "lines": lines}
    extras["causes"] = {
        "settings": causes.describe(),
        "auxiliary": {
            q: {"column": a.column, "unit": a.unit}
            for q, a in (source.auxiliary or {}).items()
            if q in AUX_QUANTITIES or q in wanted
        },
        "sensitivity": sensitivity,
        "periodic": periodic,
        "dead_time": None
        if r is None
        else {
            "ratio_T_over_tau": r,
            "dead_time_s": prepared.tau0 - prepared.tau0 / r,
            "statistics_corrected": [s for s in DEAD_TIME_STATISTICS if s in table.results],
        },
        "counter": causes.counter,
        "counter_note": counter_note(causes.counter),
        "notes": notes,
    }
    table = StabilityTable(
        results=table.results,
        confidence=table.confidence,
        settings=table.settings,
        measurement=table.measurement,
        extras=extras,
    )
    return dataclasses.replace(run, table=table, measurement=prepared)


def periodic_marks(table: StabilityTable) -> list[tuple[float, float, str]]:
    """Tau spans the periodic components of an analysis affect, for the stability plot:
    ``(tau_low, tau_high, label)``, a little wider than the affected grid points."""
    causes = (table.extras or {}).get("causes") or {}
    marks = []
    for line in (causes.get("periodic") or {}).get("lines") or []:
        taus = line.get("affected_taus_s") or []
        if taus:
            # no line break inside "1 208 s" when the legend wraps the label
            summary = re.sub(r"(?<=\d) (?=\d|s\b)", "\u00a0", line["summary"])
            label = f"taus a {summary} affects"
            marks.append((min(taus) / 1.15, max(taus) * 1.15, label))
    return marks


def cause_notes(table: StabilityTable) -> list[str]:
    """What the causes study found, in short neutral sentences (for summaries and records)."""
    causes = (table.extras or {}).get("causes") or {}
    out = []
    for line in (causes.get("periodic") or {}).get("lines") or []:
        out.append(
            f"{line['summary']} (its Allan-deviation bump peaks near tau = "
            f"{line['adev_peak_tau_s']:.4g} s)"
        )
    sens = causes.get("sensitivity")
    if sens:
        out.append(
            f"{sens['quantity']} sensitivity {sens['coefficient_per_unit']:.3g} per "
            f"{sens['unit']} (standard uncertainty {sens['uncertainty']:.2g}), lag "
            f"{sens['lag_s']:.4g} s"
            + ("; removed before the statistics" if sens.get("removed") else "; not removed")
        )
    dead = causes.get("dead_time")
    if dead:
        out.append(
            f"counter dead time {dead['dead_time_s']:.4g} s (r = T/tau = "
            f"{dead['ratio_T_over_tau']:.6g}): {', '.join(dead['statistics_corrected']) or 'no'} "
            "statistic corrected with Barnes' bias functions"
        )
    if causes.get("counter"):
        out.append(f"counter type {causes['counter']}: {causes['counter_note']}")
    out += [
        n
        for n in causes.get("notes") or []
        if not n.startswith(("Allan deviations", "Lambda", "Pi-", "Omega"))
    ]
    return out


@dataclass(frozen=True)
class Causes(Displayable):
    """Where the instability of an analysed log comes from, as one result.

    Made by :func:`causes_of` from a run of :func:`run_with_causes`; holds the
    run and reads what the study found from its table's extras, so it adds no
    copy of the data.

    Attributes
    ----------
    run
        The :class:`~stability.run.AnalysisRun` the causes were studied in.
    """

    run: AnalysisRun

    def __repr__(self) -> str:
        found = [
            "a spectrum" if self.spectrum is not None else "no spectrum",
            f"{len(self.lines)} periodic component(s)",
        ]
        if self.sensitivity is not None:
            found.append(f"sensitivity to {self.sensitivity.quantity}")
        return f"Causes({', '.join(found)})"

    @property
    def summary(self) -> dict[str, Any]:
        """The ``causes`` field of the run's summary (settings, findings, notes)."""
        return self.run.table.extras["causes"]

    @property
    def spectrum(self) -> Spectrum | None:
        """The Welch spectrum (None for a log too short for one)."""
        return self.run.table.extras["cause_objects"]["spectrum"]

    @property
    def lines(self) -> list[Line]:
        """The periodic components found, strongest first."""
        return list(self.run.table.extras["cause_objects"]["lines"])

    @property
    def sensitivity(self) -> Sensitivity | None:
        """The fitted environmental sensitivity (None without a regression)."""
        return self.run.table.extras["cause_objects"]["sensitivity"]

    @property
    def model(self) -> Any:
        """The power-law model fitted to the Allan deviation (None without one)."""
        return self.run.table.extras.get("power_law_model")

    def notes(self) -> list[str]:
        """What was found, in short neutral sentences (:func:`cause_notes`)."""
        return cause_notes(self.run.table)

    def plot(
        self, ax: Any = None, *, figure: Any = None, view: str = "spectrum", **options: Any
    ) -> Any:
        """The command's figures of the causes.

        Parameters
        ----------
        ax
            Matplotlib ``Axes`` to draw the panels into (one or two), or None for a
            figure of its own (never pyplot).
        figure
            A ``Figure`` or ``SubFigure`` to draw the whole figure into instead.
        view
            ``"spectrum"``: the figure ``stability spectrum`` writes (the Welch
            spectrum, the Allan-deviation model beside the spectrum's own fit, the
            periodic components); ``"environment"``: the figure ``--regress``
            writes (frequency and the quantity over time and against each other).
        options
            Those of the figure function (title, footer).
        """
        if view not in ("spectrum", "environment"):
            raise InputError(f"view must be 'spectrum' or 'environment', got {view!r}")
        name = "plot" if view == "spectrum" else view
        return _plot(self, ax=ax, figure=figure, view=name, **options)


def causes_of(run: AnalysisRun) -> Causes:
    """The causes a run of :func:`run_with_causes` studied, as one displayable result."""
    if not isinstance(run, AnalysisRun):
        raise InputError(f"run must be a stability.AnalysisRun, got {type(run).__name__}")
    extras = run.table.extras or {}
    if "causes" not in extras or "cause_objects" not in extras:
        raise InputError(
            "this run did not study the causes",
            hint="make it with stability.run_with_causes (or analyze --regress / spectrum)",
        )
    return Causes(run)
