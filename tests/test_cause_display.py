"""The causes study draws and shows itself: spectrum, periodic components, sensitivity, causes.

``Spectrum.plot``, ``Sensitivity.plot`` and ``Causes.plot`` draw onto given axes
through the commands' figure functions, and ``Causes.plot()`` draws artist for
artist the figure ``stability spectrum`` saves (one implementation). Their HTML
parses and holds the key figures (h_alpha with uncertainties, the period and
amplitude of a periodic component, the sensitivity with its uncertainty and lag).
Data: a log invented here, white FM noise with a 320 s sinusoid and a lagged
temperature effect; the checks compare the displays with the result objects.
"""

from __future__ import annotations

import io

import matplotlib

matplotlib.use("Agg")

import matplotlib.pyplot as plt  # noqa: E402  (tests may use pyplot; the library never does)
import numpy as np  # noqa: E402
import pytest  # noqa: E402
from figure_artists import artists
from matplotlib.figure import Figure  # noqa: E402
from test_html_display import parsed  # noqa: E402

import stability  # noqa: E402
from stability import display, workflow  # noqa: E402
from stability.causes import Causes, CauseSettings, causes_of  # noqa: E402
from stability.environment import Sensitivity, lagged  # noqa: E402
from stability.errors import InputError  # noqa: E402
from stability.figures import EnvironmentDrawn, SpectrumDrawn, save_figure  # noqa: E402
from stability.periodic import Line  # noqa: E402
from stability.reports.tables import format_tau  # noqa: E402
from stability.simulate import power_law  # noqa: E402
from stability.spectrum import Spectrum, SpectrumFit  # noqa: E402


@pytest.fixture(autouse=True)
def _no_pyplot_figure_left():
    plt.close("all")
    yield
    assert plt.get_fignums() == [], "a plot method left a pyplot figure open"


def _log(path, n=4096):
    rng = np.random.default_rng(3)
    t = np.arange(n, dtype=float)
    temp = 22.0 + 0.4 * np.sin(2 * np.pi * t / 900.0) + rng.normal(0, 0.005, n)
    y = power_law(0, n, h=2e-24, seed=8) + 3e-11 * np.sin(2 * np.pi * t / 320.0)
    y = 1e-9 + y + 2e-10 * lagged(temp, 1.0, 120.0)
    stamps = np.datetime64("2026-05-01T00:00:00", "s") + np.arange(n).astype("timedelta64[s]")
    rows = [
        f"{s}Z,{10e6 * (1 + v):.7f},{c:.3f}"
        for s, v, c in zip(np.datetime_as_string(stamps), y, temp, strict=True)
    ]
    path.write_text("timestamp,frequency_hz,temperature_C\n" + "\n".join(rows) + "\n")
    return path


@pytest.fixture(scope="module")
def spectrum_command(tmp_path_factory):
    """``spectrum_into`` (what ``stability spectrum`` does) with the figure it saved kept."""
    folder = tmp_path_factory.mktemp("causes")
    log = _log(folder / "lab.csv")
    saved = {}
    real = workflow.save_figure

    def keep(drawn, target, fmt):
        saved["spectrum"] = drawn
        return real(drawn, target, fmt)

    causes = CauseSettings(regress="temperature")
    with pytest.MonkeyPatch.context() as patch:
        patch.setattr(workflow, "save_figure", keep)
        run, _, _ = workflow.spectrum_into(
            log, folder / "out", stability.RunSettings.from_options(nominal="10MHz"), causes
        )
    return causes_of(run), saved["spectrum"]


def _on_axes(result, count=1, **options):
    figure = Figure(figsize=(6, 4 * count))
    axes = list(figure.subplots(count, 1, squeeze=False)[:, 0])
    drawn = result.plot(ax=axes[0] if count == 1 else axes, **options)
    assert drawn.figure is figure and list(drawn.axes) == axes
    assert all(ax.has_data() for ax in axes), "nothing drawn on a given axis"
    figure.savefig(io.BytesIO(), format="png")
    return drawn


def test_causes_plot_draws_what_the_spectrum_command_drew(spectrum_command, tmp_path):
    causes, command = spectrum_command
    method = causes.plot()
    assert isinstance(method, SpectrumDrawn) and method.figure is not command.figure
    # saved as the command saved its own (the constrained layout settles on saving)
    save_figure(method, tmp_path / "spectrum.png", "png")
    drawn, expected = artists(method.figure), artists(command.figure)
    assert len(drawn) == len(expected) > 20
    assert drawn == expected
    assert set(method.models) == {"model of the Allan deviation", "fit to this spectrum"}
    assert len(method.lines) == len(causes.lines) >= 1


def test_every_cause_result_draws_onto_given_axes(spectrum_command):
    causes, _ = spectrum_command
    spectrum, sensitivity = causes.spectrum, causes.sensitivity
    one = _on_axes(spectrum)
    assert isinstance(one, SpectrumDrawn) and one.right == ""
    assert set(one.models) == {"fit to this spectrum"}
    both = _on_axes(spectrum, 2, lines=causes.lines)
    assert both.right == "L(f)" and len(both.lines) == len(causes.lines)
    env = _on_axes(sensitivity, 2)
    assert isinstance(env, EnvironmentDrawn) and env.fitted.size == env.lagged_aux.size > 0
    assert isinstance(_on_axes(causes), SpectrumDrawn)
    assert isinstance(_on_axes(causes, 2, view="environment"), EnvironmentDrawn)
    own = sensitivity.plot()
    assert own.figure.canvas.manager is None and len(own.axes) == 2


def test_cause_figures_go_into_a_subfigure_and_bad_views_are_refused(spectrum_command):
    causes, _ = spectrum_command
    page = Figure(figsize=(11, 10), layout="constrained")
    top, bottom = page.subfigures(2, 1)
    upper, lower = causes.plot(figure=top), causes.plot(figure=bottom, view="environment")
    for drawn, region in ((upper, top), (lower, bottom)):
        assert drawn.figure is page and all(a.get_figure(root=False) is region for a in drawn.axes)
        assert region._suptitle is None  # a region of a page carries no title of its own
    page.savefig(io.BytesIO(), format="png")
    with pytest.raises(InputError, match="view must be 'spectrum' or 'environment'"):
        causes.plot(view="timeline")
    noise = np.random.default_rng(2).normal(0, 1e-11, 256)
    with pytest.raises(InputError, match="did not study the causes"):
        causes_of(stability.run_analysis(stability.Measurement.from_frequency(noise, 1.0)))
    bare = Sensitivity(**{**causes.sensitivity.__dict__, "series": None})
    with pytest.raises(InputError, match="keeps no series to draw"):
        bare.plot()


def test_providers_register_the_cause_results():
    for kind in (Spectrum, Sensitivity, Causes):
        assert display.registered(kind)["plot"], kind.__name__
    for kind in (Spectrum, SpectrumFit, Line, Sensitivity, Causes):
        assert display.registered(kind) | {"plot": True} == {
            "plot": True,
            "html": True,
            "text": True,
        }


def test_spectrum_html_holds_h_alpha_with_uncertainties(spectrum_command):
    spectrum = spectrum_command[0].spectrum
    text, tags = parsed(spectrum._repr_html_())
    assert "Welch spectrum" in text and "table" in tags
    assert f"{spectrum.segments_used} segments of {spectrum.segment_length} samples" in text
    fitted = [a for a, h in spectrum.fit.h.items() if h > 0]
    assert fitted
    for a in fitted:
        assert f"{spectrum.fit.h[a]:.3g} ± {spectrum.fit.u_h[a]:.2g}" in text
    assert "10 MHz" in text
    fit_text, _ = parsed(spectrum.fit._repr_html_())
    assert f"{spectrum.fit.bins} ordinates" in fit_text
    assert "Spectrum(" in repr(spectrum) and len(repr(spectrum)) < 200


def test_causes_html_and_text_hold_lines_sensitivity_and_both_models(spectrum_command):
    causes, _ = spectrum_command
    text, _ = parsed(causes._repr_html_())
    line = causes.lines[0]
    sens = causes.sensitivity
    for part in (
        "Where the instability comes from",
        "lab.csv",
        format_tau(line.period),
        f"{line.amplitude:.3g}",
        format_tau(line.adev_peak_tau),
        f"{sens.coefficient:.3g} ± {sens.uncertainty:.2g} per K",
        f"thermal lag {sens.lag:.4g} s",
        "spectrum Allan deviation",  # h_alpha side by side
    ):
        assert part in text, (part, text)
    plain = display.text(causes)
    assert plain.startswith("Where the instability comes from")
    assert f"{sens.coefficient:.3g} ± {sens.uncertainty:.2g} per K" in plain
    assert repr(causes).startswith("Causes(a spectrum, ")
    line_text, _ = parsed(line._repr_html_())
    assert "Periodic component" in line_text and format_tau(line.period) in line_text
