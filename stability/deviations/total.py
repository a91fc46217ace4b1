"""Total deviation (TOTDEV) and the modified, time and Hadamard total deviations.

TOTDEV: the phase record is extended at both ends by odd reflection, so that
every tau up to half the record uses N - 2 second differences; this improves
the confidence at long tau over the overlapping Allan deviation.

MTOT, TTOT and HTOT work on every subsequence of 3m samples (phase for MTOT
and TTOT, fractional frequency for HTOT): the linear trend found by the
half-average method is removed, the subsequence is extended to 9m samples by
uninverted (even) reflection at both ends, and the squared second differences
of m-sample averages are averaged over the 6m positions of the extended
sequence; those averages are then averaged over the subsequences
(SP 1065 eqs. 26-29).

Fast evaluation. The even reflection of a 3m-sample subsequence u0 is periodic
with period 6m, so the 6m second differences form one full period of a
circular filter output, and their sum of squares is a quadratic form whose
matrix is a Toeplitz part plus a Hankel part. Summed over all subsequences,
the Toeplitz and Hankel sums reduce to the lagged products of the whole record
(one FFT) plus corrections from the first and last 3m samples, and the
half-average trend enters through two sliding correlations. Each tau costs
O(N log N) instead of the O(N m) of the definition.

Rounding. The form can be written on the first differences v0 = diff(u0),
K(a, b) = 2 G(a - b) - 2 Gp(a + b + 2) with G the autocorrelation of the running
sum of the filter (entries up to about m^3), or on the samples themselves,
D'KD(a, b) = 2 c(a - b) + 2 c(a + b + 1) with c the periodic autocorrelation of
the filter (entries up to 24 m). Each loses about eps * |input|^2 * sum |K| to
rounding. Smooth inputs (random-walk phase for MTOT, random-walk frequency for
HTOT) keep their digits on first differences; rough ones (white PM phase, and
the blue frequency noise that white PM phase gives HTOT) lose a factor of about
m^2 there (2e-7 relative at m = 1024 for HTOT of white PM, 1e-9 for MTOT)
and keep them on the samples. Each unbroken run uses the form with the smaller
rounding bound; the samples are rebuilt from their centred first differences
so that a large frequency offset leaves no rounding behind. Against the
definition summed in 80-bit extended precision the result agrees to about
1e-12 relative for every power-law noise up to m = 1024 (tests).

References
----------
1. D. A. Howe, "The total deviation approach to long-term characterization of
   frequency stability", IEEE Trans. UFFC 47 (2000) 1102-1110.
2. W. J. Riley, NIST SP 1065 (2008), section 5.2.11, eq. 25:
   x*_{1-j} = 2x_1 - x_{1+j},  x*_{N+j} = 2x_N - x_{N-j},
   TOTVAR = sum_{i=2}^{N-1} (x*_{i-m} - 2x*_i + x*_{i+m})^2 / (2 tau^2 (N - 2)).
3. D. A. Howe, F. Vernotte, "Generalization of the total variance approach to
   the modified Allan variance", Proc. 31st PTTI Meeting (1999) 267-276 (MTOT).
4. D. A. Howe, R. L. Beard, C. A. Greenhall, F. Vernotte, W. J. Riley,
   T. K. Peppler, "Enhancements to GPS operations and clock evaluations using a
   total Hadamard deviation", IEEE Trans. UFFC 52 (2005) 1253-1261 (HTOT).
5. W. J. Riley, NIST SP 1065 (2008), sections 5.2.12 (MTOT, eq. 26), 5.2.13
   (TTOT, eq. 28: TTOT = tau MTOT / sqrt(3)) and 5.2.14 (HTOT, eq. 29; the
   overlapping Hadamard deviation is used at m = 1).
"""

from __future__ import annotations

import math

import numpy as np

from ._kernels import BLOCK, comb_sum_squares, dot, gappy_sum_squares, is_unbroken
from .hadamard import ohdev

__all__ = ["totdev", "mtot", "ttot", "htot"]


def _scipy_signal():
    """scipy.signal, imported on first use (its import costs about a second)."""
    from scipy import signal

    return signal


def _edge_blocks(x: np.ndarray, seg: np.ndarray | None, m: int, block: int = BLOCK):
    """The second differences that reach past either end (0-based i with i-m < 0 or
    i+m > N-1), in blocks of at most ``block``; NaN where one spans a frequency gap.

    Near m = N/2 they are nearly N terms, so they are formed a block at a time
    (12.6 B/row at 1e6 rows as one array with its index arrays, now ~0).
    """
    n = x.size
    last = n - 1
    # Left: i = 1 .. m-1, x*_{i-m} = 2 x_0 - x_{m-i}.
    stop = min(m, n - 1)
    for lo in range(1, stop, block):
        hi = min(lo + block, stop)
        mirrored = x[m - hi + 1 : m - lo + 1][::-1]  # x_{m-i}, i = lo .. hi-1
        terms = (2.0 * x[0] - mirrored) - 2.0 * x[lo:hi] + x[lo + m : hi + m]
        if seg is not None:
            terms[seg[lo + m : hi + m] != seg[0]] = np.nan
        yield terms
    # Right: j = N-m .. N-2, x*_{j+m} = 2 x_{N-1} - x_{2(N-1)-j-m}.
    start = max(n - m, 1)
    for lo in range(start, n - 1, block):
        hi = min(lo + block, n - 1)
        # x_{2(N-1)-j-m}, j = lo .. hi-1
        mirrored = x[2 * last - hi - m + 1 : 2 * last - lo - m + 1][::-1]
        terms = x[lo - m : hi - m] - 2.0 * x[lo:hi] + (2.0 * x[last] - mirrored)
        if seg is not None:
            terms[seg[lo - m : hi - m] != seg[last]] = np.nan
        yield terms


def totdev(x: np.ndarray, tau0: float, m: int, seg: np.ndarray | None = None) -> tuple[float, int]:
    """Total deviation (Howe 2000; SP 1065 eq. 25), for 1 <= m <= (N-1)/2."""
    n = x.size
    tau = m * tau0
    if n < 3 or 2 * m > n - 1:
        return math.nan, 0
    core = n - 2 * m  # 0-based i = m .. n-1-m, inside the record
    if is_unbroken(x, seg):
        total = comb_sum_squares(x, (0, m, 2 * m), (1.0, -2.0, 1.0), core)
        for edges in _edge_blocks(x, seg, m):
            total += dot(edges, edges)
        used = n - 2
    else:
        # in blocks: the terms as one array with their mask and copies took 17 B/row
        total, used = gappy_sum_squares(x, seg, (0, m, 2 * m), (1.0, -2.0, 1.0), core)
        for edges in _edge_blocks(x, seg, m):
            good = edges[~np.isnan(edges)]
            total += dot(good, good)
            used += int(good.size)
    if used == 0:
        return math.nan, 0
    return math.sqrt(total / (2.0 * tau * tau * used)), used


# --------------------------------------------------------------------- MTOT/HTOT
#: Below this many lags the lagged products are plain dot products (exact);
#: above it one FFT gives them all.
_DIRECT_LAGS = 8


def _lag_products(v: np.ndarray, lags: int) -> np.ndarray:
    """r[L] = sum_t v[t] v[t+L] for L = 0 .. lags-1."""
    n = v.size
    lags = min(lags, n)
    if lags <= _DIRECT_LAGS:
        return np.array([dot(v[: n - k], v[k:]) for k in range(lags)])
    from scipy import fft as _fft  # imported here: only the long-lag case needs it

    size = _fft.next_fast_len(n + lags, real=True)
    spec = _fft.rfft(v, size)
    return _fft.irfft(spec.real**2 + spec.imag**2, size)[:lags]


def _cross_lags(a: np.ndarray, b: np.ndarray, lags: int) -> np.ndarray:
    """r[L] = sum_t a[t] b[t+L] for L = 0 .. lags-1 (a and b of one length)."""
    if a.size == 0 or lags <= 0:
        return np.zeros(max(lags, 0))
    full = _scipy_signal().correlate(b, a, mode="full")
    out = full[a.size - 1 : a.size - 1 + lags]
    if out.size < lags:
        out = np.concatenate((out, np.zeros(lags - out.size)))
    return out


def _sliding_dot(v: np.ndarray, kernel: np.ndarray) -> np.ndarray:
    """sum_a kernel[a] v[s + a] for every s (valid positions)."""
    return _scipy_signal().oaconvolve(v, kernel[::-1], mode="valid")


def _stride2_cumsum(h: np.ndarray, top: int) -> np.ndarray:
    """c[k] = sum of h[s] over s <= k with s = k (mod 2), k = 0 .. top (h is zero past its end)."""
    hh = np.zeros(top + 1)
    hh[: min(h.size, top + 1)] = h[: top + 1]
    out = np.empty(top + 1)
    out[0::2] = np.cumsum(hh[0::2])
    out[1::2] = np.cumsum(hh[1::2])
    return out


def _weighted_cumsums(vals: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Prefix sums (with a leading 0) of vals[k] and of k vals[k]."""
    k = np.arange(vals.size, dtype=float)
    zero = np.zeros(1)
    return np.concatenate((zero, np.cumsum(vals))), np.concatenate((zero, np.cumsum(k * vals)))


class _ReflectedForm:
    """A Toeplitz-plus-Hankel quadratic form summed over every subsequence of a run.

    For subsequences u_s = u[s : s + w] of one unbroken run, the sum over s of
    u0_s' K u0_s with K(a, b) = T(|a - b|) + H(a + b) (a, b = 0 .. w - 1) and
    u0_s = u_s - (slope . u_s) trend, the half-average trend removed. The two
    constructors give the sum of the 6m squared reflected second differences of
    m-sample sums of MTOT and HTOT, as a form in the first differences of the
    samples (:meth:`on_differences`, entries up to about m^3) or in the samples
    themselves (:meth:`on_samples`, entries up to 24 m).
    """

    def __init__(
        self, toe: np.ndarray, han: np.ndarray, slope: np.ndarray, trend: tuple[float, float]
    ) -> None:
        w = toe.size
        self.width = w
        self.toe, self.han, self.slope = toe, han, slope
        # The trend is p b + c at position b; row = K trend and total = trend' K trend
        # (for the trend terms), by prefix sums of T(d), d T(d), H(q) and q H(q).
        p, c = trend
        a = np.arange(w)
        t0, t1 = _weighted_cumsums(toe)
        h0, h1 = _weighted_cumsums(han)
        # sum_b T(|a - b|) = sum over d = b - a in [-a, w - 1 - a] of T(|d|);
        # sum_b T(|a - b|) b = a sum_d T(|d|) + sum_d d T(|d|).
        s0 = t0[w - a] + t0[a + 1] - toe[0]
        s1 = t1[w - a] - t1[a + 1]
        # sum_b H(a + b) = sum_{q=a}^{a+w-1} H(q); sum_b H(a + b) b = sum_q H(q) (q - a).
        g0 = h0[a + w] - h0[a]
        g1 = (h1[a + w] - h1[a]) - a * g0
        row_t = c * s0 + p * (a * s0 + s1) if p else c * s0
        row_h = c * g0 + p * g1 if p else c * g0
        trend_values = p * a + c
        self.row = row_t + row_h
        self.total = dot(self.row, trend_values)

    @classmethod
    def on_differences(cls, m: int) -> _ReflectedForm:
        """The form in the 3m - 1 first differences v0 = diff(u0) of a 3m-sample subsequence.

        K(a, b) = 2 G(a - b) - 2 Gp(a + b + 2), G the autocorrelation of the running
        sum of the filter and Gp its 6m-periodic continuation; the slope of the raw
        subsequence is a weighted sum of its first differences, the trend a constant.
        """
        n = 3 * m
        w = n - 1
        h = np.concatenate((np.ones(m), np.full(m, -2.0), np.ones(m)))
        g = np.cumsum(h)[: n - 1]
        if g.size <= _DIRECT_LAGS:
            gam = np.array([dot(g[: g.size - k], g[k:]) for k in range(g.size)])
        else:
            gam = _lag_products(g, g.size)
            if dot(g, g) < 2.0**52:
                gam = np.rint(gam)  # the exact values are integers
        sig = np.arange(2 * w - 1)  # a + b = 0 .. 2w-2
        d = sig + 2
        per = np.zeros(sig.size)
        low = d <= n - 2
        per[low] = gam[d[low]]
        high = d >= n + 2
        per[high] = gam[2 * n - d[high]]
        k1, k2 = n // 2, (n + 1) // 2
        a = np.arange(w)
        above2 = np.clip(n - np.maximum(k2, a + 1), 0, None)
        above1 = np.clip(k1 - np.maximum(0, a + 1), 0, None)
        slope = (above2 - above1) / (k1 * float(k2))
        return cls(2.0 * gam, -2.0 * per, slope, (0.0, 1.0))

    @classmethod
    def on_samples(cls, m: int) -> _ReflectedForm:
        """The form in the 3m samples u0 of a subsequence: D' K D of :meth:`on_differences`.

        The even reflection [rev(u0), u0] is one 6m period, and the 6m second
        differences of m-sample sums are its circular correlation with the filter
        h = (1, .., 1, -2, .., -2, 1, .., 1); so K(a, b) = 2 c(a - b) + 2 c(a + b + 1)
        with c the 6m-periodic autocorrelation of h (integers, |c| <= 6m). The
        half-average slope weighs the samples by -1/(k1 k2) and 1/(k1 k2); the
        trend is the position (centred: K is blind to a constant).
        """
        n = 3 * m
        h = np.concatenate((np.ones(m), np.full(m, -2.0), np.ones(m)))
        acf = np.rint(_lag_products(h, n))  # |values| <= 6m: exact integers
        per = np.zeros(2 * n)  # c(d), d = 0 .. 6m-1
        per[:n] = acf
        per[n + 1 :] = acf[1:][::-1]  # c(d) = acf(6m - d) for d > 3m
        k1, k2 = n // 2, (n + 1) // 2
        slope = np.zeros(n)
        slope[:k1] = -1.0 / (k1 * k2)
        slope[k2:] = 1.0 / (k1 * k2)
        return cls(2.0 * per[:n], 2.0 * per[1:], slope, (1.0, -(n - 1) / 2.0))

    def sliding_sum(self, v: np.ndarray) -> float:
        """Sum over every subsequence s of u0_s' K u0_s, for one unbroken run v.

        ``v`` must already be centred as the form allows (the form is blind to a
        constant, and the sample form to a linear trend too).
        """
        w = self.width
        count = v.size - w + 1  # subsequences
        if count <= 0:
            return 0.0
        r = _lag_products(v, w)
        mult = np.full(w, 2.0)
        mult[0] = 1.0
        top = 2 * w - 2
        h2 = _stride2_cumsum(self.han, top)

        def h2_at(k: np.ndarray) -> np.ndarray:
            out = np.zeros(k.shape)
            ok = k >= 0
            out[ok] = h2[np.minimum(k[ok], top - ((top - k[ok]) % 2 != 0))]
            return out

        lag = np.arange(w)
        head = v[: w - 1]
        tail = v[count:]
        r_head = _cross_lags(head, head, w)
        r_tail = _cross_lags(tail, tail, w)
        # Toeplitz part: interior count (w - L), then the first and last w - 1 samples.
        toe = float(np.sum(mult * self.toe * (w - lag) * r))
        pos = np.arange(w - 1, dtype=float)
        toe += float(np.sum(mult * self.toe * _cross_lags(head, head * (pos - w + 1), w)))
        toe += float(np.sum(mult * self.toe * _cross_lags(tail * (-1.0 - pos), tail, w)))
        # Hankel part: interior weight depends on the lag only, then corrections.
        upper = h2_at(2 * w - 2 - lag)
        lower = h2_at(lag - 2)
        han = float(np.sum(mult * r * (upper - lower)))
        sig = np.arange(2 * w - 3)
        h2s = h2_at(sig)
        if head.size:
            han += dot(h2s, _scipy_signal().fftconvolve(head, head))
            han -= float(np.sum(mult * upper * r_head))
            han -= dot(h2s, _scipy_signal().fftconvolve(tail, tail))
            han += float(np.sum(mult * lower * r_tail))
        # Trend removal: u0_s = u_s - b_s trend, b_s = slope . u_s.
        b = _sliding_dot(v, self.slope)
        wv = _sliding_dot(v, self.row)
        quad = toe + han - 2.0 * dot(b, wv) + self.total * dot(b, b)
        return max(quad, 0.0)


def _runs(valid: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Starts and stops of the maximal runs of True."""
    edges = np.diff(np.concatenate(([0], valid.astype(np.int8), [0])))
    return np.flatnonzero(edges == 1), np.flatnonzero(edges == -1)


def _split_valid(x: np.ndarray, seg: np.ndarray | None) -> list[tuple[int, int]]:
    """Maximal stretches [a, b) of finite phase inside one segment."""
    ok = np.isfinite(x)
    starts, stops = _runs(ok)
    if seg is None:
        return list(zip(starts.tolist(), stops.tolist(), strict=True))
    cut = np.flatnonzero(np.diff(seg) != 0) + 1  # first sample of each new segment
    bounds = np.union1d(np.union1d(starts, stops), cut)
    out = []
    for a, b in zip(bounds[:-1], bounds[1:], strict=True):
        if ok[a]:
            out.append((int(a), int(b)))
    return out


def _level(v: np.ndarray) -> np.ndarray:
    """The samples rebuilt from their centred first differences, less their mean.

    Summing the centred differences takes the mean slope off (the first and last
    values are both zero) without the rounding that subtracting a fitted line from
    large raw samples (a big frequency offset) would leave; the sample form is
    blind to the constant and the line.
    """
    u = np.empty(v.size + 1)
    u[0] = 0.0
    np.cumsum(v, out=u[1:])
    u -= float(np.mean(u))
    return u


_FORMS = {"differences": _ReflectedForm.on_differences, "samples": _ReflectedForm.on_samples}

#: sum |K(a, b)| of the difference form over that of the sample form, divided by
#: m^2: 0.125 at m = 1, 0.176 at m = 8, 0.1917 for large m (about 11.04 m^5 against
#: 57.6 m^3); the choice of form below needs only its size.
_MASS_RATIO = 0.19


def _run_sum(
    u: np.ndarray, m: int, forms: dict[str, _ReflectedForm], choice: str = "auto"
) -> float:
    """Sum of the reflected form over every 3m-sample subsequence of one unbroken run.

    Both forms give the same sum in exact arithmetic; in floating point each loses
    about eps * (sum of squares of its input) * (sum of |K|) against a result of the
    size of the sum itself. The form on first differences suits smooth sequences
    (random-walk-like phase or frequency), the form on the samples rough ones (white
    or blue noise, where differencing doubles the input and the entries of order
    m^3 would cancel by about m^2). ``choice`` "auto" takes the one with the smaller
    bound; "differences" or "samples" forces one (for tests).
    """
    v = np.diff(u)
    v = v - float(np.mean(v))  # the form is blind to a constant frequency offset
    level = None
    if choice == "auto":
        level = _level(v)
        smooth = _MASS_RATIO * m * m * dot(v, v) <= dot(level, level)
        choice = "differences" if smooth else "samples"
    if choice not in forms:
        forms[choice] = _FORMS[choice](m)
    if choice == "differences":
        return forms[choice].sliding_sum(v)
    return forms[choice].sliding_sum(_level(v) if level is None else level)


def _stretch_sum(
    u: np.ndarray, stretches: list[tuple[int, int]], m: int, choice: str = "auto"
) -> tuple[float, int]:
    n = 3 * m
    usable = [(a, b) for a, b in stretches if b - a >= n]
    if not usable:
        return 0.0, 0
    forms: dict[str, _ReflectedForm] = {}
    total, count = 0.0, 0
    for a, b in usable:  # loop over unbroken stretches
        total += _run_sum(u[a:b], m, forms, choice)
        count += b - a - n + 1
    return total, count


def mtot(x: np.ndarray, tau0: float, m: int, seg: np.ndarray | None = None) -> tuple[float, int]:
    """Modified total deviation (Howe & Vernotte 1999; SP 1065 eq. 26), 1 <= m <= N/3.

    Mod Totvar = 1/(2 m^2 tau^2 (N - 3m + 1)) sum_{n=1}^{N-3m+1} (1/(6m))
    sum_{i=n-3m}^{n+3m-1} [sum_{j=i}^{i+m-1} (x#_{j+2m} - 2x#_{j+m} + x#_j)]^2,
    x# the half-average-detrended, even-reflected 9m-sample extension of each
    3m-sample subsequence. Returns (deviation, subsequences used); no bias
    correction is applied.
    """
    tau = m * tau0
    if m < 1 or 3 * m > x.size:
        return math.nan, 0
    if is_unbroken(x, seg):
        total, count = _stretch_sum(x, [(0, x.size)], m)
    else:
        total, count = _stretch_sum(x, _split_valid(x, seg), m)
    if count == 0:
        return math.nan, 0
    var = total / (2.0 * m * m * tau * tau * 6.0 * m * count)
    return math.sqrt(var), count


def ttot(x: np.ndarray, tau0: float, m: int, seg: np.ndarray | None = None) -> tuple[float, int]:
    """Time total deviation, TTOT = tau * MTOT / sqrt(3) (SP 1065 eq. 28), in seconds."""
    dev, n = mtot(x, tau0, m, seg)
    return m * tau0 * dev / math.sqrt(3.0), n


def htot(x: np.ndarray, tau0: float, m: int, seg: np.ndarray | None = None) -> tuple[float, int]:
    """Hadamard total deviation (Howe et al. 2005; SP 1065 eq. 29), 1 <= m <= (N-1)/3.

    On the fractional frequency y (N - 1 values): Htotvar = 1/(6 (M - 3m + 1))
    sum_n (1/(6m)) sum_i [m-average second differences of the detrended,
    even-reflected 9m-sample extension]^2. At m = 1 the overlapping Hadamard
    deviation is returned, as SP 1065 recommends.
    """
    if m < 1 or 3 * m > x.size - 1:
        return math.nan, 0
    if m == 1:
        return ohdev(x, tau0, 1, seg)
    y = np.diff(x) / tau0
    if is_unbroken(x, seg):
        stretches = [(0, y.size)]
    else:
        # y[k] is usable when both phase samples are finite and in one segment;
        # a phase stretch [a, b) gives the frequency stretch [a, b - 1).
        stretches = [(a, b - 1) for a, b in _split_valid(x, seg) if b - a >= 2]
    total, count = _stretch_sum(y, stretches, m)
    if count == 0:
        return math.nan, 0
    var = total / (6.0 * m * m * 6.0 * m * count)
    return math.sqrt(var), count
