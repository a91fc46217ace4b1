"""Coverage of the chi-squared intervals with the noise type given.

For each statistic, noise type and averaging factor: simulate many records of
Kasdin-Walter power-law phase noise (stability.simulate), compute the variance,
correct its bias and set the 68.3 % and 95 % intervals with the library's EDF and
bias factor for the TRUE alpha, and count how often the interval holds the true
deviation (the exact expectation of the reference variance: AVAR, MVAR or HVAR, from
tests/quadform.py). The count is judged by a two-sided binomial test.

The variances of all trials come from the estimator's quadratic form (one matrix
product for all trials); tests/test_quadform.py shows these forms are the project's
estimators, and each case re-checks the first trial against the estimator itself.
"""

from __future__ import annotations

import functools
import math

import numpy as np
import pytest
from quadform import Q_BUILDERS, moments
from scipy.stats import binomtest

from stability import deviations
from stability.deviations import bias_factor, edf_for, get_statistic
from stability.intervals import chi2_interval
from stability.simulate import power_law, white_noise_variance

N = 512
TRIALS = 300
LEVELS = (0.683, 0.95)
P_MIN = 1e-4  # binomial p-value below which the coverage is judged wrong
ALPHAS = (2, 1, 0, -1, -2)
LONG = 64

#: statistic -> (form it is computed from, reference form of the truth, scale of the variance)
STATS = {
    "oadev": ("oadev", "oadev"),
    "mdev": ("mdev", "mdev"),
    "tdev": ("mdev", "mdev"),
    "hdev": ("hdev", "ohdev"),
    "ohdev": ("ohdev", "ohdev"),
    "totdev": ("totdev", "oadev"),
    "mtot": ("mtot", "mdev"),
    "ttot": ("mtot", "mdev"),
    "htot": ("htot", "ohdev"),
    "theo1": ("theo1", "oadev"),
}

# Cases where the interval is honestly wider than nominal (a conservative stand-in EDF)
# or the model is known to miss; each is listed with its reason.
_CONSERVATIVE_HTOT = "HTOT uses OHDEV's EDF, a lower bound of HTOT's: the intervals over-cover"
_MTOT_WPM = "SP 1065's MTOT EDF 1.90 T/tau - 2.10 is about twice the exact EDF for WPM at m = 2"
XFAIL: dict[tuple[str, int, int], str] = {
    ("totdev", 0, 2): "Howe's TOTVAR WFM EDF 1.5 T/tau is 30 % above the exact EDF at m = 2",
    ("mtot", 2, 2): _MTOT_WPM,
    ("ttot", 2, 2): _MTOT_WPM,
    ("htot", 1, 8): _CONSERVATIVE_HTOT,
    ("htot", 1, LONG): _CONSERVATIVE_HTOT,
    ("htot", 2, LONG): _CONSERVATIVE_HTOT,
    ("theo1", 1, LONG): "no Theo1 FPM EDF: the smaller of the WPM and WFM ones, conservative",
}


@functools.cache
def _phase(alpha: int) -> np.ndarray:
    """TRIALS records of N phase samples, unit white-noise variance (seeded per type)."""
    h = 1.0 / white_noise_variance(alpha, 1.0, 1.0, "phase")
    rng = np.random.default_rng(2024 + alpha)
    return np.array([power_law(alpha, N, h=h, output="phase", seed=rng) for _ in range(TRIALS)])


@functools.cache
def _form(name: str, m: int) -> np.ndarray:
    return Q_BUILDERS[name](N, m)


def _cases():
    for stat in STATS:
        ms = (4, 8, LONG) if stat == "theo1" else (1, 2, 8, LONG)
        for m in ms:
            for alpha in ALPHAS:
                reason = XFAIL.get((stat, alpha, m))
                marks = [pytest.mark.xfail(strict=True, reason=reason)] if reason else []
                yield pytest.param(stat, alpha, m, marks=marks, id=f"{stat}-a{alpha}-m{m}")


def _variances(stat: str, alpha: int, m: int) -> np.ndarray:
    form_name, _ = STATS[stat]
    key = "ohdev" if (form_name == "htot" and m == 1) else form_name
    q = _form(key, m)
    x = _phase(alpha)
    v = np.einsum("ti,ij,tj->t", x, q, x)
    func = getattr(deviations, "theo1" if stat == "theo1" else form_name)
    dev, _ = func(x[0], 1.0, m)
    assert v[0] == pytest.approx(dev * dev, rel=1e-6)  # the form is the project's estimator
    return v


def _truth(stat: str, alpha: int, m: int) -> float:
    _, ref = STATS[stat]
    m_ref = (3 * m) // 4 if stat == "theo1" else m  # Theo1 is corrected to AVAR at 0.75 m
    return moments(_form(ref, m_ref), alpha)[0]


@pytest.mark.parametrize(("stat", "alpha", "m"), list(_cases()))
def test_interval_coverage(stat, alpha, m):
    v = _variances(stat, alpha, m)
    truth = math.sqrt(_truth(stat, alpha, m))
    corrected = np.sqrt(v / bias_factor(stat, alpha, m, N))
    edf = edf_for(stat, alpha, m, N)
    for level in LEVELS:
        low, high = chi2_interval(corrected, edf, level)
        hits = int(np.sum((low <= truth) & (truth <= high)))
        p = binomtest(hits, TRIALS, level).pvalue
        assert p > P_MIN, f"{stat} alpha={alpha} m={m}: {hits}/{TRIALS} at {level} (edf {edf:.1f})"


@pytest.mark.parametrize(("truth_alpha", "said_alpha"), [(2, 1), (1, 2), (-1, 0), (0, -1)])
def test_theo1_union_covers_a_missed_type(truth_alpha, said_alpha):
    # The identification says a neighbour of the true type: the single-type interval
    # misses far more often than nominal at long tau, the union keeps 95 % coverage.
    m, level = 256, 0.95
    v = np.einsum("ti,ij,tj->t", _phase(truth_alpha), _form("theo1", m), _phase(truth_alpha))
    truth = math.sqrt(moments(_form("oadev", 3 * m // 4), truth_alpha)[0])
    hits = 0
    for value in np.sqrt(v):
        plausible = [a for a in (said_alpha - 1, said_alpha, said_alpha + 1) if -2 <= a <= 2]
        (low, high), alphas = get_statistic("theo1").interval_over_types(
            value, plausible, m, N, level
        )
        assert truth_alpha in alphas
        hits += low <= truth <= high
    assert hits / TRIALS >= level - 3 * math.sqrt(level * (1 - level) / TRIALS)
