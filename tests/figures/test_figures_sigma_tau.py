"""Tests of stability.figures.sigma_tau: the stability plot of one analysis."""

from __future__ import annotations

import enum
from dataclasses import replace
from datetime import UTC, datetime

import numpy as np
import pytest
from matplotlib import image as mimage
from matplotlib.collections import LineCollection
from matplotlib.figure import Figure

import stability
from stability.errors import InputError
from stability.figures import (
    SLOPES,
    VERDICT_COLORS,
    StabilityDrawn,
    save_figure,
    slope_key,
    stability_figure,
    style,
)
from stability.spec import Spec, judge


def _white_fm(n: int, seed: int = 7) -> np.ndarray:
    # Invented test data: seeded white frequency noise, 1e-11 per sample.
    return np.random.default_rng(seed).normal(0.0, 1e-11, n)


def _is_nontrivial_png(path, min_bytes=20_000):
    assert path.stat().st_size > min_bytes
    pixels = mimage.imread(path)
    assert pixels.ndim == 3 and pixels.shape[0] > 300 and pixels.shape[1] > 300
    assert float(pixels[..., :3].std()) > 0.02  # not a uniform image


# ---------------------------------------------------------------------- validation first
def test_every_validation_message(table):
    with pytest.raises(InputError, match="table must be a stability.StabilityTable, got str"):
        stability_figure("table")
    with pytest.raises(InputError, match="title must be a str or None, got int"):
        stability_figure(table, title=3)
    with pytest.raises(InputError, match="footer must be a str or None, got int"):
        stability_figure(table, footer=3)
    with pytest.raises(InputError, match="model_curve must map a statistic"):
        stability_figure(table, model_curve=[1, 2])
    with pytest.raises(InputError, match="model_curve names 'hdev', which is not in the table"):
        stability_figure(table, model_curve={"hdev": ([1.0], [1e-11])})
    with pytest.raises(InputError, match=r"model_curve\['oadev'\] must be a pair"):
        stability_figure(table, model_curve={"oadev": 5})
    with pytest.raises(InputError, match=r"tau and sigma must be 1-D of one length"):
        stability_figure(table, model_curve={"oadev": ([1.0, 2.0], [1e-11])})
    with pytest.raises(InputError, match="limits must be a list of"):
        stability_figure(table, limits=5)
    with pytest.raises(InputError, match=r"limits row 0 must be \(tau_s, max, verdict\)"):
        stability_figure(table, limits=[("a", 1e-11, "pass")])
    with pytest.raises(InputError, match=r"limits row 1: tau and max must be positive"):
        stability_figure(table, limits=[(1.0, 1e-11), (10.0, -1.0, None)])
    with pytest.raises(InputError, match="unknown verdict 'maybe'.*pass, fail, inconclusive"):
        stability_figure(table, limits=[(1.0, 1e-11, "maybe")])
    with pytest.raises(InputError, match="limits_statistic 'mtie' is not in the table"):
        stability_figure(table, limits=[(1.0, 1e-11)], limits_statistic="mtie")


# ---------------------------------------------------------------------- what is drawn
def test_stability_figure_data_match_table(tmp_path, qualified):
    drawn = stability_figure(qualified, title="counter.log", footer="input SHA-256 0123456789ab")
    assert isinstance(drawn, StabilityDrawn) and isinstance(drawn.figure, Figure)
    assert set(drawn.series) == {"oadev", "mdev", "tdev"}
    for name, (tau, dev, low, high) in drawn.series.items():
        r = qualified[name]
        np.testing.assert_array_equal(tau, r.tau)
        np.testing.assert_array_equal(dev, r.deviation)
        np.testing.assert_array_equal(low, r.ci_low)
        np.testing.assert_array_equal(high, r.ci_high)
        ax = drawn.panel[name]
        lines = [ln for ln in ax.lines if ln.get_label().endswith(f"({name.upper()})")]
        assert len(lines) == 1
        np.testing.assert_array_equal(lines[0].get_xdata(), r.tau)
        np.testing.assert_array_equal(lines[0].get_ydata(), r.deviation)
    # fractional and time statistics on separate panels
    assert drawn.axes == (drawn.panel["oadev"], drawn.panel["tdev"])
    assert drawn.panel["oadev"] is drawn.panel["mdev"]
    assert drawn.panel["tdev"].get_ylabel() == "time deviation, TDEV (s)"
    assert drawn.panel["oadev"].get_ylabel() == "fractional frequency deviation"
    assert drawn.panel["oadev"].get_xlabel() == "averaging time \u03c4 (s)"
    assert drawn.panel["oadev"].get_xscale() == "log"
    assert drawn.panel["oadev"].get_legend() is not None  # two series
    assert drawn.panel["tdev"].get_legend() is None  # one series: no legend
    # error bars: one vertical segment per row with an interval, from low to high
    ax = drawn.panel["tdev"]
    bars = [c for c in ax.collections if isinstance(c, LineCollection)]
    segs = [s for c in bars if c.get_gid() != "minor-grid" for s in c.get_segments()]
    r = qualified["tdev"]
    assert len(segs) == len(r) - 1
    ends = np.array(sorted((s[0, 0], s[0, 1], s[1, 1]) for s in segs))
    np.testing.assert_allclose(ends[:, 0], r.tau[:-1], rtol=1e-12)
    np.testing.assert_allclose(ends[:, 1], r.ci_low[:-1], rtol=1e-12)
    np.testing.assert_allclose(ends[:, 2], r.ci_high[:-1], rtol=1e-12)
    # noise type written where it changes: WFM at the first row, FFM where it starts
    texts = [t.get_text() for t in ax.texts if t.get_gid() == "noise-label"]
    assert texts.count("WFM") == 1 and texts.count("FFM") == 1
    assert drawn.figure._suptitle.get_text() == "counter.log"
    assert any(t.get_text() == "input SHA-256 0123456789ab" for t in drawn.figure.texts)
    out = save_figure(drawn, tmp_path / "sigma_tau.png")
    assert out == tmp_path / "sigma_tau.png"
    _is_nontrivial_png(out)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["sigma_tau.png"]


def test_single_statistic_panel_label_and_footer(tmp_path):
    log = tmp_path / "osc.csv"
    log.write_text("invented\n")
    prov = stability.Provenance(path=str(log), sha256="ab" * 32)
    meas = stability.Measurement.from_frequency(_white_fm(1024), 1.0, provenance=prov)
    table = stability.analyze(meas, stats="oadev")
    moment = datetime(2024, 2, 3, 4, 5, tzinfo=UTC)
    drawn = stability_figure(table, analysis_time=moment)
    (ax,) = drawn.axes
    assert ax.get_ylabel() == "overlapping Allan deviation, OADEV"  # the registry's title
    assert ax.get_legend() is None
    assert drawn.figure._suptitle.get_text() == "osc.csv"
    footer = [t.get_text() for t in drawn.figure.texts]
    assert any(
        t.startswith("input SHA-256 abababababab ·")
        and f"stability {stability.__version__}" in t
        and "2024-02-03 04:05 UTC" in t
        for t in footer
    )


def test_slope_key_matches_power_law_slopes(table):
    # NIST SP 1065 / IEEE 1139: ADEV slopes -1 (WPM, FPM), -1/2, 0, +1/2
    assert slope_key(["oadev"])[1] == (
        (-1.0, "WPM/FPM"), (-0.5, "WFM"), (0.0, "FFM"), (0.5, "RWFM"),
    )  # fmt: skip
    # NIST SP 1065: MDEV slopes -3/2, -1, -1/2, 0, +1/2
    assert [s for s, _ in slope_key(["mdev"])[1]] == [-1.5, -1.0, -0.5, 0.0, 0.5]
    # ITU-T G.810 / NIST SP 1065: TDEV = tau MDEV / sqrt(3), so MDEV slopes + 1
    mdev_slopes = np.array([s for s, _ in slope_key(["mdev"])[1]])
    tdev_slopes = np.array([s for s, _ in slope_key(["tdev"])[1]])
    np.testing.assert_array_equal(tdev_slopes, mdev_slopes + 1.0)
    # common practice: rms phase differences grow as tau^0, ^1/2, ^1, ^3/2
    assert [s for s, _ in slope_key(["mtie"])[1]] == [0.0, 0.5, 1.0, 1.5]
    assert slope_key(["oadev", "mdev"])[0] == "allan"
    # the drawn guides really have those slopes on the log-log axes: in the key's own data
    # units, and to the eye (the key's decades are as long in inches as its panel's)
    drawn = stability_figure(table)
    for name, kind in (("oadev", "allan"), ("tdev", "tdev")):
        panel = drawn.panel[name]
        key = drawn.keys[drawn.axes.index(panel)]
        guides = [ln for ln in key.lines if ln.get_gid() == "slope-key"]
        slopes = sorted(
            np.diff(np.log10(ln.get_ydata()))[0] / np.diff(np.log10(ln.get_xdata()))[0]
            for ln in guides
        )
        np.testing.assert_allclose(slopes, sorted(s for s, _ in SLOPES[kind]), atol=1e-9)
        on_screen = []
        for ln in guides:
            (x0, y0), (x1, y1) = key.transData.transform(np.column_stack(ln.get_data()))
            on_screen.append((y1 - y0) / (x1 - x0))
        per_decade = []
        for ax in (panel, key):
            (a, b), (c, d) = ax.get_xlim(), ax.get_ylim()
            per_decade.append(
                (ax.bbox.height / np.log10(d / c)) / (ax.bbox.width / np.log10(b / a))
            )
        np.testing.assert_allclose(per_decade[1], per_decade[0], rtol=1e-9)
        np.testing.assert_allclose(
            sorted(on_screen), np.array(sorted(s for s, _ in SLOPES[kind])) * per_decade[0]
        )
    # each key says whose slopes it shows: a mixed panel, or any panel of a figure of two
    headings = [
        t.get_text() for ax in drawn.keys for t in ax.texts if t.get_text().startswith("slopes")
    ]
    assert headings == ["slopes (OADEV)", "slopes (TDEV)"]
    single = stability_figure(stability.analyze(table.measurement, stats="mdev"))
    assert [t.get_text() for t in single.keys[0].texts if t.get_gid() == "slope-key"][-1] == (
        "slopes"
    )
    # the key sits beside the data, never over it
    for key in drawn.keys:
        assert key.bbox.x0 >= max(a.bbox.x1 for a in drawn.axes)


def test_model_curve_and_limits(qualified):
    tau = qualified["oadev"].tau
    model = {"oadev": (tau, 1e-11 / np.sqrt(tau))}
    limits = [(1.0, 2e-11, "pass"), (10.0, 5e-12, "fail"), (100.0, 1e-12, "inconclusive"),
              (1000.0, 2e-13, None)]  # fmt: skip
    drawn = stability_figure(qualified, model_curve=model, limits=limits)
    ax = drawn.panel["oadev"]
    by_label = {ln.get_label(): ln for ln in ax.lines}
    np.testing.assert_allclose(by_label["OADEV power-law model"].get_ydata(), model["oadev"][1])
    np.testing.assert_array_equal(by_label["limit (OADEV)"].get_xdata(), [1, 10, 100, 1000])
    assert [v for _, _, v in drawn.limits] == [
        "pass", "fail", "inconclusive", "not measured",
    ]  # fmt: skip
    for verdict, color in VERDICT_COLORS.items():
        assert by_label[verdict].get_markerfacecolor() == color
    assert len(set(VERDICT_COLORS.values())) == 4
    # the limits go on the panel of their statistic only
    assert not any(ln.get_label().startswith("limit") for ln in drawn.panel["tdev"].lines)
    on_tdev = stability_figure(qualified, limits=[(1.0, 1e-9)], limits_statistic="tdev")
    assert any(ln.get_label() == "limit (TDEV)" for ln in on_tdev.panel["tdev"].lines)


def test_verdicts_are_taken_as_the_spec_layer_gives_them(table):
    # Verdicts are the spec layer's words, matched exactly; other spellings are refused.
    for word in ("FAIL", "passed", "ok", " pass", "not_measured"):
        with pytest.raises(InputError, match=f"unknown verdict {word!r} in limits row 0"):
            stability_figure(table, limits=[(1.0, 1e-11, word)])
    with pytest.raises(InputError, match="unknown verdict 1 in limits row 0"):
        stability_figure(table, limits=[(1.0, 1e-11, 1)])

    class Word(enum.StrEnum):  # a str-valued verdict type compares equal to its word
        FAIL = "fail"
        NOT_MEASURED = "not measured"

    drawn = stability_figure(table, limits=[(1.0, 1e-11, Word.FAIL), (2.0, 1e-11, "not measured")])
    assert [v for _, _, v in drawn.limits] == ["fail", "not measured"]
    assert all(type(v) is str for _, _, v in drawn.limits)


def test_judgement_limits_draw_as_they_are(table):
    # The rows a judgement gives for the plot are accepted without re-reading them.
    # invented limits: far above the data at 1 s (pass), far below at 16 s (fail)
    spec = Spec("oadev", confidence=0.683, interpolate=True, limits=[(1.0, 1e-9), (16.0, 1e-15)])
    judgement = judge(table, spec)
    drawn = stability_figure(
        table, limits=judgement.plot_limits(), limits_statistic=judgement.statistic
    )
    words = [c.verdict for c in judgement.listed]
    assert [v for _, _, v in drawn.limits] == words
    assert {"pass", "fail"} <= set(words)


def test_fixed_layout_keeps_every_label_inside_the_figure(qualified):
    # The sigma-tau figure uses fixed margins: nothing may be clipped.
    drawn = stability_figure(qualified, title="counter.log")
    fig = drawn.figure
    assert fig.get_layout_engine() is None
    fig.canvas.draw()
    renderer = fig.canvas.get_renderer()
    box = fig.bbox
    for ax in fig.axes:
        tight = ax.get_tightbbox(renderer)
        assert tight.x0 >= box.x0 - 0.5 and tight.y0 >= box.y0 - 0.5
        assert tight.x1 <= box.x1 + 0.5 and tight.y1 <= box.y1 + 0.5
    labels = [t.get_text() for ax in fig.axes for t in ax.get_yticklabels() if t.get_text()]
    assert labels and not any("$" in t for t in labels)


def test_minor_grid_lines_sit_at_two_to_nine_times_each_decade(qualified):
    # Log "paper": minor lines at 2..9 x 10^k inside the limits (common practice).
    drawn = stability_figure(qualified)
    ax = drawn.panel["oadev"]
    grids = [c for c in ax.collections if c.get_gid() == "minor-grid"]
    lo, hi = ax.get_xlim()
    vertical = [seg[0, 0] for c in grids for seg in c.get_segments() if seg[0, 0] == seg[1, 0]]
    expected = [m * 10.0**k for k in range(-3, 8) for m in range(2, 10) if lo < m * 10.0**k < hi]
    np.testing.assert_allclose(sorted(vertical), expected)
    # an axis spanning less than 1.5 decades keeps matplotlib's own minor ticks (and labels)
    narrow = style.new_figure(6.0, 4.0, layout="fixed")
    axis = narrow.add_subplot()
    style.log_axes(axis)
    axis.plot([1.0, 1e4], [2e-12, 6e-12])
    style.log_paper(axis)
    narrow.canvas.draw()
    assert [t.get_text() for t in axis.get_yticklabels(minor=True) if t.get_text()]
    assert len([c for c in axis.collections if c.get_gid() == "minor-grid"]) == 1  # x only


# ---------------------------------------------------------------------- labels, notes, reference
def test_new_arguments_are_checked(table):
    with pytest.raises(InputError, match="noise_labels names hdev, not in the table"):
        stability_figure(table, noise_labels="oadev,hdev")
    with pytest.raises(InputError, match="noise_labels must be a list of statistics"):
        stability_figure(table, noise_labels=3)
    with pytest.raises(InputError, match="reference: tau and sigma must be 1-D of one length"):
        stability_figure(table, reference=([1.0, 2.0], [1e-12]))
    with pytest.raises(InputError, match="into must be a matplotlib Figure or SubFigure"):
        stability_figure(table, into="page")


def test_noise_labels_are_written_once_and_only_for_those_asked(qualified):
    # OADEV and MDEV both read WFM at 1 s (the invented labels of the fixture): one word there
    drawn = stability_figure(qualified)
    for ax in drawn.axes:  # on one panel, a word is written at a tau once
        texts = [(round(float(t.xy[0]), 9), t.get_text()) for t in ax.texts
                 if t.get_gid() == "noise-label"]  # fmt: skip
        assert len(texts) == len(set(texts))
    on_fractional = [t for t in drawn.panel["oadev"].texts if t.get_gid() == "noise-label"]
    assert [t.get_text() for t in on_fractional].count("WFM") == 1
    assert (1.0, "WFM") in drawn.noise_labels["oadev"]
    assert (1.0, "WFM") not in drawn.noise_labels.get("mdev", ())  # written for OADEV already
    none = stability_figure(qualified, noise_labels="none")
    assert none.noise_labels == {}
    assert not [t for ax in none.axes for t in ax.texts if t.get_gid() == "noise-label"]
    only = stability_figure(qualified, noise_labels=["mdev"])
    assert set(only.noise_labels) == {"mdev"}
    # a full panel labels its first statistic unless asked otherwise
    four = replace(qualified, results={
        name: replace(qualified["oadev"], statistic=name) for name in ("oadev", "adev", "hdev",
                                                                        "totdev")})  # fmt: skip
    assert set(stability_figure(four).noise_labels) == {"oadev"}
    assert set(stability_figure(four, noise_labels="all").noise_labels) == {"oadev"}  # same words


def test_the_figure_says_its_confidence_level_and_draws_the_reference(qualified):
    tau = qualified["oadev"].tau
    reference = (tau, np.full(tau.shape, 2e-13))
    drawn = stability_figure(qualified, reference=reference)
    notes = [t.get_text() for t in drawn.figure.texts if t.get_gid() == "confidence-note"]
    assert notes == ["error bars: 68.3 % confidence"]
    assert drawn.confidence == pytest.approx(0.683)
    line = [
        ln for ln in drawn.panel["oadev"].lines if ln.get_label() == "reference, stated stability"
    ]
    assert len(line) == 1
    np.testing.assert_array_equal(line[0].get_xdata(), tau)
    np.testing.assert_array_equal(drawn.reference[1], reference[1])


def test_the_title_names_file_and_column():
    details = {
        "value_column": "ch3",
        "columns": [{"number": 1, "name": "t", "role": "time"},
                    {"number": 4, "name": "ch3", "role": "value"}],
    }  # fmt: skip
    prov = stability.Provenance(path="/logs/three-channels.csv", sha256="cd" * 32, details=details)
    meas = stability.Measurement.from_frequency(_white_fm(512), 1.0, provenance=prov)
    drawn = stability_figure(stability.analyze(meas, stats="oadev"))
    assert drawn.figure._suptitle.get_text() == "three-channels.csv \u00b7 column 4 (ch3)"
    titled = stability_figure(stability.analyze(meas, stats="oadev"), title="maser vs ocxo")
    assert titled.figure._suptitle.get_text() == "maser vs ocxo"
