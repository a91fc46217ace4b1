"""Run every validation check and write ``validation.pdf`` and ``validation.json``.

:func:`validate` runs, from the installed package alone, the published data-set
checks (:mod:`.published`), the closed-form relations (:mod:`.closed_forms`), the
seeded coverage run of the intervals (:mod:`.coverage`) and the reading checks
(:mod:`.reading`), records the environment (:mod:`.environment`), and writes both
files through :class:`stability.outputs.OutputSet` (both or neither). Every value
in them is computed in that run; nothing is copied from a stored result.
"""

from __future__ import annotations

import dataclasses
import json
import os
import time
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from datetime import UTC, datetime
from pathlib import Path
from typing import IO, Any

import matplotlib
from matplotlib.figure import Figure

from ..deviations import get_statistic
from ..outputs import OutputSet
from ..spec import load_spec
from .checks import BASES, GROUPS, Check
from .closed_forms import closed_form_checks
from .coverage import (
    DEFAULT_PLAN,
    THOROUGH_PLAN,
    CoveragePlan,
    acceptance_range,
    check_coverage_stats,
    coverage_checks,
    coverage_statistics,
)
from .environment import environment
from .pages import validation_pages
from .published import published_checks
from .reading import reading_checks

__all__ = [
    "VALIDATION_NAMES",
    "DEFAULT_STATS",
    "CAUTION",
    "ValidationResult",
    "run_checks",
    "step_count",
    "validation_json",
    "validate",
]

#: The files ``validate`` writes.
VALIDATION_NAMES = ("validation.pdf", "validation.json")
#: Statistics of the coverage run when neither ``stats`` nor a specification names any.
DEFAULT_STATS = ("oadev", "mdev")

CAUTION = (
    "This report covers the computations of the stability software as installed on this "
    "machine: its estimators against published data sets, its conversions against "
    "closed-form relations, its confidence intervals against a seeded simulation, and the "
    "reading of invented logs in several file dialects. It does not cover the laboratory's "
    "measurement process: the counter or time-interval analyser, the reference, cabling "
    "and environment, the settings chosen for an analysis, the suitability of the method "
    "for a given calibration, or the uncertainty budget. A passing report is evidence for "
    "the laboratory's software validation; the acceptance of the software for its intended "
    "use is decided under the laboratory's own accredited procedure (ISO/IEC 17025:2017, "
    "7.11; common practice)."
)


def _acceptance(plan: CoveragePlan) -> dict[str, str]:
    low, high = acceptance_range(plan.trials, plan.levels[0], plan.p_min)
    return {
        "published": "a computed value passes when it rounds to the published value: within "
        "half a unit of the last published digit. The data files pass when every value "
        "equals the published definition.",
        "closed_form": "a relation passes when the tool's values agree with the closed form "
        "within the stated relative (or, for levels in dB, absolute) tolerance at every "
        "point compared.",
        "coverage": f"{plan.trials} seeded records of {plan.points} points per noise type; a "
        "case fails when its intervals hold the true value significantly less often than "
        f"their level: one-sided exact binomial test, p-value below {plan.p_min:g} (for "
        f"example fewer than {low} hits of {plan.trials} at {100 * plan.levels[0]:.3g} %). "
        f"Significantly more hits (more than {high}) pass and are marked conservative: the "
        "interval is wider than needed, on the safe side of a verdict. The seed is fixed, "
        "so a run repeats exactly.",
        "reading": "counts, kind and nominal frequency must be equal; tau0 within the "
        "resolution of the log's time stamps; mean frequency and Allan deviation within "
        "the stated relative tolerance.",
    }


@dataclass(frozen=True)
class ValidationResult:
    """The checks of one validation run, the environment, and the files written."""

    checks: tuple[Check, ...]
    environment: dict[str, Any]
    settings: dict[str, Any]
    acceptance: dict[str, str]
    started: str
    finished: str
    duration_s: float
    notes: tuple[str, ...] = ()
    files: dict[str, Path] = field(default_factory=dict)

    @property
    def passed(self) -> bool:
        """Whether every check passed."""
        return all(c.passed for c in self.checks)

    @property
    def failures(self) -> list[Check]:
        return [c for c in self.checks if not c.passed]

    def summary(self) -> dict[str, Any]:
        groups = []
        for group, title in GROUPS.items():
            mine = [c for c in self.checks if c.group == group]
            passed = sum(c.passed for c in mine)
            groups.append({"group": group, "title": title, "checks": len(mine),
                           "passed": passed, "failed": len(mine) - passed})  # fmt: skip
        passed = sum(c.passed for c in self.checks)
        return {
            "checks": len(self.checks),
            "passed": passed,
            "failed": len(self.checks) - passed,
            "conservative_intervals": sum(
                bool(c.passed and c.values.get("conservative")) for c in self.checks
            ),
            "groups": groups,
        }

    def to_dict(self) -> dict[str, Any]:
        return {
            "report": "stability software validation",
            "result": "pass" if self.passed else "fail",
            "summary": self.summary(),
            "started": self.started,
            "finished": self.finished,
            "duration_s": round(self.duration_s, 3),
            "environment": self.environment,
            "settings": self.settings,
            "acceptance": self.acceptance,
            "bases": BASES,
            "caution": CAUTION,
            "notes": list(self.notes),
            "checks": [c.to_dict() for c in self.checks],
        }


def _stats_to_run(
    stats: str | Sequence[str] | None, spec: str | os.PathLike[str] | None
) -> tuple[tuple[str, ...], str, list[str]]:
    """(statistics of the coverage run, where they came from, notes)."""
    if stats is not None:
        return check_coverage_stats(stats), "as given", []
    if spec is not None:
        statistic = get_statistic(load_spec(spec).statistic).name
        if statistic in coverage_statistics():
            return (statistic,), f"the statistic of the specification {Path(spec).name}", []
        note = (
            f"The specification {Path(spec).name} judges {statistic}, which has no coverage "
            f"check here; the coverage run used {', '.join(DEFAULT_STATS)}."
        )
        return DEFAULT_STATS, "default", [note]
    return DEFAULT_STATS, "default", []


def step_count(stats: str | Sequence[str] | None = None) -> int:
    """How many ``on_step`` calls a run makes: four, plus one per statistic and noise type."""
    count = len(DEFAULT_STATS) if stats is None else len(check_coverage_stats(stats))
    return 4 + count * len(DEFAULT_PLAN.alphas)


def _now() -> str:
    return datetime.now(UTC).isoformat(timespec="seconds").replace("+00:00", "Z")


def run_checks(
    *,
    stats: str | Sequence[str] | None = None,
    spec: str | os.PathLike[str] | None = None,
    thorough: bool = False,
    on_step: Callable[[str], None] | None = None,
) -> ValidationResult:
    """Run every check and return the result (nothing is written).

    Parameters
    ----------
    stats
        Statistics of the coverage run (default: the statistic of ``spec`` when it
        has a coverage check, else oadev and mdev).
    spec
        A specification file (TOML) whose statistic the coverage run takes.
    thorough
        The long coverage run (2000 records of 1024 points, m = 1 to 128) instead
        of the short one (300 records of 512 points, m = 1, 4, 16, 64).
    on_step
        Called with a short label after each step (:func:`step_count` steps).
    """
    names, origin, notes = _stats_to_run(stats, spec)
    plan = THOROUGH_PLAN if thorough else DEFAULT_PLAN
    step = on_step if on_step is not None else (lambda label: None)
    started, clock = _now(), time.perf_counter()
    env = environment()
    step("environment")
    checks: list[Check] = [*published_checks()]
    step("published data sets")
    checks += closed_form_checks()
    step("closed-form relations")
    checks += coverage_checks(names, plan, on_step=step)
    checks += reading_checks()
    step("reading checks")
    return ValidationResult(
        checks=tuple(checks),
        environment=env,
        settings={
            "stats": list(names),
            "stats_from": origin,
            "specification": None if spec is None else str(spec),
            "thorough": bool(thorough),
            "coverage": plan.to_dict(),
        },
        acceptance=_acceptance(plan),
        started=started,
        finished=_now(),
        duration_s=time.perf_counter() - clock,
        notes=tuple(notes),
    )


def validation_json(result: ValidationResult) -> str:
    """validation.json text: strict JSON, two-space indent."""
    return json.dumps(result.to_dict(), indent=2, ensure_ascii=False, allow_nan=False) + "\n"


def _save_pdf(pages: list[Figure], handle: IO[bytes], report: dict[str, Any]) -> None:
    # The PDF backend is imported here: it costs a noticeable part of start-up.
    from matplotlib.backends.backend_pdf import PdfPages

    metadata = {
        "Title": "Software validation report: stability",
        "Creator": f"stability {report['environment']['version']}",
        "CreationDate": datetime.fromisoformat(report["started"].replace("Z", "+00:00")),
    }
    with matplotlib.rc_context({"pdf.fonttype": 42}):  # TrueType: text stays extractable
        with PdfPages(handle, metadata=metadata) as pdf:
            for page in pages:
                pdf.savefig(page)


def validate(
    out: str | os.PathLike[str] | None = None,
    *,
    stats: str | Sequence[str] | None = None,
    spec: str | os.PathLike[str] | None = None,
    thorough: bool = False,
    on_step: Callable[[str], None] | None = None,
) -> ValidationResult:
    """Validate the installed tool and write validation.pdf and validation.json into ``out``.

    Runs every check (:func:`run_checks`, which takes the same ``stats``,
    ``spec``, ``thorough`` and ``on_step``) and writes both files through an
    :class:`~stability.outputs.OutputSet`, both or neither; with ``out=None``
    nothing is written. The result's :attr:`~ValidationResult.passed` is True
    only when every check passed; ``files`` names the files written.

    Example::

        result = stability.validate("validation-2026-12")
        print(result.passed, result.files["validation.pdf"])
    """
    if out is not None:  # the folder is checked (and locked) before the run
        with OutputSet(out, VALIDATION_NAMES) as files:
            result = run_checks(stats=stats, spec=spec, thorough=thorough, on_step=on_step)
            report = result.to_dict()
            text = validation_json(result)
            with open(files.path("validation.pdf"), "wb") as handle:
                _save_pdf(validation_pages(report), handle, report)
            files.write_text("validation.json", text)
            written = files.commit()
        return dataclasses.replace(result, files=written)
    return run_checks(stats=stats, spec=spec, thorough=thorough, on_step=on_step)
