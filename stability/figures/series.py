"""The record over time, as analysed: frequency, time error, phase residual.

:func:`series_figure` draws the data the statistics were computed from, in
panels sharing the time axis:

* fractional frequency after outlier screening, with the drift model over it
  (the one removed, or the linear estimate when none was); the removed
  outliers are marked by a rug along the top, not drawn as data, so they do
  not set the axis;
* for phase (time-interval) logs, the time error TIE in ns with the
  least-squares frequency offset removed, the offset stated [1]_;
* the phase residual after the chosen drift model (frequency logs; phase
  logs when a drift model was removed), so the residual shows what the
  statistics see.

Phase panels are rebuilt from the analysed frequency, so a record split at a
phase step or around an outlier joins up there instead of jumping; phase
steps found by the preparation are marked by vertical lines. Gaps in the log
are shaded and counted as missing readings (as the summary counts them).
Long records are drawn as min/max envelopes (:mod:`stability.figures.reduce`),
computed block by block from the phase (:mod:`stability.figures.series_data`),
so that drawing holds no copy of the record.
:func:`run_series_figure` draws an :class:`~stability.run.AnalysisRun`.

References
----------
.. [1] ITU-T Recommendation G.810 (1996), *Definitions and terminology for
   synchronization networks* (time error, TIE).
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime
from typing import Any

import numpy as np
from matplotlib import dates as mdates
from matplotlib.axes import Axes
from matplotlib.collections import PolyCollection
from matplotlib.lines import Line2D
from matplotlib.transforms import blended_transform_factory

from ..errors import InputError
from ..measurement import Measurement
from ..prepare import DriftFit
from ..run import AnalysisRun
from .labels import check_text, default_footer, default_title
from .reduce import envelope, gap_runs
from .series_data import drift_at, series_curves
from .style import (
    DRIFT_COLOR,
    FREQUENCY_COLOR,
    GAP_COLOR,
    GUIDE_COLOR,
    LABEL_SIZE,
    LEGEND_SIZE,
    OUTLIER_COLOR,
    PHASE_COLOR,
    TITLE_SIZE,
    Drawn,
    Frame,
    PlainScalar,
    clock_label,
    elapsed_unit,
    frame_for,
    given_axes,
    put_footer,
    style_axes,
)
from .ticks import scaled_text

__all__ = ["SeriesDrawn", "series_figure", "run_series_figure", "envelope", "gap_runs"]

Curve = tuple[np.ndarray, np.ndarray]

#: Inches: left margin, right margin, under the last panel, above the first, between panels.
_LEFT, _RIGHT, _UNDER, _OVER, _BETWEEN = 0.95, 0.25, 0.55, 0.3, 0.42


@dataclass(frozen=True)
class SeriesDrawn(Drawn):
    """What :func:`series_figure` drew (x values in axis units).

    Attributes
    ----------
    figure, axes
        The figure and its panels, top to bottom: frequency, then the time
        error (phase logs), then the phase residual (unless it is the time error).
    frequency, phase_residual
        (x, y) as drawn; the residual in units of ``phase_unit``.
    drift
        (x, y) of the drift model, or None.
    gaps
        (k, 2) spans of missing samples.
    outliers
        Positions of the removed outliers.
    decimated
        Whether the record was drawn as a min/max envelope.
    phase_unit
        (scale factor in seconds, unit name) of the residual and time error.
    x_label
        The time axis label.
    time_error
        (x, y) of the time error in ``phase_unit``, or None (frequency logs).
    frequency_offset
        The frequency offset removed from the time error, or None.
    steps
        Positions of the phase steps marked.
    missing
        Missing readings in the shaded gaps (as the summary counts them).
    """

    frequency: Curve
    phase_residual: Curve
    drift: Curve | None
    gaps: np.ndarray
    outliers: np.ndarray
    decimated: bool
    phase_unit: tuple[float, str]
    x_label: str
    time_error: Curve | None = None
    frequency_offset: float | None = None
    steps: np.ndarray | None = None
    missing: int = 0


# ---------------------------------------------------------------------- the data
def _time_axis(measurement: Measurement) -> tuple[float, float, str, bool]:
    """(origin, scale, label, is_date): axis value = origin + scale * seconds from start."""
    if measurement.start is not None:
        origin = float(mdates.date2num(measurement.start))
        return origin, 1.0 / 86400.0, clock_label(measurement.start, "time"), True
    factor, unit = elapsed_unit(measurement.span)
    return 0.0, 1.0 / factor, f"elapsed time ({unit})", False


def _phase_scale(*arrays: np.ndarray) -> tuple[float, str]:
    finite = np.concatenate([a[np.isfinite(a)] for a in arrays])
    top = float(np.max(np.abs(finite))) if finite.size else 0.0
    for factor, unit in ((1.0, "s"), (1e-3, "ms"), (1e-6, "µs"), (1e-9, "ns"), (1e-12, "ps")):
        if top >= factor:
            return factor, unit
    return 1e-15 if top > 0 else 1.0, "fs" if top > 0 else "s"


# ---------------------------------------------------------------------- validation
def _validate(
    measurement: Any,
    drift_curve: Any,
    outlier_indices: Any,
    steps: Any,
    texts: dict[str, Any],
    max_columns: Any,
) -> tuple[np.ndarray | DriftFit | None, np.ndarray, np.ndarray]:
    if not isinstance(measurement, Measurement):
        raise InputError(
            f"measurement must be a stability.Measurement, got {type(measurement).__name__}",
            hint="build one with Measurement.from_phase, Measurement.from_frequency or read_log",
        )
    check_text(**texts)
    if not isinstance(max_columns, int) or max_columns < 10:
        raise InputError(f"max_columns must be an integer of at least 10, got {max_columns!r}")
    return (
        _validate_drift(measurement, drift_curve),
        _indices(measurement, outlier_indices, "outlier_indices"),
        _indices(measurement, steps, "steps"),
    )


def _validate_drift(measurement: Measurement, drift_curve: Any) -> np.ndarray | DriftFit | None:
    if drift_curve is None:
        return None
    if isinstance(drift_curve, DriftFit):
        if drift_curve.samples != measurement.n - 1:
            raise InputError(
                "drift_curve must be fitted to one value per frequency sample "
                f"({measurement.n - 1}), got a fit to {drift_curve.samples}"
            )
        return drift_curve
    try:
        drift = np.asarray(drift_curve, dtype=float)
    except (TypeError, ValueError):
        raise InputError("drift_curve must be an array of numbers") from None
    if drift.shape != (measurement.n - 1,):
        raise InputError(
            "drift_curve must hold one value per frequency sample "
            f"({measurement.n - 1}), got shape {drift.shape}"
        )
    return drift


def _indices(measurement: Measurement, values: Any, name: str) -> np.ndarray:
    n_source = measurement.n - 1 if measurement.kind == "frequency" else measurement.n
    if name == "steps":
        n_source = measurement.n
    if values is None or np.size(values) == 0:
        return np.empty(0, dtype=np.int64)
    try:
        out = np.asarray(values).astype(np.int64, casting="safe").ravel()
    except (TypeError, ValueError):
        raise InputError(f"{name} must be whole sample indices") from None
    if out.size and (out.min() < 0 or out.max() >= n_source):
        raise InputError(
            f"{name} must lie in 0..{n_source - 1} (source samples), "
            f"got {int(out.min())}..{int(out.max())}"
        )
    return out


# ---------------------------------------------------------------------- drawing
def _shade_gaps(axes: tuple[Axes, ...], gaps: np.ndarray) -> None:
    """Grey spans over the full height of each panel where samples are missing."""
    zeros, ones = np.zeros(len(gaps)), np.ones(len(gaps))
    verts = np.stack(
        [
            np.column_stack([gaps[:, 0], zeros]),
            np.column_stack([gaps[:, 1], zeros]),
            np.column_stack([gaps[:, 1], ones]),
            np.column_stack([gaps[:, 0], ones]),
        ],
        axis=1,
    )
    for ax in axes:
        ax.add_collection(
            PolyCollection(
                verts,
                transform=blended_transform_factory(ax.transData, ax.transAxes),
                facecolors=GAP_COLOR,
                edgecolors=GAP_COLOR,
                linewidths=0.3,
                alpha=0.7,
                zorder=0,
            ),
            autolim=False,
        )


def _rug(ax: Axes, where: np.ndarray, label: str) -> None:
    """A rug of downward triangles along the top of a panel (not data: it sets no limit)."""
    ax.plot(
        where,
        np.full(where.size, 0.97),
        linestyle="none",
        marker="v",
        markersize=4,
        color=OUTLIER_COLOR,
        transform=blended_transform_factory(ax.transData, ax.transAxes),
        label=label,
        zorder=5,
    )


def _legend(ax: Axes, extra: list[tuple[Any, str]] = ()) -> None:
    """The panel's legend above its top right corner, outside the data.

    One row when it fits beside the axis's multiplier (about an inch is kept
    for it at the left), else two.
    """
    handles, labels = ax.get_legend_handles_labels()
    for handle, label in extra:
        handles.append(handle)
        labels.append(label)
    if not handles:
        return
    fig = ax.get_figure(root=True)
    for rows in (1, 2):
        legend = ax.legend(
            handles,
            labels,
            ncols=-(-len(handles) // rows),
            loc="lower right",
            bbox_to_anchor=(1.0, 1.0),
            fontsize=LEGEND_SIZE,
            frameon=False,
            borderaxespad=0.15,
            handlelength=1.6,
            columnspacing=1.2,
        )
        width = legend.get_window_extent(fig.canvas.get_renderer()).width
        if width <= ax.bbox.width - 0.9 * fig.dpi:
            return


def _panels(frame: Frame, count: int, titled: bool, footed: bool) -> list[Axes]:
    top = frame.height - (0.55 if titled else 0.1) - _OVER
    bottom = (0.3 if footed else 0.05) + _UNDER
    height = (top - bottom - (count - 1) * _BETWEEN) / count
    width = frame.width - _LEFT - _RIGHT
    axes: list[Axes] = []
    for k in range(count):
        y = top - (k + 1) * height - k * _BETWEEN
        rect = frame.rect(_LEFT, y, width, height)
        axes.append(frame.target.add_axes(rect, sharex=axes[0] if axes else None))
    _style_panels(axes)
    for ax in axes[:-1]:
        ax.tick_params(labelbottom=False)
    return axes


def _style_panels(axes: list[Axes]) -> None:
    for ax in axes:
        style_axes(ax, minor_grid=False)
        ax.yaxis.set_major_formatter(PlainScalar())


def _given_panels(axes: Any, count: int, into: Any) -> tuple[Frame, list[Axes]]:
    """The caller's axes for the first panels (time shared), and the frame holding them."""
    given = list(
        given_axes(axes, count, "panels (frequency, then time error or phase)", into, fewer=True)
    )
    for ax in given[1:]:
        if not ax.get_shared_x_axes().joined(ax, given[0]):
            ax.sharex(given[0])
    _style_panels(given)
    target = given[0].get_figure(root=False)
    root = target.get_figure(root=True)
    width, height = (target.bbox.width / root.dpi, target.bbox.height / root.dpi)
    return Frame(target, width, height, False), given


def series_figure(
    measurement: Measurement,
    *,
    drift_curve: Any = None,
    drift_removed: bool = False,
    drift_label: str | None = None,
    outlier_indices: Any = None,
    steps: Any = None,
    frequency_offset: float | None = None,
    title: str | None = None,
    footer: str | None = None,
    analysis_time: datetime | None = None,
    max_columns: int = 2000,
    into: Any = None,
    axes: Any = None,
) -> SeriesDrawn:
    """The record over time as analysed: frequency, time error (phase logs), phase residual.

    Parameters
    ----------
    measurement
        The data as analysed (removed outliers are missing samples).
    drift_curve
        The drift model, one fractional-frequency value per frequency sample
        (``measurement.n - 1`` values), drawn over the frequency; or the fit
        itself (a :class:`~stability.prepare.DriftFit` of the record), evaluated
        where it is drawn, as its ``y_model``, without a copy of the record.
    drift_removed
        Whether ``measurement`` had that drift removed: the frequency panel
        then shows the data with the drift put back under its curve, and the
        residual panel the data without it.
    drift_label
        Legend wording of the drift curve (default "drift removed" or
        "linear drift estimate").
    outlier_indices
        Indices of removed outliers among the source samples (frequency
        samples for frequency input, phase samples for phase input), marked
        along the top of the frequency panel.
    steps
        Phase samples just after each phase step, marked on the phase panels.
    frequency_offset
        The frequency offset to remove from the time error of a phase log
        (default: the least-squares offset of the record).
    title, footer
        Figure title (default: the log's file name and column) and footer text
        (default: input SHA-256 prefix, tool version, analysis date); none by
        default when drawn ``into`` a page, and none when empty.
    analysis_time
        Date for the default footer (default: now).
    max_columns
        Longer records are drawn as a min/max envelope over this many buckets.
    into
        A ``Figure`` or ``SubFigure`` (a region of a page) to draw into.
    axes
        An ``Axes`` or a list of them to draw the first panels into (the
        frequency first), for a figure the caller lays out; no title or
        footer unless given.

    Returns
    -------
    SeriesDrawn
        The figure, its panels and the data as drawn.
    """
    texts = {"title": title, "footer": footer, "drift_label": drift_label}
    if frequency_offset is not None and not isinstance(frequency_offset, (int, float)):
        raise InputError(
            f"frequency_offset must be a number or None, got {type(frequency_offset).__name__}"
        )
    drift, outliers, step_at = _validate(
        measurement, drift_curve, outlier_indices, steps, texts, max_columns
    )
    tau0 = measurement.tau0
    decimate = measurement.n - 1 > 4 * max_columns
    data = series_curves(
        measurement,
        drift=drift,
        drift_removed=drift_removed,
        frequency_offset=frequency_offset,
        outliers=outliers,
        columns=max_columns,
        decimate=decimate,
    )
    timed = measurement.kind == "phase"
    offset = data.offset
    shown = [c for c in (data.time_error, data.residual) if c is not None]
    p_factor, p_unit = _phase_scale(*(values for _, values in shown))
    origin, scale, x_label, is_date = _time_axis(measurement)

    def axis(index: np.ndarray) -> np.ndarray:
        return origin + scale * tau0 * np.asarray(index, dtype=float)

    given: list[Axes] | None = None
    if axes is not None:
        frame, given = _given_panels(axes, 1 + len(shown), into)
    else:
        frame = frame_for(into, 10.0, 2.0 + 2.1 * (1 + len(shown)))
    if title is None and frame.own:
        title = default_title(measurement, "data over time")
    if footer is None and frame.own:
        footer = default_footer(measurement, analysis_time=analysis_time)
    axes = given if given is not None else _panels(frame, 1 + len(shown), bool(title), bool(footer))
    y_idx, y_val = data.frequency
    frequency = (axis(y_idx), y_val)
    axes[0].plot(*frequency, color=FREQUENCY_COLOR, linewidth=0.6, label="fractional frequency")
    axes[0].set_ylabel("fractional frequency", fontsize=LABEL_SIZE)
    drift_drawn = None
    if drift is not None:
        size = measurement.n - 1
        if decimate:  # 2 points per column of a long record, every sample of a short one
            d_idx = np.unique(np.linspace(0, size - 1, 2 * max_columns).round()).astype(int)
        else:
            d_idx = np.arange(size)
        drift_drawn = (axis(d_idx), drift_at(drift, d_idx))
        wording = drift_label or ("drift removed" if drift_removed else "linear drift estimate")
        axes[0].plot(*drift_drawn, color=DRIFT_COLOR, linewidth=1.2, label=wording)
    curves: dict[str, Curve] = {}
    for ax, (name, (idx, val)) in zip(
        axes[1:],
        [("tie", data.time_error), ("residual", data.residual)][0 if timed else 1 :],
        strict=False,
    ):
        curves[name] = (axis(idx), val / p_factor)
        if name == "tie":
            label = f"TIE, frequency offset {scaled_text_signed(offset)} removed"
            ax.set_ylabel(f"time error ({p_unit})", fontsize=LABEL_SIZE)
        else:
            label = "phase residual" + (" after the drift model" if drift_removed else "")
            ax.set_ylabel(f"phase residual ({p_unit})", fontsize=LABEL_SIZE)
        ax.plot(*curves[name], color=PHASE_COLOR, linewidth=0.6, label=label)
    missing = data.missing
    gaps = np.column_stack([axis(data.gaps[:, 0]), axis(data.gaps[:, 1])])
    if len(gaps):
        _shade_gaps(tuple(axes), gaps)
    out_x = axis(outliers)
    if outliers.size:
        _rug(axes[0], out_x, f"outliers removed ({outliers.size})")
    step_x = axis(step_at)
    for ax in axes[1:]:
        for x in step_x:
            ax.axvline(x, color=GUIDE_COLOR, linewidth=0.9, linestyle="--", zorder=1)
    gap_entry = [(Line2D([], [], color=GAP_COLOR, linewidth=6, alpha=0.7),
                  f"gaps ({missing} missing readings)")] if missing else []  # fmt: skip
    _legend(axes[0], gap_entry)
    for ax in axes[1:]:
        step_entry = [(Line2D([], [], color=GUIDE_COLOR, linestyle="--"),
                       f"phase steps ({step_x.size})")] if step_x.size else []  # fmt: skip
        _legend(ax, step_entry)
    axes[-1].set_xlabel(x_label, fontsize=LABEL_SIZE)
    if is_date:
        locator = mdates.AutoDateLocator()
        axes[-1].xaxis.set_major_locator(locator)
        axes[-1].xaxis.set_major_formatter(mdates.ConciseDateFormatter(locator))
    x_end = axis(np.array([0.0, float(measurement.n - 1)]))
    axes[-1].set_xlim(x_end[0], x_end[1] if x_end[1] > x_end[0] else x_end[0] + scale * tau0)
    if title:
        frame.target.suptitle(title, fontsize=TITLE_SIZE)
    if footer:
        put_footer(frame.target, footer)
    residual_curve = curves.get("residual", curves.get("tie"))
    return SeriesDrawn(
        frame.figure,
        tuple(axes),
        frequency=frequency,
        phase_residual=residual_curve,
        drift=drift_drawn,
        gaps=gaps,
        outliers=out_x,
        decimated=decimate,
        phase_unit=(p_factor, p_unit),
        x_label=x_label,
        time_error=curves.get("tie"),
        frequency_offset=offset,
        steps=step_x,
        missing=missing,
    )


def scaled_text_signed(value: float | None) -> str:
    """A signed number in plain powers of ten: -2.8×10⁻¹², 0."""
    if value is None or value == 0.0 or not np.isfinite(value):
        return "0"
    text = scaled_text(float(f"{abs(value):.3g}"))
    return ("\u2212" if value < 0 else "") + text


def run_series_figure(run: AnalysisRun, **options: Any) -> SeriesDrawn:
    """The series figure of an analysis run: the data as the statistics saw them.

    The drift curve is the model removed (named with its model) or, when none
    was, the linear estimate; outliers and phase steps are those the
    preparation found; the footer is dated with the run's analysis time.
    ``options`` are those of :func:`series_figure`.
    """
    if not isinstance(run, AnalysisRun):
        raise InputError(f"run must be a stability.AnalysisRun, got {type(run).__name__}")
    options.setdefault("analysis_time", run.analysis_time)
    prep = run.preparation
    removed = prep.removed_drift
    fit = removed if removed is not None else prep.linear_drift
    drift = fit if fit is not None and fit.samples == run.measurement.n - 1 else None
    label = f"drift removed ({removed.model} model)" if removed is not None else None
    stated = run.table.extras.get("offset_drift")
    offset = getattr(stated, "offset", None)
    return series_figure(
        run.measurement,
        drift_curve=drift,
        drift_removed=removed is not None,
        drift_label=label,
        outlier_indices=[o.index for o in prep.outliers.samples],
        steps=[s.index for s in prep.steps if 0 <= s.index < run.measurement.n],
        frequency_offset=offset,
        **options,
    )
