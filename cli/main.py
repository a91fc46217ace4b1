"""The ``stability`` command line: one thin function per command.

Commands call the library and format its results; no computation lives here.
Exit codes are in :mod:`cli.common`.
"""

from __future__ import annotations

from typing import Annotated

import typer

import stability

app = typer.Typer(
    name="stability",
    help="Frequency-stability analysis of oscillator logs: Allan-family deviations "
    "with noise types and confidence intervals.",
    no_args_is_help=True,
    add_completion=False,
    pretty_exceptions_enable=False,
)


def _version(value: bool) -> None:
    if value:
        typer.echo(f"stability {stability.__version__}")
        raise typer.Exit(0)


@app.callback()
def main(
    version: Annotated[
        bool,
        typer.Option("--version", callback=_version, is_eager=True, help="Print the version."),
    ] = False,
) -> None:
    """Frequency-stability analysis of oscillator logs."""


# Commands register themselves on ``app`` when their module is imported.
from . import (  # noqa: E402
    analyze_cmd,  # noqa: F401
    demo_cmd,  # noqa: F401
    inspect_cmd,  # noqa: F401
    overlay_cmd,  # noqa: F401
    phase_noise_cmd,  # noqa: F401
    record_cmd,  # noqa: F401
    separate_cmd,  # noqa: F401
    simulate_cmd,  # noqa: F401
    timeline_cmd,  # noqa: F401
)
