"""Evidence for the sample interval tau0, and the cross-check that makes a wrong tau0 loud.

A wrong tau0 is the worst silent failure of a stability analysis: every tau is
off by the same factor and the plot still looks like a plot. So whatever else
in a log says how far apart the readings are is collected and compared with the
tau0 that reading chose:

* a line before the data that states the gate time, the sample interval or the
  sample rate (``# gate time: 10 s``, ``Gate=1s``, ``Sample interval 0.1 s``,
  ``Abtastrate 10 Hz``);
* another column that holds time (a second date-time column, elapsed seconds,
  epoch numbers), from the spacing of its sampled values;
* a counter column whose header names seconds but which counts rows.

A disagreement with a time column that was chosen by the reader is an
:class:`~stability.errors.InputError` naming both values and where each came
from; a counter that counts rows beside real date-time stamps loses to the
stamps with a note. When tau0 is given, disagreements are notes: the user chose.

References
----------
1. W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065 (2008),
   section 5.2 (the sampling interval tau0 of phase and frequency data) and
   section 5.15 (dead time: a gate shorter than the interval between readings).
2. IEEE Std 1139-2008 (sigma_y(tau) is defined for the averaging time tau =
   m tau0; a wrong tau0 rescales every tau).
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np
import pandas as pd

from ..errors import InputError
from ..units import format_duration
from . import timestamps as ts
from .columns import ColumnPlan, TimeCandidate
from .report import LogReport
from .sniff import Dialect, RawSource

__all__ = ["Evidence", "AGREEMENT", "preamble_evidence", "column_evidence", "check_tau0"]

#: Two sample intervals agree when they differ by at most this fraction of the larger.
AGREEMENT = 0.02

_KEYS = {
    "gate": r"gate(?:[ _-]?time)?|torzeit|messzeit|gatezeit",
    "interval": (
        r"sampl(?:e|ing)[ _-]?(?:interval|period|time)|measurement[ _-]?interval|"
        r"(?:log(?:ging)?[ _-]?)?interval|tau[ _]?0|abtast(?:intervall|zeit)|messintervall|"
        r"intervall"
    ),
    "rate": r"sampl(?:e|ing)[ _-]?rate|abtastrate|messrate|log(?:ging)?[ _-]?rate|rate",
}
_NUMBER = r"[-+]?(?:\d+(?:[.,]\d+)?|[.,]\d+)(?:[eE][-+]?\d+)?"
_TIME_UNITS = {
    "s": 1.0, "sec": 1.0, "secs": 1.0, "second": 1.0, "seconds": 1.0, "sek": 1.0,
    "ms": 1e-3, "msec": 1e-3, "us": 1e-6, "µs": 1e-6, "μs": 1e-6, "ns": 1e-9,
    "min": 60.0, "minute": 60.0, "minutes": 60.0, "h": 3600.0, "hour": 3600.0,
}  # fmt: skip
_RATE_UNITS = {"hz": 1.0, "khz": 1e3, "s/s": 1.0, "sa/s": 1.0, "/s": 1.0, "1/s": 1.0}
_LINE = re.compile(
    rf"(?<![A-Za-z])(?P<key>{'|'.join(f'(?P<{k}>{v})' for k, v in _KEYS.items())})"
    r"\s*(?:[\[(]\s*(?P<bunit>[^\])]*?)\s*[\])])?"
    rf"\s*[:=]?\s*(?P<num>{_NUMBER})\s*"
    r"(?P<unit>[A-Za-zµμ/]+(?:/s)?)?",
    re.I,
)


@dataclass
class Evidence:
    """One statement in a log about the sample interval.

    Attributes
    ----------
    source
        Where it is: ``"preamble line 3"``, ``"column 'elapsed [s]'"``.
    says
        What it says, in words: ``"gate 10 s"``, ``"1 s between rows"``.
    tau0
        The sample interval it implies, seconds.
    counter
        True for a column that counts rows (it loses to date-time stamps with a note).
    """

    source: str
    says: str
    tau0: float
    counter: bool = False


def _unit_factor(kind: str, unit: str | None) -> float | None:
    """Seconds per unit (gate, interval) or hertz per unit (rate); None if not a unit."""
    if not unit:
        return None
    key = unit.strip()
    if kind == "rate":
        return _RATE_UNITS.get(key.lower())
    return _TIME_UNITS.get(key) or _TIME_UNITS.get(key.lower())


def preamble_evidence(src: RawSource, d: Dialect) -> list[Evidence]:
    """Gate times, sample intervals and sample rates stated in the lines before the data.

    Comment lines count; the header line does not. A number without a unit
    says nothing (``Gate=1`` could be seconds or a setting's index).
    """
    out = []
    for i, line in enumerate(src.sample[: max(0, d.first_data_line - 1)]):
        number = i + 1
        if number == d.header_line:
            continue
        for match in _LINE.finditer(line):
            kind = next(k for k in _KEYS if match.group(k))
            bare = match.group("key").lower() in ("interval", "intervall", "rate")
            if bare and re.search(r"[A-Za-z]\s+$", line[: match.start()]):
                continue  # "refresh rate", "reference interval": not the sampling
            unit = match.group("unit") or match.group("bunit")
            factor = _unit_factor(kind, unit)
            if factor is None:
                continue
            value = float(match.group("num").replace(",", ".")) * factor
            if value <= 0 or not np.isfinite(value):
                continue
            tau0 = 1.0 / value if kind == "rate" else value
            shown = f"{match.group('num')} {unit}"
            words = {"gate": "gate", "interval": "interval", "rate": "sample rate"}[kind]
            out.append(Evidence(f"preamble line {number}", f"{words} {shown}", tau0))
            break  # one statement per line
    return out


def _spacing(values: list[str], cand: TimeCandidate) -> float | None:
    """Median spacing in seconds of a column's sampled values, or None."""
    text = [v for v in values if v.strip()]
    if cand.fmt.style != "datetime":  # a decimal comma in elapsed seconds
        text = [v.strip().replace(",", ".") for v in text]
    if len(text) < 3:
        return None
    ticks, ok = ts.parse_times(pd.Series(text, dtype=object), cand.fmt)
    ticks = ticks[ok]
    if ticks.size < 3:
        return None
    step = np.diff(ticks.astype(np.float64))
    step = step[step > 0]
    if step.size == 0:
        return None
    scale = 1e-9 if cand.fmt.style == "datetime" else cand.fmt.scale
    return float(np.median(step)) * scale


def column_evidence(samples: list[list[str]], plan: ColumnPlan) -> list[Evidence]:
    """The sample interval implied by every other column that holds time."""
    out = []
    for cand in plan.other_times:
        if len(cand.cols) == 2:
            a, b = (samples[c] for c in cand.cols)
            values = [x + " " + y for x, y in zip(a, b, strict=False)]
        else:
            values = samples[cand.cols[0]]
        tau0 = _spacing(values, cand)
        if tau0 is None:
            continue
        name = " + ".join(plan.display[c] for c in cand.cols)
        says = f"{format_duration(tau0)} between rows ({cand.fmt.description})"
        out.append(Evidence(f"column {name!r}", says, tau0, cand.counter))
    return out


def agrees(a: float, b: float) -> bool:
    """Whether two sample intervals agree (within :data:`AGREEMENT`)."""
    return abs(a - b) <= AGREEMENT * max(abs(a), abs(b))


def check_tau0(
    tau0: float,
    chosen: str,
    evidence: list[Evidence],
    *,
    given: bool,
    path: str,
    rep: LogReport,
) -> None:
    """Compare the tau0 reading chose with every other piece of evidence in the log.

    Parameters
    ----------
    tau0
        The sample interval used, seconds.
    chosen
        Where it came from, in words (for messages).
    evidence
        The other statements in the log (:func:`preamble_evidence`, :func:`column_evidence`).
    given
        True when tau0 was given by the user: disagreements are notes, not errors.

    Raises
    ------
    InputError
        tau0 was taken from a time column and another statement disagrees.
    """
    rep.tau0_evidence = []
    for ev in evidence:
        ok = agrees(tau0, ev.tau0)
        rep.tau0_evidence.append(
            {"source": ev.source, "says": ev.says, "tau0_s": ev.tau0, "agrees": ok}
        )
        if ok:
            continue
        both = (
            f"{ev.source} says {ev.says} (tau0 {format_duration(ev.tau0)}), "
            f"but tau0 is {format_duration(tau0)} {chosen}"
        )
        if given:
            rep.note(f"tau0 as given disagrees with the log: {both}.")
        elif ev.counter:
            rep.note(f"{ev.source} counts rows, not seconds: {both}; the date-time stamps win.")
        else:
            raise InputError(
                f"the log disagrees about the sample interval: {both}",
                path=path,
                hint=f"check the log; pass --tau0 {spelled(tau0)} or --tau0 "
                f"{spelled(ev.tau0)} to state the interval (see 'stability inspect')",
            )


def spelled(seconds: float) -> str:
    """A duration as a command-line value without spaces (``10s``, ``100ms``)."""
    return format_duration(seconds).replace(" ", "")


__all__ += ["agrees", "spelled"]
