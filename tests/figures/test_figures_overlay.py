"""Tests of stability.figures.overlay: several analyses on one stability plot."""

from __future__ import annotations

import numpy as np
import pytest
from matplotlib.colors import to_hex

from stability import Measurement, analyze
from stability.deviations import get_statistic
from stability.errors import InputError
from stability.figures import OverlayDrawn, overlay_figure, stability_figure, statistic_style
from stability.simulate import h_from_deviation, simulate


@pytest.fixture(scope="module")
def tables():
    out = {}
    for label, level, seed in (("a", 1e-11, 4), ("b", 2e-12, 5)):  # invented white-FM levels
        y = simulate(1024, 1.0, levels={0: h_from_deviation(0, level, 1.0)}, seed=seed)
        out[label] = analyze(Measurement.from_frequency(y, 1.0), stats="oadev,mdev,tdev")
    return out


def test_every_validation_message(tables):
    with pytest.raises(InputError, match="non-empty mapping"):
        overlay_figure({})
    with pytest.raises(InputError, match="overlay labels must be non-empty strings"):
        overlay_figure({" ": tables["a"]})
    with pytest.raises(InputError, match="must be a stability.StabilityTable"):
        overlay_figure({"a": "table"})
    with pytest.raises(InputError, match="title must be a str"):
        overlay_figure(tables, title=3)
    with pytest.raises(InputError, match="footer must be a str"):
        overlay_figure(tables, footer=3)
    with pytest.raises(InputError, match="hdev are in none of the tables"):
        overlay_figure(tables, stats=["hdev"])
    with pytest.raises(InputError, match="stats must be a list of statistic names"):
        overlay_figure(tables, stats=5)


def test_overlay_figure_draws_every_series(tables):
    drawn = overlay_figure(tables, analysis_time=None)
    assert isinstance(drawn, OverlayDrawn)
    assert set(drawn.series) == {(lab, s) for lab in "ab" for s in ("oadev", "mdev", "tdev")}
    # one line style (and marker fill) per log
    assert drawn.lines["a"] != drawn.lines["b"]
    # fractional statistics and TDEV (seconds) on separate panels
    assert drawn.panel[("a", "oadev")] is drawn.panel[("b", "mdev")]
    assert drawn.panel[("a", "tdev")] is not drawn.panel[("a", "oadev")]
    ax = drawn.panel[("a", "oadev")]
    lines = {line.get_label(): line for line in ax.get_lines()}
    # each statistic in its own colour and marker; each log in its own line style
    for label in "ab":
        for name in ("oadev", "mdev"):
            line = lines[f"{label}: {name.upper()}"]
            assert to_hex(line.get_color()) == statistic_style(name).color
            assert line.get_marker() == statistic_style(name).marker
            assert (line.get_linestyle(), line.get_fillstyle()) == (
                {"-": "-", "--": "--", ":": ":", "-.": "-."}[drawn.lines[label][0]],
                drawn.lines[label][1],
            )
    tau, dev, _, _ = drawn.series[("a", "oadev")]
    np.testing.assert_allclose(lines["a: OADEV"].get_xdata(), tau)
    np.testing.assert_allclose(lines["a: OADEV"].get_ydata(), dev)
    # one wording per quantity: the same axis label as the stability plot of these statistics
    assert ax.get_ylabel() == "fractional frequency deviation"
    assert "time deviation" in drawn.panel[("a", "tdev")].get_ylabel().lower()
    footer = drawn.figure.texts[-1].get_text()
    assert "a (no file hash)" in footer and "b (no file hash)" in footer


def test_overlay_figure_subset(tables):
    drawn = overlay_figure(tables, stats="mdev", title="two oscillators")
    assert set(drawn.series) == {("a", "mdev"), ("b", "mdev")}
    assert drawn.figure._suptitle.get_text() == "two oscillators"
    assert "modified allan" in drawn.panel[("a", "mdev")].get_ylabel().lower()


def _line(ax, label):
    (line,) = [ln for ln in ax.get_lines() if ln.get_label() == label]
    return line


def test_a_statistic_has_one_colour_in_every_figure(tables):
    # The colour follows the statistic's name, not the order of drawing: MDEV is drawn
    # second in the stability figure and first in the overlay, and looks the same.
    single = stability_figure(tables["a"])
    overlay = overlay_figure(tables, stats="mdev,oadev")
    for name in ("oadev", "mdev"):
        here = _line(single.panel[name], f"{get_statistic(name).title} ({name.upper()})")
        there = _line(overlay.panel[("a", name)], f"a: {name.upper()}")
        assert to_hex(here.get_color()) == to_hex(there.get_color())
        assert to_hex(here.get_color()) == statistic_style(name).color
        assert here.get_marker() == there.get_marker() == statistic_style(name).marker
    assert statistic_style("oadev").color != statistic_style("mdev").color
