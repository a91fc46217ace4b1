"""Coverage of the chi-squared intervals with the noise type given.

For each statistic, noise type and averaging factor: simulate many records of
Kasdin-Walter power-law phase noise (stability.simulate), compute the variance,
correct its bias and set the 68.3 % and 95 % intervals with the library's EDF and
bias factor for the TRUE alpha, and count how often the interval holds the true
deviation (the exact expectation of the reference variance: AVAR, MVAR, HVAR or
PVAR, from tests/quadform.py). The count is judged by a two-sided binomial test.

The variances of all trials come from the estimator's quadratic form (one matrix
product for all trials); tests/test_quadform.py shows these forms are the project's
estimators, and each case re-checks the first trial against the estimator itself.
TheoBR is Theo1 times a ratio measured on the record (the mean of AVAR(9 + 3i) /
Theo1(12 + 4i)); its trials are the product of the forms' values, and ThêoH is the
Allan variance at 0.75 m up to 10 % of the record and TheoBR beyond. The Theo family
is judged against AVAR at tau = 0.75 m tau0, so its averaging factors are multiples
of 4 (m = 2 would put the truth at 1.5 tau0, between samples).

The averaging factors are 1, 2, 8, 64 and the long tau 128 = N/4 (Theo family: 4, 8,
64 and 256, tau up to 192 tau0 = 0.375 of the record). The cases where the interval
is known to miss are strict xfails with the reason; README.md ("How far to trust the
intervals") lists them.
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
from stability.deviations.theo import theoh_uses_allan
from stability.intervals import chi2_interval
from stability.simulate import power_law, white_noise_variance

N = 512
TRIALS = 300
LEVELS = (0.683, 0.95)
P_MIN = 1e-4  # binomial p-value below which the coverage is judged wrong
ALPHAS = (2, 1, 0, -1, -2)
LONG = 128  # N / 4
THEO_LONG = 256  # tau = 192 tau0

#: statistic -> (form it is computed from, reference form of the truth)
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
    "theobr": ("theobr", "oadev"),
    "theoh": ("theoh", "oadev"),
    "pdev": ("pdev", "pdev"),
}
THEO = ("theo1", "theobr", "theoh")

# Cases where the interval is known to miss nominal coverage, each with its reason
# (README.md, "How far to trust the intervals", lists them with the coverage found).
_FPM_LONG = (
    "FPM at m = N/4: the variance of few, strongly unequal components is not chi-squared "
    "in shape; even with the exact EDF the 68.3 % interval covers about 73-75 %"
)
_FPM_GREENHALL = (
    _FPM_LONG + ", and Greenhall's FPM EDF (continuous bandwidth) is 13 % below the exact one"
)
_THEO1_FPM = "no Theo1 FPM EDF: the smaller of the WPM and WFM ones, 6 to 18 times too few"
_THEO1_RWFM = "Howe's Theo1 RWFM EDF (from memory) is 1.4 at tau = 0.375 T, the exact 2.1"
_THEOBR_PM = (
    "TheoBR's ratio AVAR/Theo1 is measured at tau = 9 .. 51 tau0 and applied at every tau; "
    "for WPM and FPM that ratio changes with tau, so TheoBR is biased (0.5 to 1.6 x AVAR)"
)
_THEOBR_SCATTER = (
    "TheoBR takes Theo1's EDF, but its measured ratio adds its own scatter: below "
    "10 % of the record (where ThêoH uses AVAR instead) the interval is over-confident"
)
_PDEV = (
    "PDEV takes MDEV's EDF as a stand-in; the exact EDF of PVAR is 1.2 to 2.0 times "
    "higher, so the interval over-covers"
)
XFAIL: dict[tuple[str, int, int], str] = {
    ("totdev", 0, 2): "Howe's TOTVAR WFM EDF 1.5 T/tau is 30 % above the exact EDF at m = 2",
    ("oadev", 1, LONG): _FPM_GREENHALL,
    ("ohdev", 1, LONG): _FPM_GREENHALL,
    ("mtot", 1, LONG): _FPM_LONG,
    ("ttot", 1, LONG): _FPM_LONG,
    ("htot", 1, LONG): _FPM_LONG,
    ("theo1", 1, 64): _THEO1_FPM,
    ("theo1", 1, THEO_LONG): _THEO1_FPM,
    ("theo1", -2, THEO_LONG): _THEO1_RWFM,
    **{("theobr", a, m): _THEOBR_PM for a in (2, 1) for m in (4, 8)},
    **{("theobr", a, m): _THEOBR_SCATTER for a in (0, -1, -2) for m in (4, 8, 64)},
    ("theobr", 2, 64): _THEOBR_PM,  # (ThêoH is AVAR at m = 64: tau 48 <= 10 % of the record)
    **{(s, a, THEO_LONG): _THEOBR_PM for s in ("theobr", "theoh") for a in (2, 1)},
    **{(s, -2, THEO_LONG): _THEO1_RWFM for s in ("theobr", "theoh")},
    ("pdev", -1, 2): _PDEV,
    ("pdev", -2, 2): _PDEV,
    ("pdev", 1, 64): _PDEV,
    ("pdev", -2, 64): _PDEV,
    **{("pdev", a, LONG): _PDEV for a in ALPHAS},
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


def _quad(x: np.ndarray, name: str, m: int) -> np.ndarray:
    """x_t' Q x_t for every trial t (one matrix product)."""
    return np.einsum("ti,ti->t", x @ _form(name, m), x)


@functools.cache
def _theobr_ratio(alpha: int) -> np.ndarray:
    """TheoBR's bias ratio of every trial: mean_i AVAR(9 + 3i) / Theo1(12 + 4i),
    i = 0 .. floor(0.1 N / 3 - 3) (SP 1065 eq. 31, from memory)."""
    x = _phase(alpha)
    top = math.floor(0.1 * N / 3.0 - 3.0)
    ratios = [_quad(x, "oadev", 9 + 3 * i) / _quad(x, "theo1", 12 + 4 * i) for i in range(top + 1)]
    return np.mean(ratios, axis=0)


def _cases():
    for stat in STATS:
        ms = (4, 8, 64, THEO_LONG) if stat in THEO else (1, 2, 8, 64, LONG)
        for m in ms:
            for alpha in ALPHAS:
                reason = XFAIL.get((stat, alpha, m))
                marks = [pytest.mark.xfail(strict=True, reason=reason)] if reason else []
                yield pytest.param(stat, alpha, m, marks=marks, id=f"{stat}-a{alpha}-m{m}")


def _variances(stat: str, alpha: int, m: int) -> np.ndarray:
    form_name, _ = STATS[stat]
    x = _phase(alpha)
    if stat == "theoh" and theoh_uses_allan(N, 1.0, m):
        v = _quad(x, "oadev", 3 * m // 4)
    elif stat in ("theobr", "theoh"):
        v = _quad(x, "theo1", m) * _theobr_ratio(alpha)
    else:
        key = "ohdev" if (form_name == "htot" and m == 1) else form_name
        v = _quad(x, key, m)
    dev, _ = getattr(deviations, form_name)(x[0], 1.0, m)
    assert v[0] == pytest.approx(dev * dev, rel=1e-6)  # the form is the project's estimator
    return v


def _truth(stat: str, alpha: int, m: int) -> float:
    _, ref = STATS[stat]
    m_ref = (3 * m) // 4 if stat in THEO else m  # the Theo family stands for AVAR at 0.75 m
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
    v = _quad(_phase(truth_alpha), "theo1", m)
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
