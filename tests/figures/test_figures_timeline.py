"""Tests of stability.figures.timeline: stability over time."""

from __future__ import annotations

import io
from datetime import UTC, datetime

import numpy as np
import pytest
from matplotlib import dates as mdates
from matplotlib import image as mimage

from stability import Measurement
from stability.dynamic import dynamic_stability
from stability.errors import InputError
from stability.figures import TimelineDrawn, save_figure, statistic_style, timeline_figure
from stability.figures.timeline import cell_edges

START = datetime(2024, 1, 1, tzinfo=UTC)


def png_is_drawn(drawn, tmp_path, name):
    path = save_figure(drawn, tmp_path / name, "png")
    data = path.read_bytes()
    assert len(data) > 20_000, len(data)
    pixels = mimage.imread(io.BytesIO(data))
    assert pixels.ndim == 3 and pixels.shape[0] > 400 and pixels.shape[1] > 400
    flat = pixels[..., :3].reshape(-1, 3)
    assert float(flat.std(axis=0).max()) > 0.05
    assert np.unique(np.round(flat * 255).astype(np.int64) @ [65536, 256, 1]).size > 20


def _record(start=START):
    rng = np.random.default_rng(9)  # invented: white FM whose level triples half-way
    y = 1e-11 * rng.standard_normal(1500)
    y[750:] *= 3.0
    return Measurement.from_frequency(y, 1.0, start=start)


def test_every_validation_message():
    result = dynamic_stability(_record(), window=200.0, step=50.0, taus=[1.0])
    for args, kwargs, message in (
        (("table",), {}, "DynamicResult"),
        ((result,), {"title": 3}, "title must be a str"),
        ((result,), {"footer": 3}, "footer must be a str"),
    ):
        with pytest.raises(InputError, match=message):
            timeline_figure(*args, **kwargs)


def test_cell_edges_hold_their_centres():
    centres = np.array([1.0, 2.0, 4.0, 8.0])
    log = cell_edges(centres, log=True, half_width=0.0)
    np.testing.assert_allclose(log[1:-1], np.sqrt(centres[1:] * centres[:-1]))  # geometric
    linear = cell_edges(centres, log=False, half_width=0.0)
    np.testing.assert_allclose(linear[1:-1], (centres[1:] + centres[:-1]) / 2)
    np.testing.assert_allclose(cell_edges(np.array([5.0]), log=False, half_width=0.5), [4.5, 5.5])


def test_timeline_figure_draws_the_map_and_shortest_tau(tmp_path):
    result = dynamic_stability(_record(), window=200.0, step=50.0, taus=[1.0, 2.0, 4.0, 8.0])
    drawn = timeline_figure(result, analysis_time=START)
    assert isinstance(drawn, TimelineDrawn)
    png_is_drawn(drawn, tmp_path, "timeline.png")
    np.testing.assert_allclose(drawn.log10_deviation, np.log10(result.deviation))
    np.testing.assert_array_equal(drawn.shortest[1], result.deviation[:, 0])
    np.testing.assert_array_equal(drawn.shortest[2], result.ci_low[:, 0])
    assert drawn.is_date and "UTC" in drawn.x_label
    np.testing.assert_allclose(drawn.x, mdates.date2num(result.time))
    assert drawn.x_edges.size == result.deviation.shape[0] + 1
    assert drawn.tau_edges.size == result.tau.size + 1
    # tau edges are geometric midpoints: the centres lie inside their cells
    assert (drawn.tau_edges[:-1] < result.tau).all() and (result.tau < drawn.tau_edges[1:]).all()
    # the trace is drawn in the statistic's colour; the tau axis is labelled in plain text
    ax_map, ax_line = drawn.axes
    assert ax_line.get_lines()[0].get_color() == statistic_style(result.statistic).color
    drawn.figure.canvas.draw()
    ticks = [t.get_text() for t in ax_map.get_yticklabels(minor=True) + ax_map.get_yticklabels()]
    assert any(ticks) and not any("$" in t for t in ticks)
    # without time stamps the axis is elapsed time
    plain = dynamic_stability(_record(start=None), window=200.0, step=50.0, taus=[1.0])
    second = timeline_figure(plain)
    assert not second.is_date
    assert "elapsed" in second.x_label
    np.testing.assert_allclose(second.x * 60.0, plain.time_s)
