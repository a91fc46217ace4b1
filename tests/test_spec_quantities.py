"""A reference's figures meet only a measurement of the same quantity; statistics
without a chi-squared interval (MTIE, TIE rms) are judged on the measured value."""

from __future__ import annotations

import numpy as np
import pytest

import stability
from stability.errors import SpecError
from stability.spec import Reference, Spec, Verdict, judge, load_info


def _white_pm(n: int = 2000, seed: int = 11) -> stability.Measurement:
    # Invented time-error log: white phase noise of 1 ns, 1 s apart.
    x = np.random.default_rng(seed).normal(0.0, 1e-9, n)
    return stability.Measurement.from_phase(x, tau0=1.0)


def test_reference_stability_must_say_which_statistic_it_is(tmp_path):
    path = tmp_path / "info.toml"
    path.write_text('[device]\nid = "a"\n[reference]\nstability = [[1, 5e-12]]\n')
    with pytest.raises(SpecError, match=r"without saying which statistic.*statistic = \"oadev\""):
        load_info(path)
    path.write_text(
        '[device]\nid = "a"\n[reference]\nstatistic = "tdev"\nstability = [[1, 5e-12]]\n'
    )
    assert load_info(path).reference.quantity() == "TVAR"
    path.write_text('[device]\nid = "a"\n[reference]\nstatistic = "mdev"\nlevels = {h0 = 1e-24}\n')
    with pytest.raises(SpecError, match="levels describe the Allan variance"):
        load_info(path)


def test_a_fractional_reference_is_not_subtracted_from_a_time_deviation():
    # TDEV is in seconds; an overlapping Allan deviation is a fractional frequency.
    table = stability.analyze(_white_pm(), stats="tdev,oadev", taus=[1, 10])
    spec = Spec(
        statistic="tdev", confidence=0.95, interpolate=True, limits=[(1.0, 1e-8), (10.0, 1e-8)]
    )
    fractional = Reference(id="ref", statistic="oadev", points=[(1.0, 5e-12)])
    with pytest.raises(SpecError, match=r"oadev figures.*cannot be combined.*tdev \(s\)"):
        judge(table, spec, reference=fractional)
    in_seconds = Reference(id="ref", statistic="tdev", points=[(1.0, 1e-10)])
    judged = judge(table, spec, reference=in_seconds)
    assert all(c.device_only <= c.deviation for c in judged.listed)
    levels = Reference(id="ref", levels={0: 1e-24})
    with pytest.raises(SpecError, match="levels"):
        judge(table, spec, reference=levels)


def test_mtie_is_judged_on_the_measured_value_never_inconclusive():
    table = stability.analyze(_white_pm(), stats="mtie", taus=[1, 10, 100])
    mtie = table["mtie"]
    at10 = float(mtie.deviation[list(mtie.tau).index(10.0)])
    above = Spec(statistic="mtie", confidence=0.95, interpolate=True, limits=[(10.0, at10 * 1.01)])
    below = Spec(statistic="mtie", confidence=0.95, interpolate=True, limits=[(10.0, at10 * 0.99)])
    assert judge(table, above).overall is Verdict.PASS
    assert judge(table, below).overall is Verdict.FAIL
    check = judge(table, above).listed[0]
    assert "measured value" in check.note and "no confidence interval" in check.note
    # a listed tau between measured ones: the interpolated value, judged the same way
    between = Spec(statistic="mtie", confidence=0.95, interpolate=True, limits=[(30.0, 1.0)])
    assert judge(table, between).listed[0].verdict is Verdict.PASS
