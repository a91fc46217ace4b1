"""Confidence intervals of a deviation from its equivalent degrees of freedom.

A stability variance estimate s^2 of a power-law noise process is treated as
chi-squared distributed, ``nu s^2 / sigma^2 ~ chi2(nu)``, with an equivalent
degrees of freedom (EDF) ``nu``. The two-sided interval at confidence 1 - p is

    nu s^2 / chi2_{1-p/2}(nu) <= sigma^2 <= nu s^2 / chi2_{p/2}(nu),

square-rooted for the deviation [1]_. The chi-squared quantiles come from
``scipy.special.chdtri`` (the inverse of the upper tail), loaded on first use
so that reading a log does not pay for scipy.

References
----------
.. [1] W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065
   (2008), section 5.3 (confidence intervals, eqs. 38-40).
"""

from __future__ import annotations

from numbers import Real
from typing import Any, NamedTuple

import numpy as np

from .errors import InputError

__all__ = ["ConfidenceInterval", "chi2_interval", "check_confidence", "MAX_CONFIDENCE"]


class ConfidenceInterval(NamedTuple):
    """Lower and upper bounds of a confidence interval (arrays or floats)."""

    low: Any
    high: Any


#: The largest level whose tails, (1 - level)/2 each, chi-squared quantiles resolve in
#: float64 (1 - tail must differ from 1; machine epsilon is 2.2e-16).
MAX_CONFIDENCE = 1.0 - 1e-12


def check_confidence(confidence: Any, name: str = "confidence", written: Any = None) -> float:
    """A two-sided confidence level as a float strictly inside (0, 1).

    ``written`` is the level as the user wrote it (text), shown in the message
    instead of the float it became (``0.99999999999999999`` is 1.0 as a float).
    """
    shown = repr(written if written is not None else confidence)
    if isinstance(confidence, bool) or not isinstance(confidence, Real):
        raise InputError(f"{name} must be a number in (0, 1), got {shown}")
    level = float(confidence)
    if not 0.0 < level < 1.0:
        raise InputError(f"{name} must lie strictly between 0 and 1, got {shown}")
    if level > MAX_CONFIDENCE:
        raise InputError(
            f"{name} {shown} is too close to 1: its tails are too small to compute an "
            "interval from",
            hint="pass a level of at most 1 - 1e-12, e.g. 0.9999",
        )
    return level


def chi2_interval(deviation: Any, edf: Any, confidence: float = 0.683) -> ConfidenceInterval:
    """Chi-squared confidence interval of a deviation (NIST SP 1065 section 5.3).

    Parameters
    ----------
    deviation
        Deviation(s) s (bias-corrected where that applies); arrays broadcast with
        ``edf``.
    edf
        Equivalent degrees of freedom nu (non-integer allowed).
    confidence
        Two-sided confidence level in (0, 1), 0.683 by default.

    Returns
    -------
    ConfidenceInterval
        ``(low, high)``, floats for scalar input, arrays otherwise. Bounds are NaN
        where the deviation is NaN, infinite or negative, or the EDF is NaN,
        infinite or <= 0. Always ``low <= deviation <= high``: at low confidence
        levels the chi-squared interval can miss the point estimate (the
        chi-squared median lies below its mean), and is then widened to reach it.
        A fraction of one degree of freedom can give an infinite upper bound.
    """
    from scipy.special import chdtri  # loaded on first use: start-up of reading

    level = check_confidence(confidence)
    try:
        s = np.asarray(deviation, dtype=float)
        nu = np.asarray(edf, dtype=float)
        s, nu = np.broadcast_arrays(s, nu)
    except (TypeError, ValueError):
        raise InputError(
            "deviation and edf must be numbers or arrays of broadcastable shapes, "
            f"got {type(deviation).__name__} and {type(edf).__name__}"
        ) from None
    p = 1.0 - level
    good = np.isfinite(s) & (s >= 0) & np.isfinite(nu) & (nu > 0)
    nu_ok = np.where(good, nu, 1.0)
    upper_q = chdtri(nu_ok, p / 2.0)  # upper-tail probability p/2
    lower_q = chdtri(nu_ok, 1.0 - p / 2.0)  # upper-tail probability 1 - p/2
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        low = s * np.sqrt(nu_ok / upper_q)
        high = s * np.sqrt(nu_ok / lower_q)
    high = np.where(np.isnan(high) & good, np.inf, high)
    low = np.where(good, np.minimum(low, s), np.nan)
    high = np.where(good, np.maximum(high, s), np.nan)
    if low.ndim == 0:
        return ConfidenceInterval(float(low), float(high))
    return ConfidenceInterval(low, high)
