"""Tests of stability.plots: the sigma-tau figure, the series figure and saving."""

from __future__ import annotations

from dataclasses import replace
from datetime import UTC, datetime

import numpy as np
import pytest
from matplotlib import image as mimage
from matplotlib.collections import LineCollection, PolyCollection
from matplotlib.figure import Figure

import stability
from stability import plots
from stability.errors import InputError


# ---------------------------------------------------------------------- fixtures
def _white_fm(n: int, seed: int = 7) -> np.ndarray:
    # Invented test data: seeded white frequency noise, 1e-11 per sample.
    return np.random.default_rng(seed).normal(0.0, 1e-11, n)


@pytest.fixture
def table():
    meas = stability.Measurement.from_frequency(_white_fm(4096), 1.0)
    return stability.analyze(meas, stats="oadev,mdev,tdev")


@pytest.fixture
def qualified(table):
    """Intervals and noise labels filled in BY HAND (invented test data, not computed).

    The values only exercise the drawing: a +-20 % interval on all rows but
    the last, and a noise label that changes from WFM to FFM.
    """
    results = {}
    for name, r in table.results.items():
        n = len(r)
        low, high = r.deviation * 0.8, r.deviation * 1.25
        low[-1] = high[-1] = np.nan
        noise = ["WFM"] * (n - 3) + ["FFM"] * 2 + [""]
        results[name] = replace(r, ci_low=low, ci_high=high, noise=tuple(noise))
    return replace(table, results=results)


def _is_nontrivial_png(path, min_bytes=20_000):
    assert path.stat().st_size > min_bytes
    pixels = mimage.imread(path)
    assert pixels.ndim == 3 and pixels.shape[0] > 300 and pixels.shape[1] > 300
    assert float(pixels[..., :3].std()) > 0.02  # not a uniform image


# ---------------------------------------------------------------------- validation first
def test_every_validation_message(tmp_path, table):
    meas = table.measurement
    with pytest.raises(InputError, match="table must be a stability.StabilityTable, got str"):
        plots.stability_figure("table")
    with pytest.raises(InputError, match="title must be a str or None, got int"):
        plots.stability_figure(table, title=3)
    with pytest.raises(InputError, match="footer must be a str or None, got int"):
        plots.stability_figure(table, footer=3)
    with pytest.raises(InputError, match="model_curve must map a statistic"):
        plots.stability_figure(table, model_curve=[1, 2])
    with pytest.raises(InputError, match="model_curve names 'hdev', which is not in the table"):
        plots.stability_figure(table, model_curve={"hdev": ([1.0], [1e-11])})
    with pytest.raises(InputError, match=r"model_curve\['oadev'\] must be a pair"):
        plots.stability_figure(table, model_curve={"oadev": 5})
    with pytest.raises(InputError, match=r"tau and sigma must be 1-D of one length"):
        plots.stability_figure(table, model_curve={"oadev": ([1.0, 2.0], [1e-11])})
    with pytest.raises(InputError, match="limits must be a list of"):
        plots.stability_figure(table, limits=5)
    with pytest.raises(InputError, match=r"limits row 0 must be \(tau_s, max, verdict\)"):
        plots.stability_figure(table, limits=[("a", 1e-11, "pass")])
    with pytest.raises(InputError, match=r"limits row 1: tau and max must be positive"):
        plots.stability_figure(table, limits=[(1.0, 1e-11), (10.0, -1.0, None)])
    with pytest.raises(InputError, match="unknown verdict 'maybe'.*pass, fail, inconclusive"):
        plots.stability_figure(table, limits=[(1.0, 1e-11, "maybe")])
    with pytest.raises(InputError, match="limits_statistic 'mtie' is not in the table"):
        plots.stability_figure(table, limits=[(1.0, 1e-11)], limits_statistic="mtie")
    with pytest.raises(InputError, match="measurement must be a stability.Measurement"):
        plots.series_figure(np.zeros(10))
    with pytest.raises(InputError, match=r"drift_curve must hold one value per frequency sample"):
        plots.series_figure(meas, drift_curve=np.zeros(3))
    with pytest.raises(InputError, match="drift_curve must be an array of numbers"):
        plots.series_figure(meas, drift_curve=["a"] * (meas.n - 1))
    with pytest.raises(InputError, match=r"outlier_indices must lie in 0\.\.4095"):
        plots.series_figure(meas, outlier_indices=[5000])
    with pytest.raises(InputError, match="outlier_indices must be whole sample indices"):
        plots.series_figure(meas, outlier_indices=[1.5])
    with pytest.raises(InputError, match="max_columns must be an integer of at least 10"):
        plots.series_figure(meas, max_columns=2)
    with pytest.raises(InputError, match="title must be a str or None"):
        plots.series_figure(meas, title=1.0)
    fig = plots.stability_figure(table)
    with pytest.raises(InputError, match="unknown figure format 'gif'.*png, svg, pdf"):
        plots.save_figure(fig, tmp_path / "a.gif", fmt="gif")
    with pytest.raises(InputError, match="fig must be a matplotlib Figure"):
        plots.save_figure("figure", tmp_path / "a.png")
    with pytest.raises(InputError, match="dpi must be a number between 10 and 1200"):
        plots.save_figure(fig, tmp_path / "a.png", dpi=0)


# ---------------------------------------------------------------------- sigma-tau figure
def test_stability_figure_data_match_table(tmp_path, qualified):
    fig = plots.stability_figure(
        qualified, title="counter.log", footer="input SHA-256 0123456789ab"
    )
    assert isinstance(fig, Figure)
    assert set(fig.stability_series) == {"oadev", "mdev", "tdev"}
    for name, (tau, dev, low, high) in fig.stability_series.items():
        r = qualified[name]
        np.testing.assert_array_equal(tau, r.tau)
        np.testing.assert_array_equal(dev, r.deviation)
        np.testing.assert_array_equal(low, r.ci_low)
        np.testing.assert_array_equal(high, r.ci_high)
        ax = fig.stability_axes[name]
        drawn = [ln for ln in ax.lines if ln.get_label().endswith(f"({name.upper()})")]
        assert len(drawn) == 1
        np.testing.assert_array_equal(drawn[0].get_xdata(), r.tau)
        np.testing.assert_array_equal(drawn[0].get_ydata(), r.deviation)
    # fractional and time statistics on separate panels
    assert fig.stability_axes["oadev"] is fig.stability_axes["mdev"]
    assert fig.stability_axes["tdev"] is not fig.stability_axes["oadev"]
    assert fig.stability_axes["tdev"].get_ylabel() == "time deviation, TDEV (s)"
    assert fig.stability_axes["oadev"].get_ylabel() == "fractional frequency deviation"
    assert fig.stability_axes["oadev"].get_xlabel() == "averaging time \u03c4 (s)"
    assert fig.stability_axes["oadev"].get_xscale() == "log"
    assert fig.stability_axes["oadev"].get_legend() is not None  # two series
    assert fig.stability_axes["tdev"].get_legend() is None  # one series: no legend
    # error bars: one vertical segment per row with an interval, from low to high
    ax = fig.stability_axes["tdev"]
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
    assert fig._suptitle.get_text() == "counter.log"
    assert any(t.get_text() == "input SHA-256 0123456789ab" for t in fig.texts)
    out = plots.save_figure(fig, tmp_path / "sigma_tau.png")
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
    fig = plots.stability_figure(table, analysis_time=moment)
    (ax,) = fig.axes
    assert ax.get_ylabel() == "overlapping Allan deviation, OADEV"
    assert ax.get_legend() is None
    assert fig._suptitle.get_text() == "osc.csv"
    footer = [t.get_text() for t in fig.texts]
    assert any(
        t.startswith("input SHA-256 abababababab ·")
        and f"stability {stability.__version__}" in t
        and "2024-02-03 04:05 UTC" in t
        for t in footer
    )


def test_slope_key_matches_power_law_slopes(table):
    # NIST SP 1065 / IEEE 1139: ADEV slopes -1 (WPM, FPM), -1/2, 0, +1/2
    assert plots.slope_key(["oadev"])[1] == (
        (-1.0, "WPM/FPM"), (-0.5, "WFM"), (0.0, "FFM"), (0.5, "RWFM"),
    )  # fmt: skip
    # NIST SP 1065: MDEV slopes -3/2, -1, -1/2, 0, +1/2
    assert [s for s, _ in plots.slope_key(["mdev"])[1]] == [-1.5, -1.0, -0.5, 0.0, 0.5]
    # ITU-T G.810 / NIST SP 1065: TDEV = tau MDEV / sqrt(3), so MDEV slopes + 1
    mdev_slopes = np.array([s for s, _ in plots.slope_key(["mdev"])[1]])
    tdev_slopes = np.array([s for s, _ in plots.slope_key(["tdev"])[1]])
    np.testing.assert_array_equal(tdev_slopes, mdev_slopes + 1.0)
    # common practice: rms phase differences grow as tau^0, ^1/2, ^1, ^3/2
    assert [s for s, _ in plots.slope_key(["mtie"])[1]] == [0.0, 0.5, 1.0, 1.5]
    assert plots.slope_key(["oadev", "mdev"])[0] == "allan"
    # the drawn guides really have those slopes on the log-log axes
    fig = plots.stability_figure(table)
    for name, kind in (("oadev", "allan"), ("tdev", "tdev")):
        ax = fig.stability_axes[name]
        guides = [ln for ln in ax.lines if ln.get_gid() == "slope-key"]
        slopes = sorted(
            np.diff(np.log10(ln.get_ydata()))[0] / np.diff(np.log10(ln.get_xdata()))[0]
            for ln in guides
        )
        np.testing.assert_allclose(slopes, sorted(s for s, _ in plots.SLOPES[kind]), atol=1e-9)
    # a panel mixing statistics of different slopes says whose slopes the key shows
    headings = [
        t.get_text() for ax in fig.axes for t in ax.texts if t.get_text().startswith("slopes")
    ]
    assert headings == ["slopes (OADEV)", "slopes"]
    single = plots.stability_figure(stability.analyze(table.measurement, stats="mdev"))
    assert [t.get_text() for t in single.axes[0].texts if t.get_gid() == "slope-key"][-1] == (
        "slopes"
    )


def test_model_curve_and_limits(tmp_path, qualified):
    tau = qualified["oadev"].tau
    model = {"oadev": (tau, 1e-11 / np.sqrt(tau))}
    limits = [(1.0, 2e-11, "pass"), (10.0, 5e-12, "FAIL"), (100.0, 1e-12, "inconclusive"),
              (1000.0, 2e-13, None)]  # fmt: skip
    fig = plots.stability_figure(qualified, model_curve=model, limits=limits)
    ax = fig.stability_axes["oadev"]
    by_label = {ln.get_label(): ln for ln in ax.lines}
    np.testing.assert_allclose(by_label["OADEV power-law model"].get_ydata(), model["oadev"][1])
    np.testing.assert_array_equal(by_label["limit (OADEV)"].get_xdata(), [1, 10, 100, 1000])
    assert [v for _, _, v in fig.stability_limits] == [
        "pass", "fail", "inconclusive", "not measured",
    ]  # fmt: skip
    for verdict, color in plots.VERDICT_COLORS.items():
        assert by_label[verdict].get_markerfacecolor() == color
    assert len(set(plots.VERDICT_COLORS.values())) == 4
    # the limits go on the panel of their statistic only
    assert not any(ln.get_label().startswith("limit") for ln in fig.stability_axes["tdev"].lines)
    fig_t = plots.stability_figure(qualified, limits=[(1.0, 1e-9)], limits_statistic="tdev")
    assert any(ln.get_label() == "limit (TDEV)" for ln in fig_t.stability_axes["tdev"].lines)


def test_svg_and_pdf_formats(tmp_path):
    meas = stability.Measurement.from_frequency(_white_fm(512), 1.0)
    fig = plots.stability_figure(stability.analyze(meas, stats="oadev"))
    svg = plots.save_figure(fig, tmp_path / "plot.svg")
    pdf = plots.save_figure(fig, tmp_path / "plot.out", fmt="PDF")
    unknown_suffix = plots.save_figure(fig, tmp_path / "plot.figure")
    head = svg.read_bytes()[:400]
    assert b"<svg" in head or b"<?xml" in head
    assert svg.stat().st_size > 10_000
    assert pdf.read_bytes().startswith(b"%PDF")
    assert unknown_suffix.read_bytes().startswith(b"\x89PNG")  # PNG by default
    from pypdf import PdfReader

    reader = PdfReader(str(pdf))
    assert len(reader.pages) == 1
    assert "stability" in str(reader.metadata.get("/Creator"))
    assert sorted(p.name for p in tmp_path.iterdir()) == ["plot.figure", "plot.out", "plot.svg"]


# ---------------------------------------------------------------------- data over time
def test_envelope_is_honest():
    rng = np.random.default_rng(3)
    values = rng.normal(size=10_007)  # invented test data
    values[500:700] = np.nan
    idx, val = plots.envelope(values, 100)
    finite = np.isfinite(idx)
    # every drawn point is a real sample, at its own index
    np.testing.assert_array_equal(val[finite & np.isfinite(val)],
                                  values[idx[finite & np.isfinite(val)].astype(int)])  # fmt: skip
    assert np.nanmax(val) == np.nanmax(values) and np.nanmin(val) == np.nanmin(values)
    # each bucket's extremes are drawn (plain loop over buckets as the reference)
    block = int(np.ceil(values.size / 100))
    drawn = set(val[np.isfinite(val)].tolist())
    for start in range(0, values.size, block):
        chunk = values[start : start + block]
        if np.isfinite(chunk).any():
            assert np.nanmax(chunk) in drawn and np.nanmin(chunk) in drawn
    # indices never go back in time; the line breaks beside a gap
    assert (np.diff(idx[finite]) >= 0).all()
    assert np.isnan(val[(idx > 400) & (idx < 800) | np.isnan(idx)]).any()


def test_series_figure_small_record(tmp_path):
    y = _white_fm(3000)
    y[1000:1010] = np.nan
    meas = stability.Measurement.from_frequency(y, 1.0)
    drift = np.linspace(-1e-12, 1e-12, y.size)
    fig = plots.series_figure(meas, drift_curve=drift, outlier_indices=[5, 2500])
    data = fig.series_data
    assert not data["decimated"]
    x, freq = data["frequency"]
    np.testing.assert_array_equal(freq, meas.frequency())
    assert x[-1] == pytest.approx(2999 / 60.0)  # 50 min record: elapsed time in minutes
    assert fig.axes[1].get_xlabel() == "elapsed time (min)"
    np.testing.assert_array_equal(data["drift"][1], drift)
    np.testing.assert_allclose(data["gaps"], [[1000 / 60.0, 1010 / 60.0]])
    np.testing.assert_allclose(data["outliers"], [5 / 60.0, 2500 / 60.0])
    polys = [c for c in fig.axes[0].collections if isinstance(c, PolyCollection)]
    assert len(polys) == 1
    _is_nontrivial_png(plots.save_figure(fig, tmp_path / "series.png"))


def test_phase_residual_removes_linear_fit():
    k = np.arange(2000, dtype=float)
    # invented test data: an offset, a frequency offset and a quadratic (drift)
    x = 3e-6 + 2e-9 * k + 1e-14 * k**2
    meas = stability.Measurement.from_phase(x, 0.5)
    fig = plots.series_figure(meas)
    factor, unit = fig.series_data["phase_unit"]
    _, resid = fig.series_data["phase_residual"]
    expected = meas.phase - np.polyval(np.polyfit(k, meas.phase, 1), k)
    np.testing.assert_allclose(resid * factor, expected, rtol=0, atol=1e-18)
    # 1e-14 k^2 less its line over 2000 samples peaks near 1e-14 * 2000^2 / 6 = 6.7 ns
    assert unit == "ns" and factor == 1e-9
    assert 1.0 <= np.nanmax(np.abs(resid)) < 1000.0
    assert fig.axes[1].get_ylabel() == "phase residual (ns)"
    assert fig.series_data["gaps"].shape == (0, 2)


def test_series_figure_long_record_is_decimated(tmp_path):
    n = 200_000
    y = _white_fm(n, seed=11) + np.linspace(0.0, 5e-11, n)
    y[50_000:51_000] = np.nan
    y[150_000] = np.nan
    start = datetime(2024, 3, 1, 0, 0, tzinfo=UTC)
    meas = stability.Measurement.from_frequency(y, 1.0, start=start)
    fig = plots.series_figure(
        meas, drift_curve=np.linspace(0.0, 5e-11, n), outlier_indices=np.array([10, 123_456])
    )
    data = fig.series_data
    assert data["decimated"]
    _, drawn = data["frequency"]
    assert drawn.size < 10_000
    freq = meas.frequency()
    assert np.nanmax(drawn) == np.nanmax(freq) and np.nanmin(drawn) == np.nanmin(freq)
    assert fig.axes[1].get_xlabel() == "time (UTC)"
    day0 = float(np.asarray(fig.axes[1].get_xlim())[0])
    from matplotlib import dates as mdates

    assert day0 == pytest.approx(mdates.date2num(start))
    gaps = data["gaps"]
    assert gaps.shape == (2, 2)
    np.testing.assert_allclose((gaps - day0) * 86400.0, [[50_000, 51_000], [150_000, 150_001]])
    _is_nontrivial_png(plots.save_figure(fig, tmp_path / "series.png"))


def test_library_never_touches_pyplot():
    # the library builds figures with Figure + FigureCanvasAgg only: no pyplot import anywhere
    import ast
    from pathlib import Path

    package = Path(stability.__file__).parent
    for source in [package / "plots.py", *sorted((package / "reports").glob("*.py"))]:
        tree = ast.parse(source.read_text(encoding="utf-8"))
        for node in ast.walk(tree):
            names = []
            if isinstance(node, ast.Import):
                names = [a.name for a in node.names]
            elif isinstance(node, ast.ImportFrom):
                names = [node.module or ""] + [f"{node.module}.{a.name}" for a in node.names]
            assert not any("pyplot" in n for n in names), f"{source.name} imports pyplot"
    fig = plots.stability_figure(
        stability.analyze(stability.Measurement.from_frequency(_white_fm(256), 1.0), "oadev")
    )
    assert isinstance(fig.canvas, plots.FigureCanvasAgg)


def test_power_of_ten_labels_are_plain_text():
    # Decade labels read 10^n without math typesetting (drawing speed); the
    # exponents are the decades of the axis (common practice on sigma-tau plots).
    label = plots._PowerLabels()
    label.set_axis(None)
    assert label(1e-12) == "10\u207b\u00b9\u00b2"
    assert label(1.0) == "10\u2070"
    assert label(1e5) == "10\u2075"
    # the multiplier of a linear axis, and math that is not a power stays math
    assert plots._plain_math("$\\times\\mathdefault{10^{\u22129}}\\mathdefault{}$") == (
        "\u00d710\u207b\u2079"
    )
    assert plots._plain_math("$\\sigma_y$") == "$\\sigma_y$"


def test_fixed_layout_keeps_every_label_inside_the_figure(qualified):
    # The sigma-tau and series figures use fixed margins: nothing may be clipped.
    y = _white_fm(20_000) + 3e-9  # invented: a large offset gives long tick labels
    y[500:620] = np.nan
    start = datetime(2026, 3, 1, tzinfo=UTC)
    series = stability.Measurement.from_frequency(y, 1.0, start=start)
    figures = [
        plots.stability_figure(qualified, title="counter.log"),
        plots.series_figure(series, outlier_indices=[40, 9000]),
    ]
    for fig in figures:
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
    fig = plots.stability_figure(qualified)
    ax = fig.stability_axes["oadev"]
    grids = [c for c in ax.collections if c.get_gid() == "minor-grid"]
    lo, hi = ax.get_xlim()
    vertical = [seg[0, 0] for c in grids for seg in c.get_segments() if seg[0, 0] == seg[1, 0]]
    expected = [m * 10.0**k for k in range(-3, 8) for m in range(2, 10) if lo < m * 10.0**k < hi]
    np.testing.assert_allclose(sorted(vertical), expected)
    # an axis spanning less than 1.5 decades keeps matplotlib's own minor ticks (and labels)
    narrow = plots._new_figure(6.0, 4.0, fixed=True)
    axis = narrow.add_subplot()
    plots._log_axes(axis)
    axis.plot([1.0, 1e4], [2e-12, 6e-12])
    plots._minor_log_grid(axis)
    narrow.canvas.draw()
    assert [t.get_text() for t in axis.get_yticklabels(minor=True) if t.get_text()]
    assert len([c for c in axis.collections if c.get_gid() == "minor-grid"]) == 1  # x only
