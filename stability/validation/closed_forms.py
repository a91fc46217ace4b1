"""Checks against closed-form relations of the power-law noise model and its definitions.

Power-law noise S_y(f) = sum_alpha h_alpha f^alpha (0 < f < f_h) has the Allan
variance in closed form for each type (references 1 and 2)::

    WPM   AVAR = 3 f_h h2 / (4 pi^2 tau^2)
    FPM   AVAR = h1 [1.038 + 3 ln(2 pi f_h tau)] / (4 pi^2 tau^2)
    WFM   AVAR = h0 / (2 tau)
    FFM   AVAR = 2 ln 2 h_-1
    RWFM  AVAR = (2 pi^2 / 3) h_-2 tau

and, for the modified Allan variance with samples tau0 = 1 / (2 f_h) and many of
them averaged (reference 1; from memory, as REFERENCES notes them), WPM
3 h2 / (8 pi^2 tau^3), WFM h0 / (4 tau), FFM 0.9352 h_-1 and RWFM
(11 pi^2 / 20) h_-2 tau. The checks here compare, for each relation:

* the phase-noise conversion (:func:`stability.phase_noise.phase_noise_to_stability`,
  which integrates S_y(f) through the Allan or modified Allan transfer function
  from an L(f) table), given the table of one power-law term, with the closed form;
* the power-law model of the noise fits and of the simulation levels
  (:func:`stability.powerlaw.avar_kernel`) with the same closed form;
* the definitions of IEEE Std 1139: S_phi(f) = (nu0 / f)^2 S_y(f) and
  L(f) = S_phi(f) / 2 (reference 3), through the conversions both ways;
* TDEV = tau MDEV / sqrt(3) (references 1 and 4), on the estimators themselves;
* the fit of the power-law model: exact AVAR of a two-term model is fitted back to
  its own coefficients.

References
----------
1. W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065 (2008),
   the power-law noise model and its time-domain conversions.
2. D. A. Howe, D. W. Allan, J. A. Barnes, "Properties of signal sources and
   measurement methods", in NIST Technical Note 1337 (1990), section XI, table 11.1
   (conversions between S_y(f) and the Allan variance for power-law noise).
3. IEEE Std 1139-2008, *Definitions of Physical Quantities for Fundamental Frequency
   and Time Metrology: Random Instabilities*, definitions of S_phi(f), S_y(f), L(f).
4. ITU-T Recommendation G.810 (1996), definition of TDEV.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable

import numpy as np

from ..analysis import analyze
from ..measurement import Measurement
from ..phase_noise import (
    frequency_psd_to_phase_noise,
    model_to_phase_noise,
    phase_noise_to_frequency_psd,
    phase_noise_to_stability,
)
from ..powerlaw import avar_kernel, fit_power_law
from .checks import Check, number, relative_text
from .shipped import published_set

__all__ = ["closed_form_checks", "AVAR_FORMS", "MVAR_FORMS"]

NU0 = 10e6  # carrier of the phase-noise tables (Hz)
OFFSETS = np.logspace(-3, 6, 46)  # 1 mHz .. 1 MHz, 5 rows a decade
TAUS = np.array([1.0, 10.0, 100.0])

_SP1065 = "NIST SP 1065 (2008), power-law noise model and time-domain conversions"
_TN1337 = "NIST TN 1337 (1990): Howe, Allan, Barnes, Properties of signal sources, table 11.1"
_IEEE1139 = "IEEE Std 1139-2008, definitions of S_phi(f), S_y(f) and L(f)"

Form = Callable[[float, np.ndarray, float], np.ndarray]

#: (alpha, noise, h_alpha, f_h, closed form AVAR(h, tau, f_h), formula, tolerance, why)
AVAR_FORMS: tuple[tuple[int, str, float, float, Form, str, float, str], ...] = (
    (2, "WPM", 1e-26, 1e3, lambda h, t, fh: 3.0 * fh * h / (4.0 * math.pi**2 * t**2),
     "3 f_h h2 / (4 pi^2 tau^2)", 1e-3, ""),
    (1, "FPM", 1e-25, 1e3,
     lambda h, t, fh: h * (1.038 + 3.0 * np.log(2 * math.pi * fh * t)) / (4 * math.pi**2 * t**2),
     "h1 [1.038 + 3 ln(2 pi f_h tau)] / (4 pi^2 tau^2)", 1e-2,
     "the constant 1.038 is a rounded asymptotic value"),
    (0, "WFM", 1e-22, 1e4, lambda h, t, fh: h / (2.0 * t), "h0 / (2 tau)", 1e-3, ""),
    (-1, "FFM", 1e-24, 1e4, lambda h, t, fh: 2.0 * math.log(2.0) * h + 0.0 * t,
     "2 ln 2 h_-1", 1e-3, ""),
    (-2, "RWFM", 1e-26, 1e4, lambda h, t, fh: 2.0 * math.pi**2 / 3.0 * h * t,
     "(2 pi^2 / 3) h_-2 tau", 1e-3, ""),
)  # fmt: skip

#: (alpha, noise, h_alpha, closed form MVAR(h, tau), formula), f_h = 1e3 Hz
MVAR_FORMS: tuple[tuple[int, str, float, Callable[[float, np.ndarray], np.ndarray], str], ...] = (
    (2, "WPM", 1e-26, lambda h, t: 3.0 * h / (8.0 * math.pi**2 * t**3), "3 h2 / (8 pi^2 tau^3)"),
    (0, "WFM", 1e-22, lambda h, t: h / (4.0 * t), "h0 / (4 tau)"),
    (-1, "FFM", 1e-24, lambda h, t: 0.9352 * h + 0.0 * t, "0.9352 h_-1"),
    (-2, "RWFM", 1e-26, lambda h, t: 11.0 * math.pi**2 / 20.0 * h * t, "(11 pi^2 / 20) h_-2 tau"),
)


def _worst(computed: np.ndarray, expected: np.ndarray) -> float:
    """The largest relative difference, signed (NaN when any value is missing)."""
    rel = np.asarray(computed, float) / np.asarray(expected, float) - 1.0
    if not np.all(np.isfinite(rel)):
        return math.nan
    return float(rel[np.argmax(np.abs(rel))])


def _relation(
    name: str,
    compared: str,
    source: str,
    rtol: float,
    expected: np.ndarray,
    computed: np.ndarray,
    *,
    basis: str = "published",
    why: str = "",
    atol: float = 0.0,
) -> Check:
    expected = np.asarray(expected, float)
    computed = np.asarray(computed, float)
    worst = _worst(computed, expected)
    ok = bool(
        np.all(np.isfinite(computed)) and np.allclose(computed, expected, rtol=rtol, atol=atol)
    )
    tolerance = f"relative difference at most {rtol:g}" if atol == 0 else f"within {atol:g}"
    if why:
        tolerance += f" ({why})"
    shown = (lambda v: f"{v:.6f}") if atol else number
    return Check(
        group="closed_form",
        name=name,
        compared=compared,
        source=source,
        tolerance=tolerance,
        expected=", ".join(shown(v) for v in expected.ravel()[:3]),
        computed=", ".join(shown(v) for v in computed.ravel()[:3]),
        difference=(
            f"{float(np.max(np.abs(computed - expected))):.2e}" if atol else relative_text(worst)
        ),
        passed=ok,
        basis=basis,
        values={
            "expected": expected.ravel().tolist(),
            "computed": computed.ravel().tolist(),
            "worst_relative_difference": worst,
        },
    )


def _avar_checks() -> list[Check]:
    checks = []
    for alpha, noise, h, f_h, form, formula, rtol, why in AVAR_FORMS:
        expected = form(h, TAUS, f_h)
        level = model_to_phase_noise({alpha: h}, NU0, OFFSETS)
        converted = phase_noise_to_stability(
            OFFSETS, level, nominal=NU0, f_h=f_h, taus=TAUS, stats=["adev"], beyond="slope"
        )["adev"]
        where = f"tau = 1, 10, 100 s, f_h = {f_h:g} Hz"
        checks.append(
            _relation(
                f"phase-noise conversion, {noise}: AVAR = {formula}",
                f"AVAR from the L(f) table of {noise} h_{alpha} = {h:g} (integrated by the "
                f"phase-noise conversion) against the closed form, {where}",
                f"{_SP1065}; {_TN1337} ({noise} row)",
                rtol,
                expected,
                converted**2,
                why=why,
            )
        )
        checks.append(
            _relation(
                f"power-law model, {noise}: AVAR = {formula}",
                f"AVAR of the power-law model used by the noise fits and the simulation "
                f"levels against the closed form, {where}",
                f"{_SP1065}; {_TN1337} ({noise} row)",
                1e-12,
                expected,
                h * avar_kernel(alpha, TAUS, f_h),
            )
        )
    return checks


def _mvar_checks() -> list[Check]:
    checks = []
    for alpha, noise, h, form, formula in MVAR_FORMS:
        level = model_to_phase_noise({alpha: h}, NU0, OFFSETS)
        converted = phase_noise_to_stability(
            OFFSETS, level, nominal=NU0, f_h=1e3, taus=TAUS, stats=["mdev"], beyond="slope"
        )["mdev"]
        checks.append(
            _relation(
                f"phase-noise conversion, {noise}: MVAR = {formula}",
                f"MVAR from the L(f) table of {noise} h_{alpha} = {h:g} against the closed "
                "form for many samples averaged, tau = 1, 10, 100 s, tau0 = 1/(2 f_h) = 0.5 ms",
                f"{_SP1065}, modified Allan variance of power-law noise",
                1e-3,
                form(h, TAUS),
                converted**2,
                basis="from memory",
            )
        )
    return checks


def _definition_checks() -> list[Check]:
    h = {2: 1e-26, 0: 1e-22, -2: 1e-26}
    level = model_to_phase_noise(h, NU0, OFFSETS)
    s_y = sum(v * OFFSETS**a for a, v in h.items())
    back = phase_noise_to_frequency_psd(OFFSETS, level, nominal=NU0)
    again = frequency_psd_to_phase_noise(OFFSETS, back, nominal=NU0)
    wpm = model_to_phase_noise({2: 2e-26}, NU0, np.array([1.0, 1e3]))
    return [
        _relation(
            "S_y(f) = (f / nu0)^2 S_phi(f), L(f) = S_phi(f) / 2",
            "S_y(f) recovered from the L(f) table of h2 = 1e-26, h0 = 1e-22, h_-2 = 1e-26 "
            "at nu0 = 10 MHz, 1 mHz to 1 MHz, against sum h_alpha f^alpha",
            _IEEE1139,
            1e-12,
            s_y,
            back,
        ),
        _relation(
            "L(f) = 10 log10(nu0^2 S_y(f) / (2 f^2)) both ways",
            "L(f) of the same model converted to S_y(f) and back (dBc/Hz)",
            _IEEE1139,
            0.0,
            level,
            again,
            atol=1e-9,
        ),
        _relation(
            "white PM: L(f) = 10 log10(nu0^2 h2 / 2), flat",
            "L(f) of WPM h2 = 2e-26 at nu0 = 10 MHz, offsets 1 Hz and 1 kHz (dBc/Hz)",
            _IEEE1139,
            0.0,
            np.full(2, 10.0 * math.log10(NU0**2 * 2e-26 / 2.0)),
            wpm,
            atol=1e-9,
        ),
    ]


def _tdev_check() -> Check:
    entry = published_set("sp1065_1000pt")
    meas = Measurement.from_frequency(entry.frequency(), entry.tau0_s)
    table = analyze(meas, stats=["mdev", "tdev"], taus=[1, 10, 100], qualify=False)
    mdev, tdev = table["mdev"], table["tdev"]
    return _relation(
        "TDEV = tau MDEV / sqrt(3)",
        "TDEV of the 1000-point set against tau MDEV / sqrt(3) from the estimators, "
        "tau = 1, 10, 100 s",
        "ITU-T G.810 (1996), definition of TDEV; NIST SP 1065 (2008), time deviation",
        1e-12,
        mdev.tau * mdev.deviation / math.sqrt(3.0),
        tdev.deviation,
    )


def _fit_check() -> Check:
    tau = 2.0 ** np.arange(0, 14)
    h = {0: 2e-22, -2: 1e-30}
    f_h = 0.5
    avar = sum(v * avar_kernel(a, tau, f_h) for a, v in h.items())
    model = fit_power_law(tau, np.sqrt(avar), np.full(tau.size, 1e4), f_h=f_h)
    got = np.array([model.h[a] if model is not None else math.nan for a in h])
    others = [] if model is None else [model.h[a] for a in model.h if a not in h]
    expected = np.array(list(h.values()))
    check = _relation(
        "power-law model fit recovers its coefficients",
        "h0 and h_-2 fitted to the exact AVAR of h0 = 2e-22 plus h_-2 = 1e-30 at tau = 1 .. "
        "8192 s (octaves, 1e4 degrees of freedom each), the other terms zero",
        f"{_SP1065} (AVAR linear in h_alpha)",
        1e-6,
        expected,
        got,
    )
    if any(v != 0.0 for v in others):
        return dataclasses.replace(check, passed=False, difference="extra terms fitted")
    return check


def closed_form_checks() -> list[Check]:
    """Every closed-form check (see the module docstring)."""
    return [
        *_avar_checks(),
        *_mvar_checks(),
        *_definition_checks(),
        _tdev_check(),
        _fit_check(),
    ]
