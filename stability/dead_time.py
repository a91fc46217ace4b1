"""Counter dead time and counter type: Barnes' bias functions B1 and B2 (NBS TN 375).

A counter that leaves a dead time between gates measures averages of length tau
repeated every T > tau; the Allan variance of such data is biased against the
no-dead-time value by B2(r, mu), r = T/tau, for power-law noise with AVAR ~ tau^mu
[1]_. B1(N, mu) is the ratio of the N-sample (standard) variance to the Allan
variance [1]_.

A log written by such a counter has the sample interval T, so its Allan variance
at tau = m T is an average of m gates of length tau_g = T / r each. The exact bias
of that estimate against the no-dead-time Allan variance at the same tau,
:func:`dead_time_bias`, follows from the phase structure function of power-law
noise, D(t) ~ |t|^(mu + 2) (t^2 ln|t| at mu = 0), the same route by which B2 is
derived [1]_ [2]_; at m = 1 it is B2(r, mu) r^(-mu) (B2 compares at the gate time,
the log at the repetition time). White and flicker PM both have mu = -2 here, as
in [1]_, with the structure function of white PM (a constant away from zero).

Counters differ in how they average inside a gate [3]_ [4]_: a Pi-type (plain
gate) counter gives the Allan variance, a Lambda-type (triangular weighting,
"averaging") counter gives data whose two-sample variance behaves like the
modified Allan variance, and an Omega-type (least-squares) counter relates to
the parabolic variance [5]_.

References
----------
.. [1] J. A. Barnes, "Tables of bias functions, B1 and B2, for variances based on
   finite samples of processes with power law spectral densities", NBS Technical
   Note 375 (1969).
.. [2] J. A. Barnes, D. W. Allan, "Variances based on data with dead time between
   the measurements", NIST Technical Note 1318 (1990).
.. [3] E. Rubiola, "On the measurement of frequency and of its sample variance with
   high-resolution counters", Rev. Sci. Instrum. 76, 054703 (2005).
.. [4] S. T. Dawkins, J. J. McFerran, A. N. Luiten, "Considerations on the
   measurement of the stability of oscillators with frequency counters", IEEE
   Trans. UFFC 54, 918-925 (2007).
.. [5] F. Vernotte, M. Lenczner, P.-Y. Bourgeois, E. Rubiola, "The parabolic
   variance (PVAR)", IEEE Trans. UFFC 63, 611-623 (2016).
"""

from __future__ import annotations

import math
from numbers import Real
from typing import Any

import numpy as np

from .errors import InputError

__all__ = [
    "barnes_b1",
    "barnes_b2",
    "dead_time_bias",
    "gate_ratio",
    "mu_of_alpha",
    "COUNTER_TYPES",
    "counter_note",
    "check_counter",
]

#: Counter averaging types (Rubiola 2005) and what their two-sample variance is.
COUNTER_TYPES = {
    "pi": "Pi-type counter (plain gate): the two-sample variance is the Allan variance",
    "lambda": (
        "Lambda-type (averaging) counter: the Allan deviation of its readings behaves "
        "like the modified Allan deviation, not the Allan deviation (Rubiola 2005; "
        "Dawkins, McFerran and Luiten 2007)"
    ),
    "omega": (
        "Omega-type (least-squares) counter: the two-sample variance of its readings "
        "relates to the parabolic variance (Vernotte et al. 2016)"
    ),
}


def _validate_b2(r: Any, mu: Any) -> tuple[np.ndarray, float]:
    try:
        rr = np.asarray(r, dtype=float)
    except (TypeError, ValueError):
        raise InputError(f"r must be a positive number or array, got {r!r}") from None
    if rr.size == 0 or not np.all(np.isfinite(rr) & (rr > 0)):
        raise InputError(f"r (T/tau) must be finite and > 0, got {r!r}")
    if isinstance(mu, bool) or not isinstance(mu, Real) or not -2.0 <= float(mu) < 2.0:
        raise InputError(f"mu must be a number in [-2, 2), got {mu!r}")
    return rr, float(mu)


def barnes_b2(r: Any, mu: float) -> Any:
    """Barnes' bias function B2(r, mu) for dead time between measurements.

    B2 = AVAR with dead time / AVAR without, for r = T/tau (T the repetition
    interval, tau the averaging time) and mu = -alpha - 1 (NBS TN 375)::

        B2(r, mu) = [(r+1)^(mu+2) - 2 r^(mu+2) + |r-1|^(mu+2) - 2] / [4 (2^mu - 1)]

    At mu = 0 (FFM) the expression is 0/0; its limit is used,
    [(r+1)^2 ln(r+1) - 2 r^2 ln r + (r-1)^2 ln|r-1|] / (4 ln 2). ``|r-1|^(mu+2)``
    is taken as 0 at r = 1 (its limit for mu > -2), so B2(1, mu) = 1.

    Parameters
    ----------
    r
        Ratio T/tau > 0, scalar or array.
    mu
        Exponent in [-2, 2).

    References
    ----------
    .. [1] J. A. Barnes, NBS Technical Note 375 (1969).
    """
    rr, mu = _validate_b2(r, mu)
    e = mu + 2.0
    near = np.abs(rr - 1.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        if mu == 0.0:

            def xlx(v: np.ndarray) -> np.ndarray:
                return v * v * np.log(np.where(v > 0, v, 1.0))

            out = (xlx(rr + 1.0) - 2.0 * xlx(rr) + xlx(near)) / (4.0 * math.log(2.0))
        else:
            tail = np.where(near > 0, near ** np.where(near > 0, e, 1.0), 0.0)
            out = ((rr + 1.0) ** e - 2.0 * rr**e + tail - 2.0) / (4.0 * (2.0**mu - 1.0))
    return float(out) if out.ndim == 0 else out


def barnes_b1(n: Any, mu: float) -> Any:
    """Barnes' bias function B1(N, mu): N-sample variance / Allan variance.

    B1(N, mu) = N (1 - N^mu) / [2 (N - 1)(1 - 2^mu)] for AVAR ~ tau^mu (NBS TN
    375 [1]_); the mu = 0 limit is N ln N / [2 (N - 1) ln 2]. B1(2, mu) = 1.

    Parameters
    ----------
    n
        Number of samples N >= 2, scalar or array.
    mu
        Exponent in [-2, 2] (2 for noise steeper than random-walk FM).
    """
    try:
        nn = np.asarray(n, dtype=float)
    except (TypeError, ValueError):
        raise InputError(f"N must be a number or array of numbers >= 2, got {n!r}") from None
    if nn.size == 0 or not np.all(np.isfinite(nn) & (nn >= 2)):
        raise InputError(f"N (number of samples) must be finite and >= 2, got {n!r}")
    if isinstance(mu, bool) or not isinstance(mu, Real) or not -2.0 <= float(mu) <= 2.0:
        raise InputError(f"mu must be a number in [-2, 2], got {mu!r}")
    mu = float(mu)
    if mu == 0.0:
        out = nn * np.log(nn) / (2.0 * (nn - 1.0) * math.log(2.0))
    else:
        out = nn * (1.0 - nn**mu) / (2.0 * (nn - 1.0) * (1.0 - 2.0**mu))
    return float(out) if out.ndim == 0 else out


def mu_of_alpha(alpha: int) -> float:
    """The exponent mu of AVAR ~ tau^mu for S_y ~ f^alpha (-2 for both PM types)."""
    if alpha not in (2, 1, 0, -1, -2):
        raise InputError(f"alpha must be one of 2, 1, 0, -1, -2, got {alpha!r}")
    return float(max(-alpha - 1, -2))


def gate_ratio(tau0: float, dead_time: float | None = None, ratio: float | None = None) -> float:
    """r = T / tau_gate from the sample interval T = tau0 and the dead time, or as given."""
    if (dead_time is None) == (ratio is None):
        raise InputError("give either the dead time or the ratio r = T/tau, not both or neither")
    if ratio is not None:
        r = float(ratio)
        if not (math.isfinite(r) and 1.0 <= r < 1e6):
            raise InputError(f"the dead-time ratio r = T/tau must be >= 1, got {ratio!r}")
        return r
    d = float(dead_time)  # type: ignore[arg-type]
    if not (math.isfinite(d) and 0.0 <= d < tau0):
        raise InputError(
            f"the dead time must be >= 0 and shorter than the sample interval "
            f"{tau0:g} s, got {dead_time!r} s"
        )
    return tau0 / (tau0 - d)


def _structure(t: np.ndarray, mu: float) -> np.ndarray:
    """Phase structure function of power-law noise, up to a constant factor and sign."""
    a = np.abs(t)
    if mu == -2.0:
        return (a > 0).astype(float)
    if mu == 0.0:
        return a * a * np.log(np.where(a > 0, a, 1.0))
    return np.where(a > 0, a ** (mu + 2.0), 0.0)


def _two_block_variance(m: int, gate: float, mu: float) -> float:
    """Allan variance (up to a constant) of two adjacent m-averages of gates, period 1.

    The difference of the averages is sum_i c_i x(t_i) over the gate edges, with
    sum c_i = 0 and sum c_i t_i = 0, so its variance is -1/2 sum_ij c_i c_j
    D(t_i - t_j) for the structure function D. Written as a sum over lags d of
    the block weights' autocorrelation A(d) times the gate's second difference
    of D, it takes O(m) operations.
    """
    d = np.arange(-(2 * m - 1), 2 * m, dtype=float)
    k = np.abs(d)
    # a_k = -1 (k < m), +1 (m <= k < 2m); A(d) = sum_k a_k a_{k+|d|}
    same = 2.0 * np.clip(m - k, 0, None)  # pairs inside one block
    cross = np.minimum(k, 2 * m - k)  # pairs straddling the two blocks
    autocorr = same - cross
    # covariance of two gate increments at lag t: [D(t + g) + D(t - g) - 2 D(t)] / 2
    inc = _structure(d + gate, mu) + _structure(d - gate, mu) - 2.0 * _structure(d, mu)
    value = 0.5 * float(np.dot(autocorr, inc))
    return value / (m * gate) ** 2


def dead_time_bias(m: Any, r: float, mu: float) -> Any:
    """Allan variance of m-averages of gated readings / the no-dead-time value at tau = m T.

    Readings are averages over gates of length T / r repeated every T; the Allan
    variance at tau = m T from such a log is this factor times the Allan variance
    of the same noise measured without dead time. Divide by it to correct. At
    m = 1 it equals ``barnes_b2(r, mu) * r**(-mu)``.
    """
    ms = np.atleast_1d(np.asarray(m))
    if ms.size == 0 or not np.all((ms >= 1) & (ms == np.round(ms))):
        raise InputError(f"m must be whole numbers >= 1, got {m!r}")
    if not (math.isfinite(float(r)) and r >= 1.0):
        raise InputError(f"the dead-time ratio r = T/tau must be >= 1, got {r!r}")
    if isinstance(mu, bool) or not isinstance(mu, Real) or not -2.0 <= float(mu) < 2.0:
        raise InputError(f"mu must be a number in [-2, 2), got {mu!r}")
    out = np.array(
        [
            _two_block_variance(int(k), 1.0 / r, float(mu))
            / _two_block_variance(int(k), 1.0, float(mu))
            for k in ms
        ]
    )
    return float(out[0]) if np.ndim(m) == 0 else out


def check_counter(counter: Any) -> str | None:
    """The counter type in lower case (pi, lambda, omega) or None; InputError otherwise."""
    if counter is None:
        return None
    name = str(counter).strip().lower()
    if name not in COUNTER_TYPES:
        raise InputError(
            f"counter must be one of {', '.join(COUNTER_TYPES)}, got {counter!r}",
            hint="pi: plain gate; lambda: averaging counter; omega: least-squares counter",
        )
    return name


def counter_note(counter: str | None) -> str | None:
    """What the counter type means for the Allan deviation, in one sentence."""
    return None if counter is None else COUNTER_TYPES[check_counter(counter)]
