"""Tests of stability.figures.phase_noise: stability from a phase-noise table."""

from __future__ import annotations

import io
import math
from datetime import UTC, datetime

import numpy as np
import pytest
from matplotlib import image as mimage

from stability import Measurement
from stability.analysis import analyze
from stability.errors import InputError
from stability.figures import (
    PhaseNoiseDrawn,
    phase_noise_figure,
    save_figure,
    stability_series,
    statistic_style,
)
from stability.phase_noise import model_to_phase_noise, phase_noise_to_stability

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


def test_every_validation_message():
    with pytest.raises(InputError, match="PhaseNoiseStability"):
        phase_noise_figure(None)
    conversion = phase_noise_to_stability(
        [1.0, 10.0], [-100.0, -120.0], nominal=1e7, f_h=100.0, taus=[1.0], stats=["adev"]
    )
    for kwargs, message in (
        ({"measured": 5}, "StabilityTable or None"),
        ({"table": (1.0, 2.0, 3.0)}, "pair"),
        ({"model": ([1.0, 2.0], [1.0])}, "1-D of one length"),
        ({"title": 1}, "title must be a str"),
        ({"footer": 1}, "footer must be a str"),
    ):
        with pytest.raises(InputError, match=message):
            phase_noise_figure(conversion, **kwargs)


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
    drawn = phase_noise_figure(
        conversion, table=(f, level), measured=table, model=sketch, analysis_time=START
    )
    assert isinstance(drawn, PhaseNoiseDrawn)
    png_is_drawn(drawn, tmp_path, "pn.png")
    for stat in ("adev", "mdev"):
        np.testing.assert_array_equal(drawn.converted[stat][0], conversion.tau)
        np.testing.assert_array_equal(drawn.converted[stat][1], conversion[stat])
    expected = stability_series(table)
    for stat, arrays in expected.items():
        for got, want in zip(drawn.measured[stat], arrays, strict=True):
            np.testing.assert_array_equal(got, want)
    np.testing.assert_array_equal(drawn.table[1], level)
    np.testing.assert_array_equal(drawn.model[0], grid)
    assert len(drawn.axes) == 2
    assert drawn.axes[1].get_ylabel() == "\u2112(f) (dBc/Hz)"  # plain text, no math
    # ADEV converted and ADEV measured share the statistic's colour
    lines = {line.get_label(): line for line in drawn.axes[0].get_lines()}
    adev = statistic_style("adev").color
    assert lines["ADEV from \u2112(f)"].get_color() == adev
    measured = [c for c in drawn.axes[0].containers if c.get_label() == "ADEV measured"]
    assert measured and measured[0].lines[0].get_color() == adev
    # the conversion alone: one panel, nothing measured
    alone = phase_noise_figure(conversion)
    assert len(alone.axes) == 1 and alone.measured is None
