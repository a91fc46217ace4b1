"""Bundled ITU-T masks, the mask file format and judging against a mask.

Every limit value below is recalled from the ITU-T Recommendations, not read
from them (from memory, as the bundled files say; REFERENCES "ITU-T wander
masks" for G.811 and G.813): the tests check that the files say what was
recalled, that each curve is continuous at its segment boundaries where the
Recommendation's tables are (all the bundled ones: each boundary value of one
row is the start value of the next, to 0.1 % where the table rounds the boundary
tau, as G.8272's 273 s and 54.5 s), and that MTIE and these TDEV limits never
fall as tau grows.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

from stability import Measurement
from stability.errors import SpecError
from stability.spec import Verdict
from stability.timing import (
    analyze_time_error,
    bundled_mask_names,
    judge_mask,
    load_mask,
    read_mask_text,
)

NS, US = 1e-9, 1e-6

#: (mask, statistic, tau s, limit s), from memory.
RECALLED = [
    ("g811-prc", "mtie", 1.0, 0.025275 * US),  # 0.275e-3 tau + 0.025 us
    ("g811-prc", "mtie", 1000.0, 0.300 * US),
    ("g811-prc", "mtie", 10000.0, 0.390 * US),  # 1e-5 tau + 0.29 us
    ("g811-prc", "tdev", 10.0, 3 * NS),
    ("g811-prc", "tdev", 500.0, 15 * NS),  # 0.03 tau ns
    ("g811-prc", "tdev", 5000.0, 30 * NS),
    ("g812-type-ii-iii", "mtie", 1.0, 24 * NS),
    ("g812-type-ii-iii", "mtie", 100.0, 80 * NS),  # 8 tau^0.5 ns
    ("g812-type-ii-iii", "mtie", 1000.0, 160 * NS),
    ("g813-sec-opt1", "mtie", 0.5, 40 * NS),
    ("g813-sec-opt1", "mtie", 10.0, 40 * 10**0.1 * NS),
    ("g813-sec-opt1", "mtie", 1000.0, 25.25 * 1000**0.2 * NS),
    ("g813-sec-opt1", "tdev", 50.0, 0.64 * math.sqrt(50) * NS),
    ("g813-sec-opt1", "tdev", 500.0, 6.4 * NS),
    ("g8262-eec-opt1", "mtie", 10.0, 40 * 10**0.1 * NS),  # as G.813 option 1
    ("g8262-eec-opt1", "tdev", 10.0, 3.2 * NS),
    ("g8272-prtc-a", "mtie", 1.0, 0.025275 * US),
    ("g8272-prtc-a", "mtie", 273.0, 0.100075 * US),  # 273 s: the boundary as rounded
    ("g8272-prtc-a", "mtie", 274.0, 0.1 * US),
    ("g8272-prtc-a", "mtie", 86400.0, 0.1 * US),
    ("g8272-prtc-a", "tdev", 500.0, 15 * NS),
    ("g8272-prtc-b", "mtie", 54.5, 0.0399875 * US),  # 54.5 s: the boundary as rounded
    ("g8272-prtc-b", "mtie", 1000.0, 0.04 * US),
    ("g8272-prtc-b", "tdev", 10.0, 1 * NS),
    ("g8272-prtc-b", "tdev", 150.0, 5 * NS),  # tau / 30 ns
    ("g8272-prtc-b", "tdev", 1000.0, 10 * NS),
]


def test_mask_file_validation_messages():
    good_segment = "segment = [ { from = 1, to = 10, limit = 5 } ]"
    cases = [
        ("not toml [", "not a valid TOML"),
        ('name = "x"', "at least one"),
        (f'name = "x"\n[[curve]]\nstatistic = "adev"\n{good_segment}', "mtie or tdev"),
        (f'name = "x"\n[[curve]]\nstatistic = "mtie"\nunit = "h"\n{good_segment}', "unit must"),
        ('name = "x"\n[[curve]]\nstatistic = "mtie"\nsegment = []', "list of segments"),
        (
            'name = "x"\n[[curve]]\nstatistic = "mtie"\n'
            "segment = [ { from = 10, to = 1, limit = 5 } ]",
            "from < to",
        ),
        (
            'name = "x"\n[[curve]]\nstatistic = "mtie"\n'
            "segment = [ { from = 1, to = 10, limit = 5 }, { from = 20, to = 30, limit = 5 } ]",
            "starts at 20 s but segment 1 ends at 10 s",
        ),
        (
            'name = "x"\n[[curve]]\nstatistic = "mtie"\n'
            "segment = [ { from = 1, to = 10, limit = 5, b = 2 } ]",
            "both limit and a, b, k",
        ),
        (f'name = "x"\ncolour = 1\n[[curve]]\nstatistic = "mtie"\n{good_segment}', "unknown key"),
        (
            f'name = "x"\n[[curve]]\nstatistic = "mtie"\n{good_segment}\n'
            f'[[curve]]\nstatistic = "mtie"\n{good_segment}',
            "one curve per statistic",
        ),
        (
            f'name = "x"\n[max_abs_te]\nlimit = -3\n[[curve]]\nstatistic = "mtie"\n{good_segment}',
            "must be positive",
        ),
    ]
    for text, words in cases:
        with pytest.raises(SpecError, match=words) as info:
            read_mask_text(text, "m.toml")
        assert "\n" not in str(info.value) and str(info.value).startswith("m.toml")
    with pytest.raises(SpecError, match="no bundled mask and no file"):
        load_mask("g999-nothing")


def test_every_bundled_mask_says_it_is_recalled():
    names = bundled_mask_names()
    assert {"g811-prc", "g813-sec-opt1", "g8262-eec-opt1", "g8272-prtc-a", "g8272-prtc-b"} <= set(
        names
    )
    for name in names:
        mask = load_mask(name)
        assert mask.name == name
        assert "from memory" in mask.recalled
        for curve in mask.curves:
            assert "from memory" in curve.source


@pytest.mark.parametrize(("name", "statistic", "tau", "limit"), RECALLED)
def test_bundled_limits_at_a_few_taus(name, statistic, tau, limit):
    got = load_mask(name).curve(statistic).limit_at(tau)[0]
    assert got == pytest.approx(limit, rel=1e-6)


@pytest.mark.parametrize("name", bundled_mask_names())
def test_bundled_masks_are_continuous_and_never_fall(name):
    for curve in load_mask(name).curves:
        for a, b in zip(curve.segments, curve.segments[1:], strict=False):
            # PRTC boundaries (273 s, 54.5 s) are rounded in the table: 0.1 % allowed
            assert a.limit(a.tau_to) == pytest.approx(b.limit(b.tau_from), rel=1e-3), (name, a, b)
        lo, hi = curve.tau_range
        taus = np.geomspace(lo, hi if math.isfinite(hi) else 1e6, 2000)
        limits = curve.limit_at(taus)
        assert np.isfinite(limits).all()
        assert np.all(np.diff(limits) >= -1e-3 * limits[1:])  # the rounded boundaries again
        assert np.isnan(curve.limit_at(lo / 2)[0])  # outside the mask


def _prtc_like(seconds=20_000, seed=21):
    """A clock of PRTC-A class: 2 ns white PM, 5 ns of slow wander, 30 ns constant offset."""
    rng = np.random.default_rng(seed)
    t = np.arange(seconds, dtype=float)
    te = 30e-9 + 5e-9 * np.sin(2 * np.pi * t / 3600) + 2e-9 * rng.standard_normal(t.size)
    return Measurement.from_phase(te, 1.0)


def test_a_prtc_class_clock_passes_its_mask_and_fails_a_tighter_one():
    meas = _prtc_like()
    a = analyze_time_error(meas, mask="g8272-prtc-a").judgement
    assert a.verdict is Verdict.PASS
    assert a.verdict_of("mtie") is Verdict.PASS and a.verdict_of("tdev") is Verdict.PASS
    least = a.least_margin()
    assert 0 < least.margin <= 1
    assert a.coverage("tdev")[1] <= 20_000 / 12  # the rule of thumb
    assert a.not_measured("tdev") == [10000.0]  # the mask's end, beyond the record / 12
    b = analyze_time_error(meas, mask="g8272-prtc-b").judgement
    assert b.verdict is Verdict.FAIL
    assert b.verdict_of("tdev") is Verdict.FAIL  # 2 ns white PM over the 1 ns limit
    assert b.least_margin("tdev").margin > 1
    te = [c for c in b.checks if c.statistic == "max_abs_te"][0]
    assert te.verdict is Verdict.FAIL and te.limit == pytest.approx(40e-9)


def test_judging_marks_what_the_record_is_too_short_for():
    mask = load_mask("g811-prc")
    j = judge_mask(mask, span=500.0, mtie=([1.0, 100.0], [1e-9, 0.5e-6]), tdev=None)
    assert j.verdict is Verdict.FAIL
    mt = j.of("mtie")
    assert [c.verdict for c in mt[:2]] == [Verdict.PASS, Verdict.FAIL]
    assert mt[1].margin == pytest.approx(0.5e-6 / (0.025e-6 + 0.0275e-6))
    assert all(c.verdict is Verdict.NOT_MEASURED for c in mt[2:]) and len(mt) > 2
    assert j.verdict_of("tdev") is Verdict.NOT_MEASURED
    d = j.to_dict()
    assert d["verdict"] == "fail" and "does not replace" in d["caution"]


def test_the_readme_mask_file_example_reads():
    text = (Path(__file__).resolve().parents[1] / "README.md").read_text(encoding="utf-8")
    block = text.split("A mask file of your own (TOML):", 1)[1].split("```toml\n", 1)[1]
    mask = read_mask_text(block.split("```", 1)[0], "README")
    assert mask.name == "house-gm" and mask.max_abs_te == pytest.approx(50e-9)
    assert mask.curve("mtie").limit_at(1000.0)[0] == pytest.approx(220e-9)
