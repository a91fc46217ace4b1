"""Judging measured MTIE, TDEV and max|TE| against a time-error mask.

Masks are judged on the measured values: MTIE is a maximum and has no
chi-squared interval, and telecom practice judges TDEV against its mask on the
estimate too (ITU-T G.810 and the clock Recommendations, common practice), so
a tau passes when the measured value is at or below the limit
(:func:`stability.spec.judging.value_verdict`). The margin at a tau is
measured / limit (below 1 passes); the tau of least margin is the one with the
largest ratio.

A tau inside the mask that the record is too short for (beyond the
observation-window rule of :func:`stability.timing.metrics.longest_tau`) is
``not measured``: it is listed at the mask's segment boundaries and its end,
so a reader sees which part of the mask the record did not reach. The overall
verdict is ``fail`` when any tau fails, else ``pass`` when any tau was judged,
else ``not measured``; :attr:`MaskJudgement.coverage` says over which taus it
holds. A verdict covers these data under these settings only: it does not
replace the conformance procedure of the Recommendation or of the lab.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..errors import InputError
from ..spec.judging import value_verdict
from ..spec.model import Verdict
from .masks import Mask
from .metrics import longest_tau

__all__ = ["MaskCheck", "MaskJudgement", "judge_mask", "MASK_CAUTION"]

#: The caution printed with every mask verdict.
MASK_CAUTION = (
    "Judged on the measured values (no confidence interval) over the taus listed; "
    "the bundled limits are recalled from the ITU-T Recommendations, not read from "
    "them: check them against your copy. The verdict covers these data under these "
    "settings and does not replace the conformance procedure of the Recommendation "
    "or the lab's accredited procedure."
)


@dataclass(frozen=True)
class MaskCheck:
    """One judged tau of one statistic (or max|TE|, tau NaN)."""

    statistic: str
    tau: float
    measured: float  # seconds; NaN when not measured
    limit: float  # seconds
    verdict: Verdict
    reason: str = ""

    @property
    def margin(self) -> float:
        """measured / limit (below 1 passes); NaN when not measured."""
        if not math.isfinite(self.measured):
            return math.nan
        return self.measured / self.limit

    def to_dict(self) -> dict[str, Any]:
        def plain(v: float) -> float | None:
            return float(v) if math.isfinite(v) else None

        return {
            "statistic": self.statistic,
            "tau_s": plain(self.tau),
            "measured_s": plain(self.measured),
            "limit_s": plain(self.limit),
            "margin": plain(self.margin),
            "verdict": str(self.verdict),
            "reason": self.reason,
        }


@dataclass(frozen=True)
class MaskJudgement:
    """A record judged against a mask: the checks, the overall verdict and what it covers."""

    mask: Mask
    checks: tuple[MaskCheck, ...]
    verdict: Verdict

    def of(self, statistic: str) -> list[MaskCheck]:
        return [c for c in self.checks if c.statistic == statistic]

    def verdict_of(self, statistic: str) -> Verdict:
        return _overall(c.verdict for c in self.of(statistic))

    def least_margin(self, statistic: str | None = None) -> MaskCheck | None:
        """The judged check with the largest measured/limit ratio (the least margin)."""
        judged = [
            c
            for c in self.checks
            if c.verdict is not Verdict.NOT_MEASURED
            and (statistic is None or c.statistic == statistic)
        ]
        return max(judged, key=lambda c: c.margin) if judged else None

    def coverage(self, statistic: str) -> tuple[float, float] | None:
        """(first, last) tau judged for ``statistic``; None when none was."""
        taus = [c.tau for c in self.of(statistic) if c.verdict is not Verdict.NOT_MEASURED]
        return (min(taus), max(taus)) if taus else None

    def not_measured(self, statistic: str) -> list[float]:
        return [c.tau for c in self.of(statistic) if c.verdict is Verdict.NOT_MEASURED]

    def to_dict(self) -> dict[str, Any]:
        least = self.least_margin()
        stats = sorted({c.statistic for c in self.checks})
        return {
            "mask": self.mask.to_dict(),
            "verdict": str(self.verdict),
            "by_statistic": {
                s: {
                    "verdict": str(self.verdict_of(s)),
                    "judged_from_s": (self.coverage(s) or (None, None))[0],
                    "judged_to_s": (self.coverage(s) or (None, None))[1],
                    "not_measured_taus_s": self.not_measured(s),
                    "least_margin": None
                    if self.least_margin(s) is None
                    else self.least_margin(s).to_dict(),
                }
                for s in stats
            },
            "least_margin": None if least is None else least.to_dict(),
            "checks": [c.to_dict() for c in self.checks],
            "caution": MASK_CAUTION,
        }


def _overall(verdicts: Any) -> Verdict:
    verdicts = list(verdicts)
    if any(v is Verdict.FAIL for v in verdicts):
        return Verdict.FAIL
    if any(v is Verdict.PASS for v in verdicts):
        return Verdict.PASS
    return Verdict.NOT_MEASURED


def _curve_checks(
    mask: Mask, statistic: str, taus: np.ndarray, values: np.ndarray, span: float
) -> list[MaskCheck]:
    curve = mask.curve(statistic)
    if curve is None:
        return []
    taus = np.asarray(taus, dtype=np.float64)
    values = np.asarray(values, dtype=np.float64)
    limits = curve.limit_at(taus) if taus.size else np.zeros(0)
    reach = longest_tau(statistic, span)
    checks: list[MaskCheck] = []
    for tau, value, limit in zip(taus, values, limits, strict=True):
        if not math.isfinite(limit):
            continue  # outside the mask's taus: not part of the judgement
        if tau > reach * (1 + 1e-9):
            continue  # beyond the rule: listed below as not measured
        verdict = value_verdict(float(value), float(limit))
        reason = "" if math.isfinite(value) else "no estimate at this tau (gaps)"
        checks.append(MaskCheck(statistic, float(tau), float(value), float(limit), verdict, reason))
    # the mask's taus the record does not reach: its segment ends beyond the rule
    ends = sorted({s.tau_to for s in curve.segments if math.isfinite(s.tau_to)})
    lo = curve.tau_range[0]
    beyond = [t for t in ends if t > reach]  # an open end has no tau to list
    rule = "the record" if statistic == "mtie" else "the record / 12 (rule of thumb)"
    for tau in beyond:
        if tau < lo:
            continue
        checks.append(
            MaskCheck(
                statistic,
                float(tau),
                math.nan,
                float(curve.limit_at(tau)[0]),
                Verdict.NOT_MEASURED,
                f"record too short: {statistic.upper()} is judged up to {rule}, {reach:.4g} s",
            )
        )
    return checks


def judge_mask(
    mask: Mask,
    *,
    span: float,
    mtie: tuple[Any, Any] | None = None,
    tdev: tuple[Any, Any] | None = None,
    max_abs_te: float | None = None,
) -> MaskJudgement:
    """Judge measured values against ``mask``.

    Parameters
    ----------
    mask
        The :class:`Mask`.
    span
        Record length in seconds (for the observation-window rule).
    mtie, tdev
        ``(taus, values)`` in seconds, or None when not measured.
    max_abs_te
        The record's max|TE| in seconds, judged when the mask limits it.
    """
    if not isinstance(mask, Mask):
        raise InputError(f"mask must be a stability.timing.Mask, got {type(mask).__name__}")
    if not (math.isfinite(span) and span > 0):
        raise InputError(f"span must be a positive number of seconds, got {span!r}")
    checks: list[MaskCheck] = []
    for name, measured in (("mtie", mtie), ("tdev", tdev)):
        curve = mask.curve(name)
        if curve is None:
            continue
        if measured is None:
            checks.append(
                MaskCheck(
                    name,
                    curve.tau_range[0],
                    math.nan,
                    float(curve.limit_at(curve.tau_range[0])[0]),
                    Verdict.NOT_MEASURED,
                    f"{name.upper()} was not computed",
                )
            )
            continue
        checks.extend(_curve_checks(mask, name, measured[0], measured[1], span))
    if mask.max_abs_te is not None:
        value = math.nan if max_abs_te is None else float(max_abs_te)
        checks.append(
            MaskCheck(
                "max_abs_te",
                math.nan,
                value,
                mask.max_abs_te,
                value_verdict(value, mask.max_abs_te),
                "" if math.isfinite(value) else "max|TE| was not measured",
            )
        )
    return MaskJudgement(mask, tuple(checks), _overall(c.verdict for c in checks))
