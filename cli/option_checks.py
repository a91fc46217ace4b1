"""The checks of the shared options' values, run while the command line is parsed.

Each check is the library's own validation of a value (so the message is the
library's) and returns what the command receives; :func:`checked` turns its
:class:`InputError` into a usage error (exit 2). :mod:`stability_cli.options`
attaches them to the option declarations.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import Any

import typer

from stability.deviations.registry import get_statistic, statistic_names
from stability.errors import InputError
from stability.ingest import validate_read_args
from stability.intervals import check_confidence
from stability.taus import parse_taus
from stability.units import parse_duration, parse_frequency

__all__ = [
    "checked",
    "kind_check",
    "duration_check",
    "reading_check",
    "frequency_check",
    "outliers_value",
    "taus_check",
    "confidence_check",
    "stats_check",
    "on_off_check",
    "word_check",
    "mask_check",
]


def checked(check: Callable[[Any], Any]) -> Callable[[Any], Any]:
    """A typer callback running a library check: its :class:`InputError` is a usage error.

    None (an option not given) passes unchecked; the check's return value is
    what the command receives.
    """

    def callback(value: Any) -> Any:
        if value is None:
            return None
        try:
            return check(value)
        except InputError as exc:
            raise typer.BadParameter(exc.one_line()) from None

    return callback


def kind_check(value: str) -> str:
    return validate_read_args(kind=value).kind


def duration_check(what: str) -> Callable[[str], str]:
    """A check that a value reads as a positive duration (``1s``, ``100ms``), named ``what``."""

    def check(value: str) -> str:
        parse_duration(value, what)
        return value

    return check


def reading_check(name: str) -> Callable[[Any], Any]:
    """A check of one reading option by the reader's own validation (same messages)."""

    def check(value: Any) -> Any:
        validate_read_args(**{name: value})
        return value

    return check


def frequency_check(what: str) -> Callable[[str], str]:
    """A check that a value reads as a positive frequency (``10MHz``), named ``what``."""

    def check(value: str) -> str:
        parse_frequency(value, what)
        return value

    return check


def outliers_value(text: Any) -> float | None:
    """``--outliers``: a positive number of robust sigmas, or ``off`` (None)."""
    word = str(text).strip().lower()
    if word in ("off", "none", "no"):
        return None
    try:
        value = float(word)
    except ValueError:
        value = math.nan
    if not math.isfinite(value) or value <= 0:
        raise InputError(
            f"--outliers takes a positive number of robust sigmas or off, got {text!r}"
        )
    return value


def taus_check(value: str) -> str:
    parse_taus(value)
    return value.strip().lower()


def confidence_check(value: Any) -> float:
    """``--confidence``: checked as written, so the message shows the text given."""
    text = str(value).strip()
    try:
        level: Any = float(text)
    except ValueError:
        level = text
    return check_confidence(level, "the level", written=text)


def stats_check(choices: tuple[str, ...] | None, one: bool, where: str) -> Callable[[str], str]:
    def check(value: str) -> str:
        names = [part.strip().lower() for part in str(value).split(",") if part.strip()]
        if not names:
            raise InputError("no statistic given", hint="pass statistics such as oadev,mdev")
        if one and len(names) != 1:
            raise InputError(
                f"{where} takes one statistic, got {value!r}",
                hint=f"pass one of {', '.join(choices or statistic_names())}",
            )
        for name in names:
            get_statistic(name)  # unknown names: the registry's message lists the known ones
        return ",".join(names)

    return check


def on_off_check(value: str) -> bool:
    word = str(value).strip().lower()
    if word not in ("on", "off"):
        raise InputError(f"--bias-correction takes on or off, got {value!r}")
    return word == "on"


def word_check(flag: str, words: dict[str, Any]) -> Callable[[Any], Any]:
    """An option whose value is one of ``words`` (any case); returns the word's meaning."""

    def check(value: Any) -> Any:
        word = str(value).strip().lower()
        if word not in words:
            raise InputError(f"{flag} must be {' or '.join(words)}, got {value!r}")
        return words[word]

    return check


def mask_check(value: Any) -> str:
    text = str(value).strip()
    if not text:
        raise InputError("--mask needs a bundled mask name or a mask file")
    return text
