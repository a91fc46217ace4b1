"""Tests of power-law noise identification (stability.noise)."""

from __future__ import annotations

import math
import warnings

import allantools
import allantools.ci
import numpy as np
import pytest

from stability import InputError, Measurement
from stability.noise import (
    NoiseResult,
    b1_expected,
    b1_noise_id,
    expected_acf_estimate,
    identify,
    lag1_acf,
    lag1_acf_noise_id,
    rn_expected,
    rn_noise_id,
)
from stability.noise_evidence import weigh_evidence
from stability.powerlaw import model_from_levels
from stability.simulate import power_law, simulate_measurement
from stability.taus import tau_grid

LABELS = {2: "WPM", 1: "FPM", 0: "WFM", -1: "FFM", -2: "RWFM"}


# ---------------------------------------------------------------------- validation
@pytest.mark.parametrize(
    ("call", "word"),
    [
        (lambda: lag1_acf_noise_id(np.zeros(40), data="time"), "data"),
        (lambda: lag1_acf_noise_id(np.zeros((4, 10)), data="phase"), "z"),
        (lambda: lag1_acf_noise_id(["a"] * 40, data="phase"), "z"),
        (lambda: lag1_acf_noise_id(np.zeros(40), data="phase", dmin=-1), "dmin"),
        (lambda: lag1_acf_noise_id(np.zeros(40), data="phase", dmax=1.5), "dmax"),
        (lambda: lag1_acf_noise_id(np.zeros(40), data="phase", dmin=3, dmax=2), "dmax"),
        (lambda: identify(np.zeros(10), "oadev", [1]), "measurement"),
        (lambda: identify(_meas(), "nosuch", [1]), "statistic"),
        (lambda: identify(_meas(), 3, [1]), "statistic"),
        (lambda: identify(_meas(), "oadev", [0]), "ms"),
        (lambda: identify(_meas(), "oadev", [1.5]), "ms"),
        (lambda: identify(_meas(), "oadev", ["x"]), "ms"),
        (lambda: identify(_meas(), "oadev", [1], drift="x"), "drift"),
        (lambda: identify(_meas(), "oadev", [1], drift=math.inf), "drift"),
        (lambda: rn_expected(4, 0), "alpha"),
    ],
)
def test_validation_names_the_parameter(call, word):
    with pytest.raises(InputError) as info:
        call()
    assert word in str(info.value)


def _meas(n: int = 100) -> Measurement:
    return simulate_measurement(n, levels={0: 1.0}, output="phase", seed=0)


# ---------------------------------------------------------------------- lag-1 method
def test_lag1_acf_definition():
    # Riley & Greenhall 2004, eq. 1, evaluated by hand on 1, 2, 3, 4:
    # mean 2.5; numerator (-1.5)(-0.5) + (-0.5)(0.5) + (0.5)(1.5) = 1.25; denominator 5.
    assert lag1_acf(np.array([1.0, 2.0, 3.0, 4.0])) == pytest.approx(0.25)
    assert lag1_acf(np.ones(10)) is None
    assert lag1_acf(np.array([1.0, 2.0])) is None


@pytest.mark.parametrize("alpha", [2, 1, 0, -1, -2])
def test_lag1_matches_allantools_on_phase(alpha):
    # Cross-check: allantools 2024.6 autocorr_noise_id on the same decimated phase
    # (quadratic detrend, the Riley & Greenhall 2004 loop).
    x = power_law(alpha, 4096, output="phase", seed=30 + alpha)
    for m in (1, 4, 16):
        ours = lag1_acf_noise_id(x[::m], data="phase", dmax=2)
        ref = allantools.autocorr_noise_id(x, m, data_type="phase", dmin=0, dmax=2)
        assert ours is not None
        assert ours[1] == pytest.approx(ref[1], rel=1e-9, abs=1e-9)
        assert ours[0] == int(np.clip(ref[0], -2, 2))


@pytest.mark.parametrize("alpha", [2, 0, -2])
def test_lag1_matches_allantools_on_frequency(alpha):
    # Cross-check: allantools 2024.6 autocorr_noise_id on m-averaged frequency (linear detrend).
    y = power_law(alpha, 4096, output="frequency", seed=40 + alpha)
    for m in (1, 8):
        k = y.size // m
        yb = y[: k * m].reshape(k, m).mean(axis=1)
        ours = lag1_acf_noise_id(yb, data="frequency", dmax=1)
        ref = allantools.autocorr_noise_id(y, m, data_type="freq", dmin=0, dmax=1)
        assert ours is not None
        assert ours[1] == pytest.approx(ref[1], rel=1e-9, abs=1e-9)
        assert ours[0] == alpha


def test_expected_estimate_is_exact_for_fractional_noise_at_m1():
    # Riley & Greenhall 2004 (details from memory): for discrete fractionally integrated noise
    # (2 sin pi f)^(-2 delta) with delta < 0.25, r1 = delta / (1 - delta), so delta = r1/(1 + r1)
    # is exact: p is the integer alpha at m = 1 for every type, at the number of differences
    # the loop stops at.
    span = 2**15
    for alpha, d in ((2, 0), (1, 1), (0, 1), (-1, 2), (-2, 2)):
        assert expected_acf_estimate(alpha, d, 1, span) == pytest.approx(alpha, abs=0.02)
    # White and random-walk noises keep their integer p at every m (decimation of white
    # phase is white; of a random walk, a random walk).
    for m in (4, 64, 4096):
        assert expected_acf_estimate(2, 0, m, 1024 * m) == pytest.approx(2.0, abs=0.02)
        assert expected_acf_estimate(0, 1, m, 1024 * m) == pytest.approx(0.0, abs=0.02)
    # Flicker phase decimated by m looks whiter (p rises towards 2): the reason identify()
    # compares p with these expectations instead of rounding it. Independent check: the
    # mean lag-1 estimate of simulated flicker PM (Kasdin & Walter 1992) decimated by 64
    # agrees with the expectation; 8 records give a standard error near 0.05.
    expected = expected_acf_estimate(1, 1, 64, 2**16)
    estimates = [
        lag1_acf_noise_id(power_law(1, 2**16, output="phase", seed=s)[::64], data="phase")[1]
        for s in range(8)
    ]
    assert expected > 1.3  # clearly away from the integer 1 that rounding assumes
    assert float(np.mean(estimates)) == pytest.approx(expected, abs=0.15)


# ---------------------------------------------------------------------- B1 and R(n)
def test_b1_expected_matches_allantools():
    # Barnes, NBS TN 375, as tabulated in allantools 2024.6 ci.b1_theory.
    for k in (4, 7, 15, 29, 100):
        for mu in (-2, -1, 0, 1, 2):
            assert b1_expected(k, mu) == pytest.approx(allantools.ci.b1_theory(k, mu), rel=1e-12)
    # Fixed points of the B1 formula (Barnes, NBS TN 375; formula from memory):
    # WFM B1 = 1; RWFM B1 = K/2.
    assert b1_expected(15, -1) == pytest.approx(1.0)
    assert b1_expected(10, 1) == pytest.approx(5.0)


def test_rn_expected_matches_allantools():
    # SP 1065 section 5.6 R(n), as in allantools 2024.6 ci.rn_theory (b = 0 WPM, -1 FPM).
    for n in (2, 8, 64):
        assert rn_expected(n, 2) == pytest.approx(allantools.ci.rn_theory(n, 0), rel=1e-12)
        assert rn_expected(n, 1) == pytest.approx(allantools.ci.rn_theory(n, -1), rel=1e-3)


def test_b1_and_rn_pick_nearest_in_log():
    k = 15
    for mu in (-2, -1, 0, 1):
        assert b1_noise_id(b1_expected(k, mu), k) == mu
        assert b1_noise_id(b1_expected(k, mu) * 1.05, k) == mu
    assert b1_noise_id(1.0, 3) is None
    assert b1_noise_id(math.nan, 15) is None
    assert rn_noise_id(rn_expected(16, 2), 16) == 2
    assert rn_noise_id(rn_expected(16, 1), 16) == 1
    assert rn_noise_id(0.0, 16) is None


# ---------------------------------------------------------------------- identification accuracy
def _accuracy(statistic: str, sizes: tuple[int, ...]) -> dict[int, float]:
    out = {}
    for alpha in (2, 1, 0, -1, -2):
        hits = total = 0
        for n in sizes:
            for seed in (7, 107, 207):
                meas = simulate_measurement(n, levels={alpha: 1.0}, output="phase", seed=seed)
                ms = tau_grid("octave", n // 100)
                res = identify(meas, statistic, ms)
                hits += int(np.sum(res.alpha == alpha))
                total += ms.size
        out[alpha] = hits / total
    return out


def test_identification_accuracy_oadev():
    # Targets (common practice for a usable identifier; Riley & Greenhall 2004 report reliable
    # identification for N/m well above 30): >= 95 % for WPM, WFM, RWFM and >= 80 % for the
    # flicker noises over octave taus with m <= N/100, counted over all seeds and sizes.
    acc = _accuracy("oadev", (2**14, 2**15, 2**16))
    for alpha in (2, 0, -2):
        assert acc[alpha] >= 0.95, (alpha, acc)
    for alpha in (1, -1):
        assert acc[alpha] >= 0.80, (alpha, acc)


def test_identification_hadamard_family():
    # dmax = 3 for the Hadamard family (Riley & Greenhall 2004, from memory); the same noises
    # are found.
    acc = _accuracy("ohdev", (2**14,))
    assert min(acc.values()) >= 0.80, acc
    meas = simulate_measurement(4096, levels={-2: 1.0}, output="phase", seed=3)
    res = identify(meas, "hdev", [1, 2, 4, 8])
    assert res.method == ["acf"] * 4
    assert res.noise.count("RWFM") >= 3


def test_b1_path_on_short_records():
    # N = 64: at m = 3 and 4 the decimated phase has fewer than 30 points (the lag-1 method's
    # minimum, Riley & Greenhall 2004, from memory), so B1 is used
    # (Barnes, NBS TN 375; SP 1065 section 5.6) with 21 and 15 averages.
    for alpha in (0, -2):
        hits = total = 0
        for seed in range(40):
            meas = simulate_measurement(64, levels={alpha: 1.0}, output="phase", seed=seed)
            res = identify(meas, "oadev", [3, 4])
            assert set(res.method) <= {"b1", "rn"}
            hits += int(np.sum(res.alpha == alpha))
            total += 2
        assert hits / total > 0.55, (alpha, hits / total)


def test_rn_splits_phase_noises_on_short_records():
    # R(n) = MVAR/AVAR (SP 1065 section 5.6) splits B1's "phase noise" answer: WPM 1/n.
    hits = 0
    for seed in range(30):
        meas = simulate_measurement(64, levels={2: 1.0}, output="phase", seed=seed)
        res = identify(meas, "oadev", [4])
        assert res.method[0] in ("rn", "b1")
        hits += int(res.alpha[0] == 2 and res.method[0] == "rn")
    assert hits / 30 > 0.5


def test_modified_statistics_use_the_same_types():
    meas = simulate_measurement(4096, levels={-1: 1.0}, output="phase", seed=5)
    ms = [1, 2, 4, 8, 16]
    a = identify(meas, "oadev", ms)
    for stat in ("mdev", "tdev", "totdev"):
        b = identify(meas, stat, ms)
        assert np.array_equal(a.alpha, b.alpha, equal_nan=True)
        assert a.method == b.method


# ---------------------------------------------------------------------- degenerate data
def _no_warnings(func):
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        return func()


@pytest.mark.parametrize(
    "meas",
    [
        Measurement.from_phase([0.0, 1e-9, 3e-9], 1.0),
        Measurement.from_phase(np.full(500, 2.5), 1.0),
        Measurement.from_frequency(np.full(500, 1e-9), 1.0),
        Measurement.from_phase(np.arange(500) * 1e-9, 1.0),
        Measurement.from_phase(np.arange(500.0) ** 2 * 1e-12, 1.0),
        Measurement.from_phase([0.0, 1.0], 1.0),
    ],
    ids=["3 points", "constant phase", "constant frequency", "ramp", "parabola", "2 points"],
)
def test_degenerate_data_give_empty_columns(meas):
    res = _no_warnings(lambda: identify(meas, "oadev", [1, 2, 4, 1000, 10**9]))
    assert isinstance(res, NoiseResult)
    assert np.isnan(res.alpha).all()
    assert res.noise == [""] * 5 and res.method == [""] * 5
    res = _no_warnings(lambda: identify(meas, "ohdev", [1], carry=True))
    assert np.isnan(res.alpha).all()


def test_one_huge_tau_is_empty_and_carry_fills_it():
    meas = simulate_measurement(1000, levels={0: 1.0}, output="phase", seed=2)
    ms = [1, 2, 4, 300, 100000]
    res = _no_warnings(lambda: identify(meas, "oadev", ms))
    assert res.method[:3] == ["acf"] * 3
    assert res.noise[3:] == ["", ""] and np.isnan(res.alpha[3:]).all()
    carried = identify(meas, "oadev", ms, carry=True)
    assert carried.method[3:] == ["carried", "carried"]
    assert carried.alpha[3] == carried.alpha[2] == carried.alpha[4]
    frame = carried.to_frame()
    assert list(frame.columns) == ["m", "alpha", "noise", "noise_method", "alpha_estimate"]


def test_gaps_are_dropped():
    y = power_law(0, 8192, seed=8)
    y[[100, 2000, 2001, 5000]] = np.nan
    meas = Measurement.from_frequency(y, 1.0)
    res = _no_warnings(lambda: identify(meas, "oadev", [1, 4, 16, 64]))
    assert res.noise.count("WFM") >= 3
    assert any("gap" in note for note in res.notes)
    x = power_law(2, 8192, output="phase", seed=9)
    x[[10, 500, 501]] = np.nan
    res = _no_warnings(lambda: identify(Measurement.from_phase(x, 1.0), "oadev", [1, 8, 64]))
    assert res.noise.count("WPM") >= 2


def test_labels_follow_alpha():
    meas = simulate_measurement(4096, levels={-2: 1.0}, output="frequency", seed=4)
    res = identify(meas, "oadev", [1, 2, 4, 8, 16, 32])
    for a, label in zip(res.alpha, res.noise, strict=True):
        assert label == LABELS[int(a)]


# ---------------------------------------------------------------------- weighing across tau
def _calls(alpha, method, uncertain, neighbour=None, m=None):
    m = 2 ** np.arange(len(alpha)) if m is None else np.array(m)
    alpha = np.array(alpha, dtype=float)
    return NoiseResult(
        statistic="oadev",
        m=m,
        alpha=alpha,
        noise=[LABELS[int(a)] if np.isfinite(a) else "" for a in alpha],
        method=list(method),
        estimate=np.full(len(m), np.nan),
        uncertain=np.array(uncertain, dtype=bool),
        neighbour=np.full(len(m), np.nan) if neighbour is None else np.array(neighbour),
    )


def test_weak_calls_take_the_models_dominant_term_and_say_so():
    # White FM model (h0 only): a B1 call of FFM at the longest tau is weak and becomes WFM
    # (method "model"); the confident lag-1 calls stay as they are.
    calls = _calls([0, 0, 0, -1], ["acf", "acf", "acf", "b1"], [False, False, False, True])
    model = model_from_levels({0: 1.0}, 0.5)
    model.tau_range = (1.0, 8.0)
    out = weigh_evidence(calls, 1.0, 64, model)
    assert out.noise == ["WFM"] * 4
    assert out.method == ["acf", "acf", "acf", "model"]
    assert any("method model" in n for n in out.notes)
    assert calls.noise[-1] == "FFM"  # the input is not changed


def test_monotone_fit_weighs_the_number_of_averages():
    # Without a model: a whiter call at a longer tau is outvoted by the better-supported
    # shorter tau (weights N/m); a lone red call at a short tau is outvoted by whiter
    # calls at longer taus only where they hold more averages together (on a grid of
    # every m, not on octaves, where one tau outweighs all longer ones). The method says
    # "monotone" where the type changed.
    whiter_late = weigh_evidence(_calls([-1, -1, 0, 0], ["acf"] * 4, [False] * 4), 1.0, 1024, None)
    assert whiter_late.noise == ["FFM", "FFM", "FFM", "FFM"]
    assert whiter_late.method == ["acf", "acf", "monotone", "monotone"]
    alpha = [0, -1, 0, 0, 0, 0, 0, 0]
    red_early = weigh_evidence(
        _calls(alpha, ["acf"] * 8, [False] * 8, m=range(1, 9)), 1.0, 1024, None
    )
    assert red_early.noise == ["WFM"] * 8
    assert red_early.method == ["acf", "monotone"] + ["acf"] * 6
    on_octaves = weigh_evidence(_calls(alpha[:5], ["acf"] * 5, [False] * 5), 1.0, 1024, None)
    assert on_octaves.noise == ["WFM"] + ["FFM"] * 4
    for out in (whiter_late, red_early, on_octaves):
        assert np.all(np.diff(out.alpha) <= 0)


def test_a_type_between_the_models_terms_is_noted():
    # White PM eight times white FM in AVAR at 1 s (SP 1065 closed forms with f_h = 0.5):
    # an FPM call at 1 s lies between the two model terms.
    h0 = 1.0
    h2 = 8.0 * h0 / 2.0 / (3.0 * 0.5 / (4.0 * math.pi**2))
    model = model_from_levels({2: h2, 0: h0}, 0.5)
    model.tau_range = (1.0, 8.0)
    out = weigh_evidence(_calls([1], ["acf"], [False]), 1.0, 4096, model)
    assert out.noise == ["FPM"]
    assert "noise type at tau 1 s lies between WPM and WFM" in out.notes
    # Without a model, a lag-1 call near its boundary says which neighbour it is near.
    near = _calls([0], ["acf"], [True], neighbour=[-1.0])
    assert weigh_evidence(near, 1.0, 4096, None).notes == [
        "noise type at tau 1 s lies between WFM and FFM"
    ]


def test_lag1_calls_near_a_boundary_are_marked_uncertain():
    # 42 points of white FM (m = 2048 in a day at 1 s): the standard error of the lag-1
    # estimate is about 0.3 (Bartlett), and the FFM expectation lies 0.8 away, so most
    # such calls are near the boundary; with 20000 points none are.
    short = identify(simulate_measurement(86400, 1.0, levels={0: 1.0}, seed=3), "oadev", [2048])
    assert short.method == ["acf"] and short.uncertain[0]
    long = identify(simulate_measurement(20000, 1.0, levels={0: 1.0}, seed=3), "oadev", [1, 2])
    assert not long.uncertain.any() and np.isnan(long.neighbour).all()
