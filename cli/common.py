"""What every command shares at run time: exit codes, one-line errors, the app's group.

Exit codes (the one place they are written down):

* 0: success (also when standard output is a pipe closed early, as by ``| head``);
* 1: an input or analysis error: a file that cannot be read or used, data the
  analysis cannot work on; one ``error:`` line on standard error; also ``stability validate``
  when any of its checks fails (the report says which);
* 2: a usage error: the command line itself is wrong (an unknown option, a missing
  argument, a value of the wrong form or out of range, options that contradict
  each other); one ``error:`` line on standard error.

The rule between 1 and 2: what can be judged from the command line alone is a
usage error; what is found in the files or the data is an input error.

Anything else that goes wrong inside a command is a defect of the tool: it is
reported as one line naming the input and asking for a report with ``--debug``,
which shows the traceback. Tests see such a path through that message.
"""

from __future__ import annotations

import contextlib
import errno
import os
import re
import signal
import sys
import traceback
import warnings
from collections.abc import Iterator, Sequence
from typing import Any

import typer
from typer.core import TyperGroup

from stability.errors import InputError, StabilityError
from stability.outputs import Interrupted

__all__ = [
    "EXIT_OK",
    "EXIT_ERROR",
    "EXIT_USAGE",
    "UsageProblem",
    "StabilityGroup",
    "command_line_checks",
    "guarded",
    "fail",
    "show_warning",
    "printable",
    "echo",
]

EXIT_OK = 0
EXIT_ERROR = 1
EXIT_USAGE = 2


class UsageProblem(Exception):
    """The command line is wrong in a way a single option's check cannot see (exit 2)."""


class _PipeClosed(Exception):
    """Standard output was closed by its reader (``| head``); not an ``OSError``, so
    typer's own handler (which exits 1) lets it pass to :meth:`StabilityGroup.main`."""


#: Control characters (C0, DEL, C1) but tab and newline: text from logs and
#: information files could move the cursor, retitle the window or hide a line.
_CONTROL = re.compile("[\x00-\x08\x0b-\x1f\x7f-\x9f]")


def printable(text: Any) -> str:
    """``text`` with control characters removed (tab and newline kept), safe for a terminal.

    Everything a command prints passes through here (:func:`echo`), so an escape
    sequence written into a log's header or a device id is shown as plain text
    instead of acting on the terminal (ECMA-48 control functions begin with
    ESC or a C1 character).
    """
    return _CONTROL.sub("", str(text))


def echo(message: Any = "", *, nl: bool = True, err: bool = False) -> None:
    """Print one piece of a command's output (control characters removed)."""
    typer.echo(printable(message), nl=nl, err=err)


def _one_line(text: str) -> str:
    return " ".join(printable(text).split())


def fail(message: str, code: int = EXIT_ERROR) -> None:
    """Print one ``error:`` line on standard error and exit with ``code``."""
    echo(f"error: {_one_line(message)}", err=True)
    raise typer.Exit(code)


def show_warning(message: Warning | str, category: type[Warning], *_: Any, **__: Any) -> None:
    """Print a warning as one ``warning:`` line on standard error (no source line)."""
    echo(f"warning: {_one_line(str(message))}", err=True)


@contextlib.contextmanager
def command_line_checks() -> Iterator[None]:
    """Checks of the command line run inside: an :class:`InputError` is a usage error."""
    try:
        yield
    except InputError as exc:
        raise UsageProblem(exc.one_line()) from None


def _quiet_stdout() -> None:
    """Point standard output at the null device, so the final flush cannot fail again."""
    with contextlib.suppress(OSError, ValueError, AttributeError):
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())


@contextlib.contextmanager
def _pipe_guard() -> Iterator[None]:
    try:
        yield
    except KeyboardInterrupt as exc:  # outside a command body (option checks, start)
        fail(_stopped(exc), 128 + _signum(exc))
    except OSError as exc:
        if isinstance(exc, BrokenPipeError) or exc.errno == errno.EPIPE:
            raise _PipeClosed from exc
        raise


@contextlib.contextmanager
def guarded(subject: str | None, debug: bool) -> Iterator[None]:
    """Run a command body: its errors become one line on standard error.

    ``subject`` names the input in the last-resort message (the log, or what
    the command works on). With ``debug`` the traceback is printed first and
    warnings keep their usual form; without it each warning is one line.
    """
    where = f"{subject}: " if subject else ""
    with warnings.catch_warnings():
        if not debug:
            warnings.showwarning = show_warning
        try:
            yield
        except KeyboardInterrupt as exc:  # Ctrl-C, or SIGTERM/SIGHUP (Interrupted)
            fail(_stopped(exc), 128 + _signum(exc))
        except (typer.Exit, typer.Abort, typer.TyperException):
            raise
        except BrokenPipeError:
            raise
        except UsageProblem as exc:
            fail(str(exc), EXIT_USAGE)
        except StabilityError as exc:
            if debug:
                traceback.print_exc(file=sys.stderr)
            fail(exc.one_line())
        except (OSError, MemoryError) as exc:
            if debug:
                traceback.print_exc(file=sys.stderr)
            fail(_system_error(exc, where))
        except Exception as exc:  # the last resort: a defect of the tool
            if debug:
                traceback.print_exc(file=sys.stderr)
            if Interrupted.received is not None:  # a stop signal broke a library mid-import
                stop = Interrupted(Interrupted.received)
                fail(_stopped(stop), 128 + _signum(stop))
            fail(
                f"{where}internal error ({type(exc).__name__}: {exc}); "
                "please report it with the output of --debug"
            )


def _system_error(exc: OSError | MemoryError, where: str) -> str:
    """One line for an error of the system: the file it names (an ``OSError`` from
    ``write()`` names none) and the reason, or that memory ran out."""
    if isinstance(exc, MemoryError):
        return f"{where}out of memory (split the log into parts, or use a machine with more memory)"
    names = [str(n) for n in (exc.filename, exc.filename2) if n is not None]
    reason = exc.strerror or str(exc) or type(exc).__name__
    if names:
        return f"{' -> '.join(names)}: {reason}"
    return f"{where}{type(exc).__name__}: {reason}"


def _signum(exc: KeyboardInterrupt) -> int:
    return int(exc.signum) if isinstance(exc, Interrupted) else int(signal.SIGINT)


def _stopped(exc: KeyboardInterrupt) -> str:
    """The one line of a run stopped by Ctrl-C or a signal (its outputs were not committed)."""
    return f"stopped by {signal.Signals(_signum(exc)).name}; no partial output was left"


def _interrupted(cause: BaseException | None) -> int:
    """One line for a run stopped outside a command body; the exit code 128 + signal."""
    if isinstance(cause, KeyboardInterrupt):
        echo(f"error: {_stopped(cause)}", err=True)
        return 128 + _signum(cause)
    echo("error: aborted", err=True)
    return EXIT_ERROR


def raise_interrupted(signum: int, frame: Any) -> None:
    """Signal handler: SIGINT, SIGTERM and SIGHUP become :class:`Interrupted` (a
    ``KeyboardInterrupt``), and the process remembers that a stop was asked for."""
    raise Interrupted(signum)


def run_program(app: Any) -> None:
    """Run the app with Ctrl-C, SIGTERM and SIGHUP handled alike (one line, exit 128 + n).

    Also a Ctrl-C before the command starts (while the libraries load) ends with
    one line instead of a traceback.
    """

    for signum in (signal.SIGINT, signal.SIGTERM, signal.SIGHUP):
        signal.signal(signum, raise_interrupted)
    try:
        app()
    except KeyboardInterrupt as exc:  # outside click's own handling (start-up, shutdown)
        sys.exit(_interrupted(exc))
    except Exception:  # a stop signal that broke a library mid-import, at start-up
        if Interrupted.received is None:
            raise
        sys.exit(_interrupted(Interrupted(Interrupted.received)))


def _usage_line(exc: typer.TyperException) -> str:
    text = _one_line(exc.format_message())
    ctx = getattr(exc, "ctx", None)
    if ctx is not None and exc.exit_code == EXIT_USAGE:
        text += f" (see '{ctx.command_path} --help')"
    return text


class StabilityGroup(TyperGroup):
    """The app's command group: one-line usage errors and a quiet end on a closed pipe.

    typer would draw usage errors in a box and exit 1 when the reader of
    standard output goes away; here a usage error is one ``error:`` line on
    standard error with exit code 2, and a closed pipe ends the run with exit
    code 0 and no message (the reader wanted no more).
    """

    def make_context(self, *args: Any, **kwargs: Any) -> Any:
        with _pipe_guard():
            return super().make_context(*args, **kwargs)

    def invoke(self, ctx: Any) -> Any:
        with _pipe_guard():
            result = super().invoke(ctx)
            sys.stdout.flush()
            return result

    def main(
        self,
        args: Sequence[str] | None = None,
        prog_name: str | None = None,
        complete_var: str | None = None,
        standalone_mode: bool = True,
        **extra: Any,
    ) -> Any:
        try:
            code = super().main(args, prog_name, complete_var, standalone_mode=False, **extra)
        except typer.TyperException as exc:
            echo(f"error: {_usage_line(exc)}", err=True)
            code = exc.exit_code
        except typer.Abort as exc:
            code = _interrupted(exc.__cause__ or exc.__context__)
        except _PipeClosed:
            _quiet_stdout()
            code = EXIT_OK
        if not isinstance(code, int):
            code = EXIT_OK
        if standalone_mode:
            sys.exit(code)
        return code
