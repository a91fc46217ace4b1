"""Confidence-aware verdicts of a results table against a specification.

:func:`judge` compares a :class:`~stability.table.StabilityTable` with a
:class:`~stability.spec.model.Spec`. The verdict at each tau uses the
confidence interval of the estimate, recomputed at the specification's
confidence level from the stored equivalent degrees of freedom
(chi-squared interval, [1]_ section 5.3):

``pass``
    the upper bound of the interval is at or below the limit;
``fail``
    the lower bound is above the limit;
``inconclusive``
    the limit lies inside the interval (the data cannot decide at that
    confidence), or the row has a deviation but no interval (no EDF);
``not measured``
    the record has no estimate at that tau (too short, or the tau is neither
    measured nor, with interpolation on, between two measured taus).

This is the guarded-acceptance idea of decision rules that take the
measurement uncertainty into account ([2]_ section 7.8.6, [3]_): a result
is only called conforming when its whole interval is inside the limit.

Interpolation (``interpolate = true``, the default): the limit is a
straight line on log-log axes between listed taus; every measured tau of the
statistic within the specification's tau range is judged against that line,
and a listed tau that was not itself measured is judged on the estimate,
lower and upper bound interpolated log-log between the neighbouring measured
taus (flagged ``interpolated``). With ``interpolate = false`` only the listed
taus are judged, and only where the table has a row at that tau (to 1e-9
relative).

The overall verdict is ``fail`` when any judged tau fails, ``pass`` when every
judged tau passes (and at least one was judged), ``not measured`` when no tau
could be judged, and ``inconclusive`` otherwise.

Reference contribution: a measurement against a reference shows the
combined instability of both. A reference should be at least three times
more stable than the device (common practice, [1]_ section 5.13); taus where
the reference's stated stability exceeds one third of the measured value are
flagged ``reference-limited``, and the device-only estimate
``sqrt(max(0, measured^2 - reference^2))`` (independent noises add in
variance, [1]_ section 5.13) is reported beside the measured value, never in
its place.

References
----------
.. [1] W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065
   (2008), sections 5.3 (confidence intervals) and 5.13 (reference and
   measurement-system noise).
.. [2] ISO/IEC 17025:2017, *General requirements for the competence of
   testing and calibration laboratories*, 7.1.3 and 7.8.6 (decision rules).
.. [3] JCGM 106:2012, *Evaluation of measurement data - The role of
   measurement uncertainty in conformity assessment*, section 8 (guarded
   acceptance).
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..deviations.registry import get_statistic
from ..errors import InputError, SpecError
from ..table import StabilityTable
from .model import _REL_TOL, REFERENCE_RATIO, Check, Judgement, Reference, Spec, Verdict

__all__ = ["judge", "reference_contribution", "verdict_for", "overall_verdict"]


def verdict_for(low: float, high: float, limit: float, deviation: float = math.nan) -> Verdict:
    """The verdict of one estimate against one limit (see the module notes).

    ``pass`` when ``high <= limit``, ``fail`` when ``low > limit``,
    ``inconclusive`` otherwise or when the interval is missing but the
    estimate exists, ``not measured`` when neither exists.
    """
    if math.isfinite(low) and math.isfinite(high):
        if high <= limit:
            return Verdict.PASS
        if low > limit:
            return Verdict.FAIL
        return Verdict.INCONCLUSIVE
    if math.isfinite(deviation):
        return Verdict.INCONCLUSIVE
    return Verdict.NOT_MEASURED


#: How a statistic without a chi-squared interval (MTIE, TIE rms) is judged.
VALUE_RULE = (
    "judged on the measured value (pass when at or below the limit): no confidence "
    "interval applies to this statistic"
)


def value_verdict(deviation: float, limit: float) -> Verdict:
    """The verdict of a statistic without an interval: pass when at or below the limit.

    A maximum or rms time error (MTIE, TIE rms) is not chi-squared distributed, so
    there is no interval to guard the decision with; telecom masks are judged on
    the measured value (ITU-T G.810 and the clock Recommendations, common practice).
    """
    if not math.isfinite(deviation):
        return Verdict.NOT_MEASURED
    return Verdict.PASS if deviation <= limit else Verdict.FAIL


def overall_verdict(verdicts: Iterable[Verdict | str]) -> Verdict:
    """``fail`` if any fails; ``pass`` if all pass; ``not measured`` if none judged.

    The verdicts may be :class:`Verdict` members or their words; ``inconclusive``
    otherwise.
    """
    verdicts = list(verdicts)
    judged = [v for v in verdicts if v != Verdict.NOT_MEASURED]
    if any(v == Verdict.FAIL for v in verdicts):
        return Verdict.FAIL
    if not judged:
        return Verdict.NOT_MEASURED
    if all(v == Verdict.PASS for v in verdicts):
        return Verdict.PASS
    return Verdict.INCONCLUSIVE


def _validate_judge_args(table: Any, spec: Any) -> None:
    if not isinstance(table, StabilityTable):
        raise InputError(
            f"table must be a stability.StabilityTable, got {type(table).__name__}",
            hint="build one with stability.analyze",
        )
    if not isinstance(spec, Spec):
        raise InputError(
            f"spec must be a stability.spec.Spec, got {type(spec).__name__}",
            hint="read one with stability.spec.load_spec",
        )
    if spec.statistic not in table.results:
        raise SpecError(
            f"the specification is for {spec.statistic!r}, which the analysis did not compute",
            path=spec.path,
            hint=f"add {spec.statistic} to --stats",
        )


def _loglog(x: float, xs: np.ndarray, ys: np.ndarray) -> float:
    return float(np.exp(np.interp(math.log(x), np.log(xs), np.log(ys))))


def reference_contribution(deviation: Any, reference: Any) -> tuple[np.ndarray, np.ndarray]:
    """Reference-limited flags and device-only estimates.

    Returns ``(limited, device_only)``: ``limited`` is True where the reference
    exceeds one third of the measured deviation (:data:`REFERENCE_RATIO`,
    common practice); ``device_only`` is sqrt(max(0, measured^2 - reference^2))
    (independent noises add in variance, NIST SP 1065 section 5.13), NaN where
    either is missing.
    """
    dev = np.asarray(deviation, dtype=float)
    ref = np.asarray(reference, dtype=float)
    ok = np.isfinite(dev) & np.isfinite(ref)
    limited = ok & (ref * REFERENCE_RATIO > dev)
    with np.errstate(invalid="ignore"):
        device = np.where(ok, np.sqrt(np.maximum(0.0, dev**2 - ref**2)), np.nan)
    return limited, device


@dataclass(frozen=True)
class _Rows:
    """The rows of one statistic with their interval at the specification's confidence."""

    tau: np.ndarray
    deviation: np.ndarray
    low: np.ndarray
    high: np.ndarray
    edf: np.ndarray

    on_value: bool = False

    @classmethod
    def of(cls, result: Any, confidence: float) -> _Rows:
        low, high = result.interval(confidence)
        return cls(
            tau=result.tau,
            deviation=result.deviation,
            low=np.atleast_1d(np.asarray(low, dtype=float)),
            high=np.atleast_1d(np.asarray(high, dtype=float)),
            edf=result.edf,
            on_value=not get_statistic(result.statistic).has_interval,
        )

    def verdict(self, low: float, high: float, limit: float, deviation: float) -> Verdict:
        """The verdict of one estimate: on its interval, or on the value where none applies."""
        if self.on_value:
            return value_verdict(deviation, limit)
        return verdict_for(low, high, limit, deviation)

    @property
    def usable(self) -> np.ndarray:
        """Rows with an estimate (finite and positive)."""
        return np.isfinite(self.deviation) & (self.deviation > 0)

    @property
    def bounded(self) -> np.ndarray:
        """Rows with an estimate and both (positive) bounds."""
        return self.usable & np.isfinite(self.low) & np.isfinite(self.high) & (self.low > 0)

    def index(self, tau: float) -> int | None:
        """The row at ``tau`` (to 1e-9 relative), if any."""
        close = np.flatnonzero(np.abs(self.tau - tau) <= _REL_TOL * tau)
        return int(close[0]) if close.size else None

    def check(self, i: int, tau: float, limit: float, listed: bool) -> Check:
        """The check of row ``i`` against ``limit``."""
        d, lo, hi = float(self.deviation[i]), float(self.low[i]), float(self.high[i])
        verdict = self.verdict(lo, hi, limit, d)
        note = ""
        if self.on_value and verdict is not Verdict.NOT_MEASURED:
            note = VALUE_RULE
        elif verdict is Verdict.INCONCLUSIVE and not (math.isfinite(lo) and math.isfinite(hi)):
            note = "no confidence interval at this tau (no EDF)"
        if verdict is Verdict.NOT_MEASURED:
            note = "no estimate at this tau"
        return Check(
            tau_s=float(tau),
            limit=float(limit),
            listed=listed,
            deviation=d,
            ci_low=lo,
            ci_high=hi,
            edf=float(self.edf[i]),
            interpolated=False,
            verdict=verdict,
            note=note,
        )


def _listed_check(rows: _Rows, tau: float, limit: float, interpolate: bool) -> Check:
    """The check at a listed tau: on its row, interpolated between rows, or not measured."""
    i = rows.index(tau)
    if i is not None:
        return rows.check(i, tau, limit, True)
    check = Check(
        tau_s=tau,
        limit=limit,
        listed=True,
        deviation=math.nan,
        ci_low=math.nan,
        ci_high=math.nan,
        edf=math.nan,
        interpolated=False,
        verdict=Verdict.NOT_MEASURED,
    )
    usable, bounded, taus = rows.usable, rows.bounded, rows.tau
    measured = taus[usable]
    if not interpolate:
        check.note = "tau not in the analysis grid and interpolation is off"
    elif measured.size < 2 or not measured.min() < tau < measured.max():
        check.note = "outside the measured taus (record too short or grid too narrow)"
    else:
        # Neighbouring measured taus with an estimate; bounds only if both have them.
        below = np.flatnonzero(usable & (taus < tau))[-1]
        above = np.flatnonzero(usable & (taus > tau))[0]
        pair = np.array([below, above])
        check.deviation = _loglog(tau, taus[pair], rows.deviation[pair])
        check.interpolated = True
        if bounded[pair].all():
            check.ci_low = _loglog(tau, taus[pair], rows.low[pair])
            check.ci_high = _loglog(tau, taus[pair], rows.high[pair])
            check.note = (
                f"estimate and bounds interpolated log-log between {taus[below]:g} s "
                f"and {taus[above]:g} s"
            )
        else:
            check.note = "estimate interpolated; a neighbour has no confidence interval"
        check.verdict = rows.verdict(check.ci_low, check.ci_high, limit, check.deviation)
        if rows.on_value:
            check.note += f"; {VALUE_RULE}"
    return check


def _between_checks(rows: _Rows, spec: Spec) -> list[Check]:
    """Checks of the measured taus strictly between the listed ones, on the limit line."""
    listed = [t for t, _ in spec.limits]
    taus = rows.tau
    between = [
        i
        for i in range(len(taus))
        if spec.limits[0][0] < taus[i] < spec.limits[-1][0]
        and not any(math.isclose(taus[i], t, rel_tol=_REL_TOL) for t in listed)
    ]
    return [rows.check(i, float(taus[i]), float(spec.limit_at(taus[i])), False) for i in between]


def _check_reference_quantity(spec: Spec, reference: Reference | None) -> None:
    """Refuse to combine a reference's figures with a measurement of another quantity."""
    if reference is None or not reference.has_stability:
        return
    measured = get_statistic(spec.statistic)
    stated = reference.quantity()
    if stated != measured.estimates:
        said = (
            "its levels (an Allan variance model)"
            if reference.levels
            else (f"{reference.statistic or 'oadev'} figures")
        )
        raise SpecError(
            f"the reference states {said}, which cannot be combined with the "
            f"specification's {measured.name} ({measured.unit or 'fractional frequency'})",
            path=spec.path,
            hint="state the reference's stability as the statistic the specification judges",
        )


def _add_reference(checks: list[Check], reference: Reference, f_h: float) -> list[str]:
    """Fill in each check's reference, flag and device-only estimate; return the notes."""
    values, notes = reference.deviation([c.tau_s for c in checks], f_h=f_h)
    limited, device = reference_contribution([c.deviation for c in checks], values)
    for c, r, lim, d in zip(checks, values, limited, device, strict=True):
        c.reference, c.reference_limited, c.device_only = float(r), bool(lim), float(d)
    if limited.any():
        notes.append(
            "reference-limited at "
            + ", ".join(f"{c.tau_s:g} s" for c in checks if c.reference_limited)
            + ": the reference's stated stability exceeds one third of the measured value"
        )
    return notes


def judge(table: StabilityTable, spec: Spec, *, reference: Reference | None = None) -> Judgement:
    """Judge a results table against a specification.

    Parameters
    ----------
    table
        The qualified results (from :func:`stability.analyze`).
    spec
        The specification (from :func:`load_spec`).
    reference
        The reference oscillator (``Info.reference``); when it states a
        stability, every check carries the reference-limited flag and the
        device-only estimate.

    Returns
    -------
    Judgement
        One :class:`Check` per listed tau and, with interpolation on, one per
        measured tau between them, in increasing tau; the overall verdict.
    """
    _validate_judge_args(table, spec)
    _check_reference_quantity(spec, reference)
    rows = _Rows.of(table[spec.statistic], spec.confidence)
    notes: list[str] = []
    checks = [_listed_check(rows, tau, limit, spec.interpolate) for tau, limit in spec.limits]
    if spec.interpolate and len(spec.limits) > 1:
        between = _between_checks(rows, spec)
        checks.extend(between)
        if between:
            notes.append(
                f"{len(between)} measured tau(s) between the listed limits judged against "
                "the limit line interpolated log-log"
            )
    checks.sort(key=lambda c: c.tau_s)
    if reference is not None and reference.has_stability:
        # Level models without their own f_h use the analysis bandwidth, else 1 / (2 tau0).
        f_h = float(table.settings.get("f_h_hz") or 0.0) or 0.5 / float(
            getattr(table.measurement, "tau0", 1.0) or 1.0
        )
        notes.extend(_add_reference(checks, reference, f_h))
    return Judgement(
        spec=spec, checks=checks, overall=overall_verdict([c.verdict for c in checks]), notes=notes
    )
