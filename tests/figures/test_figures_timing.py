"""The time-error figures: TIE with the worst MTIE window, MTIE and TDEV with a mask.

Data invented in the test; the mask limits are recalled (from memory) from
ITU-T G.8272, as the bundled file says.
"""

from __future__ import annotations

import numpy as np
import pytest

from stability import Measurement
from stability.errors import InputError
from stability.figures.style import VERDICT_COLORS
from stability.figures.timing import mask_figure, tie_figure, time_scale
from stability.timing import analyze_time_error


@pytest.fixture(scope="module")
def result():
    # white PM of 2 ns and one 30 ns bump at 5000 s, 12000 s at 1 s
    rng = np.random.default_rng(31)
    t = np.arange(12000.0)
    x = 2e-9 * rng.standard_normal(t.size)
    x += 30e-9 * np.exp(-(((t - 5000) / 200) ** 2))
    return analyze_time_error(Measurement.from_phase(x, 1.0), mask="g8272-prtc-b")


def test_tie_marks_the_worst_window(result):
    drawn = tie_figure(result)
    assert drawn.y_unit == "ns" and drawn.x_unit == "h"
    lo, hi = drawn.window
    assert lo * 3600 < 5000 < hi * 3600  # the bump sets the long-tau MTIE
    at = tie_figure(result, window_tau=10.0)
    assert at.window_tau == 10.0
    assert (at.window[1] - at.window[0]) * 3600 == pytest.approx(10.0)


def test_mask_figure_draws_limits_and_verdict_colours(result):
    drawn = mask_figure(result)
    assert drawn.statistics == ("mtie", "tdev")
    tdev = result.judgement.of("tdev")
    assert drawn.verdict_colors["tdev"] == tuple(VERDICT_COLORS[str(c.verdict)] for c in tdev)
    assert VERDICT_COLORS["fail"] in drawn.verdict_colors["tdev"]  # 2 ns white PM over 1 ns
    np.testing.assert_allclose(
        drawn.limit["tdev"],
        result.judgement.mask.curve("tdev").limit_at(drawn.limit_tau["tdev"]),
    )
    assert np.isfinite(drawn.value["mtie"]).all()


def test_time_scale_and_validation():
    assert time_scale(np.array([3e-9])) == (1e-9, "ns")
    assert time_scale(np.array([5e-6])) == (1e-6, "\u00b5s")
    with pytest.raises(InputError, match="TimeErrorAnalysis"):
        tie_figure("not a result")
    with pytest.raises(InputError, match="title must be a str"):
        mask_figure(analyze_time_error(Measurement.from_phase(np.arange(50.0), 1.0)), title=3)
