"""The calibration-history figure: what it draws, read from the returned HistoryDrawn.

Invented calibrations of one device (offset on a line plus scatter of the stated
uncertainty, two key taus with limits, one failed check).
"""

from __future__ import annotations

from datetime import UTC, datetime, timedelta

import numpy as np
import pytest
from matplotlib import dates as mdates

from stability.aging import CalendarInterval, Calibration, KeyTau, fit_calibrations
from stability.errors import InputError
from stability.figures import history_figure
from stability.figures.history import HistoryDrawn

START = datetime(2019, 6, 3, 9, 0, tzinfo=UTC)


def _calibrations(n: int = 6) -> list[Calibration]:
    rng = np.random.default_rng(17)
    out = []
    for k in range(n):
        when = START + timedelta(days=365 * k)
        u = 2e-11
        offset = 4e-10 + 2.5e-13 * 365 * k + u * rng.standard_normal()
        keys = (
            KeyTau("oadev", 1.0, 1.1e-12, 1.0e-12, 1.2e-12, 2e-12, "pass", "WFM"),
            KeyTau("oadev", 100.0, 3e-13, 2.6e-13, 3.5e-13, 2.8e-13 if k == 3 else 5e-13,
                   "fail" if k == 3 else "pass", "FFM"),
        )  # fmt: skip
        out.append(Calibration(k + 1, when, offset, u, verdict="pass", key_taus=keys))
    out.append(Calibration(n + 1, START + timedelta(days=365 * n), None, None, verdict="pass"))
    return out


def test_validation_messages():
    with pytest.raises(InputError, match="calibrations must be a sequence"):
        history_figure(_calibrations()[0])
    with pytest.raises(InputError, match="at least one stability.aging.Calibration"):
        history_figure([])
    with pytest.raises(InputError, match="fit must be a stability.aging.AgingFit"):
        history_figure(_calibrations(), fit="linear")
    with pytest.raises(InputError, match="due must be a datetime"):
        history_figure(_calibrations(), due="2030-01-01")
    with pytest.raises(InputError, match="tolerance must be a positive number"):
        history_figure(_calibrations(), tolerance=-1e-9)
    with pytest.raises(InputError, match="title must be a str"):
        history_figure(_calibrations(), title=3)


def test_offsets_model_and_prediction_as_drawn():
    cals = _calibrations()
    fit = fit_calibrations(cals, model="linear")
    due = CalendarInterval(months=12).after(cals[-1].when)
    drawn = history_figure(cals, fit, due=due, tolerance=2e-9, confidence=0.9)
    assert isinstance(drawn, HistoryDrawn) and len(drawn.axes) == 2
    with_offset = [c for c in cals if c.offset is not None]
    np.testing.assert_allclose(drawn.x, [mdates.date2num(c.when) for c in with_offset])
    np.testing.assert_allclose(drawn.offset, [c.offset for c in with_offset])
    np.testing.assert_allclose(drawn.u_offset, [c.u_offset for c in with_offset])
    # the model over the fitted records, with its band around it
    x, mean, low, high = drawn.model
    days = x - mdates.date2num(fit.origin)
    np.testing.assert_allclose(mean, fit.value(days), rtol=1e-9)
    assert (low <= mean).all() and (mean <= high).all()
    # the prediction runs from the last fitted record to the due date, at the level asked
    xf, fmean, flow, fhigh = drawn.forecast
    assert xf[-1] == pytest.approx(mdates.date2num(due)) == pytest.approx(drawn.due)
    pred = fit.predict([fit.days(due)], 0.9)
    assert (fmean[-1], flow[-1], fhigh[-1]) == pytest.approx(
        (pred.mean[0], pred.low[0], pred.high[0]), rel=1e-9
    )
    assert drawn.tolerance == 2e-9
    # the tolerance the offset heads for is in view, with the offsets and the prediction
    low_view, high_view = drawn.axes[0].get_ylim()
    assert low_view < min(drawn.offset) and high_view > 2e-9 > fhigh.max()


def test_key_taus_over_the_records():
    cals = _calibrations()
    drawn = history_figure(cals)
    assert set(drawn.key_taus) == {("oadev", 1.0), ("oadev", 100.0)}
    x, dev, low, high, limit = drawn.key_taus[("oadev", 100.0)]
    assert len(x) == 6 and np.allclose(dev, 3e-13)
    assert limit[3] == 2.8e-13 and limit[0] == 5e-13
    assert drawn.model is None and drawn.forecast is None and drawn.due is None
    assert drawn.axes[1].get_yscale() == "log"
    # without key taus, the lower panel says so
    bare = [
        Calibration(1, START, 1e-9, 1e-11),
        Calibration(2, START + timedelta(days=30), 2e-9, 1e-11),
    ]
    empty = history_figure(bare)
    assert empty.key_taus == {}
    assert any("no judged key tau" in t.get_text() for t in empty.axes[1].texts)
