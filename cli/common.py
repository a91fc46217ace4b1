"""What every command shares: option declarations, error handling, exit codes.

Exit codes (one place): 0 success, 1 input or analysis error (one line on
standard error), 2 usage error (typer's own).
"""

from __future__ import annotations

import functools
import sys
import traceback
import warnings
from collections.abc import Callable
from pathlib import Path
from typing import Annotated, Any, TypeVar

import typer

from stability.errors import StabilityError

EXIT_OK = 0
EXIT_ERROR = 1
EXIT_USAGE = 2

F = TypeVar("F", bound=Callable[..., Any])

# Common options: one spelling across commands (see DESIGN "The command line").
LogArg = Annotated[Path, typer.Argument(help="The log file to read.", show_default=False)]
KindOpt = Annotated[
    str,
    typer.Option(
        "--kind",
        help="What the value column holds: auto, phase (time error, s), "
        "frequency (absolute, Hz) or fractional (fractional frequency).",
    ),
]
ColumnOpt = Annotated[
    str | None, typer.Option("--column", help="Value column: 1-based number or header name.")
]
TimeColumnOpt = Annotated[
    str | None,
    typer.Option("--time-column", help="Time-stamp column: 1-based number or header name."),
]
Tau0Opt = Annotated[
    str | None,
    typer.Option("--tau0", help="Sample interval, e.g. 1s or 100ms (needed without time stamps)."),
]
NominalOpt = Annotated[str | None, typer.Option("--nominal", help="Nominal frequency, e.g. 10MHz.")]
StatsOpt = Annotated[
    str, typer.Option("--stats", help="Comma list of statistics, e.g. oadev,mdev,hdev.")
]
TausOpt = Annotated[
    str, typer.Option("--taus", help="Tau grid: octave, decade, all, or a list in seconds.")
]


def _confidence_level(value: float) -> float:
    if not 0.0 < value < 1.0:
        raise typer.BadParameter(f"a level strictly between 0 and 1 (e.g. 0.95), got {value:g}")
    return value


ConfidenceOpt = Annotated[
    float,
    typer.Option(
        "--confidence",
        help="Two-sided confidence level of the intervals.",
        callback=_confidence_level,
    ),
]
OutOpt = Annotated[
    Path | None,
    typer.Option("--out", help="Output folder (default: <log name>-stability/ here)."),
]
StrictOpt = Annotated[
    bool, typer.Option("--strict", help="Treat every unreadable row as an error, not a gap.")
]
JsonOpt = Annotated[
    bool, typer.Option("--json", help="Print the machine-readable summary to standard output.")
]
DebugOpt = Annotated[bool, typer.Option("--debug", help="Show the full traceback of an error.")]
OutliersOpt = Annotated[
    str, typer.Option("--outliers", help="Outlier threshold in robust sigmas, or 'off'.")
]
DriftOpt = Annotated[
    str,
    typer.Option(
        "--drift", help="Drift model removed first: none, linear, quadratic, log or diffusion."
    ),
]
AverageOpt = Annotated[
    int, typer.Option("--average", help="Average N adjacent samples first (longer tau0).")
]
WrapOpt = Annotated[
    str | None,
    typer.Option("--wrap", help="Unwrap time-interval readings that jump by this period."),
]
PlotFormatOpt = Annotated[
    str, typer.Option("--plot-format", help="Plot file format: png, svg or pdf.")
]


def fail(message: str) -> None:
    """Print one error line on standard error and exit with code 1."""
    typer.echo(f"error: {message}", err=True)
    raise typer.Exit(EXIT_ERROR)


def show_warning(message: Warning | str, category: type[Warning], *_: Any, **__: Any) -> None:
    """Print a warning as one ``warning:`` line on standard error (no source line)."""
    text = " ".join(str(message).split())
    typer.echo(f"warning: {text}", err=True)


def handle_errors(func: F) -> F:
    """Turn the library's errors into one line on standard error and exit code 1.

    Warnings are printed as one ``warning:`` line each. The command must take a
    ``debug`` keyword; with it the traceback (and the warnings' source lines) is shown.
    """

    @functools.wraps(func)
    def wrapper(*args: Any, **kwargs: Any) -> Any:
        debug = bool(kwargs.get("debug", False))
        try:
            with warnings.catch_warnings():
                if not debug:
                    warnings.showwarning = show_warning
                return func(*args, **kwargs)
        except StabilityError as exc:
            if debug:
                traceback.print_exc(file=sys.stderr)
            fail(exc.one_line())
        except (OSError, MemoryError) as exc:
            if debug:
                traceback.print_exc(file=sys.stderr)
            fail(f"{type(exc).__name__}: {exc}")

    return wrapper  # type: ignore[return-value]


def outliers_value(text: str) -> float | None:
    """``--outliers``: a threshold in robust sigmas, or ``off``."""
    word = str(text).strip().lower()
    if word in ("off", "none", "no"):
        return None
    try:
        value = float(word)
    except ValueError:
        raise StabilityError(
            f"--outliers takes a number of robust sigmas or 'off', got {text!r}"
        ) from None
    return value
