"""Estimators against published values (NBS14, the 1000-point set), allantools, and invariants.

Published check values: NBS Monograph 140 Annex 8.E; NIST SP 1065 (2008)
sections 12.3 and 12.4; W. J. Riley, *The Calculation of Time Domain Frequency
Stability*, tables I and II. Independent cross-check: allantools 2024.6.
"""

from __future__ import annotations

import math
import warnings

import allantools
import numpy as np
import pytest

import stability
from stability import Measurement, analyze, estimate, get_statistic
from stability.validation import published_set

ALLAN_FAMILY = ("adev", "oadev", "mdev", "tdev", "hdev", "ohdev", "totdev")
ALL_STATS = (*ALLAN_FAMILY, "mtie", "tie_rms")

# The published values ship with the package (stability/validation/data/published.toml,
# which names each source beside them: NBS Monograph 140 Annex 8.E; NIST SP 1065
# sections 12.3 and 12.4; Riley, "The Calculation of Time Domain Frequency Stability",
# tables I and II); `stability validate` checks against the same values.
_NBS14 = published_set("nbs14")
_SET1000 = published_set("sp1065_1000pt")
# NBS14, tau = 1 s and 2 s.
NBS14_EXPECTED = {k: tuple(float(v) for v in vs) for k, vs in _NBS14.values.items()}
# 1000-point set, tau = 1, 10, 100 s.
SP1065_1000PT_EXPECTED = {k: tuple(float(v) for v in vs) for k, vs in _SET1000.values.items()}
SP1065_1000PT_MEAN = float(_SET1000.mean)


def _table(meas, stats, taus):
    """Raw estimates (no qualification, no bias correction), as the references give them."""
    return analyze(meas, stats=stats, taus=taus, qualify=False)


def _sig(value: float, digits: int = 7) -> float:
    """``value`` rounded to ``digits`` significant digits (published tables give 7)."""
    return float(f"{value:.{digits - 1}e}")


def _raw(result) -> np.ndarray:
    """The estimate before any bias correction (published tables give raw values)."""
    return result.raw_deviation if result.bias_corrected else result.deviation


def _measurement(y: np.ndarray, kind: str, tau0: float = 1.0) -> Measurement:
    if kind == "frequency":
        return Measurement.from_frequency(y, tau0)
    x = tau0 * np.concatenate(([0.0], np.cumsum(y)))
    return Measurement.from_phase(x, tau0)


# ---------------------------------------------------------------- published data sets
@pytest.mark.parametrize("kind", ["frequency", "phase"])
def test_nbs14_published_values(nbs14_frequency, kind):
    table = analyze(_measurement(nbs14_frequency, kind), stats=list(NBS14_EXPECTED), taus=[1, 2])
    for name, expected in NBS14_EXPECTED.items():
        got = table[name]
        np.testing.assert_array_equal(got.tau, [1.0, 2.0])
        assert [_sig(v) for v in _raw(got)] == [_sig(v) for v in expected], name


@pytest.mark.parametrize("kind", ["frequency", "phase"])
def test_sp1065_1000pt_published_values(sp1065_1000pt_frequency, kind):
    y = sp1065_1000pt_frequency
    assert _sig(float(np.mean(y))) == SP1065_1000PT_MEAN
    table = analyze(_measurement(y, kind), stats=list(SP1065_1000PT_EXPECTED), taus=[1, 10, 100])
    for name, expected in SP1065_1000PT_EXPECTED.items():
        got = table[name]
        np.testing.assert_array_equal(got.tau, [1.0, 10.0, 100.0])
        assert [_sig(v) for v in _raw(got)] == [_sig(v) for v in expected], name


def _read_reference(path) -> np.ndarray:
    lines = path.read_text(encoding="utf-8").splitlines()
    assert lines[0].startswith("#"), "a comment header names the source"
    values = [float(s) for s in lines if s.strip() and not s.lstrip().startswith("#")]
    return np.array(values)


def test_reference_files_equal_generated_values(
    reference_dir, nbs14_frequency, sp1065_1000pt_frequency
):
    nbs = _read_reference(reference_dir / "nbs14.txt")
    np.testing.assert_array_equal(nbs, nbs14_frequency)
    big = _read_reference(reference_dir / "sp1065_1000pt.txt")
    assert big.size == 1000
    np.testing.assert_array_equal(big, sp1065_1000pt_frequency)  # exact doubles
    header = (reference_dir / "sp1065_1000pt.txt").read_text(encoding="utf-8")[:400]
    assert "SP 1065" in header
    # the shipped values carry their sources and the printed digits
    assert _NBS14.path == reference_dir / "nbs14.txt"
    assert any("section 12.3" in s for s in _NBS14.sources)
    assert any("section 12.4" in s for s in _SET1000.sources)
    assert _NBS14.values["oadev"] == ("91.22945", "85.95287")
    assert _SET1000.values["totdev"][2] == "3.406530e-02"
    assert set(NBS14_EXPECTED) == set(SP1065_1000PT_EXPECTED) == set(ALLAN_FAMILY)


# ---------------------------------------------------------------- allantools cross-check
NOISE_ALPHAS = (2, 1, 0, -1, -2)  # WPM, FPM, WFM, FFM, RWFM (IEEE 1139)
SIZES = ((1000, "octave"), (1001, "octave"), (200, "all"), (201, "all"))


def _allantools(name: str, data: np.ndarray, data_type: str, tau0: float, taus: np.ndarray):
    func = getattr(allantools, "tierms" if name == "tie_rms" else name)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        t, dev, _err, n = func(data, rate=1.0 / tau0, data_type=data_type, taus=taus)
    return np.asarray(t, float), np.asarray(dev, float), np.asarray(n)


def _compare(ours, ref_tau, ref_dev, ref_n, label):
    mine = np.round(ours.tau, 9)
    theirs = np.round(ref_tau, 9)
    common = np.intersect1d(mine, theirs)
    assert common.size >= min(3, mine.size), f"{label}: too few common taus"
    i = np.isin(mine, common)
    j = np.isin(theirs, common)
    # allantools 2024.6 as independent reference; agreement to 1e-10 relative.
    np.testing.assert_allclose(ours.deviation[i], ref_dev[j], rtol=1e-10, atol=0, err_msg=label)
    np.testing.assert_array_equal(ours.n_terms[i], ref_n[j].astype(np.int64), err_msg=label)


@pytest.mark.parametrize("alpha", NOISE_ALPHAS)
@pytest.mark.parametrize(("n", "grid"), SIZES)
@pytest.mark.parametrize("kind", ["phase", "frequency"])
def test_against_allantools(power_law_frequency, alpha, n, grid, kind):
    tau0 = 0.5
    y = power_law_frequency(alpha, n, 100 + 7 * alpha + n)
    meas = _measurement(y, kind, tau0)
    data = meas.phase if kind == "phase" else y
    data_type = "phase" if kind == "phase" else "freq"
    table = _table(meas, list(ALL_STATS), grid)
    for name in ALL_STATS:
        ours = table[name]
        if name in ("mtie", "tie_rms") and kind == "frequency":
            # allantools integrates frequency after removing its mean; our time-error
            # statistics keep the offset (DESIGN), so compare the offset-free variant.
            ours = estimate(meas.replace(frequency_offset=0.0), get_statistic(name), grid)
        t, dev, cnt = _allantools(name, data, data_type, tau0, ours.tau)
        _compare(ours, t, dev, cnt, f"{name} alpha={alpha} n={n} {grid} {kind}")


@pytest.mark.parametrize("name", ["mtie", "tie_rms"])
def test_time_error_of_frequency_input_keeps_offset(power_law_frequency, name):
    tau0 = 2.0
    y = power_law_frequency(0, 301, 5) + 3e-9  # a frequency offset of 3e-9
    ours = _table(Measurement.from_frequency(y, tau0), name, "octave")[name]
    x = tau0 * np.concatenate(([0.0], np.cumsum(y)))  # integrated phase, offset included
    t, dev, cnt = _allantools(name, x, "phase", tau0, ours.tau)
    _compare(ours, t, dev, cnt, name)


# ---------------------------------------------------------------- invariants
@pytest.mark.parametrize("n", [101, 256])
def test_invariants_at_m_equal_one(power_law_frequency, n):
    tau0 = 0.25
    meas = Measurement.from_frequency(power_law_frequency(-1, n, n), tau0)
    table = _table(meas, list(ALLAN_FAMILY), [tau0])
    dev = {name: float(table[name].deviation[0]) for name in ALLAN_FAMILY}
    # At m = 1: ADEV = OADEV = MDEV = TOTDEV and HDEV = OHDEV (REFERENCES.md "Invariants").
    for name in ("oadev", "mdev", "totdev"):
        assert dev[name] == pytest.approx(dev["adev"], rel=1e-12)
    assert dev["hdev"] == pytest.approx(dev["ohdev"], rel=1e-12)
    # TDEV(tau0) = tau0 * ADEV(tau0) / sqrt(3) (REFERENCES.md "Invariants"; SP 1065 eq. 15).
    assert dev["tdev"] == pytest.approx(tau0 * dev["adev"] / math.sqrt(3.0), rel=1e-12)


def test_scale_invariance(power_law_frequency):
    # Every statistic is linear in x (common practice): x -> c x gives deviation -> c deviation.
    x = np.concatenate(([0.0], np.cumsum(power_law_frequency(0, 400, 3))))
    base = _table(Measurement.from_phase(x, 1.0), list(ALL_STATS), "octave")
    for c in (1e-6, 37.5, -2.0):
        scaled = _table(Measurement.from_phase(c * x, 1.0), list(ALL_STATS), "octave")
        for name in ALL_STATS:
            np.testing.assert_allclose(
                scaled[name].deviation, abs(c) * base[name].deviation, rtol=1e-12, err_msg=name
            )


def test_linear_phase_ramp(power_law_frequency):
    # A frequency offset (linear phase ramp) is removed by second and higher differences,
    # and TOTDEV's odd reflection continues a line (SP 1065 sections 5.2, 5.2.11); it does
    # change MTIE and TIE (REFERENCES.md "Preparation practice"; common practice).
    n = 500
    x = np.concatenate(([0.0], np.cumsum(power_law_frequency(0, n - 1, 11))))
    ramp = 5e-11 * np.arange(n)
    plain = _table(Measurement.from_phase(x, 1.0), list(ALL_STATS), "octave")
    tilted = _table(Measurement.from_phase(x + ramp, 1.0), list(ALL_STATS), "octave")
    for name in ALLAN_FAMILY:
        np.testing.assert_allclose(
            tilted[name].deviation, plain[name].deviation, rtol=1e-8, err_msg=name
        )
    for name in ("mtie", "tie_rms"):
        assert not np.allclose(tilted[name].deviation, plain[name].deviation, rtol=1e-3)


def test_hadamard_ignores_linear_frequency_drift(power_law_frequency):
    # Third differences cancel a quadratic phase (linear frequency drift) (SP 1065 5.2.8).
    n = 400
    x = np.concatenate(([0.0], np.cumsum(power_law_frequency(-2, n - 1, 4))))
    t = np.arange(n, dtype=float)
    quad = 1e-12 * t * t
    for name in ("hdev", "ohdev"):
        a = _table(Measurement.from_phase(x, 1.0), name, "octave")[name]
        b = _table(Measurement.from_phase(x + quad, 1.0), name, "octave")[name]
        np.testing.assert_allclose(b.deviation, a.deviation, rtol=1e-7, err_msg=name)
    oa = _table(Measurement.from_phase(x, 1.0), "oadev", "octave")["oadev"]
    ob = _table(Measurement.from_phase(x + quad, 1.0), "oadev", "octave")["oadev"]
    assert ob.deviation[-1] > 1.5 * oa.deviation[-1]  # the Allan variance does see drift


def test_registry_covers_core_statistics():
    names = stability.statistic_names()
    for name in ALL_STATS:
        assert name in names
        stat = get_statistic(name.upper())
        assert stat.name == name
        assert stat.allowed_m(stat.min_points - 1) == 0
        assert stat.allowed_m(1000) >= 1
