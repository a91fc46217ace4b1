"""The canonical measurement: phase in seconds on a uniform grid, plus provenance.

Inside ``stability`` every log becomes a :class:`Measurement`: the phase (time
error) ``x`` in seconds, float64, uniformly spaced by ``tau0`` seconds, with NaN
marking a missing phase sample; and the metadata needed to say where it came
from and what was done to it.

Fractional frequency ``y`` enters through ``x = tau0 * cumsum(y)`` (NIST SP 1065,
section 5.2.1). A missing ``y`` leaves the phase after it unknown by a constant,
so the phase after a frequency gap starts a new *segment*: ``segments[i]`` counts
the frequency gaps before phase sample ``i``. A term of any estimator is used
only when every phase sample it touches is finite and all of them lie in one
segment; terms inside one unbroken stretch are kept (NIST SP 1065, section 5.14:
drop every term that touches a gap and normalise by the terms used).

Numerical care: a large mean frequency offset makes the integrated phase a steep
ramp whose rounding error swamps picosecond changes. ``from_frequency`` removes
the mean fractional frequency before integrating and keeps it in
``frequency_offset``; the Allan family is blind to it, and
:meth:`Measurement.phase_with_offset` adds it back for time-error statistics
(MTIE, TIE), which are not.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Iterator
from dataclasses import InitVar, dataclass, field
from datetime import datetime
from typing import Any

import numpy as np

from .display import Displayable
from .display import plot as _plot
from .errors import InputError

__all__ = ["Measurement", "Provenance", "Auxiliary", "TAU0_RANGE", "index_dtype"]

_INT32_MAX = int(np.iinfo(np.int32).max)


def index_dtype(largest: int) -> type[np.signedinteger]:
    """The integer type for line numbers and segment counts up to ``largest``.

    int32 while they fit (every log below about two billion lines), else
    int64: the two index arrays a long record carries then cost 4 bytes a
    sample instead of 8 (a 10^8-row log: 0.8 GB less).
    """
    return np.int32 if int(largest) <= _INT32_MAX else np.int64


def _index_array(values: Any, owned: bool) -> np.ndarray:
    """``values`` as a read-only int32 (or, beyond int32, int64) array.

    ``owned`` says the array may be kept as it is when it already has the
    type (the caller keeps no other reference); otherwise it is copied.
    """
    arr = np.asarray(values)
    if arr.dtype.kind not in "iu":
        arr = arr.astype(np.int64)
        owned = True
    if arr.size and (int(arr.min()) < -_INT32_MAX or int(arr.max()) > _INT32_MAX):
        wanted: type[np.signedinteger] = np.int64
    else:
        wanted = np.int32
    if arr.dtype != wanted:
        arr = arr.astype(wanted)
    elif not owned:
        arr = arr.copy()
    arr.flags.writeable = False
    return arr


@dataclass(frozen=True)
class Provenance:
    """Where a measurement came from.

    Attributes
    ----------
    path
        The input file as given, or None for data made in memory.
    sha256
        Hex SHA-256 of the input file's bytes.
    rows
        Data rows read from the file.
    reader
        A short description of what was detected (format, dialect).
    details
        Anything else the reader reports (dialect, columns, units ...).
    """

    path: str | None = None
    sha256: str | None = None
    rows: int | None = None
    reader: str | None = None
    details: dict[str, Any] = field(default_factory=dict)

    def to_dict(self) -> dict[str, Any]:
        return dataclasses.asdict(self)


@dataclass(frozen=True)
class Auxiliary:
    """An auxiliary series read beside the values (temperature, pressure, ...).

    ``values`` has one entry per source value of the measurement (frequency
    readings for frequency input, phase samples for phase input), NaN where the
    log has none; ``unit`` is as read (``K``, ``degC``, ``Pa``, ``%``, ``V``).
    """

    values: np.ndarray
    unit: str = ""
    column: str | None = None


def _as_float_array(values: Any, name: str) -> np.ndarray:
    try:
        arr = np.asarray(values, dtype=np.float64)
    except (TypeError, ValueError) as exc:
        raise InputError(f"{name} must be numbers: {exc}") from None
    if arr.ndim != 1:
        raise InputError(f"{name} must be one-dimensional, got shape {arr.shape}")
    if arr.size == 0:
        raise InputError(f"{name} is empty: at least 2 samples are needed")
    if np.isinf(arr).any():
        where = int(np.flatnonzero(np.isinf(arr))[0])
        raise InputError(
            f"{name} holds an infinite value at index {where}",
            hint="mark missing samples with NaN",
        )
    return arr


#: The sample intervals the estimators can compute with, seconds: they square tau
#: and divide by it, so tau0 squared must stay a normal float64 (about 1e-308 to 1e308)
#: with room for averaging factors up to 1e9.
TAU0_RANGE = (1e-30, 1e30)


#: Samples a block of :func:`_finite_mean` sums at once.
_MEAN_BLOCK = 1 << 16


def _finite_mean(values: np.ndarray, good: np.ndarray) -> float:
    """Mean of ``values[good]``, summed a block at a time.

    ``np.mean(values[good])`` would copy the finite values (8 bytes a sample);
    the sums of blocks of 65 536 differ from it in the last bits only.
    """
    total = 0.0
    for lo in range(0, values.size, _MEAN_BLOCK):
        part, keep = values[lo : lo + _MEAN_BLOCK], good[lo : lo + _MEAN_BLOCK]
        total += float(np.sum(part, where=keep))
    return total / int(np.count_nonzero(good))


def _phase_buffer(y: np.ndarray) -> np.ndarray | None:
    """The writeable float64 array whose ``[1:]`` view is ``y``, or None."""
    base = y.base
    if not isinstance(base, np.ndarray) or base.shape != (y.size + 1,):
        return None
    if base.dtype != np.float64 or not (base.flags.writeable and base.flags.c_contiguous):
        return None
    start = base.__array_interface__["data"][0] + base.itemsize
    return base if y.flags.c_contiguous and y.__array_interface__["data"][0] == start else None


def _check_tau0(tau0: Any) -> float:
    try:
        value = float(tau0)
    except (TypeError, ValueError, OverflowError):
        raise InputError(f"tau0 must be a positive number of seconds, got {tau0!r}") from None
    if not math.isfinite(value) or value <= 0:
        raise InputError(f"tau0 must be a positive, finite number of seconds, got {tau0!r}")
    low, high = TAU0_RANGE
    if not low <= value <= high:
        raise InputError(
            f"tau0 {value:g} s is beyond the sample intervals that can be computed with "
            f"({low:g} s to {high:g} s)",
            hint="check the number and its unit, e.g. 1s or 100ms",
        )
    return value


_META = ("nominal", "start", "lines", "provenance", "notes", "auxiliary", "adopt")


def _check_meta(meta: dict[str, Any]) -> None:
    unknown = sorted(set(meta) - set(_META))
    if unknown:
        raise InputError(
            f"unknown measurement attribute(s) {', '.join(unknown)}",
            hint=f"the constructors take {', '.join(_META)}",
        )


@dataclass(eq=False)
class Measurement(Displayable):
    """Phase data in seconds on a uniform grid, with provenance.

    Build one with :meth:`from_phase` or :meth:`from_frequency` rather than
    the constructor, which takes the canonical arrays as they are.

    Attributes
    ----------
    phase
        Time error x in seconds (float64, read-only), NaN where a sample is
        missing. The first finite sample is zero.
    tau0
        Sample interval in seconds.
    segments
        None when the phase is one unbroken record; otherwise an integer array
        of the same length counting the frequency gaps before each sample
        (int32, or int64 beyond its range: see :func:`index_dtype`).
    frequency_offset
        Mean fractional frequency removed from ``phase`` for numerical care
        (0 for phase input); see :meth:`phase_with_offset`.
    nominal
        Nominal frequency in Hz, when known.
    start
        Time of the first sample, when the log has time stamps.
    kind
        What the source values were: ``"phase"`` or ``"frequency"``.
    lines
        Optional source line number of each source value (phase samples for
        phase input, frequency samples for frequency input); 0 where a sample
        was inserted for a gap. An integer array: int32, or int64 beyond its
        range (see :func:`index_dtype`).
    provenance
        Where the data came from.
    notes
        What reading and preparation did, in plain sentences.
    origin
        The time error subtracted to make the first finite sample zero, in
        seconds (phase input; 0 for frequency input, whose absolute time error
        is unknown): the absolute time error is ``phase + origin``.
    auxiliary
        Optional auxiliary series by quantity name (``temperature`` ...).

    The constructor copies the arrays it is given; ``adopt=True`` hands them
    over instead (phase, segments and lines are then made read-only and, for the
    phase, shifted in place): for a reader that built them for this measurement
    alone and keeps no other reference, so that a long record is not held twice.
    """

    phase: np.ndarray
    tau0: float
    segments: np.ndarray | None = None
    frequency_offset: float = 0.0
    nominal: float | None = None
    start: datetime | None = None
    kind: str = "phase"
    lines: np.ndarray | None = None
    provenance: Provenance = field(default_factory=Provenance)
    notes: list[str] = field(default_factory=list)
    origin: float = 0.0
    auxiliary: dict[str, Auxiliary] | None = None
    adopt: InitVar[bool] = False

    def __post_init__(self, adopt: bool) -> None:
        phase = _as_float_array(self.phase, "phase")
        adopt = bool(adopt) and phase is self.phase
        self.tau0 = _check_tau0(self.tau0)
        if self.kind not in ("phase", "frequency"):
            raise InputError(f"kind must be 'phase' or 'frequency', got {self.kind!r}")
        if self.segments is not None:
            seg = np.asarray(self.segments)
            if seg.shape != phase.shape:
                raise InputError("segments must have the same length as phase")
            if seg.size and (seg[1:] < seg[:-1]).any():
                raise InputError("segments must never decrease")
            if seg.size and seg[0] == seg[-1]:
                self.segments = None
            else:
                self.segments = _index_array(seg, adopt and seg is self.segments)
        if not math.isfinite(float(self.frequency_offset)):
            raise InputError("frequency_offset must be finite")
        self.frequency_offset = float(self.frequency_offset)
        if self.nominal is not None:
            nominal = float(self.nominal)
            if not math.isfinite(nominal) or nominal <= 0:
                raise InputError(f"nominal frequency must be positive, got {self.nominal!r}")
            self.nominal = nominal
        finite = np.isfinite(phase)
        if not finite.any():
            raise InputError("phase holds no finite sample: every value is missing")
        first = phase[np.argmax(finite)]
        del finite
        self.origin = float(self.origin) + float(first)
        if not math.isfinite(self.origin):
            raise InputError("origin must be finite")
        if not adopt or (first != 0.0 and not phase.flags.writeable):
            phase = phase - first
        elif first != 0.0:
            phase -= first
        phase.flags.writeable = False
        self.phase = phase
        if self.lines is not None:
            lines = np.asarray(self.lines)
            self.lines = _index_array(lines, adopt and lines is self.lines)

    # ------------------------------------------------------------------ constructors
    @classmethod
    def from_phase(cls, x: Any, tau0: Any, **meta: Any) -> Measurement:
        """Measurement from phase (time error) samples in seconds.

        NaN marks a missing sample; the first finite sample is subtracted.
        ``meta`` sets the other attributes (nominal, start, provenance, notes,
        lines); ``adopt=True`` hands ``x`` and ``lines`` over instead of copying them.
        """
        _check_meta(meta)
        arr = _as_float_array(x, "phase")
        if arr.size < 2:
            raise InputError("phase needs at least 2 samples")
        return cls(phase=arr, tau0=tau0, kind="phase", **meta)

    @classmethod
    def from_frequency(cls, y: Any, tau0: Any, **meta: Any) -> Measurement:
        """Measurement from fractional-frequency samples (dimensionless).

        Phase is the running sum ``x[k+1] = x[k] + tau0 * (y[k] - mean(y))``;
        the mean goes to ``frequency_offset``. A NaN in ``y`` starts a new
        segment: the terms spanning it are dropped, those on either side kept.
        ``y`` is not changed, unless handed over: ``adopt=True`` hands ``lines``
        over instead of copying it, and when ``y`` is the view ``buffer[1:]`` of
        a float64 array one longer, the phase is built in ``buffer`` itself (a
        record is then never held twice while it becomes phase; ``y`` is gone).
        """
        _check_meta(meta)
        arr = _as_float_array(y, "frequency")
        tau0 = _check_tau0(tau0)
        adopt = meta.pop("adopt", False)
        if not adopt and meta.get("lines") is not None:
            meta["lines"] = np.array(meta["lines"])  # the caller's stays theirs
        good = np.isfinite(arr)
        if not good.any():
            raise InputError("frequency holds no finite sample: every value is missing")
        whole = bool(good.all())
        offset = float(np.mean(arr)) if whole else _finite_mean(arr, good)
        # x[1:] = cumsum(where(good, y - offset, 0) * tau0), built in place
        x = _phase_buffer(arr) if adopt else None
        x = np.empty(arr.size + 1) if x is None else x
        x[0] = 0.0
        steps = np.subtract(arr, offset, out=x[1:])
        if not whole:
            steps[~good] = 0.0
        steps *= tau0
        np.cumsum(steps, out=steps)
        segments = None
        if not whole:
            segments = np.zeros(arr.size + 1, dtype=index_dtype(arr.size))
            np.cumsum(~good, out=segments[1:])
        del good
        return cls(
            phase=x,
            tau0=tau0,
            segments=segments,
            frequency_offset=offset,
            kind="frequency",
            adopt=True,  # x, segments and the lines (copied above unless handed over) are ours
            **meta,
        )

    # ------------------------------------------------------------------ views
    @property
    def n(self) -> int:
        """Number of phase samples (gaps included)."""
        return int(self.phase.size)

    @property
    def span(self) -> float:
        """Record length in seconds, (n - 1) * tau0."""
        return (self.n - 1) * self.tau0

    @property
    def has_gaps(self) -> bool:
        """True when any term of an estimator may have to be dropped."""
        return self.segments is not None or bool(np.isnan(self.phase).any())

    def frequency(
        self,
        start: int = 0,
        stop: int | None = None,
        *,
        centred: bool = False,
        out: np.ndarray | None = None,
    ) -> np.ndarray:
        """Fractional frequency y[k] = (x[k+1] - x[k]) / tau0 + offset, NaN across gaps.

        ``start`` and ``stop`` give the samples y[start:stop] alone (default: all
        n - 1), from phase[start:stop + 1]: a block of a long record without the
        whole frequency array. ``centred=True`` leaves ``frequency_offset`` out
        (the small fluctuations keep their digits); ``out`` is an array of
        ``stop - start`` values to write into instead of a new one.
        """
        count = self.n - 1
        stop = count if stop is None else stop
        if not 0 <= start <= stop <= count:
            raise InputError(
                f"frequency samples {start} to {stop} lie outside the record's 0 to {count}"
            )
        y = np.subtract(self.phase[start + 1 : stop + 1], self.phase[start:stop], out=out)
        y /= self.tau0  # in place: one array of the block's length
        if not centred:
            y += self.frequency_offset
        if self.segments is not None:
            # a boolean compare of the two shifted views: no integer diff array
            y[self.segments[start + 1 : stop + 1] != self.segments[start:stop]] = np.nan
        return y

    def frequency_blocks(
        self, size: int, *, centred: bool = False, reuse: bool = False
    ) -> Iterator[tuple[int, int, np.ndarray]]:
        """:meth:`frequency` block by block: ``(start, stop, y[start:stop])``, blocks of ``size``.

        No array of the record's length is made. ``reuse=True`` writes every
        block into one buffer (a block is then only valid until the next one).
        """
        count = self.n - 1
        buffer = np.empty(min(size, max(count, 0))) if reuse else None
        for start in range(0, count, size):
            stop = min(start + size, count)
            out = None if buffer is None else buffer[: stop - start]
            yield start, stop, self.frequency(start, stop, centred=centred, out=out)

    def phase_with_offset(self) -> np.ndarray:
        """Phase with the removed mean frequency offset added back (for MTIE, TIE)."""
        if self.frequency_offset == 0.0:
            return self.phase
        ramp = self.frequency_offset * self.tau0 * np.arange(self.n, dtype=np.float64)
        return self.phase + ramp

    def gap_count(self) -> int:
        """Missing samples: NaN phase samples plus frequency gaps."""
        count = int(np.isnan(self.phase).sum())
        if self.segments is not None:
            count += int(self.segments[-1] - self.segments[0])
        return count

    def replace(self, *, adopt: bool = False, **changes: Any) -> Measurement:
        """A copy with some attributes changed (notes are copied, not shared).

        The read-only arrays that are not changed (phase, segments, lines) are
        shared with the copy, not copied. New arrays are copied, unless
        ``adopt=True`` hands them over (the caller keeps no other reference).
        """
        changes.setdefault("notes", list(self.notes))
        for name in ("phase", "segments", "lines"):
            given = changes.get(name)
            if isinstance(given, np.ndarray) and not adopt:
                changes[name] = given.copy()  # the caller's array stays the caller's
        return dataclasses.replace(self, adopt=True, **changes)

    def __repr__(self) -> str:
        src = self.provenance.path or "memory"
        return (
            f"Measurement(n={self.n}, tau0={self.tau0:g} s, kind={self.kind!r}, "
            f"span={self.span:g} s, gaps={self.gap_count()}, notes={len(self.notes)}, "
            f"source={src!r})"
        )

    def plot(self, ax: Any = None, *, figure: Any = None, **options: Any) -> Any:
        """The data over time, as ``stability analyze`` draws it in ``series.png``.

        Parameters
        ----------
        ax
            A matplotlib ``Axes`` (or a list of them) to draw into: the figure's
            panels in order (fractional frequency first), as many as given.
            None draws a figure of its own (``matplotlib.figure.Figure``, never
            pyplot).
        figure
            A ``Figure`` or ``SubFigure`` to draw the whole figure into instead.
        options
            Those of :func:`stability.figures.series_figure` (drift curve,
            outliers, title, footer ...).

        Returns
        -------
        stability.figures.SeriesDrawn
            The figure, its panels (``.axes``) and the data as drawn; it shows
            itself in a notebook.
        """
        return _plot(self, ax=ax, figure=figure, **options)
