"""``stability validate --out DIR``: the validation report a lab files for its software.

Runs the checks of :func:`stability.validation.validate` from the installed package
(published data sets, closed-form relations, a seeded coverage run of the intervals,
reading checks) and writes ``validation.pdf`` and ``validation.json``. Exit code 0
when every check passes, 1 when any fails (so a lab can run it in its change control
after every upgrade), and the usual 1 or 2 for errors.
"""

from __future__ import annotations

from pathlib import Path

import typer

from stability.validation import GROUPS, step_count, validate

from .command_options import VALIDATING
from .common import EXIT_ERROR, echo
from .options import RunOptions, command
from .progress import ProgressDisplay

__all__ = ["validate_command"]


@command(VALIDATING, subject="out")
def validate_command(*, opts: RunOptions) -> None:
    """Validate the installed tool: checks against published sources, as PDF and JSON.

    Writes validation.pdf (with a page for the reviewer's signature) and
    validation.json. Exit code 0 when every check passes, 1 when any fails.

    Example: stability validate --out validation-2026/
    """
    folder = opts.folder(Path.cwd() / "stability-validation")
    stats, spec = opts.given.get("stats"), opts.given.get("spec")
    with ProgressDisplay(enabled=True) as bar:
        result = validate(
            folder,
            stats=stats,
            spec=spec,
            thorough=bool(opts.given.get("thorough")),
            on_step=bar.steps("validation", step_count(stats)),
        )
    summary = result.summary()
    for group in summary["groups"]:
        mark = "pass" if not group["failed"] else "FAIL"
        echo(f"{mark:4}  {group['passed']:3d} of {group['checks']:3d}  {GROUPS[group['group']]}")
    for check in result.failures[:20]:
        echo(
            f"failed: {check.name}: expected {check.expected}, computed {check.computed} "
            f"({check.difference})"
        )
    if len(result.failures) > 20:
        echo(f"and {len(result.failures) - 20} more failed checks (see validation.json)")
    verdict = "PASS" if result.passed else "FAIL"
    echo(
        f"{verdict}: {summary['passed']} of {summary['checks']} checks passed in "
        f"{result.duration_s:.0f} s; wrote {result.files['validation.pdf']} and "
        f"{result.files['validation.json']}"
    )
    if not result.passed:
        raise typer.Exit(EXIT_ERROR)
