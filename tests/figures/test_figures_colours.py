"""A statistic has the same colour (and marker) in every figure that draws it.

The figure functions are drawn with overlapping statistics in different orders and
numbers, and the colour of each statistic's line, marker and noise labels is read
back from the drawn artists: it must be the statistic's own
(:func:`stability.figures.statistic_style`) everywhere, including the stability
plot drawn on a record page. The verdict colours of the limits must stay far from
every statistic colour in the record (CIE 1976 colour difference; about 2.3 is just
noticeable, common practice). The data are invented (seeded white FM).
"""

from __future__ import annotations

import numpy as np
import pytest
from matplotlib.colors import to_hex, to_rgb

from stability import Measurement, analyze
from stability.dynamic import dynamic_stability
from stability.figures import (
    VERDICT_COLORS,
    overlay_figure,
    phase_noise_figure,
    stability_figure,
    statistic_style,
    timeline_figure,
)
from stability.phase_noise import model_to_phase_noise, phase_noise_to_stability
from stability.reports.typeset import PageFlow
from stability.simulate import h_from_deviation, simulate


def _lab(color: str) -> np.ndarray:
    """CIE 1976 L*a*b* of an sRGB colour, D65 white (IEC 61966-2-1; CIE 15)."""
    c = np.array(to_rgb(color))
    c = np.where(c <= 0.04045, c / 12.92, ((c + 0.055) / 1.055) ** 2.4)
    m = np.array([[0.4124, 0.3576, 0.1805], [0.2126, 0.7152, 0.0722], [0.0193, 0.1192, 0.9505]])
    xyz = m @ c / np.array([0.95047, 1.0, 1.08883])
    f = np.where(xyz > (6 / 29) ** 3, np.cbrt(xyz), xyz / (3 * (6 / 29) ** 2) + 4 / 29)
    return np.array([116 * f[1] - 16, 500 * (f[0] - f[1]), 200 * (f[1] - f[2])])


@pytest.fixture(scope="module")
def measurement():
    y = simulate(4096, 1.0, levels={0: h_from_deviation(0, 1e-11, 1.0)}, seed=12)
    return Measurement.from_frequency(y, 1.0)


def _colours_by_statistic(axes, names) -> dict[str, set[str]]:
    """Statistic -> colours of the lines whose label names it (title or abbreviation)."""
    found: dict[str, set[str]] = {n: set() for n in names}
    for ax in axes:
        for line in ax.get_lines():
            label = line.get_label()
            for name in names:
                short = name.upper().replace("_", " ")
                if f"({short})" in label or label.startswith(f"{short} ") or f": {short}" in label:
                    found[name].add(to_hex(line.get_color()))
    return found


def test_a_statistic_has_its_colour_in_every_figure(measurement):
    orders = ("oadev,mdev,tdev", "tdev,mdev,adev,oadev", "mdev")
    drawn = [stability_figure(analyze(measurement, stats=s)) for s in orders]
    tables = {
        "first": analyze(measurement, stats="mdev,oadev"),
        "second": analyze(measurement, stats="adev,tdev"),
    }
    drawn.append(overlay_figure(tables))
    f = np.logspace(-2, 1, 13)
    conversion = phase_noise_to_stability(
        f, model_to_phase_noise({0: 2e-22}, 1e7, f), nominal=1e7, f_h=10.0,
        taus=[0.1, 1.0, 10.0], stats=["mdev", "adev", "oadev"],
    )  # fmt: skip
    drawn.append(phase_noise_figure(conversion, measured=tables["first"]))
    page = PageFlow("colours")
    drawn.append(stability_figure(tables["first"], into=page.region(5.0)))
    names = ("oadev", "mdev", "adev", "tdev")
    seen: dict[str, set[str]] = {n: set() for n in names}
    for figure in drawn:
        for name, colours in _colours_by_statistic(figure.axes, names).items():
            seen[name] |= colours
    for name in names:
        assert seen[name] == {statistic_style(name).color}, (name, seen[name])
    # each noise label is written in the colour of the statistic it was written for
    labelled = stability_figure(analyze(measurement, stats="mdev,oadev"), noise_labels="all")
    assert labelled.noise_labels
    for name, words in labelled.noise_labels.items():
        texts = {
            (float(t.xy[0]), t.get_text()): to_hex(t.get_color())
            for t in labelled.panel[name].texts
            if t.get_gid() == "noise-label"
        }
        for tau, word in words:
            assert texts[(tau, word)] == statistic_style(name).color
    # the timeline traces its statistic in the statistic's colour
    result = dynamic_stability(measurement, window=1000.0, step=500.0, taus=[1.0, 2.0],
                               stat="mdev")  # fmt: skip
    trace = timeline_figure(result).axes[1].get_lines()[0]
    assert to_hex(trace.get_color()) == statistic_style("mdev").color


def test_verdict_colours_stand_apart_from_the_statistics_of_a_record(measurement):
    table = analyze(measurement, stats="oadev,mdev,hdev")
    limits = [(1.0, 2e-11, "pass"), (16.0, 3e-12, "inconclusive"), (256.0, 1e-14, "fail")]
    page = PageFlow("record")
    drawn = stability_figure(table, limits=limits, into=page.region(6.0))
    panel = drawn.panel["oadev"]
    verdict_markers = {
        ln.get_label(): to_hex(ln.get_markerfacecolor())
        for ln in panel.get_lines()
        if ln.get_label() in VERDICT_COLORS
    }
    assert verdict_markers == {w: VERDICT_COLORS[w] for w in ("pass", "inconclusive", "fail")}
    statistic_colours = {
        to_hex(ln.get_color()) for ln in panel.get_lines() if "(" in ln.get_label()
    }
    for word, colour in verdict_markers.items():
        for other in statistic_colours:
            assert np.linalg.norm(_lab(colour) - _lab(other)) > 35.0, (word, colour, other)
