"""Shared numerical kernels of the estimators.

Two paths compute the same sums:

* the *unbroken* path (no NaN, one segment) walks the phase in cache-sized
  blocks with preallocated buffers and a BLAS dot product for the sum of
  squares; it allocates nothing of the input's size;
* the *gap* path builds whole term arrays, lets NaN propagate through the
  arithmetic and drops the terms that touch a gap or span a segment boundary
  (NIST SP 1065, section 5.14: drop every term that touches a gap).

Both are vectorised; the only Python loops run over blocks, never samples.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

__all__ = [
    "BLOCK",
    "dot",
    "is_unbroken",
    "comb_sum_squares",
    "comb_terms",
    "window_sums_squares",
    "gappy_sum_squares",
    "gappy_window_sums_squares",
]

#: Elements per block: 2**15 float64 values (256 KiB) keep a handful of
#: buffers inside a typical L2 cache.
BLOCK = 1 << 15


def dot(a: np.ndarray, b: np.ndarray) -> float:
    """Inner product of two 1-D arrays without BLAS.

    numpy's ``dot`` hands 1-D products to the BLAS library, whose thread pool
    can stall for milliseconds per call on a busy machine; ``einsum`` runs its
    own vectorised loop in the calling thread.
    """
    return float(np.einsum("i,i->", a, b))


def is_unbroken(x: np.ndarray, seg: np.ndarray | None) -> bool:
    """True when the phase has no NaN and a single segment."""
    return seg is None and not np.isnan(x).any()


def _fill(
    out: np.ndarray,
    x: np.ndarray,
    start: int,
    stop: int,
    offsets: Sequence[int],
    coefs: Sequence[float],
    tmp: np.ndarray,
) -> None:
    """out = sum_k coefs[k] * x[start+offsets[k] : stop+offsets[k]]."""
    o0, c0 = offsets[0], coefs[0]
    first = x[start + o0 : stop + o0]
    if c0 == 1.0:
        out[:] = first
    elif c0 == -1.0:
        np.negative(first, out=out)
    else:
        np.multiply(first, c0, out=out)
    for o, c in zip(offsets[1:], coefs[1:], strict=True):
        seg = x[start + o : stop + o]
        if c == 1.0:
            np.add(out, seg, out=out)
        elif c == -1.0:
            np.subtract(out, seg, out=out)
        else:
            np.multiply(seg, c, out=tmp)
            np.add(out, tmp, out=out)


def comb_sum_squares(
    x: np.ndarray,
    offsets: Sequence[int],
    coefs: Sequence[float],
    count: int,
    start: int = 0,
    block: int = BLOCK,
    shift: float = 0.0,
) -> float:
    """Sum over i in [start, start+count) of (sum_k coefs[k] x[i + offsets[k]] - shift)**2.

    Unbroken path only (no NaN in the touched samples). ``shift`` is what the
    combination gives on a part of the phase taken out of the data, e.g. the
    second difference drift tau^2 of a drift t^2 / 2.
    """
    if count <= 0:
        return 0.0
    size = min(block, count)
    buf = np.empty(size)
    tmp = np.empty(size)
    total = 0.0
    for lo in range(start, start + count, size):
        hi = min(lo + size, start + count)
        b = buf[: hi - lo]
        _fill(b, x, lo, hi, offsets, coefs, tmp[: hi - lo])
        if shift:
            b -= shift
        total += dot(b, b)
    return total


def comb_terms(
    x: np.ndarray,
    seg: np.ndarray | None,
    offsets: Sequence[int],
    coefs: Sequence[float],
    count: int,
    start: int = 0,
) -> np.ndarray:
    """The terms sum_k coefs[k] x[i + offsets[k]], i in [start, start+count), NaN when invalid.

    A term is invalid when it touches a NaN sample or when its first and last
    touched samples lie in different segments (frequency gaps between them).
    """
    if count <= 0:
        return np.empty(0)
    out = np.zeros(count)
    for o, c in zip(offsets, coefs, strict=True):
        out += c * x[start + o : start + o + count]
    if seg is not None:
        lo, hi = min(offsets), max(offsets)
        broken = seg[start + lo : start + lo + count] != seg[start + hi : start + hi + count]
        out[broken] = np.nan
    return out


def _valid_block(
    x: np.ndarray,
    seg: np.ndarray | None,
    offsets: Sequence[int],
    coefs: Sequence[float],
    lo: int,
    hi: int,
    buf: np.ndarray,
    tmp: np.ndarray,
    shift: float = 0.0,
) -> tuple[np.ndarray, np.ndarray]:
    """Terms i in [lo, hi) less ``shift``, the invalid ones (see :func:`comb_terms`) set to 0,
    and their mask."""
    b = buf[: hi - lo]
    _fill(b, x, lo, hi, offsets, coefs, tmp[: hi - lo])
    if shift:
        b -= shift
    bad = np.isnan(b)
    if seg is not None:
        first, last = min(offsets), max(offsets)
        bad |= seg[lo + first : hi + first] != seg[lo + last : hi + last]
    b[bad] = 0.0
    return b, bad


def gappy_sum_squares(
    x: np.ndarray,
    seg: np.ndarray | None,
    offsets: Sequence[int],
    coefs: Sequence[float],
    count: int,
    block: int = BLOCK,
    shift: float = 0.0,
) -> tuple[float, int]:
    """Sum of squares of the valid terms of :func:`comb_terms` and how many there are.

    The same numbers as summing ``comb_terms(...)`` without its NaN, computed in
    cache-sized blocks: nothing of the input's size is allocated. ``shift`` is
    subtracted from every term (see :func:`comb_sum_squares`).
    """
    if count <= 0:
        return 0.0, 0
    size = min(block, count)
    buf, tmp = np.empty(size), np.empty(size)
    total, used = 0.0, 0
    for lo in range(0, count, size):
        hi = min(lo + size, count)
        b, bad = _valid_block(x, seg, offsets, coefs, lo, hi, buf, tmp, shift)
        total += dot(b, b)
        used += (hi - lo) - int(np.count_nonzero(bad))
    return total, used


def gappy_window_sums_squares(
    x: np.ndarray,
    seg: np.ndarray | None,
    offsets: Sequence[int],
    coefs: Sequence[float],
    count: int,
    width: int,
    block: int = BLOCK,
    shift: float = 0.0,
) -> tuple[float, int]:
    """:func:`window_sums_squares` of the ``count`` terms of :func:`comb_terms`, in blocks.

    ``shift`` is subtracted from every term (see :func:`comb_sum_squares`).

    Each window sum follows from the previous one by adding the term that enters
    and subtracting the one that leaves (a running sum, as in the unbroken
    modified Allan path), with a running count of the invalid terms inside the
    window; windows holding one are dropped.
    """
    windows = count - width + 1
    if windows <= 0:
        return 0.0, 0
    size = min(block, max(width, windows))
    enter, leave = np.empty(size), np.empty(size)
    tmp = np.empty(size)
    level, inside = 0.0, 0
    for lo in range(0, width, size):  # the first window
        hi = min(lo + size, width)
        b, bad = _valid_block(x, seg, offsets, coefs, lo, hi, enter, tmp, shift)
        level += float(b.sum())
        inside += int(np.count_nonzero(bad))
    total, used = (level * level, 1) if inside == 0 else (0.0, 0)
    for lo in range(0, windows - 1, size):  # windows 1 .. windows - 1
        hi = min(lo + size, windows - 1)
        came, came_bad = _valid_block(
            x, seg, offsets, coefs, lo + width, hi + width, enter, tmp, shift
        )
        went, went_bad = _valid_block(x, seg, offsets, coefs, lo, hi, leave, tmp, shift)
        np.subtract(came, went, out=came)
        np.cumsum(came, out=came)
        came += level
        level = float(came[-1])
        if not (came_bad.any() or went_bad.any()):  # the usual block: validity unchanged
            if inside == 0:
                total += dot(came, came)
                used += hi - lo
            continue
        count_bad = np.cumsum(came_bad, dtype=np.int64) - np.cumsum(went_bad, dtype=np.int64)
        count_bad += inside
        inside = int(count_bad[-1])
        ok = count_bad == 0
        sums = came[ok]
        total += dot(sums, sums)
        used += int(sums.size)
    return total, used


def window_sums_squares(terms: np.ndarray, width: int) -> tuple[float, int]:
    """Sum of squares of the moving sums of ``width`` consecutive terms.

    Windows holding a NaN term are dropped. Returns (sum of squares, windows used).
    """
    count = terms.size - width + 1
    if count <= 0:
        return 0.0, 0
    bad = np.isnan(terms)
    clean = np.where(bad, 0.0, terms)
    csum = np.concatenate(([0.0], np.cumsum(clean)))
    cbad = np.concatenate(([0], np.cumsum(bad)))
    sums = csum[width:] - csum[:-width]
    ok = (cbad[width:] - cbad[:-width]) == 0
    used = sums[ok]
    return dot(used, used), int(used.size)
