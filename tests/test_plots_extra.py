"""Figures of the three-cornered hat, phase-noise conversion and dynamic stability.

Each figure must render to a non-trivial PNG and expose exactly the data of the
result object it was drawn from.
"""

from __future__ import annotations

import io
import math
from datetime import UTC, datetime

import numpy as np
import pytest
from matplotlib import dates as mdates
from matplotlib import image as mimage

from stability import Measurement
from stability.analysis import analyze
from stability.dynamic import dynamic_stability
from stability.errors import InputError
from stability.hat import STATUS_OK, separate
from stability.phase_noise import model_to_phase_noise, phase_noise_to_stability
from stability.plots import (
    hat_figure,
    phase_noise_figure,
    save_figure,
    stability_series,
    timeline_figure,
)

START = datetime(2024, 1, 1, tzinfo=UTC)


def _png(fig, tmp_path, name):
    path = save_figure(fig, tmp_path / name, "png")
    data = path.read_bytes()
    assert len(data) > 20_000, len(data)
    pixels = mimage.imread(io.BytesIO(data))
    assert pixels.ndim == 3 and pixels.shape[0] > 400 and pixels.shape[1] > 400
    # more than a blank canvas: many distinct colours, and not one colour everywhere
    flat = pixels[..., :3].reshape(-1, 3)
    assert float(flat.std(axis=0).max()) > 0.05
    assert np.unique(np.round(flat * 255).astype(np.int64) @ [65536, 256, 1]).size > 20


@pytest.fixture(scope="module")
def hat_result():
    # invented white-FM levels; C is so quiet that some of its taus fall below resolution
    rng = np.random.default_rng(8)
    n = 1024
    y = {k: v * rng.standard_normal(n) for k, v in {"A": 1e-11, "B": 1e-11, "C": 1e-13}.items()}
    pairs = {
        (a, b): Measurement.from_frequency(y[a] - y[b], 1.0)
        for a, b in (("A", "B"), ("B", "C"), ("C", "A"))
    }
    return separate(pairs, stat="oadev")


def test_every_validation_message(hat_result):
    cases = [
        (hat_figure, ("table",), {}, "HatResult or a list"),
        (hat_figure, ([],), {}, "holds no HatResult"),
        (hat_figure, ([1],), {}, "must hold stability.hat.HatResult"),
        (hat_figure, (hat_result,), {"title": 3}, "title must be a str"),
        (phase_noise_figure, (None,), {}, "PhaseNoiseStability"),
        (timeline_figure, (hat_result,), {}, "DynamicResult"),
    ]
    for func, args, kwargs, message in cases:
        with pytest.raises(InputError, match=message):
            func(*args, **kwargs)
    conversion = phase_noise_to_stability(
        [1.0, 10.0], [-100.0, -120.0], nominal=1e7, f_h=100.0, taus=[1.0], stats=["adev"]
    )
    for kwargs, message in (
        ({"measured": 5}, "StabilityTable or None"),
        ({"table": (1.0, 2.0, 3.0)}, "pair"),
        ({"model": ([1.0, 2.0], [1.0])}, "1-D of one length"),
        ({"footer": 1}, "footer must be a str"),
    ):
        with pytest.raises(InputError, match=message):
            phase_noise_figure(conversion, **kwargs)


def test_hat_figure_draws_the_result(hat_result, tmp_path):
    fig = hat_figure(hat_result, analysis_time=START)
    _png(fig, tmp_path, "hat.png")
    drawn = fig.hat_series["oadev"]
    assert set(drawn) == {"A", "B", "C"}
    below_seen = False
    for name, osc in hat_result.oscillators.items():
        ok = np.array([s == STATUS_OK for s in osc.status])
        np.testing.assert_array_equal(drawn[name]["tau"], osc.tau[ok])
        np.testing.assert_array_equal(drawn[name]["deviation"], osc.deviation[ok])
        np.testing.assert_array_equal(drawn[name]["ci_high"], osc.ci_high[ok])
        np.testing.assert_array_equal(drawn[name]["below_tau"], osc.tau[~ok])
        np.testing.assert_array_equal(drawn[name]["below_bound"], osc.upper_bound[~ok])
        below_seen |= bool((~ok).any())
    assert below_seen, "the fixture should hold a point below resolution"
    for (a, b), pair in hat_result.pairs.items():
        tau, dev = fig.hat_pairs["oadev"][f"{a}-{b}"]
        np.testing.assert_array_equal(tau, pair.tau)
        np.testing.assert_array_equal(dev, pair.deviation)
    # the points below resolution are drawn as downward triangles
    markers = [
        line.get_marker() for line in fig.axes[0].get_lines() if line.get_gid() == "hat-below"
    ]
    assert markers and set(markers) == {"v"}
    # two statistics: two panels
    pairs = {
        key: Measurement.from_frequency(np.random.default_rng(i).standard_normal(512) * 1e-11, 1.0)
        for i, key in enumerate((("A", "B"), ("B", "C"), ("C", "A")))
    }
    both = [separate(pairs, stat=s) for s in ("oadev", "mdev")]
    fig2 = hat_figure(both)
    assert len(fig2.axes) == 2 and set(fig2.hat_series) == {"oadev", "mdev"}


def test_phase_noise_figure_draws_conversion_table_and_measurement(tmp_path):
    h0, nu0 = 2e-22, 5e6
    f = np.logspace(-2, 2, 21)
    level = model_to_phase_noise({0: h0}, nu0, f)
    conversion = phase_noise_to_stability(
        f, level, nominal=nu0, f_h=100.0, taus=[0.01, 0.1, 1.0, 10.0], stats=["adev", "mdev"]
    )
    # invented log: white FM with h0 = 2 tau0 sigma^2 (NIST SP 1065 section 5.2.2)
    y = math.sqrt(h0 / 2.0) * np.random.default_rng(3).standard_normal(2048)
    table = analyze(Measurement.from_frequency(y, 1.0), stats="adev")
    model = table.extras["power_law_model"]
    grid = np.geomspace(1e-3, 0.5, 50)
    sketch = (grid, model_to_phase_noise(model.h, nu0, grid))
    fig = phase_noise_figure(
        conversion, table=(f, level), measured=table, model=sketch, analysis_time=START
    )
    _png(fig, tmp_path, "pn.png")
    data = fig.phase_noise_series
    for stat in ("adev", "mdev"):
        np.testing.assert_array_equal(data["converted"][stat][0], conversion.tau)
        np.testing.assert_array_equal(data["converted"][stat][1], conversion[stat])
    expected = stability_series(table)
    for stat, arrays in expected.items():
        for got, want in zip(data["measured"][stat], arrays, strict=True):
            np.testing.assert_array_equal(got, want)
    np.testing.assert_array_equal(data["table"][1], level)
    np.testing.assert_array_equal(data["model"][0], grid)
    assert len(fig.axes) == 2
    # the conversion alone: one panel, nothing measured
    alone = phase_noise_figure(conversion)
    assert len(alone.axes) == 1 and alone.phase_noise_series["measured"] is None


def test_timeline_figure_draws_the_map_and_shortest_tau(tmp_path):
    rng = np.random.default_rng(9)
    y = 1e-11 * rng.standard_normal(1500)
    y[750:] *= 3.0
    meas = Measurement.from_frequency(y, 1.0, start=START)
    result = dynamic_stability(meas, window=200.0, step=50.0, taus=[1.0, 2.0, 4.0, 8.0])
    fig = timeline_figure(result, analysis_time=START)
    _png(fig, tmp_path, "timeline.png")
    data = fig.timeline_data
    np.testing.assert_allclose(data["log10_deviation"], np.log10(result.deviation))
    np.testing.assert_array_equal(data["shortest"][1], result.deviation[:, 0])
    np.testing.assert_array_equal(data["shortest"][2], result.ci_low[:, 0])
    assert data["is_date"] and "UTC" in data["x_label"]
    np.testing.assert_allclose(data["x"], mdates.date2num(result.time))
    assert data["x_edges"].size == result.deviation.shape[0] + 1
    assert data["tau_edges"].size == result.tau.size + 1
    # tau edges are geometric midpoints: the centres lie inside their cells
    assert (data["tau_edges"][:-1] < result.tau).all() and (
        result.tau < data["tau_edges"][1:]
    ).all()
    # without time stamps the axis is elapsed time
    plain = dynamic_stability(
        Measurement.from_frequency(y, 1.0), window=200.0, step=50.0, taus=[1.0]
    )
    fig2 = timeline_figure(plain)
    assert not fig2.timeline_data["is_date"]
    assert "elapsed" in fig2.timeline_data["x_label"]
    np.testing.assert_allclose(fig2.timeline_data["x"] * 60.0, plain.time_s)
