"""Reading checks: invented logs in several dialects read to values known from their making.

Each log of ``data/logs/`` (see :mod:`.shipped` and ``make_logs.py`` there) is read
with :func:`stability.read_log` and the options written beside it, and what was
read is compared with the values stated in ``logs.toml``:

* the number of phase points on the time grid and the number of missing samples
  (a missing row, an instrument's not-a-number reading, an error string), exactly;
* the sample interval tau0, within the resolution of the log's time stamps;
* the kind of the values (frequency or phase) and the nominal frequency, exactly;
* the mean fractional frequency and the Allan deviation at tau0 (from
  :func:`stability.estimate`), within 1e-6 relative plus the share of tau0 the
  stamps leave open (a tau0 off by that share scales both), and for the mean an
  absolute 1e-17: float64 holds an absolute reading near 10 MHz to 1.9e-16 of
  its value, and the mean of such rounding errors lies far below 1e-17.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from ..analysis import estimate
from ..errors import StabilityError
from ..ingest import read_log
from ..measurement import Measurement
from .checks import Check, number, relative_text
from .shipped import KnownLog, known_logs

__all__ = ["reading_checks", "RTOL", "MEAN_ATOL"]

#: Relative tolerance of the mean frequency and the Allan deviation read.
RTOL = 1e-6
#: Absolute tolerance of the mean fractional frequency read.
MEAN_ATOL = 1e-17

_SOURCE = "generated: logs.toml, computed by make_logs.py from the readings as written"


def _options_text(options: dict[str, Any]) -> str:
    return ", ".join(f"{k}={v}" for k, v in options.items()) or "no options"


def _check(
    log: KnownLog,
    quantity: str,
    tolerance: str,
    expected: str,
    computed: str,
    difference: str,
    passed: bool,
    values: dict[str, Any],
) -> Check:
    return Check(
        group="reading",
        name=f"{log.path.name}: {quantity}",
        compared=f"{quantity} read from {log.path.name} ({log.dialect}; "
        f"{_options_text(log.options)}) against the value it was generated with",
        source=_SOURCE,
        tolerance=tolerance,
        expected=expected,
        computed=computed,
        difference=difference,
        passed=passed,
        basis="generated",
        values={"log": log.path.name, "quantity": quantity, **values},
    )


def _exact(log: KnownLog, quantity: str, expected: Any, got: Any) -> Check:
    same = expected == got
    return _check(log, quantity, "equal", _text(expected), _text(got),
                  "none" if same else "differs", same,
                  {"expected": expected, "computed": got})  # fmt: skip


def _text(value: Any) -> str:
    return "none" if value is None else f"{value:g}" if isinstance(value, float) else str(value)


def _close(log: KnownLog, quantity: str, expected: float, got: float, atol: float) -> Check:
    rtol = RTOL + log.stamp_resolution_s / log.tau0_s
    ok = math.isfinite(got) and abs(got - expected) <= atol + rtol * abs(expected)
    tolerance = f"relative difference at most {rtol:.3g}"
    if atol:
        tolerance += f", plus {atol:g} absolute"
    rel = got / expected - 1.0 if expected else math.nan
    return _check(log, quantity, tolerance, number(expected), number(got),
                  relative_text(rel) if expected else f"{got - expected:+.2e}", ok,
                  {"expected": expected, "computed": got, "relative_tolerance": rtol,
                   "absolute_tolerance": atol})  # fmt: skip


def _tau0(log: KnownLog, got: float) -> Check:
    tol = log.stamp_resolution_s
    ok = abs(got - log.tau0_s) <= tol + 1e-12 * log.tau0_s
    tolerance = f"within {tol:g} s, the resolution of the stamps" if tol else "equal"
    return _check(log, "tau0 (s)", tolerance, f"{log.tau0_s:g}", f"{got:.9g}",
                  f"{got - log.tau0_s:+.3g} s", ok,
                  {"expected": log.tau0_s, "computed": got})  # fmt: skip


def _log_checks(log: KnownLog) -> list[Check]:
    try:
        meas = read_log(log.path, **log.options)
    except StabilityError as exc:
        return [_check(log, "reading", "read without error", "read", f"error: {exc}",
                       "not read", False, {"error": str(exc)})]  # fmt: skip
    return [
        _exact(log, "phase points", log.phase_points, meas.n),
        _exact(log, "missing samples", log.gaps, meas.gap_count()),
        _tau0(log, meas.tau0),
        _exact(log, "kind", log.kind, meas.kind),
        _exact(log, "nominal frequency (Hz)", log.nominal_hz, meas.nominal),
        _close(log, "mean fractional frequency", log.mean_fractional_frequency,
               _mean(meas), MEAN_ATOL),
        _close(log, "Allan deviation at tau0", log.adev_tau0, _adev(meas), 0.0),
    ]  # fmt: skip


def _mean(meas: Measurement) -> float:
    y = meas.frequency()
    return float(np.nanmean(y)) if np.isfinite(y).any() else math.nan


def _adev(meas: Measurement) -> float:
    result = estimate(meas, "oadev", taus=[meas.tau0])
    return float(result.deviation[0]) if result.deviation.size else math.nan


def reading_checks() -> list[Check]:
    """Every reading check (see the module docstring)."""
    checks: list[Check] = []
    for log in known_logs():
        checks.extend(_log_checks(log))
    return checks
