"""Qualification of analyze(): noise columns, EDF, intervals, bias, the power-law model,
offset and drift."""

from __future__ import annotations

import math
import warnings

import numpy as np
import pytest
from scipy.stats import binomtest

import stability
from stability.deviations import edf_for
from stability.noise import identify
from stability.powerlaw import fit_power_law
from stability.run import run_analysis
from stability.simulate import avar_from_h, h_from_deviation, simulate

# --------------------------------------------------------------------------- shared code


def _analyze(y, **kw):
    m = stability.Measurement.from_frequency(y, 1.0)
    return stability.analyze(m, **kw)


# --------------------------------------------------------------------------- columns


def test_every_row_is_qualified_and_ordered():
    y = simulate(4096, 1.0, levels={0: 2e-22}, seed=11)
    table = _analyze(y, stats="adev,oadev,mdev,tdev,hdev,ohdev,totdev")
    frame = table.to_frame()
    assert list(frame.columns) == list(stability.COLUMNS)
    body = frame[frame["noise"] != ""]
    assert len(body) >= 0.8 * len(frame)
    # ci_low <= deviation <= ci_high on every row that has an interval.
    has_ci = frame["ci_low"].notna()
    assert has_ci.all()
    assert (frame.loc[has_ci, "ci_low"] <= frame.loc[has_ci, "deviation"]).all()
    assert (frame.loc[has_ci, "deviation"] <= frame.loc[has_ci, "ci_high"]).all()
    assert set(body["noise"]) <= {"WPM", "FPM", "WFM", "FFM", "RWFM"}
    # what decided each label (stability.noise_evidence): a method, the fitted model,
    # or the monotone fit over tau
    assert set(frame["noise_method"]) <= {"acf", "b1", "rn", "carried", "model", "monotone", ""}


def test_row_edf_is_the_model_edf_for_the_identified_noise():
    y = simulate(2048, 1.0, levels={0: 1.0}, seed=3)
    table = _analyze(y, stats="oadev,mdev,ohdev")
    for r in table:
        for k, m in enumerate(r.m):
            a = None if math.isnan(r.alpha[k]) else int(r.alpha[k])
            assert r.edf[k] == pytest.approx(edf_for(r.statistic, a, int(m), 2049), rel=1e-12)


def test_interval_can_be_asked_again_at_another_level():
    y = simulate(2048, 1.0, levels={0: 1.0}, seed=4)
    r = _analyze(y, stats="oadev")["oadev"]
    low95, high95 = r.interval(0.95)
    assert np.all(low95 <= r.ci_low) and np.all(high95 >= r.ci_high)
    low, high = r.interval()
    np.testing.assert_array_equal(low, r.ci_low)


def test_time_error_statistics_carry_no_interval():
    y = simulate(512, 1.0, levels={0: 1.0}, seed=5)
    r = _analyze(y, stats="mtie")["mtie"]
    assert np.isnan(r.edf).all() and np.isnan(r.ci_low).all()
    assert any("no chi-squared model" in n for n in r.notes)


def test_totdev_is_bias_corrected_and_says_so():
    # TOTVAR bias for RWFM: TOTVAR/AVAR = 1 - 0.750 tau/T (NIST SP 1065 section 5.2.11,
    # from memory per REFERENCES.md), so the corrected value is larger than the raw one.
    y = simulate(4096, 1.0, levels={-2: 1e-4}, seed=8)
    table = _analyze(y, stats="totdev")
    r = table["totdev"]
    assert r.bias_corrected
    assert r.raw_deviation is not None
    rwfm = r.alpha == -2
    assert rwfm.any()
    assert np.all(r.deviation[rwfm] >= r.raw_deviation[rwfm])
    assert "totdev" in table.extras["bias_corrected"]


def test_identified_noise_never_gets_whiter_with_tau():
    # A sum of power laws: the dominant exponent can only fall as tau grows
    # (IEEE 1139 power-law model; the monotone fit of stability.noise_evidence).
    for seed in range(6):
        y = simulate(3000, 1.0, levels={0: 1.0}, seed=seed)
        r = _analyze(y, stats="oadev")["oadev"]
        a = r.alpha[~np.isnan(r.alpha)]
        assert np.all(np.diff(a) <= 0)


# --------------------------------------------------------------------------- coverage


@pytest.mark.parametrize(("alpha", "level"), [(0, 1.0), (-2, 1.0)])
def test_oadev_interval_coverage_monte_carlo(alpha, level):
    """68.3 % and 95 % intervals of analyze() cover the true deviation at their level.

    The true Allan variance at each tau is taken as the mean of the estimates over
    all trials (an unbiased estimate of the expectation, whose own relative error
    here is below 1 %), so the check does not lean on the continuous-spectrum closed
    forms, which the discrete noise departs from at small m (REFERENCES.md, noise
    generation). Judged with a two-sided binomial test at the 0.1 % level and a
    +/- 5 point band (the stated acceptance of the project).
    """
    trials, n = 400, 1024
    taus = [2.0, 8.0, 32.0]
    devs = np.empty((trials, len(taus)))
    los = {0.683: np.empty_like(devs), 0.95: np.empty_like(devs)}
    his = {0.683: np.empty_like(devs), 0.95: np.empty_like(devs)}
    rng = np.random.default_rng(20261202 + alpha)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", stability.StabilityWarning)
        for t in range(trials):
            y = simulate(n, 1.0, levels={alpha: level}, seed=rng)
            r = _analyze(y, stats="oadev", taus=taus)["oadev"]
            devs[t] = r.deviation
            for p in (0.683, 0.95):
                lo, hi = r.interval(p)
                los[p][t], his[p][t] = lo, hi
    truth = np.sqrt(np.mean(devs**2, axis=0))
    for p in (0.683, 0.95):
        inside = (los[p] <= truth) & (truth <= his[p])
        hits = int(inside.sum())
        total = inside.size
        rate = hits / total
        assert abs(rate - p) <= 0.05, (p, rate, inside.mean(axis=0))
        assert binomtest(hits, total, p).pvalue > 1e-3, (p, hits, total)


# --------------------------------------------------------------------------- model


def test_fitted_h0_recovers_the_simulated_level():
    # WFM: AVAR = h0 / (2 tau) (NIST SP 1065). h0 = 2e-22 is 1e-11 at 1 s.
    h0 = 2e-22
    hits = 0
    seeds = range(10)
    for seed in seeds:
        y = simulate(8192, 1.0, levels={0: h0}, seed=seed)
        table = _analyze(y, stats="oadev")
        model = table.extras["power_law_model"]
        est, u = model.h[0], model.u_h[0]
        assert u > 0
        hits += abs(est - h0) <= 2 * u
    # Within two standard uncertainties in at least 8 of 10 seeds (~95 % each).
    assert hits >= 8


def test_fit_of_exact_mixture_is_exact():
    # Closed forms of NIST SP 1065; a curve made from them is fitted exactly.
    tau = 2.0 ** np.arange(0, 14)
    f_h = 0.5
    truth = {2: 1e-22, 0: 1e-24, -2: 1e-31}
    avar = sum(avar_from_h(a, h, tau, f_h) for a, h in truth.items())
    model = fit_power_law(tau, np.sqrt(avar), np.full(tau.size, 50.0), f_h=f_h)
    for a, h in truth.items():
        assert model.h[a] == pytest.approx(h, rel=1e-6)
    assert model.h[1] == pytest.approx(0.0, abs=1e-3 * truth[2])
    np.testing.assert_allclose(model.deviation(tau), np.sqrt(avar), rtol=1e-6)


# --------------------------------------------------------------------------- offset/drift


def test_offset_and_drift_recovered_within_their_uncertainty():
    # Linear drift 1e-12/day on white FM at 1e-12 (tau0 = 10 s, 2 days): the stated
    # uncertainties come from the noise model; the truth must lie within 3 u.
    n, tau0 = 17280, 10.0
    drift, offset = 1e-12, 3e-10
    misses = 0
    for seed in range(5):
        y = simulate(
            n, tau0, levels={0: 2e-24 * tau0}, drift_per_day=drift, offset=offset, seed=seed
        )
        table = stability.analyze(stability.Measurement.from_frequency(y, tau0), stats="oadev")
        od = table.extras["offset_drift"]
        mid_offset = offset + drift * (n * tau0 / 2) / 86400.0
        misses += abs(od.drift_per_day - drift) > 3 * od.u_drift_per_day
        misses += abs(od.offset - mid_offset) > 3 * od.u_offset
    assert misses <= 1


def test_drift_uncertainty_under_random_walk_is_not_the_white_noise_one():
    # Under RWFM the residuals are strongly correlated: the naive least-squares error
    # is far too small (common practice); the model-based one must be larger.
    y = simulate(20000, 1.0, levels={-2: 1e-6}, seed=2)
    table = stability.analyze(stability.Measurement.from_frequency(y, 1.0), stats="oadev")
    od = table.extras["offset_drift"]
    from stability.powerlaw import offset_and_drift

    naive = offset_and_drift(y, 1.0, None)
    assert od.u_drift_per_day > 3 * naive.u_drift_per_day


# --------------------------------------------------------------------------- degenerate


@pytest.mark.parametrize(
    "y",
    [
        np.array([1.0, 2.0]),  # 3 phase points
        np.zeros(50),  # constant frequency
        np.full(200, 7e-9),  # constant offset
        np.linspace(0, 1e-9, 300),  # pure drift
    ],
)
def test_short_and_degenerate_data_give_empty_noise_and_ordered_intervals(y):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", stability.StabilityWarning)
        try:
            table = _analyze(y, stats="oadev,mdev,totdev")
        except stability.StabilityError as exc:
            assert str(exc)
            return
    frame = table.to_frame()
    ok = frame["ci_low"].notna()
    assert (frame.loc[ok, "ci_low"] <= frame.loc[ok, "ci_high"]).all()
    assert np.isfinite(frame.loc[ok, "ci_high"]).all()
    if y.size < 4 or np.ptp(y) == 0:
        assert (frame["noise"] == "").all()


def test_one_huge_tau_is_a_clear_error():
    y = simulate(100, 1.0, levels={0: 1.0}, seed=1)
    with pytest.raises(stability.AnalysisError, match="too long"):
        _analyze(y, stats="oadev", taus=[1e6])


def test_gaps_reduce_the_degrees_of_freedom_to_the_terms_used():
    # The EDF models take the record length N; with gaps the estimator uses fewer
    # terms, and the EDF must follow the terms actually used (common practice).
    y = simulate(4096, 1.0, levels={0: 1.0}, seed=21)
    whole = _analyze(y, stats="adev,oadev,hdev", taus=[64.0])
    holed = y.copy()
    holed[1000:1800] = np.nan
    gappy = _analyze(holed, stats="adev,oadev,hdev", taus=[64.0])
    for name in ("adev", "oadev", "hdev"):
        assert gappy[name].noise == whole[name].noise  # same model, fewer terms
        assert gappy[name].n_terms[0] < whole[name].n_terms[0]
        assert gappy[name].edf[0] < whole[name].edf[0]


def test_every_registered_statistic_has_an_edf_model_or_says_it_has_none():
    # Each registry entry carries its EDF model; only the time-error statistics
    # (a maximum and an rms, not chi-squared) have none.
    for name, stat in stability.STATISTICS.items():
        if stat.family == "time_error":
            assert stat.edf is None and math.isnan(stat.edf_for(0, 1, 100))
        else:
            assert stat.edf is not None and stat.edf_for(0, 1, 100) >= 1.0, name


# --------------------------------------------------------------------------- drift coverage


def _drift_runs(alpha: int, seeds: range, drift: str):
    """(error, u) of the drift per day over seeds: y = 3e-9 + 2e-12/day t + noise.

    tau0 = 60 s, 4096 samples (2.8 days); the noise has an Allan deviation of 1e-12
    at tau0 (h_alpha from the SP 1065 closed forms, f_h = 1/(2 tau0)). The
    Kasdin-Walter filter starts the process at its first sample, and flicker FM keeps
    the memory of that start at the lowest frequencies (the drift's own band: the
    least-squares slope of the first 4096 samples scatters 4 % less than the power
    law says); the last quarter of a run four times as long is a stationary stretch.
    """
    n, tau0, rate = 4096, 60.0, 2e-12
    h = h_from_deviation(alpha, 1e-12, tau0, 1.0 / (2.0 * tau0))
    out = np.empty((len(seeds), 2))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", stability.StabilityWarning)
        for i, seed in enumerate(seeds):
            y = simulate(
                4 * n, tau0, levels={alpha: h}, drift_per_day=rate, offset=3e-9, seed=seed
            )[-n:]
            meas = stability.Measurement.from_frequency(y, tau0)
            if drift == "none":
                table = stability.analyze(meas, stats="oadev")
            else:
                table = run_analysis(meas, stats="oadev", drift=drift, outliers="off").table
            od = table.extras["offset_drift"]
            out[i] = od.drift_per_day, od.u_drift_per_day
    return out[:, 0] - rate, out[:, 1]


@pytest.mark.parametrize("alpha", [0, -1, -2])
@pytest.mark.parametrize("drift", ["none", "linear"])
def test_drift_uncertainty_covers_at_its_level(alpha, drift):
    """drift +/- k u covers the true drift at the normal level for k = 1 and 2.

    The uncertainty comes from a noise model fitted to the linearly detrended data
    whatever --drift removes, so a drift left in the data is not read as random-walk
    noise. Coverage over 200 seeds is judged with a two-sided binomial test at the
    0.1 % level (with 200 seeds a rate is known to about +/- 3.3 points at k = 1).
    """
    error, u = _drift_runs(alpha, range(200), drift)
    assert np.all(np.isfinite(u)) and np.all(u > 0)
    for k, level in ((1.0, 0.6827), (2.0, 0.9545)):
        hits = int(np.sum(np.abs(error) <= k * u))
        rate = hits / error.size
        assert binomtest(hits, error.size, level).pvalue > 1e-3, (
            k,
            rate,
            np.median(u) / np.std(error),
        )


# --------------------------------------------------------------------------- noise types across tau


def _red_seeds(seeds: range) -> int:
    """Seeds of pure white FM (one day at tau0 = 1 s, octave taus) with a red type anywhere."""
    red = 0
    for seed in seeds:
        y = simulate(86400, 1.0, levels={0: 1.0}, seed=seed)
        r = _analyze(y, stats="oadev")["oadev"]
        red += bool(np.any(r.alpha < 0))
    return red


def test_pure_white_fm_is_not_read_as_red_at_long_tau():
    # One miss toward red at a long tau, where the call rests on 42 points or a few
    # averages, must not turn white FM red. Judged over 40 seeds with a one-sided
    # binomial test against 5 % of seeds.
    red = _red_seeds(range(40))
    assert binomtest(red, 40, 0.05, alternative="greater").pvalue > 0.05, red


def test_white_fm_with_a_little_random_walk_keeps_white_fm_where_lag1_says_so():
    # Six hours of white FM (1e-11 at 1 s) with random-walk FM that takes over near
    # 2000 s (SP 1065 closed forms: h0 / (2 tau) = (2 pi^2 / 3) h_-2 tau there).
    # Wherever the lag-1 method reads white FM the row is white FM; the long end is
    # still red in most seeds (at 4096 s the random walk holds four fifths of AVAR on
    # average, but six hours hold only a few of its wanderings: the fitted model finds
    # it in about two runs of three, flicker FM in one of five).
    red_found = 0
    seeds = range(100)
    for seed in seeds:
        y = simulate(21600, 1.0, levels={0: 2e-22, -2: 4e-30}, seed=seed)
        meas = stability.Measurement.from_frequency(y, 1.0)
        r = stability.analyze(meas, stats="oadev")["oadev"]
        lag1 = identify(meas, "oadev", r.m)
        for k, (label, method) in enumerate(zip(lag1.noise, lag1.method, strict=True)):
            if method == "acf" and label == "WFM":
                assert r.noise[k] == "WFM", (seed, r.tau[k], r.noise, lag1.noise)
        red_found += r.alpha[np.flatnonzero(r.tau == 4096.0)[0]] < 0
    assert red_found >= 0.7 * len(seeds)


@pytest.mark.parametrize(("alpha", "label"), [(-1, "FFM"), (-2, "RWFM")])
def test_pure_red_noises_are_still_found_at_long_tau(alpha, label):
    # 16384 samples: from m = 256 (64 points) to m = 4096 (4 averages) the calls rest
    # on the lag-1 method near its limit or on B1.
    hits = total = 0
    for seed in range(10):
        r = _analyze(simulate(16384, 1.0, levels={alpha: 1.0}, seed=seed), stats="oadev")["oadev"]
        for m, noise in zip(r.m, r.noise, strict=True):
            if 256 <= m <= 4096:
                total += 1
                hits += noise == label
    assert hits >= 0.95 * total, (hits, total)


@pytest.mark.parametrize(("alpha", "label"), [(2, "WPM"), (1, "FPM")])
def test_pure_phase_noises_are_still_found_at_short_tau(alpha, label):
    for seed in range(5):
        r = _analyze(simulate(16384, 1.0, levels={alpha: 1.0}, seed=seed), stats="oadev")["oadev"]
        assert all(noise == label for m, noise in zip(r.m, r.noise, strict=True) if m <= 64)


def test_white_pm_and_white_fm_mixture_is_noted_as_lying_between():
    # White PM eight times white FM in AVAR at tau0 (SP 1065: 3 f_h h2 / (4 pi^2 tau^2)
    # against h0 / (2 tau)): the lag-1 method reads the mixture as flicker PM at m = 1
    # most of the time. Wherever it or the final label says FPM at 1 s, a note says the
    # type there lies between WPM and WFM.
    h0 = 1.0
    h2 = 8.0 * h0 / 2.0 / (3.0 * 0.5 / (4.0 * math.pi**2))
    noted = flicker = 0
    for seed in range(20):
        meas = stability.Measurement.from_frequency(
            simulate(8192, 1.0, levels={2: h2, 0: h0}, seed=seed), 1.0
        )
        r = stability.analyze(meas, stats="oadev")["oadev"]
        read = identify(meas, "oadev", r.m[:1]).noise[0]
        if "FPM" in (read, r.noise[0]):
            flicker += 1
            between = [n for n in r.notes if n.endswith("lies between WPM and WFM")]
            noted += any(" 1 s," in n or " 1 s " in n for n in between)
        assert r.noise[0] in ("WPM", "FPM")
    assert flicker >= 10
    assert noted == flicker
