"""The record over time: fractional frequency and phase residual, gaps and outliers.

:func:`series_figure` draws fractional frequency with an optional drift model,
and the phase residual (the phase with its own least-squares line removed) in
two panels sharing the time axis; gaps are shaded and removed outliers marked.
Records longer than a few thousand samples are drawn through the minimum and
maximum of each pixel column, in time order (:func:`envelope`), so that every
excursion stays visible while the figure stays light [1]_.

References
----------
.. [1] S. Steinarsson, *Downsampling Time Series for Visual Representation*,
   MSc thesis, University of Iceland (2013), section 3 (min-max per bucket).
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Callable
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
from .labels import check_text, default_footer, default_title
from .style import (
    DRIFT_COLOR,
    FREQUENCY_COLOR,
    GAP_COLOR,
    LABEL_SIZE,
    LEGEND_SIZE,
    OUTLIER_COLOR,
    PHASE_COLOR,
    TITLE_SIZE,
    Drawn,
    PlainScalar,
    clock_label,
    elapsed_unit,
    new_figure,
    put_footer,
    style_axes,
)

__all__ = ["SeriesDrawn", "series_figure", "envelope", "gap_runs"]

Curve = tuple[np.ndarray, np.ndarray]


@dataclass(frozen=True)
class SeriesDrawn(Drawn):
    """What :func:`series_figure` drew (x values in axis units).

    Attributes
    ----------
    figure, axes
        The figure and its two panels (frequency above, phase residual below).
    frequency, phase_residual
        (x, y) as drawn; the residual in units of ``phase_unit``.
    drift
        (x, y) of the drift model, or None.
    gaps
        (k, 2) spans of missing frequency samples.
    outliers
        Positions of the removed outliers.
    decimated
        Whether the record was drawn as a min/max envelope.
    phase_unit
        (scale factor in seconds, unit name) of the residual.
    x_label
        The time axis label.
    """

    frequency: Curve
    phase_residual: Curve
    drift: Curve | None
    gaps: np.ndarray
    outliers: np.ndarray
    decimated: bool
    phase_unit: tuple[float, str]
    x_label: str


# ---------------------------------------------------------------------- data reduction
def envelope(values: np.ndarray, columns: int) -> tuple[np.ndarray, np.ndarray]:
    """Indices and values of a min/max decimation of ``values`` into ``columns`` buckets.

    Each bucket of consecutive samples contributes its minimum and its maximum,
    in the order they occur, followed by a NaN break when the bucket or the
    next one holds a missing sample, so the drawn line never bridges a gap.
    The result is a subsequence of the data (plus NaN breaks): every drawn
    point is a real sample, and every bucket's full range is drawn [1]_.

    Returns
    -------
    index, value
        Float sample indices (NaN at breaks) and values, ready for plotting.
    """
    values = np.asarray(values, dtype=float)
    n = values.size
    columns = max(1, int(columns))
    block = max(1, math.ceil(n / columns))
    n_blocks = math.ceil(n / block)
    padded = np.full(n_blocks * block, np.nan)
    padded[:n] = values
    blocks = padded.reshape(n_blocks, block)
    missing = np.isnan(blocks)
    any_missing = missing.any(axis=1)
    any_missing[-1] = np.isnan(values[(n_blocks - 1) * block :]).any()
    all_missing = missing.all(axis=1)
    i_min = np.argmin(np.where(missing, np.inf, blocks), axis=1)
    i_max = np.argmax(np.where(missing, -np.inf, blocks), axis=1)
    rows = np.arange(n_blocks)
    first = np.minimum(i_min, i_max)
    second = np.maximum(i_min, i_max)
    base = rows * block
    idx = np.empty((n_blocks, 3))
    val = np.empty((n_blocks, 3))
    idx[:, 0] = base + first
    idx[:, 1] = base + second
    val[:, 0] = blocks[rows, first]
    val[:, 1] = blocks[rows, second]
    brk = any_missing | np.concatenate([any_missing[1:], [False]])
    idx[:, 2] = np.where(brk, np.nan, idx[:, 1])
    val[:, 2] = np.where(brk, np.nan, val[:, 1])
    val[all_missing, :2] = np.nan
    return idx.ravel(), val.ravel()


def gap_runs(mask: np.ndarray, max_runs: int) -> np.ndarray:
    """(k, 2) array of [start, stop) sample ranges where ``mask`` is true.

    More than ``max_runs`` runs are merged per bucket of samples, so that a
    record with many short gaps is shaded with at most about that many spans.
    """
    if not mask.any():
        return np.empty((0, 2), dtype=np.int64)
    runs = _runs(mask)
    if len(runs) > max_runs:
        block = math.ceil(mask.size / max_runs)
        n_blocks = math.ceil(mask.size / block)
        padded = np.zeros(n_blocks * block, dtype=bool)
        padded[: mask.size] = mask
        runs = np.minimum(_runs(padded.reshape(n_blocks, block).any(axis=1)) * block, mask.size)
    return runs


def _runs(mask: np.ndarray) -> np.ndarray:
    edges = np.diff(np.concatenate([[0], mask.astype(np.int8), [0]]))
    return np.column_stack([np.flatnonzero(edges == 1), np.flatnonzero(edges == -1)])


def _time_axis(measurement: Measurement) -> tuple[float, float, str, bool]:
    """(origin, scale, label, is_date): axis value = origin + scale * seconds from start."""
    if measurement.start is not None:
        origin = float(mdates.date2num(measurement.start))
        return origin, 1.0 / 86400.0, clock_label(measurement.start, "time"), True
    factor, unit = elapsed_unit(measurement.span)
    return 0.0, 1.0 / factor, f"elapsed time ({unit})", False


def _phase_scale(values: np.ndarray) -> tuple[float, str]:
    finite = values[np.isfinite(values)]
    top = float(np.max(np.abs(finite))) if finite.size else 0.0
    for factor, unit in ((1.0, "s"), (1e-3, "ms"), (1e-6, "µs"), (1e-9, "ns"), (1e-12, "ps")):
        if top >= factor:
            return factor, unit
    return 1e-15 if top > 0 else 1.0, "fs" if top > 0 else "s"


def _phase_residual(phase: np.ndarray) -> np.ndarray:
    """Phase minus its own least-squares line (the linear frequency offset removed)."""
    k = np.arange(phase.size, dtype=float)
    good = np.isfinite(phase)
    count = int(np.count_nonzero(good))
    if count < 2:
        return phase - np.nanmean(phase)
    kk, xx = (k, phase) if count == phase.size else (k[good], phase[good])
    km = kk.mean()
    xm = xx.mean()
    dk = kk - km
    # einsum, not np.dot: 1-D dot goes to a threaded BLAS (see deviations._kernels.dot)
    slope = float(np.einsum("i,i->", dk, xx - xm) / np.einsum("i,i->", dk, dk))
    return phase - (xm + slope * (k - km))


# ---------------------------------------------------------------------- validation
def _validate(
    measurement: Any,
    drift_curve: Any,
    outlier_indices: Any,
    title: Any,
    footer: Any,
    max_columns: Any,
) -> tuple[np.ndarray | None, np.ndarray]:
    if not isinstance(measurement, Measurement):
        raise InputError(
            f"measurement must be a stability.Measurement, got {type(measurement).__name__}",
            hint="build one with Measurement.from_phase, Measurement.from_frequency or read_log",
        )
    check_text(title=title, footer=footer)
    if not isinstance(max_columns, int) or max_columns < 10:
        raise InputError(f"max_columns must be an integer of at least 10, got {max_columns!r}")
    return _validate_drift(measurement, drift_curve), _validate_outliers(
        measurement, outlier_indices
    )


def _validate_drift(measurement: Measurement, drift_curve: Any) -> np.ndarray | None:
    if drift_curve is None:
        return None
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


def _validate_outliers(measurement: Measurement, outlier_indices: Any) -> np.ndarray:
    n_source = measurement.n - 1 if measurement.kind == "frequency" else measurement.n
    if outlier_indices is None:
        return np.empty(0, dtype=np.int64)
    try:
        outliers = np.asarray(outlier_indices).astype(np.int64, casting="safe").ravel()
    except (TypeError, ValueError):
        raise InputError("outlier_indices must be whole sample indices") from None
    if outliers.size and (outliers.min() < 0 or outliers.max() >= n_source):
        raise InputError(
            f"outlier_indices must lie in 0..{n_source - 1} (source samples), "
            f"got {int(outliers.min())}..{int(outliers.max())}"
        )
    return outliers


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


def _mark_outliers(ax: Axes, out_x: np.ndarray) -> None:
    """A rug of downward triangles along the top of the panel of the source quantity."""
    ax.plot(
        out_x,
        np.full(out_x.size, 0.97),
        linestyle="none",
        marker="v",
        markersize=4,
        color=OUTLIER_COLOR,
        transform=blended_transform_factory(ax.transData, ax.transAxes),
        label=f"removed outliers ({out_x.size})",
        zorder=5,
    )


def _legends(ax_y: Axes, ax_p: Axes, gap_count: int, phase_outliers: bool) -> None:
    legend = {"fontsize": LEGEND_SIZE, "frameon": False, "loc": "lower right"}
    handles, labels = ax_y.get_legend_handles_labels()
    if gap_count:
        handles.append(Line2D([], [], color=GAP_COLOR, linewidth=6, alpha=0.7))
        labels.append(f"gaps ({gap_count} samples)")
    if len(handles) > 1:
        ax_y.legend(handles, labels, ncols=len(handles), bbox_to_anchor=(1, 1), **legend)
    if phase_outliers:
        ax_p.legend(bbox_to_anchor=(1, 1), **legend)


def _label_axes(
    ax_y: Axes,
    ax_p: Axes,
    p_unit: str,
    time_axis: tuple[str, bool],
    x_range: tuple[float, float],
) -> None:
    """Axis labels, clock-time ticks when the record has time stamps, the time range."""
    x_label, is_date = time_axis
    ax_y.set_ylabel("fractional frequency", fontsize=LABEL_SIZE)
    ax_p.set_ylabel(f"phase residual ({p_unit})", fontsize=LABEL_SIZE)
    ax_p.set_xlabel(x_label, fontsize=LABEL_SIZE)
    if is_date:
        locator = mdates.AutoDateLocator()
        ax_p.xaxis.set_major_locator(locator)
        ax_p.xaxis.set_major_formatter(mdates.ConciseDateFormatter(locator))
    ax_p.set_xlim(*x_range)


def _reduced(y: np.ndarray, residual: np.ndarray, max_columns: int) -> tuple[bool, Curve, Curve]:
    """(decimated, (index, frequency), (index, residual)) to draw."""
    decimate = max(y.size, residual.size) > 4 * max_columns
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        if decimate:
            return True, envelope(y, max_columns), envelope(residual, max_columns)
    plain_y = (np.arange(y.size, dtype=float), y)
    return False, plain_y, (np.arange(residual.size, dtype=float), residual)


def _drift_drawn(
    drift: np.ndarray | None, decimate: bool, max_columns: int, axis: Callable
) -> Curve | None:
    if drift is None:
        return None
    if decimate:
        d_idx = np.unique(np.linspace(0, drift.size - 1, 2 * max_columns).round()).astype(int)
    else:
        d_idx = np.arange(drift.size)
    return axis(d_idx.astype(float)), drift[d_idx]


def series_figure(
    measurement: Measurement,
    *,
    drift_curve: Any = None,
    outlier_indices: Any = None,
    title: str | None = None,
    footer: str | None = None,
    analysis_time: datetime | None = None,
    max_columns: int = 2000,
) -> SeriesDrawn:
    """The record over time: fractional frequency and phase residual, gaps and outliers.

    Parameters
    ----------
    measurement
        The data.
    drift_curve
        The drift model, one fractional-frequency value per frequency sample
        (``measurement.n - 1`` values), drawn over the frequency.
    outlier_indices
        Indices of removed outliers among the source samples (frequency
        samples for frequency input, phase samples for phase input), marked
        along the top of the panel of that quantity.
    title, footer
        Figure title (default: the log's file name) and footer text (default:
        input SHA-256 prefix, tool version, analysis date).
    analysis_time
        Date for the default footer (default: now).
    max_columns
        Longer records are drawn as a min/max envelope over this many buckets
        (:func:`envelope`).

    Returns
    -------
    SeriesDrawn
        The figure, its two panels and the data as drawn.
    """
    drift, outliers = _validate(
        measurement, drift_curve, outlier_indices, title, footer, max_columns
    )
    y = measurement.frequency()
    residual = _phase_residual(np.asarray(measurement.phase, dtype=float))
    p_factor, p_unit = _phase_scale(residual)
    origin, scale, x_label, is_date = _time_axis(measurement)
    tau0 = measurement.tau0

    def axis(index: np.ndarray) -> np.ndarray:
        return origin + scale * tau0 * index

    decimate, (y_idx, y_val), (p_idx, p_val) = _reduced(y, residual, max_columns)
    frequency, phase = (axis(y_idx), y_val), (axis(p_idx), p_val / p_factor)
    fig = new_figure(10.0, 6.0, layout="fixed")
    ax_y, ax_p = fig.subplots(2, 1, sharex=True)
    for ax in (ax_y, ax_p):
        style_axes(ax, minor_grid=False)
        ax.yaxis.set_major_formatter(PlainScalar())
    ax_y.plot(*frequency, color=FREQUENCY_COLOR, linewidth=0.6, label="fractional frequency")
    ax_p.plot(*phase, color=PHASE_COLOR, linewidth=0.6, label="phase residual")
    drift_drawn = _drift_drawn(drift, decimate, max_columns, axis)
    if drift_drawn is not None:
        ax_y.plot(*drift_drawn, color=DRIFT_COLOR, linewidth=1.2, label="drift model")
    gap_mask = ~np.isfinite(y)
    runs = gap_runs(gap_mask, max_columns)
    gaps = np.column_stack([axis(runs[:, 0].astype(float)), axis(runs[:, 1].astype(float))])
    if len(gaps):
        _shade_gaps((ax_y, ax_p), gaps)
    out_x = axis(outliers.astype(float))
    if outliers.size:
        _mark_outliers(ax_y if measurement.kind == "frequency" else ax_p, out_x)
    x_end = axis(np.array([0.0, float(measurement.n - 1)]))
    x_range = (x_end[0], x_end[1] if x_end[1] > x_end[0] else x_end[0] + scale * tau0)
    _label_axes(ax_y, ax_p, p_unit, (x_label, is_date), x_range)
    gap_count = int(gap_mask.sum()) if len(gaps) else 0
    _legends(ax_y, ax_p, gap_count, bool(outliers.size) and measurement.kind != "frequency")
    fig.suptitle(title or default_title(measurement, "data over time"), fontsize=TITLE_SIZE)
    if footer is None:
        footer = default_footer(measurement, analysis_time=analysis_time)
    put_footer(fig, footer)
    return SeriesDrawn(
        fig,
        (ax_y, ax_p),
        frequency=frequency,
        phase_residual=phase,
        drift=drift_drawn,
        gaps=gaps,
        outliers=out_x,
        decimated=decimate,
        phase_unit=(p_factor, p_unit),
        x_label=x_label,
    )
