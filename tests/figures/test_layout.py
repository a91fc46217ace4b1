"""Every figure and every record page fits: measured from the drawn artists.

Each figure is drawn, then its text boxes, markers and error bars are measured in
display units with the renderer (``fig.canvas.get_renderer()``,
``artist.get_window_extent``), and the test asserts:

* no two text boxes overlap (titles, axis labels, tick labels, legends, notes);
* no text leaves the figure;
* no label inside a panel (noise types, pair names, notes) sits on a data marker
  or an error bar;
* every visible axis carries at least three labelled ticks.

The checks are written here from matplotlib's artists alone, independently of
the placement code they check. The data are invented (seeded power-law noise).
"""

from __future__ import annotations

import itertools
import math
from datetime import UTC, datetime

import numpy as np
import pytest
from matplotlib.axes import Axes
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.collections import LineCollection
from matplotlib.figure import Figure
from matplotlib.legend import Legend
from matplotlib.text import Text
from matplotlib.transforms import Bbox

from stability import Measurement, analyze
from stability.causes import CauseSettings, periodic_marks, run_with_causes
from stability.dynamic import dynamic_stability
from stability.environment import lagged, regress
from stability.figures import (
    environment_figure,
    hat_figure,
    overlay_figure,
    phase_noise_figure,
    run_series_figure,
    series_figure,
    spectrum_figure,
    stability_figure,
    timeline_figure,
)
from stability.figures.fleet import distribution_figure, fleet_figure
from stability.figures.timing import mask_figure, tie_figure
from stability.fleet import population
from stability.hat import separate
from stability.phase_noise import model_to_phase_noise, phase_noise_to_stability
from stability.reports.record import build_record, record_pages
from stability.reports.record_timing import timing_pages
from stability.run import run_analysis
from stability.simulate import h_from_deviation, simulate
from stability.spec import Info, Reference, Spec, judge
from stability.spectrum import welch_spectrum
from stability.timing import analyze_time_error

START = datetime(2026, 3, 2, 18, 4, tzinfo=UTC)
ALL_FRACTIONAL = "adev,oadev,mdev,hdev,ohdev,totdev,mtot,htot,theo1,theobr,theoh,pdev"
TOLERANCE = 0.5  # pixels: boxes that merely touch do not overlap


# ---------------------------------------------------------------------- measuring
def _boxes_overlap(a, b, pad=0.0) -> bool:
    return (
        a.x0 + TOLERANCE - pad < b.x1
        and b.x0 + TOLERANCE - pad < a.x1
        and a.y0 + TOLERANCE - pad < b.y1
        and b.y0 + TOLERANCE - pad < a.y1
    )


def _in_view(axis, loc: float) -> bool:
    low, high = sorted(axis.get_view_interval())
    span = high - low
    return low - 1e-9 * abs(span) <= loc <= high + 1e-9 * abs(span)


def _tick_labels(axis) -> list[Text]:
    """The tick labels an axis draws: visible, non-empty, at ticks inside the view."""
    shown = []
    for which in ("major", "minor"):
        locs = axis.get_majorticklocs() if which == "major" else axis.get_minorticklocs()
        ticks = (
            axis.get_major_ticks(len(locs)) if which == "major" else axis.get_minor_ticks(len(locs))
        )
        for tick, loc in zip(ticks, locs, strict=True):
            if not _in_view(axis, loc):
                continue
            for label in (tick.label1, tick.label2):
                if label.get_visible() and label.get_text().strip():
                    shown.append(label)
    return shown


def _drawn_texts(fig) -> list[Text]:
    """Every visible, non-empty text the figure draws."""
    texts: list[Text] = []
    seen: set[int] = set()
    for ax in fig.get_axes():
        if not ax.get_visible():
            continue
        for axis in (ax.xaxis, ax.yaxis):
            if not axis.get_visible() or not ax.axison:
                continue
            texts += _tick_labels(axis)
            for extra in (axis.label, axis.offsetText):
                if extra.get_visible() and extra.get_text().strip():
                    texts.append(extra)
        texts += [t for t in ax.texts if t.get_visible() and t.get_text().strip()]
        title = ax.title
        if title.get_visible() and title.get_text().strip():
            texts.append(title)
    figures = [fig]
    while figures:  # the figure's own texts and those of its sub-figures (titles, notes)
        current = figures.pop()
        texts += [t for t in current.texts if t.get_visible() and t.get_text().strip()]
        figures += list(current.subfigs)
    for legend in fig.findobj(Legend):
        texts += [t for t in legend.get_texts() if t.get_visible() and t.get_text().strip()]
        title = legend.get_title()
        if title.get_visible() and title.get_text().strip():
            texts.append(title)
    unique = []
    for t in texts:
        if id(t) not in seen:
            seen.add(id(t))
            unique.append(t)
    return unique


def _marker_boxes(ax: Axes, renderer) -> list:
    """Display boxes of every data marker drawn in a panel (a square of the marker size)."""
    boxes = []
    dpi = ax.get_figure(root=True).dpi
    for line in ax.get_lines():
        marker = line.get_marker()
        if not line.get_visible() or marker in (None, "None", "none", "", " "):
            continue
        xy = line.get_transform().transform(np.column_stack(line.get_data()))
        xy = xy[np.all(np.isfinite(xy), axis=1)]
        half = 0.5 * line.get_markersize() * dpi / 72.0
        inside = ax.bbox
        for x, y in xy:
            if inside.x0 <= x <= inside.x1 and inside.y0 <= y <= inside.y1:
                boxes.append(Bbox([[x - half, y - half], [x + half, y + half]]))
    return boxes


def _bar_segments(ax: Axes) -> list[np.ndarray]:
    """Display segments of the error bars of a panel (vertical line collections)."""
    out = []
    for coll in ax.collections:
        if isinstance(coll, LineCollection) and coll.get_gid() != "minor-grid":
            for seg in coll.get_segments():
                out.append(coll.get_transform().transform(seg))
    return out


def _segment_hits(box, seg: np.ndarray) -> bool:
    """Whether a segment passes through a box (sampled finely along its length)."""
    (x0, y0), (x1, y1) = seg[0], seg[-1]
    steps = max(2, int(math.hypot(x1 - x0, y1 - y0)))
    xs, ys = np.linspace(x0, x1, steps), np.linspace(y0, y1, steps)
    inside = (xs > box.x0 + TOLERANCE) & (xs < box.x1 - TOLERANCE)
    inside &= (ys > box.y0 + TOLERANCE) & (ys < box.y1 - TOLERANCE)
    return bool(inside.any())


def check_layout(fig, what: str) -> None:
    """The four layout rules for one drawn figure (or one record page)."""
    fig.canvas.draw()
    renderer = fig.canvas.get_renderer()
    texts = _drawn_texts(fig)
    boxes = [(t, t.get_window_extent(renderer)) for t in texts]
    frame = fig.bbox
    for t, box in boxes:
        assert (
            box.x0 >= frame.x0 - TOLERANCE
            and box.y0 >= frame.y0 - TOLERANCE
            and box.x1 <= frame.x1 + TOLERANCE
            and box.y1 <= frame.y1 + TOLERANCE
        ), f"{what}: {t.get_text()!r} leaves the figure ({box.extents} in {frame.extents})"
    for (t1, b1), (t2, b2) in itertools.combinations(boxes, 2):
        if b1.width <= 0 or b2.width <= 0:
            continue
        assert not _boxes_overlap(b1, b2), (
            f"{what}: {t1.get_text()!r} overlaps {t2.get_text()!r} ({b1.extents}, {b2.extents})"
        )
    for ax in fig.get_axes():
        if not ax.get_visible() or not ax.axison:
            continue
        markers = _marker_boxes(ax, renderer)
        bars = _bar_segments(ax)
        labels = [t for t in ax.texts if t.get_visible() and t.get_text().strip()]
        legend = ax.get_legend()
        for label in labels:
            box = label.get_window_extent(renderer)
            for marker in markers:
                assert not _boxes_overlap(box, marker), (
                    f"{what}: label {label.get_text()!r} sits on a data marker"
                )
            for seg in bars:
                assert not _segment_hits(box, seg), (
                    f"{what}: label {label.get_text()!r} sits on an error bar"
                )
        if legend is not None:
            box = legend.get_window_extent(renderer)
            if _boxes_overlap(box, ax.bbox):
                for marker in markers:
                    assert not _boxes_overlap(box, marker), f"{what}: the legend covers data"
        for axis in (ax.xaxis, ax.yaxis):
            if not axis.get_visible():
                continue
            if not len(axis.get_majorticklocs()) and not len(axis.get_minorticklocs()):
                continue  # an axis drawn without ticks (the short side of a colour bar)
            labels_drawn = [t for t in _tick_labels(axis) if t.get_text().strip()]
            hidden = not any(
                lbl.get_visible() for tick in axis.get_major_ticks(1) for lbl in (tick.label1,)
            )
            if hidden:
                continue
            assert len(labels_drawn) >= 3, (
                f"{what}: the {axis.axis_name} axis of {ax.get_ylabel() or ax.get_title()!r} "
                f"has {len(labels_drawn)} labelled ticks: {[t.get_text() for t in labels_drawn]}"
            )


# ---------------------------------------------------------------------- the figures
@pytest.fixture(scope="module")
def measurement():
    # invented: white FM 1e-11 at 1 s with a flicker floor, 8000 s at 1 s
    levels = {0: h_from_deviation(0, 1e-11, 1.0), -1: h_from_deviation(-1, 2e-13, 1.0)}
    y = simulate(8000, 1.0, levels=levels, seed=3)
    return Measurement.from_frequency(y, 1.0, start=START)


@pytest.mark.parametrize(
    "stats",
    ["oadev", "oadev,mdev,hdev,totdev", ALL_FRACTIONAL, "oadev,mdev,tdev,mtie"],
    ids=["1 statistic", "4 statistics", "12 statistics", "two panels"],
)
def test_stability_plot_fits(measurement, stats):
    table = analyze(measurement, stats=stats)
    curves = {n: (table[n].tau, table[n].deviation * 1.1) for n in ("oadev",) if n in table.results}
    limits = [(1.0, 2e-11, "pass"), (10.0, 3e-12, "inconclusive"), (100.0, 1e-13, "fail")]
    drawn = stability_figure(table, model_curve=curves, limits=limits, title="invented.csv")
    check_layout(drawn.figure, f"sigma-tau {stats}")
    every = stability_figure(table, noise_labels="all")
    check_layout(every.figure, f"sigma-tau {stats}, every noise label")


def test_a_narrow_range_still_gets_three_labels():
    # invented: 60 samples, so the deviations span less than a decade
    y = simulate(60, 1.0, levels={0: h_from_deviation(0, 1e-11, 1.0)}, seed=4)
    table = analyze(Measurement.from_frequency(y, 1.0), stats="oadev,mdev")
    check_layout(stability_figure(table).figure, "sigma-tau of a short record")


def _glitchy_run():
    """Invented frequency log: white FM, a quadratic drift, a gap of 300 and two glitches."""
    rng = np.random.default_rng(5)
    n = 6000
    t = np.arange(n)
    y = 1e-11 * rng.standard_normal(n) + 4e-11 * (t / n) ** 2
    y[2000] = 6e-9
    y[4100] = -5e-9
    y[3000:3300] = np.nan
    meas = Measurement.from_frequency(y, 1.0, start=START)
    return run_analysis(meas, stats="oadev,mdev", drift="quadratic")


def test_series_with_gaps_and_outliers_fits():
    run = _glitchy_run()
    check_layout(run_series_figure(run).figure, "series with gaps and outliers")


def test_time_error_panel_fits():
    # invented 1 PPS log: white phase 1 ns, a 2e-12 frequency offset, five missing readings
    rng = np.random.default_rng(6)
    k = np.arange(20000)
    x = 1e-9 * rng.standard_normal(k.size) + 2e-12 * k
    x[[100, 5000, 5001, 12000, 19000]] = np.nan
    meas = Measurement.from_phase(x, 1.0, start=START)
    run = run_analysis(meas, stats="tdev,mtie", drift="linear")
    drawn = run_series_figure(run)
    assert drawn.time_error is not None and len(drawn.axes) == 3
    check_layout(drawn.figure, "series with time error")
    check_layout(series_figure(meas).figure, "series of a phase log")


def test_timeline_fits():
    rng = np.random.default_rng(9)  # invented: white FM whose level triples half-way
    y = 1e-11 * rng.standard_normal(3000)
    y[1500:] *= 3.0
    result = dynamic_stability(
        Measurement.from_frequency(y, 1.0, start=START), window=400.0, step=100.0,
        taus=[1.0, 2.0, 4.0, 8.0],
    )  # fmt: skip
    check_layout(timeline_figure(result).figure, "timeline")
    flat = 1e-11 * rng.standard_normal(20000)  # invented: one level, one tau
    one = dynamic_stability(
        Measurement.from_frequency(flat, 1.0, start=START), window=2000.0, step=500.0, taus=[1.0]
    )
    check_layout(timeline_figure(one).figure, "timeline of one tau")


def test_phase_noise_fits():
    h0, nu0 = 2e-22, 5e6  # invented white FM level
    f = np.logspace(-2, 2, 21)
    level = model_to_phase_noise({0: h0}, nu0, f)
    conversion = phase_noise_to_stability(
        f, level, nominal=nu0, f_h=100.0, taus=[0.01, 0.1, 1.0, 10.0], stats=["adev", "mdev"]
    )
    y = math.sqrt(h0 / 2.0) * np.random.default_rng(3).standard_normal(2048)
    table = analyze(Measurement.from_frequency(y, 1.0), stats="adev")
    grid = np.geomspace(1e-3, 0.5, 50)
    sketch = (grid, model_to_phase_noise(table.extras["power_law_model"].h, nu0, grid))
    drawn = phase_noise_figure(conversion, table=(f, level), measured=table, model=sketch)
    check_layout(drawn.figure, "phase noise")
    short = phase_noise_to_stability(
        f, level, nominal=nu0, f_h=100.0, taus=[1.0, 2.0, 4.0], stats=["adev"]
    )
    check_layout(phase_noise_figure(short).figure, "phase noise over less than a decade")


def test_hat_fits():
    rng = np.random.default_rng(8)  # invented levels; C so quiet some taus fall below resolution
    y = {k: v * rng.standard_normal(1024) for k, v in {"A": 1e-11, "B": 1e-11, "C": 1e-13}.items()}
    pairs = {(a, b): Measurement.from_frequency(y[a] - y[b], 1.0)
             for a, b in (("A", "B"), ("B", "C"), ("C", "A"))}  # fmt: skip
    results = [separate(pairs, stat="oadev"), separate(pairs, stat="mdev")]
    check_layout(hat_figure(results).figure, "three-cornered hat")


def test_overlay_fits():
    tables = {}
    for label, level, seed in (("ocxo", 1e-11, 4), ("rubidium", 2e-12, 5)):  # invented levels
        y = simulate(2048, 1.0, levels={0: h_from_deviation(0, level, 1.0)}, seed=seed)
        tables[label] = analyze(Measurement.from_frequency(y, 1.0), stats="oadev,mdev,tdev")
    check_layout(overlay_figure(tables).figure, "overlay")


def test_fleet_figures_fit():
    rng = np.random.default_rng(6)  # invented: 40 devices around 1e-11 / sqrt(tau)
    tau = np.array([1.0, 2.0, 5.0, 10.0, 20.0, 50.0, 100.0, 200.0, 500.0, 1000.0])
    curves = {
        f"OCXO-{k:04d}": (tau, 1e-11 * rng.lognormal(0.0, 0.2) / np.sqrt(tau)) for k in range(40)
    }
    named = ["OCXO-0007", "OCXO-0012", "OCXO-0031", "OCXO-0002", "OCXO-0039"]
    limits = [(1.0, 2e-11), (100.0, 2e-12)]
    title, footer = "fleet of 40 logs: oadev", "stability · analysed today"
    band = population(curves, 3)
    drawn = fleet_figure(
        curves, band, statistic="oadev", limits=limits, named=named, title=title, footer=footer
    )
    check_layout(drawn.figure, "fleet")
    values = {name: float(c[1][6]) for name, c in curves.items()}
    spread = distribution_figure(
        values, 100.0, statistic="oadev", limit=2e-12, named=named, title=title, footer=footer
    )
    check_layout(spread.figure, "fleet distribution")


def test_every_record_page_fits():
    run = _glitchy_run()
    spec = Spec(
        "oadev", confidence=0.95, interpolate=True,
        limits=[(1.0, 2e-11), (10.0, 5e-12), (1000.0, 2e-13)],
    )  # fmt: skip
    reference = Reference(id="REF", points=[(1.0, 5e-12), (100.0, 6e-13), (1000.0, 2e-13)])
    info = Info(device={"id": "DUT-1", "description": "invented oscillator"}, reference=reference)
    judgement = judge(run.table, spec, reference=reference)
    record = build_record(run, judgement, info)
    pages = record_pages(run, judgement, record)
    for k, page in enumerate(pages, start=1):
        check_layout(page, f"record page {k}")


def test_record_pages_of_a_time_interval_log_fit():
    # invented 1 PPS log judged on TDEV: the stability page holds two panels, stacked
    rng = np.random.default_rng(7)
    x = 1e-9 * rng.standard_normal(8000) + 3e-12 * np.arange(8000)
    run = run_analysis(Measurement.from_phase(x, 1.0, start=START), stats="tdev,mtie,oadev",
                       confidence=0.95)  # fmt: skip
    spec = Spec("tdev", confidence=0.95, interpolate=True, limits=[(1.0, 3e-9), (1000.0, 1e-9)])
    judgement = judge(run.table, spec)
    record = build_record(run, judgement, Info(device={"id": "RX-1"}))
    for k, page in enumerate(record_pages(run, judgement, record), start=1):
        check_layout(page, f"time-interval record page {k}")


def test_the_checks_catch_what_they_check():
    # a figure built to break each rule, so a passing layout test means something
    fig = Figure(figsize=(4, 3), dpi=100)
    FigureCanvasAgg(fig)
    ax = fig.add_axes((0.2, 0.2, 0.7, 0.7))
    ax.plot([1, 2, 3], [1, 2, 3], marker="o")
    ax.set_xticks([1, 2, 3])
    ax.set_yticks([1, 2, 3])
    ax.text(2, 2, "on a marker")
    with pytest.raises(AssertionError, match="sits on a data marker"):
        check_layout(fig, "broken")
    fig2 = Figure(figsize=(4, 3), dpi=100)
    FigureCanvasAgg(fig2)
    fig2.text(0.5, 0.5, "one")
    fig2.text(0.51, 0.5, "two")
    with pytest.raises(AssertionError, match="overlaps"):
        check_layout(fig2, "broken")
    fig3 = Figure(figsize=(4, 3), dpi=100)
    FigureCanvasAgg(fig3)
    fig3.text(0.95, 0.5, "runs off the page")
    with pytest.raises(AssertionError, match="leaves the figure"):
        check_layout(fig3, "broken")
    fig4 = Figure(figsize=(4, 3), dpi=100)
    FigureCanvasAgg(fig4)
    ax4 = fig4.add_axes((0.2, 0.2, 0.7, 0.7))
    ax4.plot([1, 2], [1, 2])
    ax4.set_xticks([1, 2])
    with pytest.raises(AssertionError, match="labelled ticks"):
        check_layout(fig4, "broken")


def test_spectrum_environment_and_marked_stability_plot_fit():
    # invented: white FM, a 300 s cycle of the room, -1e-11 per K through a 60 s lag
    t = np.arange(8192.0)
    room = 21.0 + 0.3 * np.sin(2 * np.pi * t / 300.0)
    y = simulate(8192, 1.0, levels={0: h_from_deviation(0, 1e-12, 1.0)}, seed=6)
    y = y - 1e-11 * lagged(room, 1.0, 60.0)
    m = Measurement.from_frequency(y, 1.0, start=START)
    run = run_with_causes(m, None, CauseSettings(), stats="oadev,mdev")
    objects = run.table.extras["cause_objects"]
    spectrum, lines = objects["spectrum"], objects["lines"]
    assert lines
    models = {"model of the Allan deviation": run.table.extras["power_law_model"].h}
    drawn = spectrum_figure(spectrum, models=models, lines=lines, title="invented.csv")
    check_layout(drawn.figure, "spectrum with S_x")
    with_carrier = welch_spectrum(Measurement.from_frequency(y, 1.0, nominal=10e6))
    check_layout(spectrum_figure(with_carrier).figure, "spectrum with L(f)")
    marked = stability_figure(run.table, marks=periodic_marks(run.table))
    check_layout(marked.figure, "sigma-tau with a periodic component marked")
    sens = regress(m, room, lag_range=(0, 600))
    env = environment_figure(y, room, 1.0, sens, aux_unit="degC", title="invented.csv")
    check_layout(env.figure, "frequency and temperature")


def test_every_validation_page_fits(monkeypatch):
    # a validation report with failed checks (a patched estimator) and every group's table
    import dataclasses
    import json

    from stability.deviations import STATISTICS
    from stability.validation import report as validation_report
    from stability.validation.coverage import CoveragePlan
    from stability.validation.pages import validation_pages

    monkeypatch.setattr(
        validation_report, "DEFAULT_PLAN", CoveragePlan(points=128, trials=60, factors=(1, 4))
    )
    stat = STATISTICS["mdev"]

    def off(x, tau0, m, seg):
        value, n = stat.func(x, tau0, m, seg)
        return value * 1.001, n

    monkeypatch.setitem(STATISTICS, "mdev", dataclasses.replace(stat, func=off, multi=None))
    result = validation_report.run_checks(stats="oadev")
    report = json.loads(validation_report.validation_json(result))
    assert report["result"] == "fail"
    for k, page in enumerate(validation_pages(report), start=1):
        check_layout(page, f"validation page {k}")


def test_time_error_figures_fit():
    # invented 1 PPS log of a clock of PRTC class: 2 ns white phase, 5 ns wander, two gaps
    rng = np.random.default_rng(12)
    k = np.arange(20000)
    x = 30e-9 + 5e-9 * np.sin(2 * np.pi * k / 3600) + 2e-9 * rng.standard_normal(k.size)
    x[[700, 9000]] = np.nan
    result = analyze_time_error(Measurement.from_phase(x, 1.0), mask="g8272-prtc-a")
    check_layout(tie_figure(result, title="invented-pps.csv").figure, "TIE")
    check_layout(mask_figure(result, title="invented-pps.csv").figure, "MTIE and TDEV, masked")
    plain = analyze_time_error(Measurement.from_phase(x, 1.0), taus="octave")
    check_layout(mask_figure(plain).figure, "MTIE and TDEV without a mask")
    for k, page in enumerate(timing_pages(result), start=1):
        check_layout(page, f"record page {k} of the time error against a mask")


def test_record_pages_of_a_mask_alone_fit():
    # invented 1 PPS log judged against a time-error mask alone (record --mask, no --spec)
    rng = np.random.default_rng(12)
    k = np.arange(20000)
    x = 30e-9 + 5e-9 * np.sin(2 * np.pi * k / 3600) + 2e-9 * rng.standard_normal(k.size)
    x[[700, 9000]] = np.nan
    run = run_analysis(Measurement.from_phase(x, 1.0, start=START), stats="oadev,tdev")
    timing = analyze_time_error(run.source, mask="g8272-prtc-a", remove_offset=True)
    info = Info(device={"id": "RX-7", "description": "invented timing receiver"})
    record = build_record(run, None, info, timing)
    pages = record_pages(run, None, record, timing=timing)
    assert len(pages) == 6  # page 1, the mask, the TIE, stability, results, data over time
    for k, page in enumerate(pages, start=1):
        check_layout(page, f"record page {k} of a mask alone")
    # with a specification too: its pages first, the mask's last
    spec = Spec("tdev", confidence=0.95, interpolate=True, limits=[(1.0, 3e-9), (1000.0, 1e-9)])
    judgement = judge(run.table, spec)
    record = build_record(run, judgement, info, timing)
    pages = record_pages(run, judgement, record, timing=timing)
    for k, page in enumerate(pages, start=1):
        check_layout(page, f"record page {k} of a specification and a mask")


def test_time_error_figures_fit_on_given_axes_and_regions():
    rng = np.random.default_rng(13)  # invented white phase noise, 2 ns
    result = analyze_time_error(
        Measurement.from_phase(2e-9 * rng.standard_normal(5000), 1.0), mask="g8272-prtc-a"
    )
    fig = Figure(figsize=(10, 4), dpi=100)
    result.plot(ax=list(fig.subplots(1, 2, gridspec_kw={"wspace": 0.35})))
    check_layout(fig, "MTIE and TDEV on given axes")
    fig = Figure(figsize=(8, 4), dpi=100)
    result.plot_tie(ax=fig.subplots())
    check_layout(fig, "TIE on a given axis")
    page = Figure(figsize=(9, 9), dpi=100)
    top, bottom = page.subfigures(2, 1)
    result.plot(figure=top)
    result.plot(view="tie", figure=bottom)
    check_layout(page, "MTIE, TDEV and TIE in regions of a page")
