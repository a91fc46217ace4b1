"""Counter dead time: Barnes' bias function B2 (NBS Technical Note 375).

A counter that leaves a dead time between gates measures averages of length tau
repeated every T > tau; the Allan variance of such data is biased against the
no-dead-time value by B2(r, mu), r = T/tau, for power-law noise with AVAR ~ tau^mu.

References
----------
.. [1] J. A. Barnes, "Tables of bias functions, B1 and B2, for variances based on
   finite samples of processes with power law spectral densities", NBS Technical
   Note 375 (1969).
"""

from __future__ import annotations

import math
from numbers import Real
from typing import Any

import numpy as np

from .errors import InputError

__all__ = ["barnes_b2"]


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
