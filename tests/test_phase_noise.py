"""Tests of stability.phase_noise: L(f) <-> sigma_y(tau) and the phase-noise table reader."""

from __future__ import annotations

import math

import numpy as np
import pytest

from stability.errors import AnalysisError, InputError
from stability.phase_noise import (
    frequency_psd_to_phase_noise,
    model_to_phase_noise,
    phase_noise_to_frequency_psd,
    phase_noise_to_stability,
    read_phase_noise_table,
)

NU0 = 10e6
OFFSETS = np.logspace(-3, 6, 46)  # 1 mHz .. 1 MHz, 5 rows per decade


def _convert(h, f_h, taus, stats=("adev", "mdev"), beyond="slope", offsets=OFFSETS):
    level = model_to_phase_noise(h, NU0, offsets)
    return phase_noise_to_stability(
        offsets, level, nominal=NU0, f_h=f_h, taus=taus, stats=stats, beyond=beyond
    )


# ---------------------------------------------------------------------------- validation
def test_every_validation_message():
    f = np.array([1.0, 10.0, 100.0])
    level = np.array([-100.0, -120.0, -140.0])
    good = {"nominal": NU0, "f_h": 1e3, "taus": [1.0]}
    cases = [
        ((f[:1], level[:1]), good, "at least 2 rows"),
        ((f, level[:2]), good, "equal length"),
        ((f[::-1], level), good, "strictly increasing"),
        ((np.array([1.0, np.nan, 3.0]), level), good, "finite"),
        ((f, level), {**good, "nominal": -1}, "nominal must be a positive"),
        ((f, level), {**good, "f_h": 0}, "f_h must be a positive"),
        ((f, level), {**good, "taus": [-1.0]}, "taus must be positive"),
        ((f, level), {**good, "taus": "octave"}, "grid name"),
        ((f, level), {**good, "stats": ["mtie"]}, "no frequency-domain conversion"),
        ((f, level), {**good, "stats": []}, "stats is empty"),
        ((f, level), {**good, "beyond": "zero"}, "beyond must be"),
        ((f, level), {**good, "taus": [1e-4], "stats": ["mdev"]}, "shorter than the sample"),
    ]
    for args, kwargs, message in cases:
        with pytest.raises(InputError, match=message):
            phase_noise_to_stability(*args, **kwargs)
    # L(f) falling 60 dB/decade below the first offset: S_y ~ f^-4 diverges (SP 1065 sec. 9).
    with pytest.raises(AnalysisError, match="diverges"):
        phase_noise_to_stability(f, np.array([-60.0, -120.0, -140.0]), **good)
    with pytest.raises(InputError, match="alpha must be one of"):
        model_to_phase_noise({3: 1e-20}, NU0, [1.0])
    with pytest.raises(InputError, match="at least one coefficient"):
        model_to_phase_noise({0: 0.0}, NU0, [1.0])
    with pytest.raises(InputError, match="offsets must be positive"):
        model_to_phase_noise({0: 1e-22}, NU0, [0.0])
    with pytest.raises(InputError, match="s_y must be positive"):
        frequency_psd_to_phase_noise([1.0], [0.0], nominal=NU0)


# ---------------------------------------------------------------------------- closed forms
# AVAR from h_alpha: NIST SP 1065 section 9 / NIST TN 1337 (also IEEE Std 1139 annex).
@pytest.mark.parametrize("f_h", [1e3, 1e5])
def test_white_pm_avar_closed_form_with_bandwidth(f_h):
    taus = np.array([1.0, 10.0, 100.0])
    h2 = 1e-26
    result = _convert({2: h2}, f_h, taus)
    expected = 3.0 * f_h * h2 / (4.0 * math.pi**2 * taus**2)  # SP 1065 / TN 1337
    np.testing.assert_allclose(result["adev"] ** 2, expected, rtol=1e-3)


@pytest.mark.parametrize("f_h", [1e3, 1e5])
def test_flicker_pm_avar_closed_form_with_bandwidth(f_h):
    # The constant 1.038 of SP 1065 / TN 1337 is itself a rounded asymptotic value
    # (the exact expression adds terms that vanish only as 2 pi f_h tau grows),
    # so the check is at 1e-2.
    taus = np.array([1.0, 10.0, 100.0])
    h1 = 1e-25
    result = _convert({1: h1}, f_h, taus)
    expected = (
        h1 * (1.038 + 3.0 * np.log(2.0 * math.pi * f_h * taus)) / (4.0 * math.pi**2 * taus**2)
    )
    np.testing.assert_allclose(result["adev"] ** 2, expected, rtol=1e-2)


def test_fpm_avar_grows_with_bandwidth_as_log():
    # SP 1065 / TN 1337: the FPM AVAR difference between two bandwidths is
    # 3 h1 ln(f_h2 / f_h1) / (4 pi^2 tau^2), independent of the constant 1.038.
    tau = np.array([10.0])
    h1 = 1e-25
    a = _convert({1: h1}, 1e3, tau, stats=["adev"])["adev"] ** 2
    b = _convert({1: h1}, 1e5, tau, stats=["adev"])["adev"] ** 2
    expected = 3.0 * h1 * math.log(100.0) / (4.0 * math.pi**2 * tau**2)
    np.testing.assert_allclose(b - a, expected, rtol=1e-3)


@pytest.mark.parametrize(
    ("alpha", "h", "closed"),
    [
        (0, 1e-22, lambda h, t: h / (2.0 * t)),  # WFM, SP 1065 / TN 1337
        (-1, 1e-24, lambda h, t: 2.0 * math.log(2.0) * h + 0.0 * t),  # FFM, SP 1065 / TN 1337
        (-2, 1e-26, lambda h, t: 2.0 * math.pi**2 / 3.0 * h * t),  # RWFM, SP 1065 / TN 1337
    ],
)
def test_fm_avar_closed_forms(alpha, h, closed):
    taus = np.array([1.0, 10.0, 100.0, 1000.0])
    result = _convert({alpha: h}, 1e4, taus, stats=["adev", "oadev"])
    np.testing.assert_allclose(result["adev"] ** 2, closed(h, taus), rtol=1e-3)
    np.testing.assert_array_equal(result["adev"], result["oadev"])


@pytest.mark.parametrize(
    ("alpha", "h", "closed"),
    [
        # WPM, large n, f_h = 1/(2 tau0): 3 h2 / (8 pi^2 tau^3) (SP 1065; from memory).
        (2, 1e-26, lambda h, t: 3.0 * h / (8.0 * math.pi**2 * t**3)),
        # WFM: h0 / (4 tau) (SP 1065; from memory).
        (0, 1e-22, lambda h, t: h / (4.0 * t)),
        # FFM, large n: 0.9352 h_-1 (from memory; confirmed here by an independent
        # scipy.integrate.quad evaluation of the MVAR integral: 0.93523 at n = 1024).
        (-1, 1e-24, lambda h, t: 0.9352 * h + 0.0 * t),
        # RWFM: (11 pi^2 / 20) h_-2 tau (SP 1065; from memory, confirmed by the same quad check).
        (-2, 1e-26, lambda h, t: 11.0 * math.pi**2 / 20.0 * h * t),
    ],
)
def test_mvar_closed_forms(alpha, h, closed):
    taus = np.array([1.0, 10.0, 100.0])  # n = 2 f_h tau >= 2000
    result = _convert({alpha: h}, 1e3, taus, stats=["mdev", "tdev"])
    np.testing.assert_allclose(result["mdev"] ** 2, closed(h, taus), rtol=1e-3)
    # TDEV = tau MDEV / sqrt(3) (ITU-T G.810; SP 1065 eq. 15).
    np.testing.assert_allclose(result["tdev"], taus * result["mdev"] / math.sqrt(3.0))


def test_hadamard_equals_allan_for_white_fm():
    # For white FM the Hadamard and Allan variances are equal (SP 1065 section 5.2.8;
    # common practice): both are sigma_y^2 of the averages, h0 / (2 tau).
    taus = np.array([1.0, 10.0])
    result = _convert({0: 1e-22}, 1e4, taus, stats=["hdev", "adev"])
    np.testing.assert_allclose(result["hdev"], result["adev"], rtol=1e-3)


def test_below_bandwidth_wfm_loses_the_cut_off_tail():
    # WFM with a sharp cut-off: AVAR = h0/(2 tau) * (1 - 3/(2 pi^2 f_h tau)) to first
    # order, from int_x^inf sin^4(u)/u^2 du ~ 3/(8x) (SP 1065 transfer function; the
    # tail integral is common practice). At pi f_h tau = 10 pi the deficit is 1.5 %.
    tau = np.array([0.01])
    result = _convert({0: 1e-22}, 1e3, tau, stats=["adev"])
    expected = 1e-22 / (2.0 * tau) * (1.0 - 3.0 / (2.0 * math.pi**2 * 1e3 * tau))
    np.testing.assert_allclose(result["adev"] ** 2, expected, rtol=2e-3)


def test_flat_and_slope_continuation_above_the_table():
    # A WPM table that stops at 100 Hz: continuing its slope to f_h = 1e4 Hz is the
    # full WPM model (SP 1065 closed form); holding it flat gives less noise.
    f = np.logspace(0, 2, 9)
    h2 = 1e-26
    level = model_to_phase_noise({2: h2}, NU0, f)
    taus = [1.0, 10.0]
    slope = phase_noise_to_stability(
        f, level, nominal=NU0, f_h=1e4, taus=taus, stats=["adev"], beyond="slope"
    )
    flat = phase_noise_to_stability(
        f, level, nominal=NU0, f_h=1e4, taus=taus, stats=["adev"], beyond="flat"
    )
    expected = 3.0 * 1e4 * h2 / (4.0 * math.pi**2 * np.array(taus) ** 2)
    np.testing.assert_allclose(slope["adev"] ** 2, expected, rtol=1e-3)
    assert (flat["adev"] < slope["adev"]).all()
    assert any("last value" in n for n in flat.notes)
    frame = flat.to_frame()
    assert list(frame.columns) == ["statistic", "tau_s", "deviation"]
    assert len(frame) == 2


# ---------------------------------------------------------------------------- round trips
def test_model_to_phase_noise_round_trips_through_s_y():
    # L = nu0^2 S_y / (2 f^2) and S_y = (f/nu0)^2 2 10^(L/10) (IEEE Std 1139).
    h = {2: 1e-26, 0: 1e-22, -2: 1e-26}
    level = model_to_phase_noise(h, NU0, OFFSETS)
    s_y = phase_noise_to_frequency_psd(OFFSETS, level, nominal=NU0)
    expected = sum(v * OFFSETS**a for a, v in h.items())
    np.testing.assert_allclose(s_y, expected, rtol=1e-12)
    np.testing.assert_allclose(
        frequency_psd_to_phase_noise(OFFSETS, s_y, nominal=NU0), level, atol=1e-10
    )


def test_white_pm_level_in_dbc():
    # WPM h2 at nu0: L = 10 log10(nu0^2 h2 / 2), flat in f (IEEE Std 1139 definitions).
    level = model_to_phase_noise({2: 2e-26}, NU0, [1.0, 1e3])
    np.testing.assert_allclose(level, 10.0 * math.log10(NU0**2 * 1e-26), atol=1e-12)


def test_sum_of_models_adds_variances():
    # Independent power-law terms add in AVAR (SP 1065 section 9: linear in h_alpha).
    # The table of the sum is interpolated as a piecewise power law, exact only for a
    # single term; 50 rows per decade keep that interpolation error near 1e-5.
    taus = np.array([1.0, 100.0])
    dense = np.logspace(-6, 6, 601)  # RWFM dominates below 1e-6 Hz: exact slope there
    both = _convert({0: 1e-22, -2: 1e-26}, 1e3, taus, stats=["adev"], offsets=dense)
    both = both["adev"] ** 2
    wfm = _convert({0: 1e-22}, 1e3, taus, stats=["adev"])["adev"] ** 2
    rw = _convert({-2: 1e-26}, 1e3, taus, stats=["adev"])["adev"] ** 2
    np.testing.assert_allclose(both, wfm + rw, rtol=1e-4)


# ---------------------------------------------------------------------------- reader
def test_read_table_with_comments_header_and_delimiters(tmp_path):
    path = tmp_path / "pn.txt"
    path.write_text(
        "# phase noise of a 10 MHz oscillator\n"
        "offset_hz; L_dBc_Hz\n"
        "1; -100\n"
        "\n"
        "10\t-130\n"
        "% a comment\n"
        "100, -150\n"
        "1e3 -160\n",
        encoding="utf-8",
    )
    f, level = read_phase_noise_table(path)
    np.testing.assert_array_equal(f, [1.0, 10.0, 100.0, 1000.0])
    np.testing.assert_array_equal(level, [-100.0, -130.0, -150.0, -160.0])


@pytest.mark.parametrize(
    ("text", "message", "line"),
    [
        ("1 -100\n10 -120\n10 -130\n", "increase strictly", 3),
        ("1 -100\n", "at least 2 are needed", None),
        ("f L\n1 -100\n10 abc\n", "not a number", 3),
        ("1 -100 5\n10 -120 5\n", "expected two columns", 1),
        ("-1 -100\n10 -120\n", "must be positive", 1),
    ],
)
def test_read_table_errors(tmp_path, text, message, line):
    path = tmp_path / "bad.txt"
    path.write_text(text, encoding="utf-8")
    with pytest.raises(InputError, match=message) as info:
        read_phase_noise_table(path)
    assert info.value.path == str(path)
    assert info.value.line == line


def test_read_table_missing_file(tmp_path):
    with pytest.raises(InputError, match="not found"):
        read_phase_noise_table(tmp_path / "absent.txt")


def test_table_reader_takes_utf16_and_decimal_commas(tmp_path):
    # Lab software exports tables as UTF-16 with a BOM and with decimal commas behind a
    # tab or semicolon delimiter (common practice); the numbers must come through exactly.
    path = tmp_path / "pn.txt"
    path.write_text("offset\tL(f)\n1\t-80,5\n10\t-100,25\n", encoding="utf-16")
    offsets, level = read_phase_noise_table(path)
    np.testing.assert_array_equal(offsets, [1.0, 10.0])
    np.testing.assert_array_equal(level, [-80.5, -100.25])


def test_table_reader_refuses_levels_above_the_carrier(tmp_path):
    # L(f) > 0 dBc/Hz is outside the small-angle region where L(f) = S_phi/2 holds
    # (IEEE Std 1139); most often the minus sign was lost.
    path = tmp_path / "pn.txt"
    path.write_text("1 80\n10 -100\n")
    with pytest.raises(InputError, match="above the carrier"):
        read_phase_noise_table(path)
