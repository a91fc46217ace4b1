"""The display registry: results find their figures and renderers floors above them.

``stability.display`` (the base floor) holds the registries; the figures and
reports fill them on import, and the package face names those as providers,
loaded on the first lookup. Invented types stand in for results here.
"""

from __future__ import annotations

import subprocess
import sys

import numpy as np
import pytest

import stability
from stability import display
from stability.errors import StabilityError
from stability.measurement import Measurement
from stability.table import StabilityTable


class _Thing(display.Displayable):
    def __repr__(self) -> str:
        return "_Thing()"


class _Child(_Thing):
    pass


def test_unregistered_type_is_a_clear_error_and_plain_repr():
    thing = _Thing()
    with pytest.raises(StabilityError, match="no figure 'plot' is registered for _Thing"):
        display.plot(thing)
    assert display.html(thing) is None
    assert thing._repr_html_() is None
    assert display.text(thing) == "_Thing()"


def test_registered_functions_are_found_along_the_class_tree(monkeypatch):
    monkeypatch.setattr(display, "_PLOT", {})
    monkeypatch.setattr(display, "_HTML", {})
    monkeypatch.setattr(display, "_TEXT", {})
    calls = []

    def draw(result, ax=None, figure=None, **options):
        calls.append((type(result).__name__, ax, figure, options))
        return "drawn"

    display.register_plot(_Thing, draw)
    display.register_plot(_Thing, lambda r, ax=None, figure=None: "series", view="series")
    display.register_html(_Thing, lambda r: "<b>thing</b>")
    display.register_text(_Thing, lambda r: "a thing")
    child = _Child()
    assert display.plot(child, "AX", limits=3) == "drawn"
    assert calls == [("_Child", "AX", None, {"limits": 3})]
    assert display.plot(child, view="series") == "series"
    assert child._repr_html_() == "<b>thing</b>"

    class Printer:
        text_out = ""

        def text(self, value):
            self.text_out += value

    printer = Printer()
    child._repr_pretty_(printer, cycle=False)
    assert printer.text_out == "a thing"


def test_providers_register_every_result_type():
    # the package face names the figures, the HTML renderers and the history figure
    from stability.dynamic import DynamicResult
    from stability.hat import HatResult
    from stability.history import DeviceReview
    from stability.phase_noise import PhaseNoiseStability
    from stability.run import AnalysisRun
    from stability.spec import Judgement
    from stability.timing import TimeErrorAnalysis

    for kind in (Measurement, StabilityTable, AnalysisRun, HatResult, PhaseNoiseStability,
                 DynamicResult, DeviceReview, TimeErrorAnalysis):  # fmt: skip
        assert display.registered(kind)["plot"], kind.__name__
    for kind in (Measurement, StabilityTable, AnalysisRun, Judgement, HatResult,
                 PhaseNoiseStability, DynamicResult, DeviceReview, TimeErrorAnalysis):  # fmt: skip
        assert display.registered(kind)["html"], kind.__name__
    assert display.registered(TimeErrorAnalysis)["text"]


def test_import_stays_light_until_a_result_draws():
    # import stability, build a Measurement and print it: no matplotlib; the first
    # plot() loads the figures (the providers) and draws without pyplot
    code = (
        "import sys, numpy as np, stability\n"
        "m = stability.Measurement.from_frequency(np.zeros(64) + 1e-12, tau0=1.0)\n"
        "print(repr(m))\n"
        "print('before', 'matplotlib' in sys.modules)\n"
        "drawn = m.plot()\n"
        "print('after', 'matplotlib' in sys.modules, 'matplotlib.pyplot' in sys.modules)\n"
    )
    out = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, check=True, timeout=120
    ).stdout
    assert "before False" in out
    assert "after True False" in out


def test_measurement_repr_says_source_kind_n_tau0_span_gaps_and_notes():
    y = np.full(101, 1e-11)
    y[40] = np.nan
    m = Measurement.from_frequency(y, tau0=0.5, notes=["read from a test"])
    text = repr(m)
    for part in ("n=102", "tau0=0.5 s", "kind='frequency'", "span=50.5 s", "gaps=1",
                 "notes=1", "source='memory'"):  # fmt: skip
        assert part in text, (part, text)


def test_table_repr_is_one_short_line():
    m = stability.Measurement.from_frequency(np.random.default_rng(3).normal(0, 1e-11, 512), 1.0)
    table = stability.analyze(m, stats="oadev,mdev", taus="octave")
    text = repr(table)
    assert text.startswith("StabilityTable(oadev, mdev: ") and "\n" not in text
    assert f"{len(table)} rows" in text and "confidence=0.683" in text
