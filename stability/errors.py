"""The project's exception and warning classes.

Every error the library raises on purpose is a :class:`StabilityError`; the
command line turns one into a single line on standard error and exit code 1.

``StabilityError``
    ``InputError``     the data or a file cannot be used as given (what, where, what to pass)
    ``AnalysisError``  the data were read but the requested analysis cannot be done
    ``SpecError``      a specification or information file is malformed

``StabilityWarning`` is issued for degenerate but survivable situations (a
statistic that cannot be qualified, a fallback chosen by the tool).
"""

from __future__ import annotations

__all__ = [
    "StabilityError",
    "InputError",
    "AnalysisError",
    "SpecError",
    "StabilityWarning",
]


class StabilityError(Exception):
    """Base class of every error raised on purpose by ``stability``.

    Parameters
    ----------
    message
        What is wrong, in one line.
    path, line, column
        Where it is, when it is in a file (line is 1-based, column a name or
        a 1-based number).
    hint
        What to do about it (for example which option to pass).
    """

    def __init__(
        self,
        message: str,
        *,
        path: str | None = None,
        line: int | None = None,
        column: str | int | None = None,
        hint: str | None = None,
    ) -> None:
        self.message = message
        self.path = None if path is None else str(path)
        self.line = line
        self.column = column
        self.hint = hint
        super().__init__(self.one_line())

    def one_line(self) -> str:
        """The message as one line: ``where: what (hint)``."""
        where = ""
        if self.path is not None:
            where = self.path
            if self.line is not None:
                where += f":{self.line}"
        if self.column is not None:
            named = str(self.column)
            if not named.startswith("column "):  # a header-less column is named so already
                named = f"column {named}"
            where += f"{' ' if where else ''}{named}"
        text = f"{where}: {self.message}" if where else self.message
        if self.hint:
            text += f" ({self.hint})"
        return " ".join(text.split())


class InputError(StabilityError, ValueError):
    """The input (file, array or argument) cannot be used as given (also a ``ValueError``)."""


class AnalysisError(StabilityError):
    """The analysis asked for cannot be carried out on these data."""


class SpecError(StabilityError, ValueError):
    """A specification or information file is malformed (also a ``ValueError``)."""


class StabilityWarning(UserWarning):
    """A degenerate but survivable situation (NaN result, fallback chosen)."""
