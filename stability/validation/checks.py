"""One check of the validation report, and the comparison rules the checks share.

A :class:`Check` says what was compared, with what source, within which tolerance,
the reference and the computed value as text, their difference, and whether it
passed. Published values are compared to their last published digit
(:func:`digit_comparison`): the computed value is rounded to the digits the source
prints and the difference is stated in units of the last of them, so a reader
sees at a glance how far inside the published rounding the tool lies.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from decimal import Decimal
from typing import Any

__all__ = [
    "GROUPS",
    "BASES",
    "Check",
    "DigitComparison",
    "digit_comparison",
    "relative_text",
    "number",
]

#: Check groups in report order: identifier -> heading.
GROUPS = {
    "published": "Published data sets",
    "closed_form": "Closed-form relations",
    "coverage": "Coverage of the confidence intervals (seeded Monte Carlo)",
    "reading": "Reading invented logs to known values",
}

#: What a reference value rests on.
BASES = {
    "published": "printed in the named source",
    "from memory": "recalled from the named source, not read from it here: confirm before "
    "relying on it",
    "generated": "computed from how the data were generated (exact arithmetic)",
    "statistical": "a binomial test of a seeded simulation",
}


@dataclass(frozen=True)
class Check:
    """One comparison of the validation and its result.

    Attributes
    ----------
    group
        A key of :data:`GROUPS`.
    name
        What was checked, in a few words (``"NBS14 oadev tau = 2 s, frequency input"``).
    compared
        What was compared with what.
    source
        Where the reference value comes from.
    tolerance
        The acceptance rule in words.
    expected, computed, difference
        The reference value, the value computed in this run and their difference, as text.
    passed
        Whether the comparison met its tolerance.
    basis
        A key of :data:`BASES`.
    values
        The numbers behind the texts, for validation.json.
    """

    group: str
    name: str
    compared: str
    source: str
    tolerance: str
    expected: str
    computed: str
    difference: str
    passed: bool
    basis: str = "published"
    values: dict[str, Any] = field(default_factory=dict)

    def __post_init__(self) -> None:
        if self.group not in GROUPS:
            raise ValueError(f"group must be one of {', '.join(GROUPS)}, got {self.group!r}")
        if self.basis not in BASES:
            raise ValueError(f"basis must be one of {', '.join(BASES)}, got {self.basis!r}")

    @property
    def result(self) -> str:
        return "pass" if self.passed else "fail"

    def to_dict(self) -> dict[str, Any]:
        return {
            "group": self.group,
            "name": self.name,
            "compared": self.compared,
            "source": self.source,
            "basis": self.basis,
            "tolerance": self.tolerance,
            "expected": self.expected,
            "computed": self.computed,
            "difference": self.difference,
            "result": self.result,
            "values": {k: _plain(v) for k, v in self.values.items()},
        }


def _plain(value: Any) -> Any:
    """JSON-safe: floats that are not finite become None."""
    if isinstance(value, float) and not math.isfinite(value):
        return None
    if isinstance(value, list | tuple):
        return [_plain(v) for v in value]
    return value


@dataclass(frozen=True)
class DigitComparison:
    """A computed value against a published one, to the last published digit."""

    published: str
    computed: float
    rounded: str  # the computed value rounded to the published digits, in the same form
    shown: str  # the computed value with three digits more than published
    units: float  # (computed - published) in units of the last published digit
    unit: float  # the value of one unit of the last published digit

    @property
    def passed(self) -> bool:
        """Within half a unit of the last published digit: the published rounding."""
        return math.isfinite(self.units) and abs(self.units) <= 0.5

    @property
    def difference(self) -> str:
        if not math.isfinite(self.units):
            return "not computed"
        return f"{self.units:+.3f} in the last digit"


def digit_comparison(published: str, computed: float) -> DigitComparison:
    """Compare ``computed`` with a value printed as ``published`` (e.g. ``"9.159953e-02"``).

    The last printed digit sets the unit (``1e-8`` there); the comparison passes
    when the computed value lies within half a unit of the published one, i.e.
    when it rounds to the published digits.
    """
    ref = Decimal(published)
    exponent = ref.as_tuple().exponent
    if not isinstance(exponent, int):
        raise ValueError(f"published value must be a finite number, got {published!r}")
    unit = Decimal(1).scaleb(exponent)
    digits = len(ref.as_tuple().digits)
    if computed is None or not math.isfinite(float(computed)):
        return DigitComparison(published, math.nan, "", "", math.nan, float(unit))
    value = Decimal(repr(float(computed)))
    units = float((value - ref) / unit)
    if "e" in published.lower():
        rounded = f"{float(computed):.{digits - 1}e}"
        shown = f"{float(computed):.{digits + 2}e}"
    else:
        places = max(0, -exponent)
        rounded = f"{float(computed):.{places}f}"
        shown = f"{float(computed):.{places + 3}f}"
    return DigitComparison(published, float(computed), rounded, shown, units, float(unit))


def number(value: float, digits: int = 6) -> str:
    """A number in short scientific form (``3.505468e-11``); "not computed" when missing."""
    if value is None or not math.isfinite(float(value)):
        return "not computed"
    return f"{float(value):.{digits}e}"


def relative_text(value: float) -> str:
    """A relative difference as text (``+2.1e-05 relative``)."""
    if value is None or not math.isfinite(float(value)):
        return "not computed"
    return f"{float(value):+.1e} relative"
