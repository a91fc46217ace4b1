"""Value columns: what they hold (kind and unit), instrument sentinels, exact decimal parsing.

A value column holds one of: absolute frequency (Hz and multiples), fractional
frequency (plain, ppm, ppb, ppt), time interval or phase (s, ms, us, ns, ps), or
carrier phase (cycles, radians). The kind and unit come from the header
(``Frequency [Hz]``, ``TI (ns)``, ``y``, ``ppb``), from a unit written after each
value (``10.000000012 MHz``), or from the values themselves (absolute frequency
near a standard nominal value).

Instrument sentinels: counters write about 9.9e37 (the SCPI "not a number" value
9.91e37 and the overflow value 9.9e37, both signs) or an error string instead of a
reading; these become gaps.

Numerical care: a phase reading such as ``0.300000000001`` s carries 12
significant digits, but float64 spaces numbers near 0.3 by 5.6e-17 s, which is
too coarse to keep 1e-12 s steps exact. Such columns are parsed as decimal text:
integer part and fraction digits as two exact int64 numbers, differenced from
the first reading, and only then turned into float64 (NIST SP 1065, section 5.2:
subtract a constant before differencing large phase values).

References
----------
1. W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065 (2008).
2. IEEE Std 1139-2008, *Definitions of Physical Quantities for Fundamental Frequency
   and Time Metrology: Random Instabilities* (fractional frequency y = (f - f0)/f0).
3. SCPI Consortium, *Standard Commands for Programmable Instruments*, 1999, vol. 1,
   section 7.2.1.5 (not-a-number 9.91E37; common practice for counters).
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from decimal import Decimal, InvalidOperation

import numpy as np
import pandas as pd

__all__ = [
    "STANDARD_NOMINALS",
    "NOMINAL_TOLERANCE",
    "SENTINEL",
    "ValueKind",
    "kind_from_name",
    "kind_from_unit",
    "infer_nominal",
    "parse_numbers",
    "exact_delta",
    "decimal_parts",
    "DecimalParts",
    "significant_digits",
]

#: Nominal frequencies of common references and clocks, Hz (common practice).
STANDARD_NOMINALS: tuple[float, ...] = (
    1.0, 1e3, 1e4, 1e5, 1e6, 1.544e6, 2.048e6, 5e6, 10e6, 10.23e6, 13e6, 15e6, 16.384e6,
    19.2e6, 20e6, 24e6, 25e6, 26e6, 27e6, 30.72e6, 38.4e6, 40e6, 48e6, 50e6, 61.44e6,
    100e6, 122.88e6, 125e6, 155.52e6, 156.25e6, 200e6, 245.76e6, 250e6, 312.5e6,
    622.08e6, 625e6, 1e9, 2.5e9, 5e9, 6.8e9, 9.192631770e9, 10e9,
)  # fmt: skip

#: Absolute frequency readings all within this fraction of a nominal frequency are
#: taken to be readings of an oscillator at that nominal.
NOMINAL_TOLERANCE = 1e-4

#: Readings at or above this magnitude are instrument sentinels (SCPI 9.9e37, 9.91e37).
SENTINEL = 9.9e37

_FREQ_UNITS = {"hz": 1.0, "khz": 1e3, "mhz": 1e6, "ghz": 1e9}
_TIME_UNITS = {"s": 1.0, "sec": 1.0, "ms": 1e-3, "us": 1e-6, "µs": 1e-6, "μs": 1e-6,
               "ns": 1e-9, "ps": 1e-12, "fs": 1e-15}  # fmt: skip
_FRACTION_UNITS = {"ppm": 1e-6, "ppb": 1e-9, "ppt": 1e-12, "e-6": 1e-6, "e-9": 1e-9,
                   "e-12": 1e-12, "ratio": 1.0, "ff": 1.0}  # fmt: skip
_CYCLE_UNITS = {"cycles": 1.0, "cycle": 1.0, "cyc": 1.0, "rad": 1.0 / (2.0 * math.pi),
                "radians": 1.0 / (2.0 * math.pi), "radian": 1.0 / (2.0 * math.pi)}  # fmt: skip


@dataclass
class ValueKind:
    """What a value column holds.

    Attributes
    ----------
    kind
        ``"frequency"`` (absolute, Hz), ``"fractional"``, ``"phase"`` (time, s) or
        ``"carrier"`` (carrier phase in cycles).
    unit
        The unit as written (``"MHz"``, ``"ns"``, ``"ppb"``, ``"rad"``, ``""``).
    scale
        Multiplier from the written unit to Hz, seconds, fraction or cycles.
    reason
        Why, in plain words.
    """

    kind: str
    unit: str
    scale: float
    reason: str


#: Frequency units as they are printed (a header may write them in any case).
_FREQ_SPELLING = {"hz": "Hz", "khz": "kHz", "mhz": "MHz", "ghz": "GHz"}


def unit_spelling(unit: str) -> str:
    """A unit as the tool prints it: frequency units in their SI spelling (``hz`` -> ``Hz``)."""
    return _FREQ_SPELLING.get(unit.strip().lower(), unit)


def kind_from_unit(unit: str) -> tuple[str, float] | None:
    """Kind and scale for a unit string, or None when it is not a value unit."""
    key = unit.strip().lower()
    if key in _FREQ_UNITS:
        return "frequency", _FREQ_UNITS[key]
    if key in _FRACTION_UNITS:
        return "fractional", _FRACTION_UNITS[key]
    if key in _CYCLE_UNITS:
        return "carrier", _CYCLE_UNITS[key]
    if key in _TIME_UNITS or unit.strip() in _TIME_UNITS:
        return "phase", _TIME_UNITS.get(key, _TIME_UNITS.get(unit.strip(), 1.0))
    return None


_UNIT_IN_NAME = re.compile(r"[\[(]\s*([^\])]+?)\s*[\])]")
_WORD = re.compile(r"[A-Za-zµμ%][A-Za-z0-9µμ%\-]*")


def kind_from_name(name: str) -> ValueKind | None:
    """Kind and unit from a header name such as ``Frequency [Hz]``, ``TI (ns)``, ``y``, ``ppb``."""
    text = name.strip()
    if not text:
        return None
    bracket = _UNIT_IN_NAME.search(text)
    if bracket:
        found = kind_from_unit(bracket.group(1))
        if found:
            unit = unit_spelling(bracket.group(1))
            return ValueKind(found[0], unit, found[1], f"unit in header {text!r}")
    words = [w.lower() for w in _WORD.findall(text)]
    # a unit word: the whole name ("ppb", "ns") or a later word ("TI ns", "freq_hz")
    for w in words[1:][::-1] + words[:1]:
        found = kind_from_unit(w)
        if found and (w != "s" or len(words) > 1):
            return ValueKind(found[0], unit_spelling(w), found[1], f"unit in header {text!r}")
    low = text.lower()
    if re.match(r"^(y|yk|y\(t\)|frac.*|fractional.*|ffd|df/f|rel.*freq.*|norm.*freq.*)$", low):
        return ValueKind("fractional", "", 1.0, f"header {text!r} names fractional frequency")
    if re.match(r"^(f|freq.*|frequency.*|hz)$", low):
        return ValueKind("frequency", "Hz", 1.0, f"header {text!r} names a frequency (Hz)")
    if re.match(r"^(x|phase.*|ti|tie|tic|time ?interval.*|time ?error.*|interval.*)$", low):
        return ValueKind("phase", "s", 1.0, f"header {text!r} names phase (seconds)")
    return None


def significant_digits(text: str) -> int:
    """Significant decimal digits written in a number string (exponent ignored)."""
    mant = re.split(r"[eE]", text.strip().lstrip("+-"))[0].replace(",", ".")
    digits = mant.replace(".", "").lstrip("0")
    return len(digits)


def infer_nominal(median: float) -> float | None:
    """Nearest standard nominal frequency to a typical reading (relative distance)."""
    if not math.isfinite(median) or median <= 0:
        return None
    return min(STANDARD_NOMINALS, key=lambda f: abs(median - f) / f)


_SUFFIX = re.compile(
    r"^\s*([-+]?(?:\d+(?:[.,]\d*)?|[.,]\d+)(?:[eE][-+]?\d+)?)\s*([A-Za-zµμ%]*)\s*$"
)


def parse_numbers(
    column: pd.Series, decimal: str, unit_suffix: bool
) -> tuple[np.ndarray, np.ndarray, pd.Series | None, np.ndarray | None]:
    """Parse one chunk of a value column.

    Returns
    -------
    values
        float64 readings (NaN where unreadable), before any unit scale.
    bad
        True where a row holds no usable reading (empty, error string, sentinel, NaN).
    text
        The stripped number strings (None when pandas already gave numbers).
    factors
        Per-row unit factor relative to the first suffix unit when values carry
        unit suffixes, else None.
    """
    factors = None
    if column.dtype.kind == "f" or column.dtype.kind in "iu":
        values = column.to_numpy(dtype=np.float64)
        text = None
    else:
        text = column.astype(str).str.strip().str.strip('"').str.strip()
        if unit_suffix:
            parts = text.str.extract(_SUFFIX)
            text = parts[0].fillna("")
            factors = parts[1].fillna("")
        if decimal == ",":
            text = text.str.replace(",", ".", regex=False)
        values = pd.to_numeric(text, errors="coerce").to_numpy(dtype=np.float64)
    with np.errstate(invalid="ignore"):
        bad = ~np.isfinite(values) | (np.abs(values) >= SENTINEL)
    values = np.where(bad, np.nan, values)
    return values, bad, text, (None if factors is None else factors.to_numpy(dtype=object))


@dataclass(frozen=True)
class DecimalParts:
    """Each reading's plain decimal text split into integers, row by row.

    Attributes
    ----------
    ipart
        The integer part, signed (int64).
    frac, nfrac
        The first ``nfrac`` (at most 18) fraction digits as a signed integer.
    plain
        Whether the text is a plain decimal number ``[+-]III.FFF`` with at most
        18 integer digits.
    usable
        False when the texts as a whole cannot be read this way (a character
        outside ASCII, or a text longer than 48 characters anywhere).
    """

    ipart: np.ndarray
    frac: np.ndarray
    nfrac: np.ndarray
    plain: np.ndarray
    usable: bool = True

    def take(self, keep: np.ndarray) -> DecimalParts:
        """The parts of the rows selected by a boolean mask or an index array."""
        return DecimalParts(
            self.ipart[keep], self.frac[keep], self.nfrac[keep], self.plain[keep], self.usable
        )

    @staticmethod
    def join(parts: list[DecimalParts]) -> DecimalParts:
        """The parts of several runs of rows, in order."""
        return DecimalParts(
            np.concatenate([p.ipart for p in parts]),
            np.concatenate([p.frac for p in parts]),
            np.concatenate([p.nfrac for p in parts]),
            np.concatenate([p.plain for p in parts]),
            all(p.usable for p in parts),
        )


_UNUSABLE = DecimalParts(
    np.zeros(0, np.int64), np.zeros(0, np.int64), np.zeros(0, np.int64), np.zeros(0, bool), False
)


def decimal_parts(text: np.ndarray) -> DecimalParts:
    """Split each text into integer and fraction digits held as int64 (vectorised by column).

    Each row is split on its own, so the parts of a log's rows may be found a
    chunk at a time and joined (:meth:`DecimalParts.join`).
    """
    strs = np.asarray(text, dtype=object)
    try:
        raw = np.asarray(strs, dtype="S")
    except (UnicodeEncodeError, ValueError):
        return _UNUSABLE
    width = raw.dtype.itemsize
    if raw.size and (width == 0 or width > 48):
        return _UNUSABLE
    width = max(width, 1)
    mat = raw.view(np.uint8).reshape(raw.size, width) if raw.size else np.zeros((0, 1), np.uint8)
    length = (mat != 0).sum(axis=1)
    neg = mat[:, 0] == ord("-")
    start = (neg | (mat[:, 0] == ord("+"))).astype(np.int64)
    is_dot = mat == ord(".")
    has_dot = is_dot.any(axis=1)
    dotpos = np.where(has_dot, np.argmax(is_dot, axis=1), length)
    cols = np.arange(width)
    digit = (mat >= ord("0")) & (mat <= ord("9"))
    inside = (cols[None, :] >= start[:, None]) & (cols[None, :] < length[:, None])
    plain = np.all(~inside | digit | is_dot, axis=1) & (is_dot.sum(axis=1) <= 1)
    nfrac = np.minimum(np.where(has_dot, length - dotpos - 1, 0), 18)
    plain &= (dotpos - start <= 18) & (length > start)
    ipart = np.zeros(raw.size, dtype=np.int64)
    frac = np.zeros(raw.size, dtype=np.int64)
    d = mat.astype(np.int64) - ord("0")
    for j in range(width):  # loop over character positions, not samples
        in_int = digit[:, j] & (j >= start) & (j < dotpos)
        ipart = np.where(in_int, ipart * 10 + d[:, j], ipart)
        k = j - dotpos  # 1-based position after the point
        in_frac = digit[:, j] & has_dot & (k >= 1) & (k <= nfrac) & (j < length)
        power = np.power(10, np.clip(nfrac - k, 0, 18)).astype(np.int64)
        frac = np.where(in_frac, frac + d[:, j] * power, frac)
    sign = np.where(neg, -1, 1)
    return DecimalParts(ipart * sign, frac * sign, nfrac.astype(np.int64), plain)


def exact_delta(
    text: np.ndarray, ok: np.ndarray, parts: DecimalParts | None = None
) -> tuple[str, np.ndarray, np.ndarray] | None:
    """Readings minus the first one, from the decimal text, exact to the last written digit.

    Each plain decimal string ``[-]III.FFF`` is split into integer and fraction
    digits held as int64 (up to 18 fraction digits; :func:`decimal_parts`,
    or ``parts`` found before); the differences from the first reading are
    formed in integers and only then scaled to float64.

    Returns
    -------
    (reference, delta, exact) or None
        ``reference`` is the first reading's text, ``delta`` float64 differences
        (NaN where not ``ok``), ``exact`` marks rows that were parsed as decimal
        text (other rows need ``float(value) - float(reference)``). None when no
        row qualifies.
    """
    idx = np.flatnonzero(ok)
    if idx.size == 0:
        return None
    parts = decimal_parts(text) if parts is None else parts
    if not parts.usable:
        return None
    valid = parts.plain & ok
    if not valid[idx[0]]:
        return None
    D = int(parts.nfrac[valid].max(initial=0))
    # fraction digits on a common scale of D digits (exact in int64: D <= 18)
    shift = np.power(10, np.clip(D - parts.nfrac, 0, 18)).astype(np.int64)
    fpart = np.where(valid, parts.frac * shift, 0)
    ipart = parts.ipart
    ref = idx[0]
    delta = (ipart - ipart[ref]).astype(np.float64) + (fpart - fpart[ref]).astype(np.float64) * (
        10.0**-D
    )
    delta[~valid] = np.nan
    return str(np.asarray(text, dtype=object)[ref]), delta, valid


def decimal_offset(reference: str, scale: float, nominal: float) -> float:
    """``reference * scale - nominal`` computed in decimal arithmetic, as float64."""
    try:
        return float(Decimal(reference) * Decimal(repr(scale)) - Decimal(repr(nominal)))
    except InvalidOperation:
        return float(reference) * scale - nominal


__all__ += ["decimal_offset"]
