"""The ``stability`` command line: the typer app and its commands.

Each command is a plain function in its own module (``analyze_cmd``, ...) that
knows nothing of the app; this module makes the app and registers them, so
importing any command module never imports this one. Exit codes are written
down in :mod:`.common`, the shared options in :mod:`.options`.

Installed as the import package ``stability_cli``; the console script
``stability`` and ``python -m stability`` both call :func:`main`.
"""

from __future__ import annotations

from typing import Annotated

import typer

from stability._version import __version__

from . import (
    analyze_cmd,
    batch_cmd,
    capture_cmd,
    demo_cmd,
    history_cmd,
    inspect_cmd,
    masks_cmd,
    overlay_cmd,
    phase_noise_cmd,
    record_cmd,
    separate_cmd,
    simulate_cmd,
    spectrum_cmd,
    time_error_cmd,
    timeline_cmd,
    validate_cmd,
    watch_cmd,
)
from .common import StabilityGroup, run_program

__all__ = ["app", "main"]

app = typer.Typer(
    name="stability",
    help="Frequency-stability analysis of oscillator logs: Allan-family deviations "
    "with noise types and confidence intervals.\n\n"
    "Exit codes: 0 success, 1 input or analysis error, 2 usage error.",
    cls=StabilityGroup,
    context_settings={"max_content_width": 120},
    add_completion=False,
    pretty_exceptions_enable=False,
    rich_markup_mode=None,
)


def _version(value: bool) -> None:
    if value:
        typer.echo(f"stability {__version__}")
        raise typer.Exit(0)


@app.callback(invoke_without_command=True)
def _root(
    ctx: typer.Context,
    version: Annotated[
        bool,
        typer.Option("--version", callback=_version, is_eager=True, help="Print the version."),
    ] = False,
) -> None:
    """Frequency-stability analysis of oscillator logs."""
    if ctx.invoked_subcommand is None:
        typer.echo(ctx.get_help())
        raise typer.Exit(0)


# in the order the help lists them: the main job, its causes and time error, comparisons
# and studies, many logs and live runs, then tools (history is added below)
app.command("analyze")(analyze_cmd.analyze)
app.command("inspect")(inspect_cmd.inspect)
app.command("record")(record_cmd.record)
app.command("spectrum")(spectrum_cmd.spectrum_command)
app.command("time-error")(time_error_cmd.time_error)
app.command("masks")(masks_cmd.masks)
app.command("overlay")(overlay_cmd.overlay)
app.command("separate")(separate_cmd.separate_command)
app.command("phase-noise")(phase_noise_cmd.phase_noise_command)
app.command("timeline")(timeline_cmd.timeline_command)
app.command("batch")(batch_cmd.batch)
app.command("watch")(watch_cmd.watch)
app.command("capture")(capture_cmd.capture)
app.command("simulate")(simulate_cmd.simulate_cmd)
app.command("demo")(demo_cmd.demo)
app.command("validate")(validate_cmd.validate_command)

#: ``stability history`` and its subcommands (calibration history per device).
history_app = typer.Typer(
    name="history",
    cls=StabilityGroup,
    add_completion=False,
    pretty_exceptions_enable=False,
    rich_markup_mode=None,
)
history_app.callback(invoke_without_command=True)(history_cmd.history)
history_app.command("import")(history_cmd.history_import)
history_app.command("export")(history_cmd.history_export)
history_app.command("show")(history_cmd.history_show)
history_app.command("set-interval")(history_cmd.history_set_interval)
app.add_typer(history_app, name="history")


def main() -> None:
    """Run the command line (the program's entry is :mod:`stability_cli.entry`)."""
    run_program(app)


if __name__ == "__main__":
    main()
