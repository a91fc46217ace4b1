"""analyze() and estimate(): argument validation, the results table, notes on gaps."""

from __future__ import annotations

import math
import warnings

import numpy as np
import pandas as pd
import pytest

from stability import (
    COLUMNS,
    AnalysisError,
    InputError,
    Measurement,
    StabilityError,
    StabilityTable,
    analyze,
    estimate,
    get_statistic,
)
from stability.analysis import _drift_model_source, _estimate
from stability.qualify import qualify_result
from stability.simulate import simulate
from stability.table import NOISE_LABELS, StatisticResult


@pytest.fixture()
def ten_points() -> Measurement:
    return Measurement.from_phase(np.arange(10.0) ** 1.5 * 1e-9, 1.0)


def test_every_validation_message(ten_points):
    m = ten_points
    cases = [
        (
            {"measurement": [1.0, 2.0, 3.0]},
            InputError,
            "measurement must be a stability.Measurement",
        ),
        ({"stats": "oadevv"}, InputError, r"unknown statistic 'oadevv' \(did you mean 'oadev'\?"),
        ({"stats": "mdve"}, InputError, "did you mean 'mdev'"),
        ({"stats": "zzz"}, InputError, "choose from adev, oadev, mdev"),
        ({"stats": []}, InputError, "no statistic asked for"),
        ({"stats": " , "}, InputError, "no statistic asked for"),
        ({"taus": "weekly"}, InputError, "unknown tau grid 'weekly'"),
        ({"taus": [1.5]}, InputError, "not a whole multiple of the sample interval"),
        ({"taus": [-1.0]}, InputError, "tau must be a positive number"),
        ({"taus": [100.0]}, AnalysisError, "tau 100 s is too long for oadev on a record of 10"),
        ({"stats": "hdev", "taus": [4.0]}, AnalysisError, r"too long for hdev .*largest tau 3 s"),
        ({"taus": []}, InputError, "taus is an empty list"),
        ({"confidence": 1.0}, InputError, "confidence must lie strictly between 0 and 1, got 1.0"),
        ({"confidence": 0}, InputError, "strictly between 0 and 1"),
        ({"confidence": math.nan}, InputError, "strictly between 0 and 1"),
        ({"confidence": "most"}, InputError, "confidence must be a number in"),
    ]
    for changes, error, text in cases:
        kwargs = {"measurement": m, **changes}
        with pytest.raises(error, match=text) as info:
            analyze(kwargs.pop("measurement"), **kwargs)
        assert isinstance(info.value, StabilityError)
        assert "\n" not in str(info.value)

    gaps = Measurement.from_phase([1.0, np.nan, np.nan, np.nan, 2.0], 1.0)
    with pytest.raises(
        AnalysisError, match="oadev needs at least 3 phase samples; the record has 2"
    ):
        analyze(gaps, stats="oadev")
    with pytest.raises(AnalysisError, match="every term touches a gap"):
        analyze(gaps, stats="mtie")
    with pytest.raises(AnalysisError, match="hdev needs at least 4"):
        analyze(Measurement.from_phase([0.0, 1.0, 3.0], 1.0), stats="hdev")
    with warnings.catch_warnings():
        warnings.simplefilter("error", RuntimeWarning)  # no numpy warning may escape
        with pytest.raises(AnalysisError, match="not finite"):
            analyze(Measurement.from_phase([1e300, -1e300, 1e300, 5.0, 1.0], 1.0))


@pytest.mark.parametrize("changes", [{"taus": None}, {"stats": None}, {"stats": 5}])
def test_wrong_argument_types_raise_input_error(ten_points, changes):
    with pytest.raises(InputError):
        analyze(ten_points, **changes)


def test_estimate_rejects_non_measurement():
    with pytest.raises(InputError):
        estimate([1.0, 2.0, 3.0], get_statistic("oadev"))


def test_table_columns_and_rows(ten_points):
    table = analyze(ten_points, stats="oadev, MDEV, oadev", taus="octave", confidence=0.9)
    assert isinstance(table, StabilityTable)
    assert table.statistics == ["oadev", "mdev"]  # order asked, duplicates dropped
    frame = table.to_frame()
    # DESIGN "The results table": these columns, in this order.
    assert tuple(frame.columns) == COLUMNS == (
        "statistic", "tau_s", "m", "n_terms", "deviation", "ci_low", "ci_high",
        "edf", "alpha", "noise", "noise_method", "raw_deviation", "bias_factor",
    )  # fmt: skip
    assert len(frame) == len(table) == 3 + 2  # oadev m = 1, 2, 4; mdev m = 1, 2
    assert list(frame["statistic"]) == ["oadev"] * 3 + ["mdev"] * 2
    np.testing.assert_array_equal(frame["m"], [1, 2, 4, 1, 2])
    np.testing.assert_array_equal(frame["tau_s"], [1.0, 2.0, 4.0, 1.0, 2.0])
    assert table.confidence == 0.9 and table["oadev"].confidence == 0.9
    assert table.settings["stats"] == ["oadev", "mdev"]
    assert table.measurement is ten_points
    # Qualified rows: alpha is an integer exponent or missing, noise its label or empty
    # (IEEE 1139 power-law labels; stability.table.NOISE_LABELS).
    for alpha, noise in zip(frame["alpha"], frame["noise"], strict=True):
        assert (noise == "") if alpha is pd.NA else NOISE_LABELS[int(alpha)] == noise
    raw = analyze(ten_points, stats="oadev,mdev", taus="octave", qualify=False).to_frame()
    assert tuple(raw.columns) == COLUMNS
    assert raw["alpha"].isna().all() and (raw["noise"] == "").all() and raw["edf"].isna().all()
    empty = StabilityTable(results={}, confidence=0.683).to_frame()
    assert tuple(empty.columns) == COLUMNS and len(empty) == 0


def test_default_statistics_and_string_lists(ten_points):
    table = analyze(ten_points)
    assert table.statistics == ["oadev", "mdev"]
    assert analyze(ten_points, stats=("tdev",), taus=[1, 3]).statistics == ["tdev"]


def test_estimate_matches_analyze(ten_points):
    for name in ("adev", "totdev", "mtie"):
        alone = estimate(ten_points, get_statistic(name), "all")
        inside = analyze(ten_points, stats=name, taus="all", qualify=False)[name]
        np.testing.assert_array_equal(alone.deviation, inside.deviation)
        np.testing.assert_array_equal(alone.n_terms, inside.n_terms)
        assert isinstance(alone, StatisticResult)


def test_gap_notes_name_dropped_taus():
    # A tau whose every term touches a gap is dropped with a note (SP 1065 section 5.14).
    x = np.arange(9.0)
    x[[1, 4, 7]] = np.nan  # every term at m = 1 and m = 2 touches one of these
    result = estimate(Measurement.from_phase(x, 1.0), get_statistic("oadev"), [1, 2, 3])
    np.testing.assert_array_equal(result.m, [3])
    assert result.notes and "m = 1, 2" in result.notes[0]


def test_all_grid_on_a_long_tau0():
    meas = Measurement.from_frequency(np.sin(np.arange(40.0)), 3600.0)
    result = analyze(meas, stats="totdev", taus="all", qualify=False)["totdev"]
    np.testing.assert_array_equal(result.m, np.arange(1, 21))
    np.testing.assert_allclose(result.tau, 3600.0 * np.arange(1, 21))


def test_on_step_reports_each_statistic_and_the_qualification():
    # The progress hook is called once per statistic and once after qualification.
    y = np.random.default_rng(2).standard_normal(500)
    steps = []
    analyze(Measurement.from_frequency(y, 1.0), stats="oadev,mdev", on_step=steps.append)
    assert steps == ["oadev", "mdev", "qualification"]


def _detrended(meas: Measurement, slope: float) -> Measurement:
    """The data with the linear frequency drift ``slope`` (1/s) removed, as a phase array."""
    t = np.arange(meas.n, dtype=np.float64) * meas.tau0
    return meas.replace(phase=meas.phase - 0.5 * slope * t * t)


def test_detrended_oadev_from_the_identity_equals_the_estimator_on_detrended_phase():
    # AVAR of the data with a linear frequency drift D removed is
    # AVAR - D tau mean(terms) + D^2 tau^2 / 2 (the second difference of D t^2 / 2 is
    # D tau^2); checked against the estimator run on the detrended phase, for a drift
    # far below, near and far above the noise.
    oadev = get_statistic("oadev")
    for drift in (1e-14, 1e-11, 1e-7):
        y = simulate(20000, 1.0, levels={0: 1e-22, -2: 1e-30}, drift_per_day=drift, seed=4)
        meas = Measurement.from_frequency(y, 1.0)
        base = _estimate(meas, oadev, "octave", None)
        slope, fast = _drift_model_source(meas, base)
        detrended = _detrended(meas, slope)
        direct = _estimate(detrended, oadev, "octave", None)
        np.testing.assert_allclose(fast.deviation, direct.deviation, rtol=1e-6)
        np.testing.assert_array_equal(fast.n_terms, direct.n_terms)


@pytest.mark.parametrize("gap", ["segments", "nan"])
def test_drift_model_source_with_gaps_equals_the_estimator_on_detrended_phase(gap):
    # On gappy data the drift is taken out term by term (no detrended copy of the
    # record); the OADEV must equal the estimator run on the detrended phase, and the
    # noise identification of qualify_result the one made on that phase.
    oadev = get_statistic("oadev")
    for drift in (1e-14, 1e-11, 1e-8):
        y = simulate(20000, 1.0, levels={0: 1e-22, -2: 1e-30}, drift_per_day=drift, seed=5)
        if gap == "segments":
            y[[3, 4000, 4001, 15999]] = np.nan
            meas = Measurement.from_frequency(y, 1.0)
        else:
            x = np.concatenate(([0.0], np.cumsum(y)))
            x[[7, 8191, 12000]] = np.nan
            meas = Measurement.from_phase(x, 1.0)
        slope, raw = _drift_model_source(meas, None)
        detrended = _detrended(meas, slope)
        direct = _estimate(detrended, oadev, "octave", None)
        np.testing.assert_allclose(raw.deviation, direct.deviation, rtol=1e-9)
        np.testing.assert_array_equal(raw.n_terms, direct.n_terms)
        ours = qualify_result(raw, meas, 0.683, drift=slope)
        theirs = qualify_result(direct, detrended, 0.683)
        assert ours.noise == theirs.noise
        np.testing.assert_allclose(ours.edf, theirs.edf, rtol=1e-9)
