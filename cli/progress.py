"""The progress display of the command line: a rich bar on an interactive terminal only.

The library reports progress through callbacks (:mod:`stability.run`):
``on_progress(bytes_done, bytes_total)`` while a log is read and
``on_step(label)`` after each statistic and after the qualification. This
module turns them into a transient bar on standard error, shown only when
standard error is a terminal and the command prints no JSON; otherwise the
callbacks are None and nothing is drawn.
"""

from __future__ import annotations

from collections.abc import Callable
from types import TracebackType
from typing import Any

from rich.console import Console
from rich.progress import (
    BarColumn,
    MofNCompleteColumn,
    Progress,
    TextColumn,
    TimeElapsedColumn,
    TimeRemainingColumn,
)

from .common import printable

__all__ = ["ProgressDisplay", "step_count", "LogsProgress"]


def step_count(stats: Any) -> int:
    """How many ``on_step`` calls an analysis of ``stats`` makes: one per statistic, plus one."""
    names = stats.split(",") if isinstance(stats, str) else list(stats)
    return len([n for n in names if str(n).strip()]) + 1


class _Bar:
    """A rich bar shown while the ``with`` block runs, stopped (and cleared) at its end."""

    _bar: Progress | None = None

    def __exit__(
        self,
        kind: type[BaseException] | None,
        error: BaseException | None,
        trace: TracebackType | None,
    ) -> None:
        if self._bar is not None:
            self._bar.stop()
            self._bar = None


class ProgressDisplay(_Bar):
    """A progress bar on standard error, or nothing.

    Use as a context manager; :meth:`reading` and :meth:`steps` give the
    callbacks for one log (None when nothing is shown).

    Parameters
    ----------
    enabled
        Whether to show anything at all (false with ``--json``).
    console
        Where to draw (default: standard error); the bar shows only when the
        console is a terminal.
    """

    def __init__(self, enabled: bool = True, console: Console | None = None) -> None:
        self.console = console if console is not None else Console(stderr=True)
        self.shown = bool(enabled) and self.console.is_terminal
        self._bar: Progress | None = None

    def __enter__(self) -> ProgressDisplay:
        if self.shown:
            self._bar = Progress(
                TextColumn("{task.description}", markup=False),
                BarColumn(),
                TextColumn("{task.percentage:>3.0f} %"),
                TimeElapsedColumn(),
                console=self.console,
                transient=True,
            )
            self._bar.start()
        return self

    def reading(self, name: str) -> Callable[[int, int], None] | None:
        """``on_progress(bytes_done, bytes_total)`` for reading the log ``name``, or None."""
        if self._bar is None:
            return None
        bar = self._bar
        name = printable(name)
        task = bar.add_task(f"reading {name}", total=None)

        def on_progress(done: int, total: int) -> None:
            bar.update(task, completed=done, total=max(total, 1))

        return on_progress

    def steps(self, name: str, count: int) -> Callable[[str], None] | None:
        """``on_step(label)`` for ``count`` analysis steps of the log ``name``, or None."""
        if self._bar is None:
            return None
        bar = self._bar
        name = printable(name)
        task = bar.add_task(f"analysing {name}", total=max(count, 1))

        def on_step(label: str) -> None:
            bar.update(task, advance=1, description=f"analysing {name} ({label} done)")

        return on_step


class LogsProgress(_Bar):
    """A bar over the logs of a fleet with the time left, on a terminal only.

    :meth:`update` takes the ``on_result(done, total, result)`` calls of
    :func:`stability.fleet.batch`; failed logs are counted in the bar's text.
    """

    def __init__(self, enabled: bool = True, console: Console | None = None) -> None:
        self.console = console if console is not None else Console(stderr=True)
        self.shown = bool(enabled) and self.console.is_terminal
        self._bar: Progress | None = None
        self._task: Any = None
        self.failed = 0

    def __enter__(self) -> LogsProgress:
        if self.shown:
            self._bar = Progress(
                TextColumn("{task.description}", markup=False),
                BarColumn(),
                MofNCompleteColumn(),
                TimeElapsedColumn(),
                TextColumn("left"),
                TimeRemainingColumn(),
                console=self.console,
                transient=True,
            )
            self._bar.start()
            self._task = self._bar.add_task("logs", total=None)
        return self

    def update(self, done: int, total: int, result: Any) -> None:
        """Move the bar on by one finished log (nothing when no bar is shown)."""
        if result.get("status") == "error":
            self.failed += 1
        if self._bar is not None:
            text = f"logs ({self.failed} failed)" if self.failed else "logs"
            self._bar.update(self._task, completed=done, total=total, description=text)
