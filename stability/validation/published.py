"""Checks against the published data sets: NBS14 and the 1000-point set of NIST SP 1065.

For each data set shipped with the package (:mod:`.shipped`):

1. the file equals the data set as its published definition generates it (the
   listed NBS14 values; the linear congruential recursion of the 1000-point set,
   in exact integer arithmetic), value for value;
2. the mean of the 1000-point set against its published mean;
3. every statistic with published values, at every published tau, computed by
   :func:`stability.analyze` (raw estimates, as the sources print them) from the
   data read as fractional frequency and again from the phase they integrate to
   (x = tau0 times the running sum from 0), against the printed value to its last
   digit (:func:`.checks.digit_comparison`).

References
----------
1. NBS Monograph 140 (1974), Annex 8.E (NBS14).
2. W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065 (2008),
   sections 12.3 (NBS14) and 12.4 (the 1000-point set).
3. W. J. Riley, *The Calculation of Time Domain Frequency Stability*, tables I and II.
"""

from __future__ import annotations

import math

import numpy as np

from ..analysis import analyze
from ..measurement import Measurement
from .checks import Check, digit_comparison
from .shipped import PublishedSet, generated_values, published_sets

__all__ = ["published_checks", "FORMS"]

#: How the data set enters the analysis: as fractional frequency, and as phase.
FORMS = ("frequency", "phase")

_TOLERANCE = "within half a unit of the last published digit (rounds to the published value)"


def _measurement(y: np.ndarray, tau0: float, form: str) -> Measurement:
    if form == "frequency":
        return Measurement.from_frequency(y, tau0)
    x = tau0 * np.concatenate(([0.0], np.cumsum(y)))
    return Measurement.from_phase(x, tau0)


def _file_check(entry: PublishedSet, y: np.ndarray) -> Check:
    expected = generated_values(entry)
    same = expected is not None and y.shape == expected.shape and bool(np.all(y == expected))
    differ = (
        "file not as defined"
        if expected is None or y.shape != expected.shape
        else f"{int(np.sum(y != expected))} of {y.size} values differ"
    )
    return Check(
        group="published",
        name=f"{entry.title}: the shipped data file",
        compared=f"{entry.path.name} against the published definition ({entry.definition})",
        source=entry.source,
        tolerance="every value equal (exact)",
        expected=f"{entry.count} values",
        computed=f"{y.size} values",
        difference="none" if same else differ,
        passed=same,
        values={"count": int(y.size)},
    )


def _mean_check(entry: PublishedSet, y: np.ndarray) -> Check:
    comparison = digit_comparison(entry.mean, float(np.mean(y)))
    return Check(
        group="published",
        name=f"{entry.title}: mean",
        compared="mean of the fractional-frequency data",
        source=entry.source,
        tolerance=_TOLERANCE,
        expected=entry.mean,
        computed=comparison.shown,
        difference=comparison.difference,
        passed=comparison.passed,
        values={"published": float(entry.mean), "computed": comparison.computed},
    )


def _raw(result: object, index: int) -> float:
    """The estimate before any bias correction (published tables print raw values)."""
    values = result.raw_deviation if result.bias_corrected else result.deviation
    return float(values[index])


def _statistic_checks(entry: PublishedSet, y: np.ndarray, form: str) -> list[Check]:
    meas = _measurement(y, entry.tau0_s, form)
    table = analyze(meas, stats=list(entry.values), taus=list(entry.taus_s), qualify=False)
    checks = []
    for name, printed in entry.values.items():
        result = table[name]
        taus = [float(t) for t in result.tau]
        for tau, published in zip(entry.taus_s, printed, strict=True):
            hits = [i for i, t in enumerate(taus) if math.isclose(t, tau, rel_tol=1e-12)]
            computed = _raw(result, hits[0]) if hits else math.nan
            comparison = digit_comparison(published, computed)
            checks.append(
                Check(
                    group="published",
                    name=f"{entry.title}: {name} at tau = {tau:g} s, {form} input",
                    compared=f"{name} of {entry.path.name} read as {form}, raw estimate",
                    source=entry.source,
                    tolerance=_TOLERANCE,
                    expected=published,
                    computed=comparison.shown or "not computed",
                    difference=comparison.difference,
                    passed=comparison.passed,
                    values={
                        "data_set": entry.id,
                        "statistic": name,
                        "tau_s": tau,
                        "input": form,
                        "published": float(published),
                        "computed": comparison.computed,
                        "computed_rounded": comparison.rounded,
                        "last_digit": comparison.unit,
                        "difference_last_digits": comparison.units,
                    },
                )
            )
    return checks


def published_checks() -> list[Check]:
    """Every check against the published data sets (see the module docstring)."""
    checks: list[Check] = []
    for entry in published_sets():
        y = entry.frequency()
        checks.append(_file_check(entry, y))
        if entry.mean is not None:
            checks.append(_mean_check(entry, y))
        for form in FORMS:
            checks.extend(_statistic_checks(entry, y, form))
    return checks
