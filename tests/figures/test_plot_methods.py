"""Results draw themselves: ``plot`` methods through the commands' own figure functions.

Each plot method draws onto an ``Axes`` it is given and returns what it drew
(the figure's ``Drawn``, whose ``axes`` are the given ones), draws a figure of
its own (never a pyplot figure) when given none, and draws the whole figure
into a ``Figure`` or ``SubFigure`` given as ``figure``. The sigma-tau figure of
``AnalysisRun.plot`` is compared artist by artist with the one
``stability analyze`` writes for the demo counter log (one implementation).
Data: the invented demo logs and calibration history, and invented noise.
"""

from __future__ import annotations

import glob
import gzip
import io
from datetime import UTC, datetime
from pathlib import Path

import matplotlib

matplotlib.use("Agg")

import matplotlib.pyplot as plt  # noqa: E402  (tests may use pyplot; the library never does)
import numpy as np  # noqa: E402
import pytest  # noqa: E402
from figure_artists import artists
from matplotlib.figure import Figure  # noqa: E402

import stability  # noqa: E402
from stability import workflow, workflow_timing  # noqa: E402
from stability.errors import InputError  # noqa: E402
from stability.figures import (  # noqa: E402
    HatDrawn,
    HistoryDrawn,
    PhaseNoiseDrawn,
    SeriesDrawn,
    StabilityDrawn,
    TimelineDrawn,
)
from stability.figures.style import VERDICT_COLORS  # noqa: E402
from stability.figures.timing import MaskDrawn, TieDrawn  # noqa: E402
from stability.history import import_records, open_history, review_device  # noqa: E402
from stability.measurement import Measurement  # noqa: E402

DEMO = Path(__file__).resolve().parents[2] / "datasets" / "demo"
#: How ``stability demo`` analyses the counter log (cli/demo_cmd.py COUNTER_SETTINGS).
COUNTER = {"nominal": "10MHz", "stats": "oadev,mdev,hdev", "drift": "log"}


@pytest.fixture(autouse=True)
def _no_pyplot_figure_left():
    plt.close("all")
    yield
    assert plt.get_fignums() == [], "a plot method left a pyplot figure open"


@pytest.fixture(scope="module")
def demo(tmp_path_factory):
    """``analyze_into`` on the demo counter log, the figures it saved kept as drawn."""
    saved = {}
    real = workflow.save_figure

    def keep(drawn, target, fmt):
        saved["sigma_tau" if isinstance(drawn, StabilityDrawn) else "series"] = drawn
        return real(drawn, target, fmt)

    with pytest.MonkeyPatch.context() as patch:
        patch.setattr(workflow, "save_figure", keep)
        run, _ = workflow.analyze_into(
            DEMO / "ocxo-vs-rb-counter.csv.gz", tmp_path_factory.mktemp("demo"), **COUNTER
        )
    return run, saved


def test_run_plot_draws_what_the_command_drew(demo):
    run, saved = demo
    command = saved["sigma_tau"]
    method = run.plot()
    assert isinstance(method, StabilityDrawn)
    assert method.figure is not command.figure
    drawn, expected = artists(method.figure), artists(command.figure)
    assert len(drawn) == len(expected) > 50
    assert drawn == expected
    assert method.noise_labels == command.noise_labels
    # the table's own plot is the same figure but for the date in the footer
    table_drawn = run.table.plot(analysis_time=run.analysis_time)
    assert artists(table_drawn.figure) == expected


def test_run_plot_series_draws_what_the_command_drew(demo):
    run, saved = demo
    assert artists(run.plot_series().figure) == artists(saved["series"].figure)


def _on_axes(result, count=1, **options):
    figure = Figure(figsize=(6, 4 * count))
    axes = figure.subplots(count, 1, squeeze=False)[:, 0]
    given = axes[0] if count == 1 else list(axes)
    drawn = result.plot(ax=given, **options)
    assert drawn.figure is figure
    assert list(drawn.axes) == list(axes)
    for ax in axes:
        assert ax.has_data(), "nothing drawn on a given axis"
    figure.savefig(io.BytesIO(), format="png")  # it renders
    return drawn


def test_measurement_and_table_draw_onto_given_axes(demo):
    run, _ = demo
    drawn = _on_axes(run.measurement)
    assert isinstance(drawn, SeriesDrawn) and drawn.axes[0].get_ylabel() == "fractional frequency"
    assert isinstance(_on_axes(run.measurement, 2), SeriesDrawn)
    drawn = _on_axes(run.table)
    assert isinstance(drawn, StabilityDrawn) and set(drawn.series) == {"oadev", "mdev", "hdev"}
    assert drawn.keys == () and drawn.noise_labels["oadev"]
    # the error bars' level sits in the legend beside the panel
    assert "68.3 % confidence" in drawn.axes[0].get_legend().get_title().get_text()
    assert isinstance(_on_axes(run), StabilityDrawn)


def test_run_series_onto_given_axes(demo):
    run, _ = demo
    figure = Figure()
    ax = figure.subplots()
    drawn = run.plot_series(ax=ax)
    assert isinstance(drawn, SeriesDrawn) and drawn.axes == (ax,) and drawn.drift is not None


def test_time_and_frequency_statistics_need_two_axes():
    m = Measurement.from_phase(np.cumsum(np.random.default_rng(4).normal(0, 1e-9, 2048)), 1.0)
    table = stability.analyze(m, stats="oadev,tdev", taus="octave")
    figure = Figure()
    one = figure.subplots()
    with pytest.raises(InputError, match="this figure has 2 panels; 1 axes given"):
        table.plot(ax=one)
    drawn = _on_axes(table, 2)
    assert drawn.panel["oadev"] is drawn.axes[0] and drawn.panel["tdev"] is drawn.axes[1]


def test_bad_axes_and_both_targets_are_refused(demo):
    run, _ = demo
    figure = Figure()
    ax = figure.subplots()
    with pytest.raises(InputError, match="ax must be a matplotlib Axes"):
        run.table.plot(ax="left")
    with pytest.raises(InputError, match="either into"):
        run.table.plot(ax=ax, figure=figure)


def test_whole_figure_into_a_subfigure(demo):
    run, _ = demo
    page = Figure(figsize=(10, 12))
    top, bottom = page.subfigures(2, 1)
    upper = run.table.plot(figure=top)
    lower = run.measurement.plot(figure=bottom)
    assert upper.figure is page and lower.figure is page
    assert all(ax.get_figure(root=False) is top for ax in upper.axes)
    assert upper.keys  # the whole figure: the slope key is there


def test_no_ax_draws_a_figure_of_its_own_that_shows_itself(demo):
    run, _ = demo
    drawn = run.measurement.plot()
    assert isinstance(drawn.figure, Figure) and drawn.figure.canvas.manager is None
    png = drawn._repr_png_()
    assert png[:8] == b"\x89PNG\r\n\x1a\n"

    class Printer:
        out = ""

        def text(self, value):
            self.out += value

    printer = Printer()
    drawn._repr_pretty_(printer, False)
    assert printer.out.startswith("<SeriesDrawn: 2 panel(s)")


def test_a_pyplot_figure_is_drawn_on_and_left_to_pyplot(demo):
    run, _ = demo
    fig, ax = plt.subplots()
    try:
        drawn = run.table.plot(ax=ax)
        assert drawn.axes == (ax,)
        assert drawn._repr_png_() is None  # pyplot shows its own figures
    finally:
        plt.close(fig)


@pytest.fixture(scope="module")
def hat_result():
    rng = np.random.default_rng(8)
    y = {k: v * rng.standard_normal(1024) for k, v in {"A": 1e-11, "B": 2e-11, "C": 5e-12}.items()}
    pairs = {
        (a, b): Measurement.from_frequency(y[a] - y[b], 1.0)
        for a, b in (("A", "B"), ("B", "C"), ("C", "A"))
    }
    return stability.separate(pairs, stat="oadev")


def test_hat_result_draws_onto_a_given_axis(hat_result):
    drawn = _on_axes(hat_result)
    assert isinstance(drawn, HatDrawn) and set(drawn.colors) == {"A", "B", "C"}
    assert drawn.axes[0].get_legend() is not None
    own = hat_result.plot()
    assert own.figure.canvas.manager is None and len(own.axes) == 1


def test_phase_noise_result_draws_onto_given_axes():
    f = np.array([1.0, 10.0, 100.0, 1e3, 1e4])
    level = np.array([-100.0, -120.0, -135.0, -145.0, -150.0])
    conversion = stability.phase_noise_to_stability(
        f, level, nominal=1e7, f_h=1e3, taus=[0.01, 0.1, 1.0], stats=["adev", "mdev"]
    )
    drawn = _on_axes(conversion)
    assert isinstance(drawn, PhaseNoiseDrawn) and set(drawn.converted) == {"adev", "mdev"}
    both = _on_axes(conversion, 2, table=(f, level))
    assert both.table is not None


def test_dynamic_result_draws_onto_given_axes():
    y = np.random.default_rng(5).normal(0, 1e-11, 1500)
    start = datetime(2026, 3, 2, tzinfo=UTC)
    result = stability.dynamic_stability(
        Measurement.from_frequency(y, 1.0, start=start), window=300.0, step=100.0, taus=[1.0, 4.0]
    )
    drawn = _on_axes(result)
    assert isinstance(drawn, TimelineDrawn) and len(drawn.axes) == 1
    both = _on_axes(result, 2)
    assert isinstance(both, TimelineDrawn)
    # on a caller's axes the map keeps its own time axis (the panels may sit side by side)
    assert both.axes[0].get_xlabel() == both.x_label == both.axes[1].get_xlabel()


def test_device_review_draws_onto_given_axes(tmp_path):
    with open_history(tmp_path / "history.sqlite") as store:
        import_records(store, sorted(glob.glob(str(DEMO / "history" / "*.json"))))
        review = review_device(store, "HM-OCXO-0417")
    drawn = _on_axes(review)
    assert isinstance(drawn, HistoryDrawn) and drawn.offset.size == 6
    assert isinstance(_on_axes(review, 2), HistoryDrawn)
    assert review.plot().figure.canvas.manager is None


def test_studies_draw_their_whole_figure_into_a_subfigure(hat_result, tmp_path):
    y = np.random.default_rng(5).normal(0, 1e-11, 1200)
    dynamic = stability.dynamic_stability(
        Measurement.from_frequency(y, 1.0), window=300.0, step=100.0, taus=[1.0, 4.0]
    )
    with open_history(tmp_path / "history.sqlite") as store:
        import_records(store, sorted(glob.glob(str(DEMO / "history" / "*.json"))))
        review = review_device(store, "HM-OCXO-0417")
    page = Figure(figsize=(12, 14), layout="constrained")
    regions = page.subfigures(3, 1)
    for region, result, panels in zip(
        regions, (hat_result, dynamic, review), (1, 2, 2), strict=True
    ):
        drawn = result.plot(figure=region)
        assert drawn.figure is page and len(drawn.axes) == panels
        assert all(ax.get_figure(root=False) is region for ax in drawn.axes)
        assert not region.texts or all(t.get_text() == "" for t in region.texts)  # no footer
        assert region._suptitle is None  # a region of a page carries no title of its own
    page.savefig(io.BytesIO(), format="png")


@pytest.fixture(scope="module")
def timing(tmp_path_factory):
    """``time_error_into`` on the demo timing log (its first 2 h), the figures it saved kept."""
    saved = {}
    real = workflow_timing.save_figure

    def keep(drawn, target, fmt):
        saved["tie" if isinstance(drawn, TieDrawn) else "mtie_tdev"] = drawn
        return real(drawn, target, fmt)

    root = tmp_path_factory.mktemp("timing")
    log = root / "pps.csv"
    lines = gzip.decompress((DEMO / "gnss-timing-receiver-pps.csv.gz").read_bytes()).decode()
    log.write_text("\n".join(lines.splitlines()[:7201]) + "\n")
    with pytest.MonkeyPatch.context() as patch:
        patch.setattr(workflow_timing, "save_figure", keep)
        result, _ = workflow_timing.time_error_into(
            log, root / "out", column="pps_te_ns", mask="g8272-prtc-a", sawtooth="qerr_ns"
        )
    return result, saved


def _title_and_footer(drawn) -> dict:
    figure = drawn.figure
    # the title as given (the masked figure adds a line naming the mask itself)
    title = figure._suptitle.get_text().split("\n")[0]
    return {"title": title, "footer": figure.texts[-1].get_text()}


def test_time_error_plot_draws_what_the_command_drew(timing):
    result, saved = timing
    command = saved["mtie_tdev"]
    method = result.plot(**_title_and_footer(command))
    assert isinstance(method, MaskDrawn) and method.figure is not command.figure
    assert method.figure.canvas.manager is None  # its own figure, not pyplot's
    drawn, expected = artists(method.figure), artists(command.figure)
    assert len(drawn) == len(expected) > 30
    assert drawn == expected
    tie = result.plot(view="tie", **_title_and_footer(saved["tie"]))
    assert isinstance(tie, TieDrawn)
    assert artists(tie.figure) == artists(saved["tie"].figure)
    assert artists(result.plot_tie(**_title_and_footer(saved["tie"])).figure) == artists(
        saved["tie"].figure
    )


def test_time_error_plot_onto_given_axes(timing):
    result, _ = timing
    one = _on_axes(result)
    assert isinstance(one, MaskDrawn) and one.statistics == ("mtie",)
    assert one.axes[0].get_ylabel() == "MTIE (s)"
    both = _on_axes(result, 2)
    assert both.statistics == ("mtie", "tdev") and both.axes[1].get_ylabel() == "TDEV (s)"
    # the judged taus in their verdict colours, the mask's limit line drawn
    assert set(both.verdict_colors["mtie"]) <= set(VERDICT_COLORS.values())
    assert both.limit["tdev"].size and both.axes[0].get_legend() is not None
    tie = _on_axes(result, view="tie")
    assert isinstance(tie, TieDrawn) and tie.axes[0].get_ylabel() == "TIE (ns)"
    assert tie.window is not None  # the worst MTIE window shaded
    figure = Figure()
    three = figure.subplots(3, 1)
    with pytest.raises(InputError, match="this figure has 2 panels"):
        result.plot(ax=list(three))
    with pytest.raises(InputError, match="either into"):
        result.plot_tie(ax=three[0], figure=figure)


def test_time_error_plot_into_a_subfigure(timing):
    result, _ = timing
    page = Figure(figsize=(10, 9))
    top, bottom = page.subfigures(2, 1)
    masked = result.plot(figure=top)
    tie = result.plot_tie(figure=bottom)
    assert masked.figure is page and tie.figure is page
    assert all(ax.get_figure(root=False) is top for ax in masked.axes)
    assert top._suptitle is None and not top.texts  # a region carries no title or footer
    page.savefig(io.BytesIO(), format="png")
