"""Specification and information files, verdicts, and the reference contribution.

References
----------
1. W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065 (2008),
   sections 5.3 (chi-squared intervals), 5.13 (reference noise)
   (Allan variance of white FM: h0 / (2 tau)).
2. ISO/IEC 17025:2017, 7.8.6 (decision rules); JCGM 106:2012 section 8 (guarded acceptance).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

import stability
from stability.errors import InputError, SpecError
from stability.intervals import chi2_interval
from stability.spec import (
    VERDICTS,
    Check,
    Judgement,
    Reference,
    Spec,
    Verdict,
    judge,
    load_info,
    load_spec,
    overall_verdict,
    reference_contribution,
    verdict_for,
)
from stability.table import StabilityTable, StatisticResult

GOOD_SPEC = """statistic = "oadev"
confidence = 0.95
interpolate = true
[[limit]]
tau_s = 1
max = 1e-11
[[limit]]
tau_s = 100
max = 3e-12
"""

GOOD_INFO = """procedure = "TF-07"
notes = "overnight run"
[device]
id = "OCXO-42"
[reference]
id = "H-maser"
statistic = "oadev"
stability = [[1, 5e-13], [100, 5e-14]]
"""


def test_every_error_message(tmp_path):
    """Every bad spec or info file gives one SpecError naming the key (and the file)."""
    spec_cases = [
        ('statistic = "oadev"\nconfidence = = 1\n', "TOML syntax error", 2),
        ("statistic = [\n", "TOML syntax error", 1),
        ("confidence = 0.9\n[[limit]]\ntau_s = 1\nmax = 1e-11\n", "missing key 'statistic'", None),
        ('statistic = "oadev"\n', "missing key 'limit'", None),
        ('statistic = "odev"\n[[limit]]\ntau_s = 1\nmax = 1\n', "key 'statistic'", 1),
        (
            'statistic = "oadev"\nconfidence = 1.5\n[[limit]]\ntau_s = 1\nmax = 1\n',
            "key 'confidence'",
            2,
        ),
        (
            'statistic = "oadev"\nconfidence = 0\n[[limit]]\ntau_s = 1\nmax = 1\n',
            "key 'confidence'",
            2,
        ),
        (
            'statistic = "oadev"\ninterpolate = "yes"\n[[limit]]\ntau_s = 1\nmax = 1\n',
            "key 'interpolate'",
            2,
        ),
        ('statistic = "oadev"\nlimit = 3\n', "key 'limit' must be", 2),
        ('statistic = "oadev"\n[[limit]]\ntau_s = -1\nmax = 1e-11\n', "key 'tau_s'", 3),
        ('statistic = "oadev"\n[[limit]]\ntau_s = 1\nmax = 0\n', "key 'max'", 4),
        ('statistic = "oadev"\n[[limit]]\ntau_s = 1\n', "missing key 'max'", 2),
        (
            'statistic = "oadev"\n[[limit]]\ntau_s = 10\nmax = 1\n[[limit]]\ntau_s = 1\nmax = 1\n',
            "taus must increase",
            6,
        ),
        ('statistic = "oadev"\n[[limit]]\ntau = 1\nmax = 1\n', "unknown key 'tau'", 3),
        ('statistc = "oadev"\n', "unknown key 'statistc'", 1),
    ]
    info_cases = [
        ("[device\n", "TOML syntax error", 1),
        ('notes = "x"\n', "missing table [device]", None),
        ('[device]\ndescription = "x"\n', "missing key 'id' in [device]", 1),
        ('[device]\nid = "a"\n[labb]\nname = "x"\n', "unknown key 'labb'", 3),
        ('[device]\nid = "a"\nserail = "x"\n', "unknown key 'serail' in [device]", 3),
        (
            '[device]\nid = "a"\n[reference]\nstability = [[1, -2]]\n',
            "key 'reference.stability'",
            4,
        ),
        (
            '[device]\nid = "a"\n[reference]\nstability = [[10, 1e-12], [1, 1e-12]]\n',
            "taus must increase",
            4,
        ),
        ('[device]\nid = "a"\n[reference]\nlevels = {h3 = 1e-24}\n', "unknown key 'h3'", 4),
        ('[device]\nid = "a"\n[reference]\nlevels = {h0 = -1}\n', "reference.levels.h0", 4),
        (
            '[device]\nid = "a"\n[reference]\nlevels = {h0 = 1}\nstability = [[1, 1]]\n',
            "both 'stability' and 'levels'",
            4,
        ),
        ('[device]\nid = "a"\n[lab]\nname = [1]\n', "key 'lab.name' must be text", 4),
        ('[device]\nid = "a"\n[procedure]\nnumber = 3\n', "unknown key 'number' in [procedure]", 4),
        ('measured_by = ["x"]\n[device]\nid = "a"\n', "key 'measured_by' must be text", 1),
        ('checkedby = "x"\n[device]\nid = "a"\n', "unknown key 'checkedby'", 1),
    ]
    for i, (text, expected, line) in enumerate(spec_cases + info_cases):
        path = tmp_path / f"case{i}.toml"
        path.write_text(text)
        loader = load_spec if i < len(spec_cases) else load_info
        with pytest.raises(SpecError) as err:
            loader(path)
        message = err.value.one_line()
        assert expected in message, (text, message)
        assert str(path) in message, message
        if line is not None:
            assert err.value.line == line, (text, message)
    with pytest.raises(SpecError, match="no such specification file"):
        load_spec(tmp_path / "missing.toml")
    (tmp_path / "latin.toml").write_bytes(b'statistic = "\xe9"\n')
    with pytest.raises(SpecError, match="not UTF-8"):
        load_spec(tmp_path / "latin.toml")


def test_good_files_read(tmp_path):
    (tmp_path / "spec.toml").write_text(GOOD_SPEC)
    (tmp_path / "info.toml").write_text(GOOD_INFO)
    spec = load_spec(tmp_path / "spec.toml")
    assert spec.statistic == "oadev" and spec.confidence == 0.95 and spec.interpolate
    assert spec.limits == [(1.0, 1e-11), (100.0, 3e-12)]
    assert len(spec.sha256) == 64
    info = load_info(tmp_path / "info.toml")
    assert info.device_id == "OCXO-42" and info.procedure == "TF-07"
    assert info.reference.points == [(1.0, 5e-13), (100.0, 5e-14)]
    assert info.to_dict()["reference"]["id"] == "H-maser"


def test_record_number_and_approval_fields_read(tmp_path):
    # optional top-level keys; the date may be a TOML date or text
    text = (
        'record_number = "SR-2026-0042"\nmeasured_by = "J. Doe"\nchecked_by = " A. N. Other "\n'
        'date = 2026-03-04\n[device]\nid = "a"\n'
    )
    (tmp_path / "info.toml").write_text(text)
    info = load_info(tmp_path / "info.toml")
    assert (info.record_number, info.measured_by, info.checked_by, info.date) == (
        "SR-2026-0042", "J. Doe", "A. N. Other", "2026-03-04",
    )  # fmt: skip
    assert info.to_dict()["checked_by"] == "A. N. Other"
    (tmp_path / "plain.toml").write_text('[device]\nid = "a"\n')
    bare = load_info(tmp_path / "plain.toml")
    assert (bare.record_number, bare.measured_by, bare.checked_by, bare.date) == ("",) * 4


def test_example_files_read():
    from pathlib import Path

    demo = Path(__file__).resolve().parent.parent / "datasets" / "demo"
    spec = load_spec(demo / "spec-example.toml")
    info = load_info(demo / "info-example.toml")
    assert spec.limits and info.device_id


# ---------------------------------------------------------------------- verdict logic
def _table(tau, dev, low, high, edf, confidence=0.95, stat="oadev"):
    tau = np.asarray(tau, dtype=float)
    result = StatisticResult.build(
        stat,
        tau,
        tau.astype(int),
        np.full(tau.size, 100),
        dev,
        edf=edf,
        ci_low=low,
        ci_high=high,
        confidence=confidence,
    )
    return StabilityTable(results={stat: result}, confidence=confidence)


def _spec(limits, interpolate=True, confidence=0.95):
    return Spec(statistic="oadev", confidence=confidence, interpolate=interpolate, limits=limits)


def test_verdict_boundaries():
    # Decision rule of the module (guarded acceptance, JCGM 106 section 8).
    assert verdict_for(1.0, 2.0, 2.0) == "pass"  # limit equal to the upper bound
    assert verdict_for(1.0, 2.0, 1.0) == "inconclusive"  # equal to the lower bound: not above
    assert verdict_for(1.0, 2.0, 1.5) == "inconclusive"
    assert verdict_for(1.0, 2.0, 0.999) == "fail"
    assert verdict_for(math.nan, math.nan, 1.0, deviation=0.5) == "inconclusive"
    assert verdict_for(math.nan, math.nan, 1.0) == "not measured"


def test_judge_rows_at_every_boundary():
    tau = [1.0, 10.0, 100.0, 1000.0]
    dev = [2e-11, 2e-12, 2e-13, 2e-14]
    low = [1.5e-11, 1.5e-12, 1.5e-13, math.nan]
    high = [2.5e-11, 2.5e-12, 2.5e-13, math.nan]
    edf = [100.0, 50.0, 10.0, math.nan]
    table = _table(tau, dev, low, high, edf)
    limits = [(1.0, 2.5e-11), (10.0, 1.5e-12), (100.0, 1e-13), (1000.0, 1.0), (1e5, 1e-11)]
    j = judge(table, _spec(limits, interpolate=False))
    verdicts = [c.verdict for c in j.listed]
    assert verdicts == ["pass", "inconclusive", "fail", "inconclusive", "not measured"]
    assert "no confidence interval" in j.listed[3].note
    assert j.overall == "fail"
    # interpolate off: a listed tau between measured ones is not measured
    j = judge(table, _spec([(3.0, 1e-10)], interpolate=False))
    assert j.listed[0].verdict == "not measured" and "interpolation is off" in j.listed[0].note
    assert j.overall == "not measured"


def test_interpolation_between_measured_taus_and_limits():
    # White FM: sigma(tau) = s tau^-1/2 (NIST SP 1065), a straight line in log-log,
    # so log-log interpolation between measured taus is exact.
    tau = np.array([1.0, 4.0, 16.0, 64.0])
    dev = 1e-11 * tau**-0.5
    table = _table(tau, dev, 0.9 * dev, 1.1 * dev, np.full(4, 30.0))
    spec = _spec([(2.0, 1e-11), (32.0, 1e-12)])
    j = judge(table, spec)
    first = j.verdict_at(2.0)
    assert first.interpolated and first.listed
    assert first.deviation == pytest.approx(1e-11 * 2**-0.5, rel=1e-12)
    assert first.ci_high == pytest.approx(1.1e-11 * 2**-0.5, rel=1e-12)
    assert first.verdict == "pass"
    # the measured taus 4 and 16 s lie between the listed limits: judged on the limit line,
    # log-log between (2 s, 1e-11) and (32 s, 1e-12): at 8 s (geometric middle) 10^-11.5
    assert [c.tau_s for c in j.checks if not c.listed] == [4.0, 16.0]
    assert spec.limit_at(8.0) == pytest.approx(10**-11.5, rel=1e-12)
    at4 = j.verdict_at(4.0)
    assert at4.limit == pytest.approx(float(spec.limit_at(4.0)))
    assert at4.verdict == verdict_for(at4.ci_low, at4.ci_high, at4.limit)
    last = j.verdict_at(32.0)
    # 1.1e-11 / sqrt(32) = 1.94e-12 > ... lower bound 0.9e-11/sqrt(32) = 1.59e-12 > 1e-12: fail
    assert last.verdict == "fail" and j.overall == "fail"
    # outside the measured taus nothing is invented
    j = judge(table, _spec([(0.5, 1e-10), (128.0, 1e-10)]))
    assert [c.verdict for c in j.listed] == ["not measured", "not measured"]
    assert all(c.verdict == "pass" for c in j.checks if not c.listed)
    assert j.overall == "inconclusive"


def test_overall_combinations():
    assert overall_verdict(["pass", "pass"]) == "pass"
    assert overall_verdict(["pass", "fail", "inconclusive"]) == "fail"
    assert overall_verdict(["pass", "inconclusive"]) == "inconclusive"
    assert overall_verdict(["pass", "not measured"]) == "inconclusive"
    assert overall_verdict(["not measured", "not measured"]) == "not measured"
    assert overall_verdict(["fail", "not measured"]) == "fail"


def test_verdicts_are_structured_values_that_read_as_the_words():
    # The words a user sees, in report order; code tests members, not words.
    assert [str(v) for v in VERDICTS] == ["pass", "fail", "inconclusive", "not measured"]
    assert VERDICTS == tuple(Verdict)
    assert verdict_for(1.0, 2.0, 2.0) is Verdict.PASS
    assert verdict_for(math.nan, math.nan, 1.0) is Verdict.NOT_MEASURED
    assert overall_verdict([Verdict.PASS, "fail"]) is Verdict.FAIL
    assert f"{Verdict.NOT_MEASURED:<14}|" == "not measured  |"
    tau = np.array([1.0, 10.0])
    dev = np.array([1e-11, 1e-12])
    j = judge(_table(tau, dev, 0.9 * dev, 1.1 * dev, np.full(2, 30.0)), _spec([(1.0, 2e-11)]))
    assert j.overall is Verdict.PASS and j.listed[0].verdict is Verdict.PASS
    assert type(j.to_dict()["overall"]) is str and j.to_dict()["overall"] == "pass"
    assert type(j.checks[0].to_dict()["verdict"]) is str
    # built by hand from the exact word, a check holds the member; other words are refused
    nan = math.nan
    check = Check(1.0, 1e-11, True, 5e-12, nan, nan, nan, False, "inconclusive")
    assert check.verdict is Verdict.INCONCLUSIVE
    with pytest.raises(InputError, match="verdict must be one of 'pass', .* got 'passed'"):
        Check(1.0, 1e-11, True, 5e-12, nan, nan, nan, False, "passed")
    with pytest.raises(InputError, match="overall must be one of"):
        Judgement(spec=_spec([(1.0, 2e-11)]), checks=[], overall="ok")


def test_verdict_parse_reads_plain_words():
    assert Verdict.parse(Verdict.FAIL) is Verdict.FAIL
    assert Verdict.parse(None) is Verdict.NOT_MEASURED
    assert Verdict.parse(" Not_Measured ") is Verdict.NOT_MEASURED
    assert Verdict.parse("not-tested") is Verdict.NOT_MEASURED
    assert Verdict.parse("OK") is Verdict.PASS and Verdict.parse("Passed") is Verdict.PASS
    assert Verdict.parse("FAILED") is Verdict.FAIL
    assert Verdict.parse("marginal") is Verdict.INCONCLUSIVE
    with pytest.raises(InputError, match="unknown verdict 'maybe' in limits.*pass, fail"):
        Verdict.parse("maybe", where="limits")


def test_intervals_recomputed_at_spec_confidence():
    tau = np.array([1.0, 10.0])
    dev = np.array([1e-11, 3e-12])
    edf = np.array([20.0, 5.0])
    low, high = chi2_interval(dev, edf, 0.683)
    table = _table(tau, dev, low, high, edf, confidence=0.683)
    j = judge(table, _spec([(1.0, 1e-10), (10.0, 1e-10)], interpolate=False, confidence=0.95))
    want_low, want_high = chi2_interval(dev, edf, 0.95)  # NIST SP 1065 section 5.3
    assert [c.ci_low for c in j.listed] == pytest.approx(list(want_low), rel=1e-12)
    assert [c.ci_high for c in j.listed] == pytest.approx(list(want_high), rel=1e-12)


def test_statistic_missing_from_table():
    table = _table([1.0], [1e-11], [1e-12], [2e-11], [5.0], stat="mdev")
    with pytest.raises(SpecError, match="add oadev to --stats"):
        judge(table, _spec([(1.0, 1e-10)]))


# ---------------------------------------------------------------------- reference contribution
def _white_fm_adev(level, seed, n=20000):
    y = level * np.random.default_rng(seed).standard_normal(n)
    m = stability.Measurement.from_frequency(y, tau0=1.0)
    return stability.analyze(m, stats="oadev", taus=[1, 10, 100], confidence=0.95)


@pytest.mark.parametrize(("ref_level", "limited"), [(5e-12, True), (1e-12, False)])
def test_reference_limited_on_simulated_data(ref_level, limited):
    # Device white FM 1e-11 and reference white FM; the measurement sees both, and independent
    # noises add in variance (NIST SP 1065 section 5.13).
    rng = np.random.default_rng(7)
    n = 20000
    device = 1e-11 * rng.standard_normal(n)
    ref = ref_level * rng.standard_normal(n)
    table = stability.analyze(
        stability.Measurement.from_frequency(device - ref, tau0=1.0),
        stats="oadev",
        taus=[1, 10, 100],
        confidence=0.95,
    )
    ref_table = _white_fm_adev(ref_level, seed=11)
    reference = Reference(
        id="ref",
        points=list(zip(ref_table["oadev"].tau, ref_table["oadev"].deviation, strict=True)),
    )
    spec = _spec([(1.0, 1e-10), (100.0, 1e-11)])
    j = judge(table, spec, reference=reference)
    for c in j.checks:
        assert c.reference_limited is limited, c
        # device-only recovers the device level: white FM s tau^-1/2 (NIST SP 1065);
        # tolerance from the EDF at each tau (about 3 sigma of a chi-squared deviation).
        tol = 3.0 / math.sqrt(2.0 * table["oadev"].edf[table["oadev"].tau == c.tau_s][0]) + 0.02
        assert c.device_only == pytest.approx(1e-11 / math.sqrt(c.tau_s), rel=tol)
        # the measured value stays what was measured
        assert c.deviation > c.device_only
    if limited:
        assert any("reference-limited" in n for n in j.notes)


def test_reference_levels_and_flat_extrapolation():
    # WFM: AVAR = h0 / (2 tau) (NIST SP 1065), so h0 = 2 sigma^2 at tau = 1 s.
    ref = Reference(levels={0: 2 * (5e-12) ** 2})
    value, notes = ref.deviation([1.0, 100.0])
    assert value == pytest.approx([5e-12, 5e-13], rel=1e-12)
    assert notes == []
    ref = Reference(points=[(1.0, 1e-12), (100.0, 1e-13)])
    value, notes = ref.deviation([0.1, 10.0, 1000.0])
    assert value == pytest.approx([1e-12, 10**-12.5, 1e-13], rel=1e-12)
    assert notes and "held flat" in notes[0]
    limited, device = reference_contribution([3e-12, 3e-12, 1e-12], [0.9e-12, 1.1e-12, 2e-12])
    assert limited.tolist() == [False, True, True]  # reference above one third (common practice)
    assert device[0] == pytest.approx(math.sqrt(9e-24 - 0.81e-24))
    assert device[2] == 0.0  # never negative under the square root
