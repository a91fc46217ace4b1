"""A fleet draws and shows itself: ``stability.batch`` returns a ``Fleet``.

The fleet here is made from invented per-log results (white FM levels around
1e-11 at 1 s, one log failed) without starting a Dask cluster: ``fleet_result``
builds the ``Fleet`` from a ``FleetRun``, and ``batch`` itself runs with its
Dask driver replaced by one that returns those results, so the files it writes
and the figures it saves come from the command's own code. The checks compare
what the plot method drew with what ``batch`` saved, artist by artist, and the
notebook display with the fleet table.
"""

from __future__ import annotations

import importlib
import io
import math

import matplotlib

matplotlib.use("Agg")

import matplotlib.pyplot as plt  # noqa: E402  (tests may use pyplot; the library never does)
import numpy as np  # noqa: E402
import pandas as pd  # noqa: E402
import pytest  # noqa: E402
from figure_artists import artists  # noqa: E402
from matplotlib.figure import Figure  # noqa: E402
from test_html_display import parsed  # noqa: E402

import stability  # noqa: E402
from stability import display  # noqa: E402
from stability.errors import InputError  # noqa: E402
from stability.figures.fleet import DistributionDrawn, FleetDrawn  # noqa: E402
from stability.fleet import Fleet, FleetJob, FleetRun, fleet_result  # noqa: E402
from stability.settings import RunSettings  # noqa: E402
from stability.spec import load_spec  # noqa: E402

#: The module of ``batch`` (the package exports the function under the same name).
batch_module = importlib.import_module("stability.fleet.batch")
TAUS = (1.0, 10.0, 100.0)
SPEC = (
    'statistic = "oadev"\n[[limit]]\ntau_s = 1\nmax = 2e-11\n[[limit]]\ntau_s = 100\nmax = 2e-12\n'
)


@pytest.fixture(autouse=True)
def _no_pyplot_figure_left():
    plt.close("all")
    yield
    assert plt.get_fignums() == [], "a plot method left a pyplot figure open"


def _result(device: str, level: float, status: str = "ok") -> dict:
    """One log's result as a worker returns it: white FM at ``level`` at 1 s (invented)."""
    curve = [(t, level / math.sqrt(t)) for t in TAUS]
    row = {"readings": 1000, "gaps": 0, "outliers_removed": 0, "offset": 1e-12}
    for t, d in curve:
        row[f"oadev_{t:g}s"] = d
        row[f"noise_{t:g}s"] = "WFM"
        row[f"verdict_{t:g}s"] = "pass" if d < 2e-11 / math.sqrt(t) else "fail"
    row["worst_ratio"] = level / 2e-11
    failed = status == "error"
    return {
        "device": device,
        "file": f"{device}.csv",
        "sha256": "0" * 64,
        "status": status,
        "error": f"{device}.csv: no readings" if failed else "",
        "row": {} if failed else row,
        "curve": [] if failed else curve,
        "seconds": 1.0,
    }


def _run(tmp_path, spec_path) -> FleetRun:
    levels = [1.0e-11, 1.1e-11, 1.2e-11, 0.9e-11, 1.05e-11, 3.0e-11, 0.95e-11, 1.15e-11]
    results = [_result(f"OCXO-{k}", v) for k, v in enumerate(levels)]
    results.append(_result("OCXO-<9>", 0.0, "error"))
    return FleetRun(
        jobs=[],
        results=results,
        statistic="oadev",
        key_taus=TAUS,
        judged=True,
        folder=tmp_path,
        specs={str(spec_path): load_spec(spec_path)},
    )


@pytest.fixture(scope="module")
def command(tmp_path_factory):
    """``batch`` with its Dask driver replaced: (the Fleet it returned, the figures it saved,
    the output folder)."""
    folder = tmp_path_factory.mktemp("fleet")
    spec = folder / "ocxo.toml"
    spec.write_text(SPEC)
    jobs = []
    for k in range(9):
        log = folder / f"OCXO-{k}.csv"
        log.write_text("fractional_frequency\n1e-11\n2e-11\n")
        jobs.append(FleetJob(f"OCXO-{k}", log, RunSettings.from_options(tau0="1s"), spec=spec))
    run = _run(folder / "out", spec)
    saved = {}
    real = batch_module.save_figure

    def keep(drawn, target, fmt):
        saved[target.name if hasattr(target, "name") else str(target)] = drawn
        return real(drawn, target, fmt)

    with pytest.MonkeyPatch.context() as patch:
        patch.setattr(batch_module, "run_fleet", lambda *a, **k: run)
        patch.setattr(batch_module, "save_figure", keep)
        fleet = stability.batch(jobs, folder / "out", at=10.0, title="week <12>")
    return fleet, saved, folder / "out"


def _saved(saved, stem):
    (drawn,) = [d for name, d in saved.items() if stem in name]
    return drawn


def test_batch_returns_a_fleet_whose_table_is_fleet_csv(command):
    fleet, _, out = command
    assert isinstance(fleet, Fleet) and len(fleet) == 9
    written = pd.read_csv(out / "fleet.csv")
    assert written["device"].tolist() == fleet.table["device"].tolist()
    assert written["status"].tolist() == fleet.table["status"].tolist()
    np.testing.assert_allclose(written["oadev_10s"], fleet.table["oadev_10s"])
    assert fleet.to_frame().equals(fleet.table) and fleet.to_frame() is not fleet.table
    assert repr(fleet) == "Fleet(9 logs of oadev: 8 ok, 1 error)"


def test_fleet_plot_draws_what_batch_saved(command):
    fleet, saved, _ = command
    for view, stem, kind in (
        ("curves", "fleet.png", FleetDrawn),
        ("distribution", "fleet_distribution", DistributionDrawn),
    ):
        written = _saved(saved, stem)
        method = fleet.plot(view=view)
        assert isinstance(method, kind) and method.figure is not written.figure
        drawn, expected = artists(method.figure), artists(written.figure)
        assert len(drawn) == len(expected) > 10
        assert drawn == expected, view
    curves = fleet.plot()
    assert curves.named[0] == "OCXO-5"  # the worst of the ranking, in colour
    assert curves.limits == ((1.0, 2e-11), (100.0, 2e-12))


def test_fleet_draws_onto_a_given_axis_and_into_a_subfigure(tmp_path):
    spec = tmp_path / "ocxo.toml"
    spec.write_text(SPEC)
    fleet = fleet_result(_run(tmp_path, spec), at=100.0)  # no Dask: a fleet from results
    for view, kind in (("curves", FleetDrawn), ("distribution", DistributionDrawn)):
        figure = Figure()
        ax = figure.subplots()
        drawn = fleet.plot(ax=ax, view=view)
        assert isinstance(drawn, kind) and drawn.figure is figure and drawn.axes == (ax,)
        assert ax.has_data() and ax.get_legend() is not None
        assert figure._suptitle is None  # no title on a caller's axes unless given
        figure.savefig(io.BytesIO(), format="png")
    spread = fleet.plot(view="distribution", at=1.0)
    assert spread.limit == pytest.approx(2e-11) and spread.counts.sum() == 8
    page = Figure(figsize=(9, 11))
    top, bottom = page.subfigures(2, 1)
    upper, lower = fleet.plot(figure=top), fleet.plot(figure=bottom, view="distribution")
    assert upper.figure is page and upper.axes[0].get_figure(root=False) is top
    assert lower.axes[0].get_figure(root=False) is bottom
    page.savefig(io.BytesIO(), format="png")
    own = fleet.plot()
    assert own.figure.canvas.manager is None
    with pytest.raises(InputError, match="view must be 'curves' or 'distribution'"):
        fleet.plot(view="map")
    with pytest.raises(InputError, match="at must be a positive tau"):
        fleet.plot(view="distribution", at=-1.0)
    with pytest.raises(InputError, match="run must be a stability.fleet.FleetRun"):
        fleet_result(fleet.table)


def test_fleet_html_holds_counts_statuses_worst_devices_and_escapes(command):
    fleet, _, _ = command
    assert display.registered(Fleet) == {"plot": True, "html": True, "text": True}
    fragment = fleet._repr_html_()
    text, tags = parsed(fragment)
    assert "week <12>" in text and "<12>" not in fragment.split("<style>")[0]
    assert "9 logs: 8 analysed, 1 failed; verdicts:" in text
    assert "OCXO-<9>: OCXO-<9>.csv: no readings" in text  # the failed log, escaped
    assert "Furthest from the limit or the fleet" in text
    ranking_start = text.index("Furthest from the limit")
    assert text.index("OCXO-5", ranking_start) < text.index("OCXO-2", ranking_start)
    assert fragment.count('<tr class="error">') == 1
    assert "v-fail" in fragment and "v-pass" in fragment
    assert "table" in tags and "script" in tags
    for device in fleet.table["device"]:
        assert device in text
    plain = display.text(fleet)
    assert plain.splitlines()[0] == "week <12>"
    assert "failed OCXO-<9>: OCXO-<9>.csv: no readings" in plain
    assert "  1. OCXO-5" in plain
