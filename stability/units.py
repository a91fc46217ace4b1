"""Quantities at the edges: parse "10 MHz", "100ms", "4h", "1e-12", "ppb"; format them back.

Inside the library everything is SI (seconds, hertz, dimensionless fractional
frequency); human units are parsed and printed only here.
"""

from __future__ import annotations

import math
import re

from .errors import InputError

__all__ = [
    "TIME_UNITS",
    "FREQUENCY_UNITS",
    "FRACTION_UNITS",
    "parse_duration",
    "parse_frequency",
    "parse_quantity",
    "format_duration",
    "format_frequency",
    "format_seconds",
]

#: Seconds per unit (common practice; "us" and "µs" both accepted).
TIME_UNITS: dict[str, float] = {
    "s": 1.0,
    "sec": 1.0,
    "second": 1.0,
    "seconds": 1.0,
    "ms": 1e-3,
    "us": 1e-6,
    "µs": 1e-6,
    "μs": 1e-6,
    "ns": 1e-9,
    "ps": 1e-12,
    "fs": 1e-15,
    "min": 60.0,
    "m": 60.0,
    "h": 3600.0,
    "hr": 3600.0,
    "hour": 3600.0,
    "hours": 3600.0,
    "d": 86400.0,
    "day": 86400.0,
    "days": 86400.0,
}

#: Hertz per unit.
FREQUENCY_UNITS: dict[str, float] = {
    "hz": 1.0,
    "khz": 1e3,
    "mhz": 1e6,
    "ghz": 1e9,
    "thz": 1e12,
}

#: Fractional-frequency scale factors.
FRACTION_UNITS: dict[str, float] = {
    "": 1.0,
    "ppm": 1e-6,
    "ppb": 1e-9,
    "ppt": 1e-12,
    "e-6": 1e-6,
    "%": 1e-2,
}

_NUMBER = r"[-+]?(?:\d+(?:[.,]\d*)?|[.,]\d+)(?:[eE][-+]?\d+)?"
_QUANTITY = re.compile(rf"^\s*({_NUMBER})\s*([^\s\d].*?)?\s*$")


def _split(text: str, what: str, example: str = "1s") -> tuple[float, str]:
    match = _QUANTITY.match(str(text))
    if not match:
        raise InputError(
            f"cannot read {what} {text!r}", hint=f"write a number with a unit, e.g. {example}"
        )
    written = match.group(1)
    if re.fullmatch(r"[-+]?\d{1,3},\d{3}", written):
        raise InputError(
            f"{what} {text!r} is ambiguous: the comma may separate thousands or decimals",
            hint=f"write {written.replace(',', '')} or {written.replace(',', '.')} instead",
        )
    number = float(written.replace(",", "."))
    return number, (match.group(2) or "").strip()


def parse_quantity(text: str, units: dict[str, float], what: str, default: str) -> float:
    """Parse ``number [unit]`` with a table of unit factors (case-insensitive keys)."""
    number, unit = _split(text, what)
    key = unit or default
    factor = units.get(key)
    if factor is None:
        factor = units.get(key.lower())
    if factor is None:
        raise InputError(
            f"unknown unit {unit!r} in {what} {text!r}",
            hint=f"use one of {', '.join(sorted(k for k in units if k and not k.endswith('_')))}",
        )
    value = number * factor
    if not math.isfinite(value):
        raise InputError(f"{what} {text!r} is not finite")
    return value


def parse_duration(text: str | float, what: str = "duration") -> float:
    """Seconds from ``"1s"``, ``"100 ms"``, ``"4h"``, ``"15min"`` or a bare number (seconds)."""
    if isinstance(text, (int, float)):
        value = float(text)
    else:
        value = parse_quantity(text, TIME_UNITS, what, "s")
    if not math.isfinite(value) or value <= 0:
        raise InputError(f"{what} must be a positive duration, got {text!r}")
    return value


def parse_frequency(text: str | float, what: str = "frequency") -> float:
    """Hertz from ``"10MHz"``, ``"5 MHz"``, ``"1e7"`` (Hz) and the like."""
    if isinstance(text, (int, float)):
        value = float(text)
    else:
        number, unit = _split(text, what, "10MHz")
        key = unit.lower()
        if unit == "mHz":  # millihertz, the one case where case matters
            factor = 1e-3
        else:
            factor = {"": 1.0, "hz": 1.0, "khz": 1e3, "mhz": 1e6, "ghz": 1e9}.get(key)
        if factor is None:
            raise InputError(
                f"unknown unit {unit!r} in {what} {text!r}", hint="use Hz, kHz, MHz or GHz"
            )
        value = number * factor
    if not math.isfinite(value) or value <= 0:
        raise InputError(f"{what} must be a positive frequency, got {text!r}")
    return value


def format_duration(seconds: float) -> str:
    """Short human form of a duration: 1 s, 100 ms, 4 h 0 min, 2.5 d."""
    if not math.isfinite(seconds):
        return "n/a"
    s = abs(seconds)
    if s >= 2 * 86400:
        return f"{seconds / 86400:.3g} d"
    if s >= 2 * 3600:
        return f"{seconds / 3600:.3g} h"
    if s >= 120:
        return f"{seconds / 60:.3g} min"
    return format_seconds(seconds)


def format_seconds(seconds: float) -> str:
    """Engineering form of a time: 1 s, 250 ms, 3.2 ns."""
    if not math.isfinite(seconds):
        return "n/a"
    s = abs(seconds)
    for factor, unit in ((1.0, "s"), (1e-3, "ms"), (1e-6, "us"), (1e-9, "ns"), (1e-12, "ps")):
        if s >= factor or factor == 1e-12:
            return f"{seconds / factor:.4g} {unit}"
    return f"{seconds:.4g} s"


def format_frequency(hz: float) -> str:
    """Engineering form of a frequency: 10 MHz, 5 kHz."""
    for factor, unit in ((1e9, "GHz"), (1e6, "MHz"), (1e3, "kHz")):
        if abs(hz) >= factor:
            return f"{hz / factor:.10g} {unit}"
    return f"{hz:.10g} Hz"
