"""Drawing long records light: min/max envelopes and merged gap spans.

Records longer than a few thousand samples are drawn through the minimum and
maximum of each pixel column, in time order (:func:`envelope`), so that every
excursion stays visible while the figure stays light [1]_; many short gaps
are shaded as at most a given number of spans (:func:`gap_runs`). Both are
also built piece by piece (:class:`Envelope`, :class:`GapRuns`), so that a
curve computed block by block from a long record is never held whole.

References
----------
.. [1] S. Steinarsson, *Downsampling Time Series for Visual Representation*,
   MSc thesis, University of Iceland (2013), section 3 (min-max per bucket).
"""

from __future__ import annotations

import math

import numpy as np

__all__ = ["Envelope", "GapRuns", "envelope", "gap_runs", "runs"]


#: Bytes of a group of buckets masked at once by :func:`envelope`.
_ROWS_BYTES = 1 << 22


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
    reduced = Envelope(values.size, columns)
    reduced.add(values)
    return reduced.result()


class Envelope:
    """The :func:`envelope` of a record of ``length`` samples, fed in consecutive pieces.

    Buckets hold ``ceil(length / columns)`` samples, as :func:`envelope`'s do;
    only the samples of an unfinished bucket are kept between pieces, so the
    pieces may be buffers the caller reuses.
    """

    def __init__(self, length: int, columns: int) -> None:
        self.block = max(1, math.ceil(int(length) / max(1, int(columns))))
        self._start = 0  # sample index of the first unfinished sample
        self._tail = np.empty(0)  # the samples of an unfinished bucket
        self._parts: list[tuple[np.ndarray, ...]] = []

    def add(self, values: np.ndarray) -> None:
        """Take the next samples of the record."""
        values = np.asarray(values, dtype=float)
        if self._tail.size:  # first finish the bucket the last piece began
            need = self.block - self._tail.size
            self._tail = np.concatenate([self._tail, values[:need]])
            values = values[need:]
            if self._tail.size < self.block:
                return
            self._buckets(self._tail.reshape(1, -1))
            self._tail = np.empty(0)
        whole = values.size // self.block
        if whole:
            self._buckets(values[: whole * self.block].reshape(whole, self.block))
        self._tail = values[whole * self.block :].copy()

    def result(self) -> tuple[np.ndarray, np.ndarray]:
        """Indices and values as :func:`envelope` returns them."""
        if self._tail.size:  # a short last bucket: its extremes among its own samples
            self._buckets(self._tail.reshape(1, -1))
            self._tail = np.empty(0)
        if not self._parts:
            return np.empty(0), np.empty(0)
        any_missing, all_missing, first, second, v_first, v_second = (
            np.concatenate(a) for a in zip(*self._parts, strict=True)
        )
        idx = np.empty((first.size, 3))
        val = np.empty((first.size, 3))
        idx[:, 0], idx[:, 1] = first, second
        val[:, 0], val[:, 1] = v_first, v_second
        brk = any_missing | np.concatenate([any_missing[1:], [False]])
        idx[:, 2] = np.where(brk, np.nan, idx[:, 1])
        val[:, 2] = np.where(brk, np.nan, val[:, 1])
        val[all_missing, :2] = np.nan
        return idx.ravel(), val.ravel()

    def _buckets(self, blocks: np.ndarray) -> None:
        """Reduce whole buckets (rows) starting at the first unfinished sample."""
        any_missing, all_missing, i_min, i_max = _extremes(blocks, bool(np.isnan(blocks).any()))
        rows = np.arange(blocks.shape[0])
        first = np.minimum(i_min, i_max)
        second = np.maximum(i_min, i_max)
        base = self._start + rows * self.block
        self._parts.append(
            (any_missing, all_missing, base + first, base + second,
             blocks[rows, first], blocks[rows, second])
        )  # fmt: skip
        self._start += blocks.size


def _extremes(
    blocks: np.ndarray, has_missing: bool
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Per bucket (row): any missing, all missing, position of the minimum and the maximum.

    Missing samples are never chosen (argmin and argmax take the first of equal
    values); buckets are masked in groups, so the masked copies stay small.
    """
    count = blocks.shape[0]
    if not has_missing:
        none = np.zeros(count, dtype=bool)
        return none, none, np.argmin(blocks, axis=1), np.argmax(blocks, axis=1)
    any_missing, all_missing = np.empty(count, bool), np.empty(count, bool)
    i_min, i_max = np.empty(count, np.int64), np.empty(count, np.int64)
    rows_at_once = max(1, _ROWS_BYTES // (8 * max(1, blocks.shape[1])))
    for lo in range(0, count, rows_at_once):  # loop over groups of buckets
        part = blocks[lo : lo + rows_at_once]
        missing = np.isnan(part)
        hi = lo + part.shape[0]
        any_missing[lo:hi], all_missing[lo:hi] = missing.any(axis=1), missing.all(axis=1)
        i_min[lo:hi] = np.argmin(np.where(missing, np.inf, part), axis=1)
        i_max[lo:hi] = np.argmax(np.where(missing, -np.inf, part), axis=1)
    return any_missing, all_missing, i_min, i_max


def gap_runs(mask: np.ndarray, max_runs: int) -> np.ndarray:
    """(k, 2) array of [start, stop) sample ranges where ``mask`` is true.

    More than ``max_runs`` runs are merged per bucket of samples, so that a
    record with many short gaps is shaded with at most about that many spans.
    """
    mask = np.asarray(mask, dtype=bool)
    found = GapRuns(mask.size, max_runs)
    found.add(mask)
    return found.result()


class GapRuns:
    """The :func:`gap_runs` of a mask of ``length`` samples, fed in consecutive pieces.

    Runs are kept until there are more than ``max_runs`` of them; beyond that
    only which buckets hold a true sample (a bucket being ``ceil(length /
    max_runs)`` samples), as :func:`gap_runs` merges them.
    """

    def __init__(self, length: int, max_runs: int) -> None:
        self.length, self.max_runs = int(length), int(max_runs)
        self.block = max(1, math.ceil(self.length / max(1, self.max_runs)))
        self._hit = np.zeros(math.ceil(self.length / self.block), dtype=bool)
        self._found: list[np.ndarray] = []
        self._count = 0
        self._open: int | None = None  # start of a run still open at the end of the last piece
        self._at = 0

    def add(self, mask: np.ndarray) -> None:
        """Take the next samples of the mask."""
        mask = np.asarray(mask, dtype=bool)
        if not mask.size:
            return
        at, self._at = self._at, self._at + mask.size
        where = np.flatnonzero(mask)
        if not where.size:
            if self._open is not None:
                self._close(np.array([[self._open, at]], dtype=np.int64))
                self._open = None
            return
        self._hit[(where + at) // self.block] = True
        del where
        edges = np.diff(np.concatenate([[self._open is not None], mask, [False]]).view(np.int8))
        starts = np.flatnonzero(edges == 1) + at
        stops = np.flatnonzero(edges == -1) + at
        if self._open is not None:
            starts = np.concatenate([[self._open], starts])
        self._open = None
        if mask[-1]:  # the run goes on into the next piece
            self._open, starts, stops = int(starts[-1]), starts[:-1], stops[:-1]
        self._close(np.column_stack([starts, stops]).astype(np.int64, copy=False))

    def result(self) -> np.ndarray:
        """The runs as :func:`gap_runs` returns them."""
        if self._open is not None:
            self._close(np.array([[self._open, self._at]], dtype=np.int64))
            self._open = None
        if not self._count:
            return np.empty((0, 2), dtype=np.int64)
        if self._count > self.max_runs:
            return np.minimum(runs(self._hit) * self.block, self.length)
        return np.concatenate(self._found)

    def _close(self, found: np.ndarray) -> None:
        self._count += len(found)
        if self._count > self.max_runs:
            self._found = []  # too many to draw: the buckets in self._hit stand for them
        elif len(found):
            self._found.append(found)


def runs(mask: np.ndarray) -> np.ndarray:
    """(k, 2) array of [start, stop) index ranges where ``mask`` is true."""
    edges = np.diff(np.concatenate([[0], mask.astype(np.int8), [0]]))
    return np.column_stack([np.flatnonzero(edges == 1), np.flatnonzero(edges == -1)])
