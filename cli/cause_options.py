"""The options of the commands that say where the instability comes from, declared once.

``analyze``, ``record`` and ``spectrum`` take the groups :data:`CAUSES` (auxiliary
columns, the regression on one of them, the counter's dead time and type) and
:data:`SPECTRUM` (the Welch segments and the false-alarm chance of the search for
periodic components) with the :func:`~.options.command` decorator like any shared
option; :func:`cause_settings` turns what was given into the library's
:class:`stability.causes.CauseSettings`. They sit beside :mod:`.options`, whose
groups they extend, to keep each module readable.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import Any

from stability.causes import CauseSettings
from stability.dead_time import check_counter
from stability.errors import InputError
from stability.ingest.auxiliary import parse_aux_spec
from stability.units import parse_duration

from .common import UsageProblem
from .option_checks import duration_check
from .options import OptionSpec, RunOptions

__all__ = ["CAUSES", "SPECTRUM", "cause_settings"]


def _flag(name: str, flag: str, help: str) -> OptionSpec:
    return OptionSpec(name, flag, bool, False, help)


def _lag_range(value: str) -> str:
    """``--lag-range LOW,HIGH``: two durations (0 allowed for the low end)."""
    parts = [p.strip() for p in str(value).split(",")]
    if len(parts) != 2:
        raise InputError(f"--lag-range takes LOW,HIGH durations such as 0,30min, got {value!r}")
    low = 0.0 if parts[0] in ("0", "0s") else parse_duration(parts[0], "--lag-range low end")
    high = parse_duration(parts[1], "--lag-range high end")
    if high < low:
        raise InputError(f"--lag-range: the high end is below the low end in {value!r}")
    return f"{low!r},{high!r}"


def _ratio(value: str) -> float:
    try:
        r = float(value)
    except ValueError:
        r = math.nan
    if not (math.isfinite(r) and r >= 1.0):
        raise InputError(f"--dead-time-ratio takes a number r = T/tau >= 1, got {value!r}")
    return r


def _positive_count(name: str) -> Callable[[Any], int]:
    def check(value: Any) -> int:
        if int(value) < 1:
            raise InputError(f"{name} takes a whole number >= 1, got {value!r}")
        return int(value)

    return check


def _probability(value: Any) -> float:
    p = float(value)
    if not 0.0 < p < 1.0:
        raise InputError(f"--false-alarm takes a probability between 0 and 1, got {value!r}")
    return p


AUX = OptionSpec(
    "aux",
    "--aux",
    str | None,
    None,
    "Auxiliary columns to read beside the values: temperature, pressure, humidity or "
    "voltage, each optionally =COLUMN (number or header), comma separated. Columns whose "
    "header names the quantity (temperature_C, pressure_hPa, ...) are found without it.",
    metavar="NAME[=COLUMN]",
    check=lambda v: (parse_aux_spec(v), v)[1],
)
REGRESS = OptionSpec(
    "regress",
    "--regress",
    str | None,
    None,
    "Estimate the sensitivity of frequency to this auxiliary quantity (e.g. temperature), "
    "with a thermal lag, by generalised least squares on the fitted noise model.",
    metavar="NAME",
)
LAG_RANGE = OptionSpec(
    "lag_range",
    "--lag-range",
    str,
    "0,1h",
    "Range of the thermal time constant searched by --regress, LOW,HIGH.",
    metavar="LOW,HIGH",
    check=_lag_range,
)
REMOVE_EFFECT = _flag(
    "remove_effect",
    "--remove-effect",
    "Remove the effect fitted by --regress from the frequency before the statistics "
    "(said in every output).",
)
DEAD_TIME = OptionSpec(
    "dead_time",
    "--dead-time",
    str | None,
    None,
    "The counter's dead time between gates, e.g. 20ms: the Allan deviations are corrected "
    "with Barnes' bias functions.",
    metavar="DURATION",
    check=duration_check("--dead-time"),
)
DEAD_TIME_RATIO = OptionSpec(
    "dead_time_ratio",
    "--dead-time-ratio",
    str | None,
    None,
    "Dead time as the ratio r = T/tau of the repetition interval to the gate time.",
    metavar="R",
    check=_ratio,
)
COUNTER = OptionSpec(
    "counter",
    "--counter",
    str | None,
    None,
    "The counter's averaging type, pi, lambda or omega, recorded in the outputs "
    "(lambda: its Allan deviation behaves like the modified Allan deviation).",
    metavar="TYPE",
    check=check_counter,
)
SEGMENTS = OptionSpec(
    "segments",
    "--segments",
    int,
    16,
    "Half-overlapping segments of the Welch spectrum (more: smoother, less resolution).",
    metavar="N",
    check=_positive_count("--segments"),
)
FALSE_ALARM = OptionSpec(
    "false_alarm",
    "--false-alarm",
    float,
    0.01,
    "Chance of reporting a periodic component in pure noise (Bonferroni over the spectrum).",
    metavar="P",
    check=_probability,
)
#: Options of the commands that say where the instability comes from (analyze, spectrum).
CAUSES = (AUX, REGRESS, LAG_RANGE, REMOVE_EFFECT, DEAD_TIME, DEAD_TIME_RATIO, COUNTER)
SPECTRUM = (SEGMENTS, FALSE_ALARM)


def cause_settings(opts: RunOptions) -> CauseSettings:
    """The :class:`stability.causes.CauseSettings` from the options a command was given."""
    given = opts.given
    lag = given.get("lag_range") or _lag_range("0,1h")
    low, high = (float(v) for v in str(lag).split(","))
    dead = given.get("dead_time")
    try:
        return CauseSettings(
            aux=given.get("aux"),
            regress=given.get("regress"),
            lag_range=(low, high),
            remove=bool(given.get("remove_effect", False)),
            dead_time=None if dead is None else parse_duration(dead, "--dead-time"),
            dead_time_ratio=given.get("dead_time_ratio"),
            counter=given.get("counter"),
            segments=int(given.get("segments") or 16),
            false_alarm=float(given.get("false_alarm") or 0.01),
        )
    except InputError as exc:
        raise UsageProblem(exc.one_line()) from None
