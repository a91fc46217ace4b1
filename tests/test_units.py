"""Parsing and formatting of durations, frequencies and fractional quantities.

Unit factors are SI prefixes (common practice).
"""

from __future__ import annotations

import pytest

from stability import InputError
from stability.units import (
    FRACTION_UNITS,
    format_duration,
    format_frequency,
    format_seconds,
    parse_duration,
    parse_frequency,
    parse_quantity,
)


@pytest.mark.parametrize(
    ("text", "match"),
    [
        ("abc", "cannot read duration 'abc'"),
        ("", "cannot read duration"),
        ("s", "cannot read duration"),
        ("nan", "cannot read duration"),
        ("10 parsecs", "unknown unit 'parsecs'"),
        ("-1s", "must be a positive duration"),
        ("0", "must be a positive duration"),
        ("1e400 s", "not finite"),
    ],
)
def test_bad_durations(text, match):
    with pytest.raises(InputError, match=match):
        parse_duration(text)


@pytest.mark.parametrize(
    ("text", "match"),
    [
        ("abc", "cannot read frequency"),
        ("10 parsec", "unknown unit 'parsec'"),
        ("10 MHz/s", "unknown unit"),
        ("-5MHz", "must be a positive frequency"),
        ("0", "must be a positive frequency"),
        ("inf", "cannot read frequency"),
    ],
)
def test_bad_frequencies(text, match):
    with pytest.raises(InputError, match=match):
        parse_frequency(text)


@pytest.mark.parametrize(
    ("text", "seconds"),
    [
        ("1s", 1.0),
        ("100 ms", 0.1),
        ("4h", 14400.0),
        ("15min", 900.0),
        ("2d", 172800.0),
        (" 3 us ", 3e-6),
        ("250", 250.0),
        ("1,5 s", 1.5),  # decimal comma
        ("1e3ms", 1.0),
        (0.5, 0.5),
    ],
)
def test_durations(text, seconds):
    assert parse_duration(text) == pytest.approx(seconds, rel=1e-15)


@pytest.mark.parametrize(
    ("text", "hertz"),
    [
        ("10MHz", 10e6),
        ("5 MHz", 5e6),
        ("1e7", 1e7),
        ("2.5 kHz", 2500.0),
        ("1 GHz", 1e9),
        ("100hz", 100.0),
        ("10 mHz", 0.01),  # millihertz: the one case where letter case matters
        (10e6, 10e6),
    ],
)
def test_frequencies(text, hertz):
    assert parse_frequency(text) == pytest.approx(hertz, rel=1e-15)


def test_fractional_quantities():
    assert parse_quantity("5 ppb", FRACTION_UNITS, "offset", "") == pytest.approx(5e-9)
    assert parse_quantity("1e-12", FRACTION_UNITS, "offset", "") == 1e-12
    assert parse_quantity("2 ppm", FRACTION_UNITS, "offset", "") == pytest.approx(2e-6)
    with pytest.raises(InputError, match="unknown unit 'furlong'"):
        parse_quantity("3 furlong", FRACTION_UNITS, "offset", "")


def test_formatting():
    assert format_duration(1.0) == "1 s"
    assert format_duration(0.1) == "100 ms"
    assert format_duration(4 * 3600) == "4 h"
    assert format_duration(2.5 * 86400) == "2.5 d"
    assert format_duration(float("nan")) == "n/a"
    assert format_seconds(3.2e-9) == "3.2 ns"
    assert format_frequency(10e6) == "10 MHz"
    assert format_frequency(5e3) == "5 kHz"
    # Parsing what was formatted gives the value back.
    for seconds in (1.0, 0.1, 3.2e-9, 14400.0, 216000.0):
        assert parse_duration(format_duration(seconds)) == pytest.approx(seconds, rel=1e-3)


@pytest.mark.parametrize("text", ["1,000 s", "1,000", "-2,500ms", "10,000 s"])
def test_a_comma_before_three_digits_is_ambiguous(text):
    # "1,000" reads as one thousand in some countries and as one in others (common practice)
    with pytest.raises(InputError, match="ambiguous: the comma may separate thousands or decimals"):
        parse_duration(text, "tau0")
