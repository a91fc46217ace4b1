"""How the causes study shows itself in a notebook: HTML and plain text, registered on import.

A :class:`~stability.spectrum.Spectrum` shows its settings and the power-law
fit (h_alpha with its standard uncertainty), a
:class:`~stability.spectrum.SpectrumFit` the fit alone, a periodic component
(:class:`~stability.periodic.Line`) its period, amplitude and Allan-deviation
bump, a :class:`~stability.environment.Sensitivity` its coefficient with its
standard uncertainty and the thermal lag with its interval, and
:class:`~stability.causes.Causes` all of them together: the spectrum's h_alpha
beside the Allan-deviation model's, the periodic components with the taus each
affects, the sensitivity, the dead time and the counter. The package face names
this module as a provider of :mod:`stability.display`.
"""

from __future__ import annotations

import math
from typing import Any

from ..causes import Causes
from ..display import register_html, register_text
from ..environment import Sensitivity
from ..periodic import Line
from ..spectrum import Spectrum, SpectrumFit, compare_models
from ..units import format_frequency
from .html import _notes, _Shown, facts_table, result_box
from .tables import format_tau

__all__ = [
    "spectrum_shown",
    "fit_shown",
    "lines_shown",
    "sensitivity_shown",
    "causes_html",
    "causes_text",
    "NOISE_NAMES",
]

#: The usual abbreviation of the power-law noise of each alpha of S_y = h_alpha f^alpha
#: (IEEE 1139; NIST SP 1065), as the noise identification writes them.
NOISE_NAMES = {2: "WPM", 1: "FPM", 0: "WFM", -1: "FFM", -2: "RWFM"}


def _alpha(a: int) -> str:
    return f"{a:d}"


def _hz(value: float) -> str:
    """A Fourier frequency (or a carrier) with four significant digits."""
    return f"{value:.4g} Hz"


def _html(shown: _Shown) -> str:
    """A part's HTML; a part without rows is its facts alone."""
    if shown.header:
        return shown.html()
    return result_box(shown.title, facts_table(shown.facts), _notes(shown.notes))


def _text(shown: _Shown) -> str:
    if shown.header:
        return shown.text()
    lines = [shown.title] + [f"  {k}: {v}" for k, v in shown.facts]
    return "\n".join(lines + [f"  - {n}" for n in shown.notes])


def _h(value: float, u: float | None) -> str:
    """h_alpha with its standard uncertainty: ``2.1e-22 ± 3e-23``, ``0`` for a dropped term."""
    if value is None or not math.isfinite(value) or value <= 0:
        return "0 (not fitted)"
    if u is None or not math.isfinite(u):
        return f"{value:.3g}"
    return f"{value:.3g} ± {u:.2g}"


def fit_shown(fit: SpectrumFit, title: str = "Power-law fit to the spectrum") -> _Shown:
    rows = [
        [_alpha(a), NOISE_NAMES.get(a, ""), _h(fit.h.get(a, 0.0), fit.u_h.get(a, math.nan))]
        for a in sorted(fit.h, reverse=True)
    ]
    low, high = fit.f_range
    facts = [("fitted", f"{fit.bins} ordinates, {_hz(low)} to {_hz(high)}")]
    return _Shown(
        title,
        facts,
        ["alpha", "noise", "h_alpha ± standard uncertainty"],
        rows,
        {0, 2},
        [],
    )


def _spectrum_facts(spectrum: Spectrum) -> list[tuple[str, str]]:
    segment = format_tau(spectrum.segment_length * spectrum.tau0)
    low, high = (_hz(float(v)) for v in (spectrum.f[0], spectrum.f[-1]))
    facts = [
        (
            "method",
            f"Welch, Hann window, 50 % overlap; {spectrum.segments_used} segments of "
            f"{spectrum.segment_length} samples ({segment})",
        ),
        ("resolution", _hz(spectrum.resolution)),
        (
            "frequencies",
            f"{low} to {high}",
        ),
        ("degrees of freedom", f"{spectrum.edf:.3g} per ordinate"),
        ("band", f"{100 * spectrum.confidence:.3g} % (chi-squared)"),
    ]
    if spectrum.segments_left_out:
        facts.append(("left out", f"{spectrum.segments_left_out} segment(s) holding a gap"))
    facts.append(
        (
            "carrier",
            "not given (S_x instead of L(f))"
            if spectrum.nominal is None
            else format_frequency(spectrum.nominal),
        )
    )
    return facts


def spectrum_shown(spectrum: Spectrum) -> _Shown:
    fit = spectrum.fit
    if fit is None:
        return _Shown("Welch spectrum", _spectrum_facts(spectrum), [], [], set(), spectrum.notes)
    shown = fit_shown(fit)
    return _Shown(
        "Welch spectrum",
        _spectrum_facts(spectrum) + shown.facts,
        shown.header,
        shown.rows,
        shown.numeric,
        list(spectrum.notes),
    )


def lines_shown(lines: list[Line], taus: dict[int, list[float]] | None = None) -> _Shown:
    """Periodic components, strongest first; ``taus``: index -> affected taus of a table."""
    header = ["period", "frequency", "amplitude", "ADEV bump at tau", "bump height", "p-value"]
    if taus is not None:
        header.append("taus affected")
    rows = []
    for i, line in enumerate(lines):
        row = [
            format_tau(line.period),
            _hz(line.frequency),
            f"{line.amplitude:.3g}",
            format_tau(line.adev_peak_tau),
            f"{line.adev_peak:.3g}",
            f"{line.p_value:.2g} (< {line.threshold:.2g})",
        ]
        if taus is not None:
            affected = taus.get(i) or []
            row.append(
                f"{format_tau(min(affected))} to {format_tau(max(affected))}" if affected else "-"
            )
        rows.append(row)
    title = f"Periodic components: {len(lines)} found" if lines else "No periodic component found"
    return _Shown(title, [], header, rows, {0, 1, 2, 3, 4}, [])


def _line_display(line: Line) -> _Shown:
    shown = lines_shown([line])
    return _Shown(
        "Periodic component", [], shown.header, shown.rows, shown.numeric, [line.describe()]
    )


def _sensitivity_facts(sens: Sensitivity) -> list[tuple[str, str]]:
    low, high = sens.lag_interval
    return [
        (
            "sensitivity",
            f"{sens.coefficient:.3g} ± {sens.uncertainty:.2g} per {sens.unit} "
            "(standard uncertainty, correlated noise and the lag's uncertainty included)",
        ),
        ("thermal lag", f"{sens.lag:.4g} s (interval {low:.4g} s to {high:.4g} s)"),
        ("lag searched", f"{sens.lag_range[0]:.4g} s to {sens.lag_range[1]:.4g} s"),
        (
            "white-noise uncertainty",
            f"{sens.white_uncertainty:.2g} (for comparison only: it treats the noise as white)",
        ),
        ("drift fitted alongside", f"{sens.drift:.3g} per s"),
        ("samples", f"{sens.samples} ({sens.filled} filled for the transforms)"),
    ]


def sensitivity_shown(sens: Sensitivity) -> _Shown:
    rows = [
        [_alpha(a), NOISE_NAMES.get(a, ""), f"{h:.3g}"]
        for a, h in sorted(sens.noise_model.items(), reverse=True)
    ]
    return _Shown(
        f"Sensitivity of frequency to {sens.quantity}",
        _sensitivity_facts(sens),
        ["alpha", "noise", "h_alpha of the weighting noise model"],
        rows,
        {0, 2},
        list(sens.notes),
    )


def _comparison(causes: Causes) -> _Shown | None:
    spectrum = causes.spectrum
    rows = compare_models(spectrum.fit if spectrum is not None else None, causes.model)
    if not rows:
        return None
    cells = [
        [
            _alpha(r["alpha"]),
            NOISE_NAMES.get(r["alpha"], ""),
            _h(r["h_spectrum"], r["u_spectrum"]),
            _h(r["h_allan"], r["u_allan"]),
            "" if r["z"] is None else f"{r['z']:+.2g}",
        ]
        for r in rows
    ]
    return _Shown(
        "The noise model two ways: h_alpha from the spectrum and from the Allan deviation",
        [],
        ["alpha", "noise", "spectrum", "Allan deviation", "difference / u"],
        cells,
        {0, 2, 3, 4},
        [],
    )


def _affected(causes: Causes) -> dict[int, list[float]]:
    found = (causes.summary.get("periodic") or {}).get("lines") or []
    return {i: list(entry.get("affected_taus_s") or []) for i, entry in enumerate(found)}


def _parts(causes: Causes) -> list[_Shown]:
    parts = []
    if causes.spectrum is not None:
        parts.append(
            _Shown(
                "Welch spectrum",
                _spectrum_facts(causes.spectrum),
                [],
                [],
                set(),
                [],
            )
        )
    comparison = _comparison(causes)
    if comparison is not None:
        parts.append(comparison)
    if causes.spectrum is not None and causes.summary["settings"].get("periodic_search", True):
        parts.append(lines_shown(causes.lines, _affected(causes)))
    if causes.sensitivity is not None:
        shown = sensitivity_shown(causes.sensitivity)
        removed = (causes.summary.get("sensitivity") or {}).get("removed")
        facts = [*shown.facts, ("removed", "yes, before the statistics" if removed else "no")]
        parts.append(_Shown(shown.title, facts, [], [], set(), []))
    return parts


def _title(causes: Causes) -> str:
    path = causes.run.source.provenance.path
    return "Where the instability comes from" + (f" · {path}" if path else "")


def causes_html(causes: Causes) -> str:
    body = [_html(p) for p in _parts(causes)]
    return result_box(_title(causes), *body, _notes(causes.notes(), "found"))


def causes_text(causes: Causes) -> str:
    lines = [_title(causes)]
    for part in _parts(causes):
        lines += ["  " + row for row in _text(part).splitlines()]
    lines += [f"  - {n}" for n in causes.notes()]
    return "\n".join(lines)


def _show(build: Any) -> tuple[Any, Any]:
    return (lambda result: _html(build(result))), (lambda result: _text(build(result)))


for _kind, _build in (
    (Spectrum, spectrum_shown),
    (SpectrumFit, fit_shown),
    (Line, _line_display),
    (Sensitivity, sensitivity_shown),
):
    _as_html, _as_text = _show(_build)
    register_html(_kind, _as_html)
    register_text(_kind, _as_text)
register_html(Causes, causes_html)
register_text(Causes, causes_text)
