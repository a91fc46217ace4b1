"""The fast paths of the preparation give the numbers of their plain definitions.

Checked here: the selection network that picks the two middle neighbours of the
local median (0-1 principle for comparator networks, K. E. Batcher 1968 / D. E.
Knuth, *The Art of Computer Programming* vol. 3, section 5.3.4: from memory);
the local residuals against a sort of every window; the robust spread (median
and median absolute deviation, NIST SP 1065 outlier rule) against ``np.median``;
the polynomial drift fit against ``np.polyfit`` and ``np.linalg.lstsq`` (least
squares with covariance ``SSE / (N - p) (D^T D)^-1``: common practice); the
phase-step rule against its whole-array form; the pipeline's reuse of one
linear fit; and the work done block by block (local residuals, robust spread,
frequency, drift fit, model and its removal, the phase outliers' running sums,
the stuck-counter rule) against the same work over whole arrays. Exact equality
is asked for wherever the fast path picks the same floating-point numbers;
1e-12 relative where a sum is taken in another order.
All data are invented, generated in code with fixed seeds.
"""

from __future__ import annotations

import itertools
import math

import numpy as np
import pytest
from numpy.lib.stride_tricks import sliding_window_view

from stability import AnalysisError, Measurement
from stability.prepare import (
    _common,
    detect_phase_steps,
    fit_drift,
    prepare,
    remove_drift,
    require_variation,
)
from stability.prepare._common import (
    _NETWORK_LIMIT,
    _SELECT_MIN,
    _middle_pair,
    _selection_network,
    centred_frequency,
    frequency_blocks,
    local_residuals,
    robust_spread,
)
from stability.prepare.drift import _fit_drift, _remove_fit
from stability.prepare.drift_model import DriftFit, _drift_integral
from stability.prepare.outliers import _mark_phase, _phase_outliers, _running_sums

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


# ---------------------------------------------------------------- block by block
# The preparation works through long records in blocks (stability.prepare._common
# .blocks) instead of arrays of the record's length. With the blocks made a few
# samples long, on lengths that are not multiples of a block and with missing
# samples on the blocks' edges, every result must be the whole-array one: exactly
# where the same numbers are picked, to 1e-12 relative where sums are taken in
# another order.


@pytest.fixture
def small_blocks(monkeypatch: pytest.MonkeyPatch) -> int:
    """Blocks of 7 samples, local-median blocks of 5, selection from 64 values on."""
    monkeypatch.setattr(_common, "_BLOCK", 7)
    monkeypatch.setattr(_common, "_NETWORK_CHUNK", 5)
    monkeypatch.setattr(_common, "_CHUNK", 6)
    monkeypatch.setattr(_common, "_SELECT_MIN", 64)
    monkeypatch.setattr(_common, "_SELECT_SAMPLE", 16)
    return 7


def _holes(n: int, block: int, rng: np.random.Generator) -> list[np.ndarray]:
    """Masks of missing samples: none, on the blocks' edges, long runs, scattered."""
    edges = np.zeros(n, dtype=bool)
    edges[::block] = True
    edges[block - 1 :: block] = True
    runs = np.zeros(n, dtype=bool)
    runs[: min(n // 3, 3 * block + 2)] = True  # the start, over several blocks
    runs[n - min(n // 4, 2 * block + 1) :] = True  # and the end
    return [np.zeros(n, dtype=bool), edges, runs, rng.random(n) < 0.2]


@pytest.mark.parametrize("window", [3, 7, 9, _NETWORK_LIMIT, _NETWORK_LIMIT + 2])
def test_local_residuals_in_blocks_equal_the_sort(small_blocks: int, window: int) -> None:
    rng = np.random.default_rng(window)
    for n in (3, 4, 5, 6, 8, 13, 36, 101, 1_000):
        for hole in _holes(n, small_blocks, rng):
            y = np.round(rng.standard_normal(n), 1)  # many ties (invented)
            y[hole] = np.nan
            if np.isfinite(y).sum() < 3:
                continue
            expected = _reference_residuals(y, window)
            np.testing.assert_array_equal(local_residuals(y, window), expected, err_msg=str(n))
            overwritten = y.copy()
            got = local_residuals(overwritten, window, out=overwritten)
            assert got is overwritten
            np.testing.assert_array_equal(got, expected, err_msg=f"in place, n={n}")


def test_robust_spread_in_blocks_equals_the_median_definition(small_blocks: int) -> None:
    rng = np.random.default_rng(5)
    for n in (1, 2, 63, 64, 65, 1_001, 5_000):
        for values in (
            rng.standard_normal(n),
            np.sort(rng.standard_normal(n)),
            np.round(rng.standard_normal(n), 1),
            np.zeros(n),
            rng.standard_cauchy(n),
        ):
            for hole in _holes(n, small_blocks, rng):
                holed = values.copy()
                holed[hole] = np.nan
                if np.isfinite(holed).any():
                    assert robust_spread(holed) == _spread_by_definition(holed), n


def _record(n: int, block: int, seed: int, kind: str) -> Measurement:
    """Invented noise with drift, missing phase samples and frequency gaps on block edges."""
    rng = np.random.default_rng(seed)
    days = (np.arange(n) + 0.5) / DAY
    y = 3e-9 + 2e-10 * days + rng.normal(scale=1e-11, size=n)
    if kind == "frequency":
        y[block - 1 :: 3 * block] = np.nan  # gaps: a segment each, last sample of a block
        y[2 * block : 2 * block + block + 3] = np.nan
        return Measurement.from_frequency(y, 10.0)
    x = np.concatenate([[0.0], np.cumsum(y * 10.0)])
    x[block :: 4 * block] = np.nan  # missing phase samples, first of a block
    return Measurement.from_phase(x, 10.0)


@pytest.mark.parametrize("kind", ["frequency", "phase"])
def test_frequency_blocks_equal_the_centred_frequency(small_blocks: int, kind: str) -> None:
    m = _record(100, small_blocks, 1, kind)
    whole = centred_frequency(m)
    made = np.concatenate([values for _, _, values in frequency_blocks(m)])
    np.testing.assert_array_equal(made, whole)
    given = [(start, stop) for start, stop, _ in frequency_blocks(m, whole)]
    assert given[0][0] == 0 and given[-1][1] == whole.size
    assert all(a[1] == b[0] for a, b in itertools.pairwise(given))


@pytest.mark.parametrize("model", ["none", "linear", "quadratic"])
@pytest.mark.parametrize("kind", ["frequency", "phase"])
def test_polynomial_fit_in_blocks_equals_the_whole_array_fit(
    monkeypatch: pytest.MonkeyPatch, model: str, kind: str
) -> None:
    m = _record(1_000, 7, 2, kind)
    whole = fit_drift(m, model)  # type: ignore[arg-type]  # one block: the whole array
    monkeypatch.setattr(_common, "_BLOCK", 7)
    fit = fit_drift(m, model)  # type: ignore[arg-type]
    given = _fit_drift(m, model, centred_frequency(m))
    assert given.coefficients == fit.coefficients and given.errors == fit.errors
    assert fit.n_used == whole.n_used
    for name, value in whole.coefficients.items():
        assert fit.coefficients[name] == pytest.approx(value, rel=1e-12, abs=0.0), name
        assert fit.errors[name] == pytest.approx(whole.errors[name], rel=1e-12), name
    assert fit.per_day == pytest.approx(whole.per_day, rel=1e-12, abs=1e-30)
    assert fit.residual_rms == pytest.approx(whole.residual_rms, rel=1e-12)


_MODELS = {  # invented coefficients of every drift model
    "linear": {"offset": 1e-9, "drift_per_day": 3e-10},
    "quadratic": {"offset": 1e-9, "drift_per_day": 3e-10, "curvature_per_day2": -2e-11},
    "log": {"a": 2e-9, "b_per_day": 5.0, "c": -1e-9},
    "diffusion": {"a": 1e-9, "b_per_sqrt_day": 4e-10, "c_days": 0.3},
}


def _fit_of(m: Measurement, model: str) -> DriftFit:
    coef = _MODELS[model]
    nan = {k: math.nan for k in coef}
    return DriftFit(model, "given", coef, nan, 0.0, 0.0, m.n - 1, 0.0, 1.0, m.n - 1, m.tau0)


@pytest.mark.parametrize("model", list(_MODELS))
def test_model_and_its_removal_in_blocks_equal_the_whole_arrays(
    small_blocks: int, model: str
) -> None:
    m = _record(103, small_blocks, 3, "frequency")
    fit = _fit_of(m, model)
    # the whole-array forms: the model at the mid-times, and the integral of the
    # model less its record mean subtracted from the phase (NIST SP 1065 drift removal)
    t = (np.arange(m.n - 1, dtype=float) + 0.5) * m.tau0 / DAY
    np.testing.assert_array_equal(fit.y_model, fit.frequency_at(t * DAY))
    for start, stop in ((0, 1), (5, 19), (95, 102)):
        np.testing.assert_array_equal(fit.y_model_between(start, stop), fit.y_model[start:stop])
    days = np.arange(m.n, dtype=float) * m.tau0 / DAY
    integral = _drift_integral(model, fit.coefficients, days)
    correction = (integral - integral[-1] * days / days[-1]) * DAY
    removed, _ = _remove_fit(m, fit)
    np.testing.assert_array_equal(removed.phase, m.phase - correction - (m.phase - correction)[0])
    np.testing.assert_array_equal(removed.segments, m.segments)


def test_running_sums_equal_the_cumulative_sum(small_blocks: int) -> None:
    rng = np.random.default_rng(4)
    values = rng.standard_normal(50)
    values[[0, 6, 7, 20, 49]] = np.nan
    whole = np.concatenate([[0.0], np.cumsum(np.nan_to_num(values))])
    points = np.array([50, 0, 7, 8, 14, 13, 49, 21, 7])
    np.testing.assert_array_equal(_running_sums(values, points), whole[points])


def _phase_removal_by_definition(m: Measurement, flagged: np.ndarray, dev: np.ndarray, k, s):
    """Which phase samples go missing and where the record splits, over whole arrays."""
    edges = np.diff(np.concatenate([[0], flagged.astype(np.int8), [0]]))
    starts, ends = np.flatnonzero(edges == 1), np.flatnonzero(edges == -1)
    inner = np.zeros(m.n, dtype=bool)
    inner[1:-1] = flagged[:-1] & flagged[1:]
    csum = np.concatenate([[0.0], np.cumsum(np.nan_to_num(dev))])
    net = np.abs(csum[ends] - csum[starts]) / np.sqrt(ends - starts)
    split = (ends - starts == 1) | (net > k * s)
    segments = np.zeros(m.n, dtype=np.int64) if m.segments is None else m.segments.copy()
    segments += np.cumsum(np.bincount(ends[split], minlength=m.n)[: m.n])
    return np.flatnonzero(inner), net[split] / s, segments


def test_phase_outliers_in_blocks_equal_the_whole_array_rule(small_blocks: int) -> None:
    rng = np.random.default_rng(6)
    m = _record(300, small_blocks, 6, "phase")
    dev = rng.normal(size=m.n - 1)
    dev[~np.isfinite(centred_frequency(m))] = np.nan
    glitches = [6, 7, 13, 14, 15, 34, 35, 70, 100, 101, 102, 103, 200, 298]  # runs over edges
    dev[glitches] = rng.choice([-1.0, 1.0], len(glitches)) * rng.uniform(4, 40, len(glitches))
    k, s = 3.0, 1.0
    flagged = np.abs(np.nan_to_num(dev)) > k * s
    samples, inner, splits = _phase_outliers(m, np.flatnonzero(flagged), dev, s, k)
    new = _mark_phase(m, inner, splits)
    missing, sizes, segments = _phase_removal_by_definition(m, flagged, dev, k, s)
    np.testing.assert_array_equal(inner, missing)
    assert [o.sigmas for o in samples if o.action == "record split"] == sizes.tolist()
    np.testing.assert_array_equal(new.segments, segments)
    assert np.isnan(new.phase[missing]).all()


def test_screening_and_steps_in_blocks_equal_the_whole_array_results(
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    y = _record(3_000, 7, 8, "frequency").frequency()
    y[[6, 7, 700, 1_406, 2_999]] += 2e-9  # glitches (invented), two on a block edge
    x = np.concatenate([[0.0], np.cumsum(np.nan_to_num(y, nan=3e-9) * 10.0)])
    x[[14, 15, 21, 1_000]] += 3e-7  # one bad reading over an edge, a run, a lone one
    x[2_000:] += 5e-7  # a step
    results = []
    for block in (None, 7):
        if block:
            monkeypatch.setattr(_common, "_BLOCK", block)
            monkeypatch.setattr(_common, "_NETWORK_CHUNK", 5)
        for m in (Measurement.from_frequency(y, 10.0), Measurement.from_phase(x, 10.0)):
            new, report = prepare(m, drift="linear")
            results.append((new, report))
    for (new, report), (small_new, small_report) in zip(results[:2], results[2:], strict=True):
        assert [(o.index, o.action) for o in small_report.outliers.samples] == [
            (o.index, o.action) for o in report.outliers.samples
        ]
        assert [s.index for s in small_report.steps] == [s.index for s in report.steps]
        assert small_report.outliers.sigma == pytest.approx(report.outliers.sigma, rel=1e-12)
        np.testing.assert_allclose(small_new.phase, new.phase, rtol=1e-12, atol=1e-21)
        np.testing.assert_array_equal(small_new.segments, new.segments)
    assert results[0][1].outliers.count >= 4 and results[1][1].outliers.count >= 4
    assert 2_000 in [s.index for s in results[1][1].steps]


def _variation_by_definition(m: Measurement) -> tuple[float, int] | None:
    """The stuck-counter rule over whole arrays: (ptp of the steps, their count)."""
    known = np.flatnonzero(np.isfinite(m.phase))
    step = np.diff(m.phase[known]) / np.diff(known)
    if m.segments is not None:
        step = step[np.diff(m.segments[known]) == 0]
    return float(np.ptp(step)), step.size


def test_require_variation_in_blocks_follows_the_whole_array_rule(small_blocks: int) -> None:
    n = 60
    base = np.arange(n + 1) * 2e-9  # a counter stuck on one reading (invented)
    varied = base.copy()
    varied[-1] += 1e-12  # the only change, in the last block
    cases = {"stuck": base, "varied": varied}
    for name, x in list(cases.items()):
        holed = x.copy()
        holed[small_blocks::small_blocks] = np.nan  # the first sample of every block
        holed[20:30] = np.nan  # a run over a block edge
        cases[f"{name} with holes"] = holed
    y = np.full(n, 2e-9)
    y[[6, 13, 14]] = np.nan  # frequency gaps on block edges: steps across them are left out
    stuck_gaps = Measurement.from_frequency(y, 1.0)
    measurements = {k: Measurement.from_phase(x, 1.0) for k, x in cases.items()}
    measurements["stuck frequency with gaps"] = stuck_gaps
    for name, m in measurements.items():
        spread, count = _variation_by_definition(m)
        scale = float(np.nanmax(np.abs(m.phase)))
        if spread > 64 * np.finfo(float).eps * scale:
            require_variation(m)
            assert "varied" in name
        else:
            with pytest.raises(AnalysisError, match=rf"over {count} readings"):
                require_variation(m)
            assert "stuck" in name
