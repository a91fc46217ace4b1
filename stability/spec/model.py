"""The data of judging: specification masks, device information, checks and verdicts.

A :class:`Spec` is an upper limit on one statistic (for example the
overlapping Allan deviation) at listed averaging times; an :class:`Info`
identifies the device, the reference it was measured against (a
:class:`Reference`, which may state its own stability), the instrument, the
lab and the procedure. :func:`stability.spec.judge` turns a results table and
a specification into a :class:`Judgement`: one :class:`Check` per judged tau
and an overall verdict.

A verdict is a :class:`Verdict`, a ``str`` enumeration whose values are the
words a user sees, in the order they are reported (the rules that give them
are in :mod:`stability.spec.judging`):

``pass``
    the whole confidence interval is at or below the limit;
``fail``
    the whole interval is above the limit;
``inconclusive``
    the limit lies inside the interval, or the estimate has no interval;
``not measured``
    there is no estimate at that tau.

A reference should be at least :data:`REFERENCE_RATIO` times more stable than
the device (common practice, [1]_ section 5.13).

References
----------
.. [1] W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065
   (2008), section 5.13 (reference and measurement-system noise).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from enum import StrEnum
from typing import Any

import numpy as np

from ..deviations.registry import get_statistic
from ..display import Displayable
from ..errors import InputError
from ..files import jsonable
from ..powerlaw import model_from_levels

__all__ = [
    "Verdict",
    "VERDICTS",
    "REFERENCE_RATIO",
    "Spec",
    "Reference",
    "Info",
    "Check",
    "Judgement",
]


class Verdict(StrEnum):
    """The verdict at one tau, or overall.

    A ``str`` whose value is the word a user sees: members compare equal to
    their words (``Verdict.PASS == "pass"``) and print as them, so tables,
    JSON and messages show exactly those words, while code tests members
    (``verdict is Verdict.FAIL``) instead of reading words.
    """

    PASS = "pass"
    FAIL = "fail"
    INCONCLUSIVE = "inconclusive"
    NOT_MEASURED = "not measured"

    @classmethod
    def parse(cls, value: Any, *, where: str | None = None) -> Verdict:
        """The verdict a caller means by ``value``.

        Accepts a :class:`Verdict`, None (not measured), or a word in any case
        with ``_`` or ``-`` for spaces, including a few plain synonyms
        (``passed``, ``ok``, ``failed``, ``undecided``, ``marginal``,
        ``untested``, ``not tested``, ``none``, ``n/a``).

        Raises
        ------
        InputError
            For any other value, naming it and ``where`` it was found.
        """
        if isinstance(value, cls):
            return value
        if value is None:
            return cls.NOT_MEASURED
        word = str(value).strip().lower().replace("_", " ").replace("-", " ")
        if word in _VERDICT_WORDS:
            return _VERDICT_WORDS[word]
        place = f" in {where}" if where else ""
        raise InputError(
            f"unknown verdict {value!r}{place}",
            hint="use pass, fail, inconclusive or None (not measured)",
        )


#: Words (lower case, spaces for ``_`` and ``-``) that :meth:`Verdict.parse` reads.
_VERDICT_WORDS = {
    **{w: Verdict.NOT_MEASURED for w in ("", "none", "untested", "not tested", "n/a")},
    **{w: Verdict.PASS for w in ("passed", "ok")},
    **{w: Verdict.FAIL for w in ("failed",)},
    **{w: Verdict.INCONCLUSIVE for w in ("undecided", "marginal")},
    **{v.value: v for v in Verdict},
}

#: The verdicts, in the order they are reported.
VERDICTS = tuple(Verdict)

#: A reference should be at least this many times more stable than the device (common practice).
REFERENCE_RATIO = 3.0

#: Relative tolerance to which two taus are the same tau.
_REL_TOL = 1e-9

#: Names of the power-law coefficients h_alpha in an information file -> alpha.
_LEVEL_NAMES = {"h2": 2, "h1": 1, "h0": 0, "h_1": -1, "h_2": -2}


def _as_verdict(value: Any, name: str) -> Verdict:
    """``value`` as a :class:`Verdict`: a member or its exact word; else an InputError."""
    try:
        return Verdict(value)
    except ValueError:
        raise InputError(
            f"{name} must be one of {', '.join(repr(v.value) for v in Verdict)}, got {value!r}",
            hint="use a stability.spec.Verdict",
        ) from None


@dataclass
class Spec:
    """A specification mask: upper limits of one statistic at listed taus.

    Attributes
    ----------
    statistic
        Statistic identifier the limits apply to (e.g. ``"oadev"``).
    confidence
        Two-sided confidence level of the intervals the verdicts use.
    interpolate
        Judge between listed taus against the log-log line through the limits.
    limits
        ``(tau_s, max)`` pairs, taus strictly increasing.
    path, sha256
        The file it was read from and its SHA-256 (None when built in code).
    description
        Free text (optional).
    """

    statistic: str
    confidence: float
    interpolate: bool
    limits: list[tuple[float, float]]
    path: str | None = None
    sha256: str | None = None
    description: str = ""

    def limit_at(self, tau: Any) -> np.ndarray:
        """The limit at ``tau``: log-log interpolated between listed taus, NaN outside."""
        tau = np.asarray(tau, dtype=float)
        taus = np.log([t for t, _ in self.limits])
        tops = np.log([m for _, m in self.limits])
        inside = (tau >= self.limits[0][0] * (1 - _REL_TOL)) & (
            tau <= self.limits[-1][0] * (1 + _REL_TOL)
        )
        with np.errstate(divide="ignore", invalid="ignore"):
            value = np.exp(np.interp(np.log(np.where(tau > 0, tau, np.nan)), taus, tops))
        return np.where(inside, value, np.nan)

    def to_dict(self) -> dict[str, Any]:
        return {
            "statistic": self.statistic,
            "confidence": self.confidence,
            "interpolate": self.interpolate,
            "limits": [{"tau_s": t, "max": m} for t, m in self.limits],
            "description": self.description,
            "path": self.path,
            "sha256": self.sha256,
        }


@dataclass
class Reference:
    """The reference oscillator and, optionally, its stated stability.

    Either ``points`` (``(tau_s, deviation)`` pairs of the statistic named by
    ``statistic``, interpolated log-log and held flat outside their range) or
    ``levels`` (power-law coefficients alpha -> h_alpha, turned into an Allan
    deviation by :func:`stability.powerlaw.model_from_levels`) or neither. A
    reference's figures are only ever compared with a measurement of the same
    quantity (:meth:`quantity`).
    """

    id: str = ""
    description: str = ""
    points: list[tuple[float, float]] | None = None
    levels: dict[int, float] | None = None
    f_h: float | None = None
    statistic: str | None = None

    def quantity(self) -> str | None:
        """The quantity the stated stability is (``AVAR`` for levels), or None without one."""
        if self.levels:
            return "AVAR"
        if self.points:
            return get_statistic(self.statistic or "oadev").estimates
        return None

    @property
    def has_stability(self) -> bool:
        return bool(self.points) or bool(self.levels)

    def deviation(self, tau: Any, *, f_h: float = 0.5) -> tuple[np.ndarray, list[str]]:
        """The reference's stability at ``tau`` and notes on how it was obtained.

        ``f_h`` (Hz) is used for level models without their own ``f_h``.
        Returns NaN everywhere when no stability is stated.
        """
        tau = np.atleast_1d(np.asarray(tau, dtype=float))
        notes: list[str] = []
        if self.points:
            t = np.array([p[0] for p in self.points])
            d = np.array([p[1] for p in self.points])
            if t.size == 1:
                value = np.full(tau.shape, d[0])
            else:
                value = np.exp(np.interp(np.log(tau), np.log(t), np.log(d)))
            outside = (tau < t[0] * (1 - _REL_TOL)) | (tau > t[-1] * (1 + _REL_TOL))
            if outside.any():
                notes.append(
                    "reference stability held flat outside its stated taus "
                    f"({t[0]:g} s to {t[-1]:g} s)"
                )
            return value, notes
        if self.levels:
            model = model_from_levels(self.levels, self.f_h or f_h)
            return model.deviation(tau), notes
        return np.full(tau.shape, np.nan), notes

    def to_dict(self) -> dict[str, Any]:
        return {
            "id": self.id,
            "description": self.description,
            "stability": None if self.points is None else [list(p) for p in self.points],
            "levels": None
            if self.levels is None
            else {_level_name(a): v for a, v in self.levels.items()},
            "f_h_hz": self.f_h,
            "statistic": self.statistic,
        }


def _level_name(alpha: int) -> str:
    return {v: k for k, v in _LEVEL_NAMES.items()}[alpha]


@dataclass
class Info:
    """Identification of a calibration: device, reference, instrument, lab, procedure, notes.

    ``record_number``, ``measured_by``, ``checked_by`` and ``date`` fill the
    record's number and its approval fields; empty, the record derives a
    number and leaves lines to sign on.
    """

    device: dict[str, Any]
    reference: Reference | None = None
    instrument: dict[str, Any] = field(default_factory=dict)
    lab: dict[str, Any] = field(default_factory=dict)
    procedure: str = ""
    notes: str = ""
    path: str | None = None
    sha256: str | None = None
    record_number: str = ""
    measured_by: str = ""
    checked_by: str = ""
    date: str = ""

    @property
    def device_id(self) -> str:
        return str(self.device["id"])

    def to_dict(self) -> dict[str, Any]:
        return {
            "device": dict(self.device),
            "reference": None if self.reference is None else self.reference.to_dict(),
            "instrument": dict(self.instrument),
            "lab": dict(self.lab),
            "procedure": self.procedure,
            "notes": self.notes,
            "record_number": self.record_number,
            "measured_by": self.measured_by,
            "checked_by": self.checked_by,
            "date": self.date,
            "path": self.path,
            "sha256": self.sha256,
        }


@dataclass
class Check:
    """The verdict at one tau.

    Attributes
    ----------
    tau_s, limit
        Where and against what limit the estimate is judged.
    listed
        True for a tau listed in the specification, False for a measured tau
        judged against the interpolated limit line.
    deviation, ci_low, ci_high, edf
        The estimate and its interval at the specification's confidence (NaN
        where there is none).
    interpolated
        The estimate and bounds were interpolated log-log between measured taus.
    verdict
        A :class:`Verdict` (its exact word is accepted when building one).
    reference, reference_limited, device_only
        The reference's stated stability at this tau, whether it exceeds one
        third of the measured value, and the device-only estimate
        sqrt(max(0, measured^2 - reference^2)) (NaN without a stated reference).
    note
        Why the verdict is what it is, where that is not obvious.
    """

    tau_s: float
    limit: float
    listed: bool
    deviation: float
    ci_low: float
    ci_high: float
    edf: float
    interpolated: bool
    verdict: Verdict
    reference: float = math.nan
    reference_limited: bool = False
    device_only: float = math.nan
    note: str = ""

    def __post_init__(self) -> None:
        self.verdict = _as_verdict(self.verdict, "verdict")

    def to_dict(self) -> dict[str, Any]:
        return jsonable(
            {
                "tau_s": self.tau_s,
                "limit": self.limit,
                "listed": self.listed,
                "deviation": self.deviation,
                "ci_low": self.ci_low,
                "ci_high": self.ci_high,
                "edf": self.edf,
                "interpolated": self.interpolated,
                "verdict": self.verdict.value,
                "reference": self.reference,
                "reference_limited": self.reference_limited,
                "device_only": self.device_only,
                "note": self.note,
            }
        )


@dataclass
class Judgement(Displayable):
    """All verdicts of one table against one specification."""

    spec: Spec
    checks: list[Check]
    overall: Verdict
    notes: list[str] = field(default_factory=list)

    def __post_init__(self) -> None:
        self.overall = _as_verdict(self.overall, "overall")

    @property
    def statistic(self) -> str:
        return self.spec.statistic

    @property
    def confidence(self) -> float:
        return self.spec.confidence

    @property
    def listed(self) -> list[Check]:
        """The checks at the specification's own taus, in order."""
        return [c for c in self.checks if c.listed]

    def plot_limits(self) -> list[tuple[float, float, str | None]]:
        """``(tau_s, max, verdict)`` rows for :func:`stability.figures.stability_figure`."""
        return [
            (c.tau_s, c.limit, None if c.verdict is Verdict.NOT_MEASURED else c.verdict)
            for c in self.listed
        ]

    def verdict_at(self, tau: float) -> Check | None:
        """The check at ``tau`` (to 1e-9 relative), if any."""
        for c in self.checks:
            if math.isclose(c.tau_s, tau, rel_tol=_REL_TOL):
                return c
        return None

    def to_dict(self) -> dict[str, Any]:
        return {
            "statistic": self.statistic,
            "confidence": self.confidence,
            "overall": self.overall.value,
            "checks": [c.to_dict() for c in self.checks],
            "notes": list(self.notes),
        }
