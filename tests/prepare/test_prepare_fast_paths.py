"""The fast paths of the preparation give the numbers of their plain definitions.

Checked here: the selection network that picks the two middle neighbours of the
local median (0-1 principle for comparator networks, K. E. Batcher 1968 / D. E.
Knuth, *The Art of Computer Programming* vol. 3, section 5.3.4: from memory);
the local residuals against a sort of every window; the robust spread (median
and median absolute deviation, NIST SP 1065 outlier rule) against ``np.median``;
the polynomial drift fit against ``np.polyfit`` and ``np.linalg.lstsq`` (least
squares with covariance ``SSE / (N - p) (D^T D)^-1``: common practice); the
phase-step rule against its whole-array form; and the pipeline's reuse of one
linear fit. Exact equality is asked for wherever the fast path picks the same
floating-point numbers; 1e-12 relative where a sum is taken in another order.
All data are invented, generated in code with fixed seeds.
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest
from numpy.lib.stride_tricks import sliding_window_view

from stability import Measurement
from stability.prepare import detect_phase_steps, fit_drift, prepare, remove_drift
from stability.prepare._common import (
    _NETWORK_LIMIT,
    _SELECT_MIN,
    _middle_pair,
    _selection_network,
    local_residuals,
    robust_spread,
)

DAY = 86400.0


def _reference_residuals(y: np.ndarray, window: int) -> np.ndarray:
    """Residual from the median of the window - 1 finite neighbours, ends mirrored (a sort)."""
    out = np.full(y.shape, np.nan)
    good = np.isfinite(y)
    if good.sum() < 3:
        return out
    values = y[good]
    half = window // 2
    rows = sliding_window_view(np.pad(values, half, mode="reflect"), window)
    neighbours = np.delete(rows, half, axis=1)
    out[good] = values - np.median(neighbours, axis=1)
    return out


@pytest.mark.parametrize("size", range(2, 17, 2))
def test_selection_network_picks_the_middle_pair_of_every_zero_one_input(size: int) -> None:
    # 0-1 principle (Knuth vol. 3, 5.3.4, from memory): a comparator network that
    # orders every 0/1 input orders every input; here only the two middle outputs.
    assert all(i < j < size for i, j, _, _ in _selection_network(size))
    inputs = np.array(list(itertools.product([0.0, 1.0], repeat=size))).T.copy()
    kept = inputs.copy()
    pool = [np.empty(inputs.shape[1]) for _ in range(size + 1)]
    low, high = _middle_pair(list(inputs), pool)
    ordered = np.sort(inputs, axis=0)
    np.testing.assert_array_equal(low, ordered[size // 2 - 1])
    np.testing.assert_array_equal(high, ordered[size // 2])
    np.testing.assert_array_equal(inputs, kept)  # the columns are read, never written


@pytest.mark.parametrize("window", [3, 5, 7, 9, 15, _NETWORK_LIMIT, _NETWORK_LIMIT + 2, 25])
def test_local_residuals_equal_the_median_of_sorted_neighbours(window: int) -> None:
    rng = np.random.default_rng(window)
    for n in (3, 4, window - 1, window + 2, 1000, 40_000):
        for gaps in (False, True):
            y = np.round(rng.standard_normal(n), 1)  # many ties (invented)
            if gaps:
                y[rng.random(n) < 0.05] = np.nan
            if np.isfinite(y).sum() < 3:
                continue
            np.testing.assert_array_equal(
                local_residuals(y, window), _reference_residuals(y, window), err_msg=f"n={n}"
            )


def test_local_residuals_of_too_few_samples_are_missing() -> None:
    y = np.array([1.0, np.nan, 2.0, np.nan])
    assert np.isnan(local_residuals(y, 7)).all()


def _spread_by_definition(r: np.ndarray) -> tuple[float, float]:
    values = r[np.isfinite(r)]
    centre = float(np.median(values))
    return centre, float(np.median(np.abs(values - centre))) / 0.6745  # NIST SP 1065 MAD rule


def test_robust_spread_equals_the_median_definition() -> None:
    rng = np.random.default_rng(3)
    for n in (1, 2, 5, 100, _SELECT_MIN - 1, _SELECT_MIN, _SELECT_MIN + 1, 200_001):
        cases = [
            rng.standard_normal(n),
            np.sort(rng.standard_normal(n)),  # ordered data: a strided subsample is biased
            np.round(rng.standard_normal(n), 1),  # heavy ties
            np.zeros(n),
            rng.standard_cauchy(n),
            np.where(rng.random(n) < 0.5, 0.0, rng.standard_normal(n)),
            np.tile(np.sort(rng.standard_normal(37)), n // 37 + 1)[:n],
        ]
        for values in cases:
            assert robust_spread(values) == _spread_by_definition(values), n
            holed = values.copy()
            holed[1::5] = np.nan
            assert robust_spread(holed) == _spread_by_definition(holed), n


def test_robust_spread_of_no_finite_value_is_nan() -> None:
    centre, sigma = robust_spread(np.full(10, np.nan))
    assert np.isnan(centre) and np.isnan(sigma)


def _noisy_drifting_record(seed: int, n: int = 20_000) -> tuple[Measurement, np.ndarray]:
    rng = np.random.default_rng(seed)
    days = (np.arange(n) + 0.5) / DAY  # tau0 = 1 s
    y = 4e-9 + 3e-10 * days - 2e-10 * days**2 + rng.normal(scale=1e-11, size=n)
    y += np.cumsum(rng.normal(scale=2e-13, size=n))  # some random-walk wander
    y[5_000:5_300] = np.nan  # a gap
    y[rng.random(n) < 0.01] = np.nan  # scattered missing readings
    return Measurement.from_frequency(y, 1.0), days


@pytest.mark.parametrize("model", ["none", "linear", "quadratic"])
@pytest.mark.parametrize("seed", [0, 1])
def test_polynomial_drift_fit_equals_polyfit_and_lstsq(model: str, seed: int) -> None:
    m, days = _noisy_drifting_record(seed)
    fit = fit_drift(m, model)  # type: ignore[arg-type]
    y = m.frequency()
    good = np.isfinite(y)
    degree = {"none": 0, "linear": 1, "quadratic": 2}[model]
    names = ("offset", "drift_per_day", "curvature_per_day2")[: degree + 1]
    # Least squares with covariance SSE / (N - p) (D^T D)^-1: common practice.
    expected, cov = np.polyfit(days[good], y[good], degree, cov=True)
    design = np.vander(days[good], degree + 1, increasing=True)
    beta, sse, *_ = np.linalg.lstsq(design, y[good], rcond=None)
    direct = sse[0] / (good.sum() - degree - 1) * np.linalg.inv(design.T @ design)
    for p, name in enumerate(names):
        got = fit.coefficients[name]
        assert got == pytest.approx(expected[degree - p], rel=1e-12, abs=0.0), name
        assert got == pytest.approx(beta[p], rel=1e-12, abs=0.0), name
        assert fit.errors[name] == pytest.approx(np.sqrt(direct[p, p]), rel=1e-12), name
        assert fit.errors[name] == pytest.approx(np.sqrt(cov[degree - p, degree - p]), rel=1e-9)
    assert fit.n_used == int(good.sum())
    rms = np.sqrt(np.mean((y[good] - design @ beta) ** 2))
    assert fit.residual_rms == pytest.approx(rms, rel=1e-9)


def _steps_by_definition(m: Measurement, k: float = 10.0, window: int = 7) -> list[tuple]:
    """The phase-step rule written over whole arrays, as NIST SP 1065 states it."""
    d = np.diff(m.phase)
    if m.segments is not None:
        d[np.diff(m.segments) != 0] = np.nan
    resid = local_residuals(d / m.tau0 * m.tau0, window)
    centre, sigma = robust_spread(resid)
    dev = np.nan_to_num(resid - centre)
    flagged = np.abs(dev) > k * sigma
    sign = np.sign(dev)
    before = np.zeros_like(flagged)
    after = np.zeros_like(flagged)
    before[1:] = flagged[:-1] & (sign[:-1] == -sign[1:])
    after[:-1] = flagged[1:] & (sign[1:] == -sign[:-1])
    return [(int(i) + 1, float(dev[i])) for i in np.flatnonzero(flagged & ~before & ~after)]


@pytest.mark.parametrize("threshold", [10.0, 3.0, 2.0])
def test_phase_steps_follow_the_whole_array_rule(threshold: float) -> None:
    rng = np.random.default_rng(8)
    x = np.cumsum(rng.normal(scale=1e-9, size=5_000))
    x[0] -= 4e-7  # a step at the very first difference
    x[-1] += 4e-7  # and one at the very last
    x[1_000:] += 3e-7  # a step inside
    x[2_000] += 5e-7  # a glitch: two opposite jumps
    x[3_000:3_010] = np.nan  # a gap
    m = Measurement.from_phase(x, 1.0)
    found = [(s.index, s.size) for s in detect_phase_steps(m, threshold=threshold)]
    assert found == _steps_by_definition(m, threshold)
    if threshold == 10.0:
        assert [i for i, _ in found] == [1, 1_000, 4_999]


def test_prepare_fits_the_linear_drift_of_the_screened_data() -> None:
    m, _ = _noisy_drifting_record(4)
    new, report = prepare(m)
    assert report.outliers.count == 0
    again = fit_drift(new, "linear")
    assert report.linear_drift.coefficients == again.coefficients
    assert report.linear_drift.errors == again.errors
    np.testing.assert_array_equal(report.linear_drift.y_model, again.y_model)

    y = m.frequency()
    y[7_777] += 1e-8  # a large glitch (invented): it is screened out before the drift fit
    glitched = Measurement.from_frequency(y, 1.0)
    screened, report = prepare(glitched)
    assert report.outliers.count == 1
    again = fit_drift(screened, "linear")
    assert report.linear_drift.coefficients == again.coefficients
    assert report.linear_drift.errors == again.errors
    assert report.linear_drift.coefficients != fit_drift(glitched, "linear").coefficients

    removed, report = prepare(glitched, drift="linear")
    assert report.removed_drift is not None
    assert report.removed_drift.coefficients == again.coefficients
    assert report.linear_drift.coefficients == again.coefficients
    np.testing.assert_array_equal(removed.phase, remove_drift(screened, "linear")[0].phase)
