"""Coverage of the confidence intervals: a seeded Monte-Carlo run judged by a binomial test.

For each statistic chosen, each power-law noise type (WPM, FPM, WFM, FFM, RWFM)
and each averaging factor m, many records of N phase points of Kasdin-Walter noise
(:func:`stability.simulate.power_law`, reference 1) are drawn from a fixed seed.
For each record the statistic is estimated (:func:`stability.estimate`), its bias
corrected and its interval set at 68.3 % and 95 % from the statistic's own EDF and
bias models for the noise type simulated (the registry's rules, exactly as the
analysis applies them once the type is identified), and the run counts how often
the interval holds the true value.

The true value is exact, not simulated: the generated record is x = L w, with w
white of unit variance and L the lower-triangular Kasdin-Walter filter, and every
estimator here is a quadratic form x'Qx, so its expectation is
E[x'Qx] = sum_j (L e_j)' Q (L e_j): the sum of the estimator's squared values on
the N columns of L. A bias-corrected statistic (total family) is judged against
the expectation of the unbiased statistic that estimates the same quantity.

Acceptance rule (reference 2): the count of hits k out of T records is compared
with the nominal level p by the one-sided exact binomial test
(:func:`scipy.stats.binomtest`, ``alternative="less"``): a case fails when its
p-value is below ``p_min`` (1e-4), i.e. when the intervals hold the truth
significantly less often than their level: an interval too narrow makes a verdict
look surer than it is. A case whose intervals hold the truth significantly more
often (the same test the other way) passes and is marked conservative: the
interval is wider than needed, which errs on the safe side of a verdict. The report
lists the counts each rule accepts. The seed is fixed, so a run repeats exactly.

What this does not check: the noise identification (here the type is given), and
statistics without a chi-squared interval (MTIE, TIE rms) or with tau = 0.75 m tau0
(the Theo family).

References
----------
1. N. J. Kasdin, T. Walter, "Discrete simulation of power law noise", Proc. 1992
   IEEE Frequency Control Symposium, pp. 274-283.
2. C. J. Clopper, E. S. Pearson, "The use of confidence or fiducial limits
   illustrated in the case of the binomial", Biometrika 26 (1934) 404-413 (the
   exact binomial test; common practice for coverage studies).
3. C. A. Greenhall, W. J. Riley, "Uncertainty of stability variances based on
   finite differences", PTTI 2003 (the EDF of the Allan family).
"""

from __future__ import annotations

import functools
import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np

from ..analysis import estimate
from ..deviations import STATISTICS, get_statistic
from ..deviations.registry import Statistic
from ..errors import InputError
from ..intervals import chi2_interval
from ..measurement import Measurement
from ..powerlaw import ALPHAS
from ..simulate import power_law, white_noise_variance
from .checks import Check

__all__ = [
    "CoveragePlan",
    "DEFAULT_PLAN",
    "THOROUGH_PLAN",
    "NOISE_NAMES",
    "coverage_statistics",
    "check_coverage_stats",
    "coverage_checks",
    "acceptance_range",
]

NOISE_NAMES = {2: "WPM", 1: "FPM", 0: "WFM", -1: "FFM", -2: "RWFM"}


@dataclass(frozen=True)
class CoveragePlan:
    """Sizes of a coverage run: record length, records per case, averaging factors."""

    points: int = 512
    trials: int = 300
    factors: tuple[int, ...] = (1, 4, 16, 64)
    alphas: tuple[int, ...] = ALPHAS
    levels: tuple[float, ...] = (0.683, 0.95)
    seed: int = 20_261_202
    p_min: float = 1e-4

    def to_dict(self) -> dict[str, object]:
        return {
            "points": self.points,
            "trials": self.trials,
            "averaging_factors": list(self.factors),
            "noise_types": [NOISE_NAMES[a] for a in self.alphas],
            "levels": list(self.levels),
            "seed": self.seed,
            "p_min": self.p_min,
        }


#: The default run: 300 records of 512 points, m = 1, 4, 16, 64.
DEFAULT_PLAN = CoveragePlan()
#: ``--thorough``: 2000 records of 1024 points, m = 1, 2, 4, ..., 128.
THOROUGH_PLAN = CoveragePlan(points=1024, trials=2000, factors=(1, 2, 4, 8, 16, 32, 64, 128))


def _eligible(stat: Statistic) -> str | None:
    """Why a statistic cannot take part, or None when it can."""
    if not stat.has_interval:
        return f"{stat.name} has no chi-squared interval"
    if stat.tau_factor != 1.0 or stat.m_step != 1:
        return f"{stat.name} sets tau = {stat.tau_factor:g} m tau0 (not checked here)"
    return None


def coverage_statistics() -> list[str]:
    """The statistics whose interval coverage this check can run."""
    return [name for name, stat in STATISTICS.items() if _eligible(stat) is None]


def check_coverage_stats(stats: str | Sequence[str]) -> tuple[str, ...]:
    """The statistics of a ``stats`` list, checked: known, with a coverage check."""
    names = [s.strip().lower() for s in (stats.split(",") if isinstance(stats, str) else stats)]
    names = [n for n in dict.fromkeys(names) if n]
    if not names:
        raise InputError("no statistic given for the coverage check", hint="pass oadev,mdev")
    for name in names:
        why = _eligible(get_statistic(name))
        if why is not None:
            raise InputError(
                f"no coverage check for {name}: {why}",
                hint=f"choose from {', '.join(coverage_statistics())}",
            )
    return tuple(names)


def _reference(stat: Statistic) -> Statistic:
    """The statistic whose expectation is the truth: itself, or for a bias-corrected one
    the unbiased statistic that estimates the same quantity."""
    if stat.bias is None:
        return stat
    for other in STATISTICS.values():
        if (
            other.estimates == stat.estimates
            and other.bias is None
            and other.derived is None
            and _eligible(other) is None
        ):
            return other
    raise InputError(f"no unbiased statistic estimates {stat.estimates} like {stat.name}")


def _values(stat: Statistic, x: np.ndarray, factors: tuple[int, ...]) -> np.ndarray:
    result = estimate(Measurement.from_phase(x, 1.0), stat, taus=[float(m) for m in factors])
    got = dict(zip((int(m) for m in result.m), result.deviation, strict=True))
    return np.array([got.get(m, math.nan) for m in factors])


@functools.cache
def _filter(alpha: int, points: int) -> np.ndarray:
    """The Kasdin-Walter coefficients of phase output: beta = 2 - alpha (reference 1)."""
    beta = 2.0 - alpha
    k = np.arange(1, points, dtype=np.float64)
    return np.concatenate(([1.0], np.cumprod((beta / 2.0 + k - 1.0) / k)))


def _truth(stat: Statistic, alpha: int, plan: CoveragePlan, factors: tuple[int, ...]) -> np.ndarray:
    """The exact expected variance of the reference statistic at each factor."""
    reference = _reference(stat)
    coef = _filter(alpha, plan.points)
    total = np.zeros(len(factors))
    column = np.zeros(plan.points)
    for j in range(plan.points):
        column[:j] = 0.0
        column[j:] = coef[: plan.points - j]
        total += np.nan_to_num(_values(reference, column, factors)) ** 2
    return total


@functools.cache
def acceptance_range(trials: int, level: float, p_min: float) -> tuple[int, int]:
    """(fewest hits that pass, most hits not marked conservative) out of ``trials``.

    The first is the smallest count whose one-sided binomial p-value (fewer hits
    than the level) is at least ``p_min``; the second the largest count whose
    p-value the other way is at least ``p_min``.
    """
    from scipy.stats import binomtest  # loaded on first use

    def p_less(k: int) -> float:
        return float(binomtest(k, trials, level, alternative="less").pvalue)

    def p_greater(k: int) -> float:
        return float(binomtest(k, trials, level, alternative="greater").pvalue)

    centre = int(round(trials * level))
    low = centre
    while low > 0 and p_less(low - 1) >= p_min:
        low -= 1
    high = centre
    while high < trials and p_greater(high + 1) >= p_min:
        high += 1
    return low, high


def _records(alpha: int, plan: CoveragePlan) -> np.ndarray:
    rng = np.random.default_rng([plan.seed, ALPHAS.index(alpha)])
    h = 1.0 / white_noise_variance(alpha, 1.0, 1.0, "phase")  # unit white-noise variance
    return np.array(
        [power_law(alpha, plan.points, h=h, output="phase", seed=rng) for _ in range(plan.trials)]
    )


def _case_checks(
    stat: Statistic, alpha: int, records: np.ndarray, plan: CoveragePlan
) -> list[Check]:
    from scipy.stats import binomtest  # loaded on first use

    factors = tuple(m for m in plan.factors if m <= stat.allowed_m(plan.points))
    raw = np.array([_values(stat, x, factors) for x in records])
    truth = np.sqrt(_truth(stat, alpha, plan, factors))
    checks = []
    noise = NOISE_NAMES[alpha]
    reference = _reference(stat)
    for i, m in enumerate(factors):
        corrected = raw[:, i] / math.sqrt(stat.bias_factor(alpha, m, plan.points))
        edf = stat.edf_for(alpha, m, plan.points)
        for level in plan.levels:
            low, high = chi2_interval(corrected, edf, level)
            hits = int(np.sum((low <= truth[i]) & (truth[i] <= high)))
            p = float(binomtest(hits, plan.trials, level, alternative="less").pvalue)
            wide = float(binomtest(hits, plan.trials, level, alternative="greater").pvalue)
            conservative = wide < plan.p_min
            lo, hi = acceptance_range(plan.trials, level, plan.p_min)
            truth_text = stat.name if reference is stat else f"{reference.name} (same quantity)"
            checks.append(
                Check(
                    group="coverage",
                    name=f"{stat.name}, {noise}, m = {m}: {100 * level:.3g} % interval",
                    compared=(
                        f"share of {plan.trials} seeded records of {plan.points} phase points "
                        f"whose {100 * level:.3g} % interval (EDF {edf:.1f}, noise type given) "
                        f"holds the exact expected {truth_text}"
                    ),
                    source=(
                        f"EDF and bias models of {stat.name} in the statistics registry; "
                        "Kasdin & Walter 1992 noise; exact binomial test"
                        + (f"; unconfirmed: {stat.unconfirmed}" if stat.unconfirmed else "")
                    ),
                    tolerance=(
                        f"one-sided binomial p-value (too few hits) >= {plan.p_min:g}: at "
                        f"least {lo} hits of {plan.trials}; above {hi} conservative"
                    ),
                    expected=f"{level * plan.trials:.0f} of {plan.trials}",
                    computed=f"{hits} of {plan.trials}",
                    difference=f"p = {p:.3g}" + ("; conservative (wider)" if conservative else ""),
                    passed=p >= plan.p_min,
                    basis="statistical",
                    values={
                        "statistic": stat.name,
                        "noise": noise,
                        "alpha": alpha,
                        "m": m,
                        "level": level,
                        "edf": edf,
                        "truth": float(truth[i]),
                        "hits": hits,
                        "trials": plan.trials,
                        "p_value": p,
                        "p_value_too_many_hits": wide,
                        "conservative": conservative,
                        "accepted_hits": [lo, plan.trials],
                        "conservative_above": hi,
                    },
                )
            )
    return checks


def coverage_checks(
    stats: str | Sequence[str],
    plan: CoveragePlan = DEFAULT_PLAN,
    on_step: Callable[[str], None] | None = None,
) -> list[Check]:
    """Coverage checks of the intervals of ``stats`` (see the module docstring)."""
    names = check_coverage_stats(stats)
    checks: list[Check] = []
    for alpha in plan.alphas:
        records = _records(alpha, plan)
        for name in names:
            checks.extend(_case_checks(get_statistic(name), alpha, records, plan))
            if on_step is not None:
                on_step(f"coverage of {name}, {NOISE_NAMES[alpha]}")
    return checks
