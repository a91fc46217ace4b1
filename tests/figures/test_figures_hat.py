"""Tests of stability.figures.hat: the three-cornered hat figure.

The figure must render to a non-trivial PNG and expose exactly the data of the
result it was drawn from.
"""

from __future__ import annotations

import io
from datetime import UTC, datetime

import numpy as np
import pytest
from matplotlib import image as mimage

from stability import Measurement
from stability.errors import InputError
from stability.figures import HatDrawn, hat_figure, save_figure
from stability.hat import STATUS_OK, separate

START = datetime(2024, 1, 1, tzinfo=UTC)


def png_is_drawn(drawn, tmp_path, name):
    path = save_figure(drawn, tmp_path / name, "png")
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
    for args, kwargs, message in (
        (("table",), {}, "HatResult or a list"),
        (([],), {}, "holds no HatResult"),
        (([1],), {}, "must hold stability.hat.HatResult"),
        ((hat_result,), {"title": 3}, "title must be a str"),
        ((hat_result,), {"footer": 3}, "footer must be a str"),
    ):
        with pytest.raises(InputError, match=message):
            hat_figure(*args, **kwargs)


def test_hat_figure_draws_the_result(hat_result, tmp_path):
    drawn = hat_figure(hat_result, analysis_time=START)
    assert isinstance(drawn, HatDrawn)
    png_is_drawn(drawn, tmp_path, "hat.png")
    shown = drawn.series["oadev"]
    assert set(shown) == {"A", "B", "C"}
    below_seen = False
    for name, osc in hat_result.oscillators.items():
        ok = np.array([s == STATUS_OK for s in osc.status])
        np.testing.assert_array_equal(shown[name]["tau"], osc.tau[ok])
        np.testing.assert_array_equal(shown[name]["deviation"], osc.deviation[ok])
        np.testing.assert_array_equal(shown[name]["ci_high"], osc.ci_high[ok])
        np.testing.assert_array_equal(shown[name]["below_tau"], osc.tau[~ok])
        np.testing.assert_array_equal(shown[name]["below_bound"], osc.upper_bound[~ok])
        below_seen |= bool((~ok).any())
    assert below_seen, "the fixture should hold a point below resolution"
    for (a, b), pair in hat_result.pairs.items():
        tau, dev = drawn.pairs["oadev"][f"{a}-{b}"]
        np.testing.assert_array_equal(tau, pair.tau)
        np.testing.assert_array_equal(dev, pair.deviation)
    # the points below resolution are drawn as downward triangles
    (ax,) = drawn.axes
    markers = [line.get_marker() for line in ax.get_lines() if line.get_gid() == "hat-below"]
    assert markers and set(markers) == {"v"}
    assert ax.get_ylabel() == "overlapping Allan deviation, OADEV"
    # one colour per oscillator, three different ones
    assert list(drawn.colors) == ["A", "B", "C"] and len(set(drawn.colors.values())) == 3


def test_two_statistics_two_panels_one_colour_per_oscillator():
    pairs = {
        key: Measurement.from_frequency(np.random.default_rng(i).standard_normal(512) * 1e-11, 1.0)
        for i, key in enumerate((("A", "B"), ("B", "C"), ("C", "A")))
    }
    both = [separate(pairs, stat=s) for s in ("oadev", "mdev")]
    drawn = hat_figure(both)
    assert len(drawn.axes) == 2 and set(drawn.series) == {"oadev", "mdev"}
    for ax in drawn.axes:  # each oscillator's error bars in its own colour on both panels
        colours = {bars.get_label(): bars.lines[0].get_color() for bars in ax.containers}
        assert colours == drawn.colors
