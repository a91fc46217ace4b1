"""How results draw and display themselves, without the base knowing the figures.

A result type of a low floor (:class:`~stability.measurement.Measurement`,
:class:`~stability.table.StabilityTable`, the studies' results, the run) has a
``plot`` method and a rich display in a notebook (``_repr_html_``), but the code
that draws and formats lives floors above it (``stability.figures``,
``stability.reports``). The dependency is turned round: this module keeps three
registries keyed by result type, and the floors that own the drawing fill them
when they are imported:

``register_plot(kind, draw, view="plot")``
    ``draw(result, ax=None, figure=None, **options)`` draws ``result`` with the
    same figure function the command line uses and returns what it drew; a
    type with more than one figure names the others (``view="series"``);
``register_html(kind, render)``
    ``render(result) -> str``: an HTML fragment, every text escaped;
``register_text(kind, render)``
    ``render(result) -> str``: the plain-text display (a terminal, IPython
    without HTML).

A result's methods call :func:`plot`, :func:`html` and :func:`text` here. When
nothing is registered for a type yet, the *providers* are imported first: the
module names the package face (``stability/__init__.py``, above every floor)
hands to :func:`add_provider`, so ``import stability`` stays light and the
figures load on the first ``plot()``. Lookup follows the type's method
resolution order, so a subclass uses its base's entry unless it has its own.
"""

from __future__ import annotations

import importlib
from collections.abc import Callable
from typing import Any

from .errors import StabilityError

__all__ = [
    "register_plot",
    "register_html",
    "register_text",
    "add_provider",
    "plot",
    "html",
    "text",
    "registered",
    "Displayable",
]

_PLOT: dict[tuple[type, str], Callable[..., Any]] = {}
_HTML: dict[type, Callable[[Any], str]] = {}
_TEXT: dict[type, Callable[[Any], str]] = {}
_PROVIDERS: list[str] = []
_LOADED: set[str] = set()


def register_plot(kind: type, draw: Callable[..., Any], view: str = "plot") -> None:
    """Draw results of type ``kind`` with ``draw(result, ax=None, figure=None, **options)``.

    ``view`` names the figure when a type has several (``AnalysisRun``: the
    sigma-tau plot, ``"plot"``, and the data over time, ``"series"``).
    """
    _PLOT[(kind, view)] = draw


def register_html(kind: type, render: Callable[[Any], str]) -> None:
    """Display results of type ``kind`` in a notebook as ``render(result)`` (an HTML fragment)."""
    _HTML[kind] = render


def register_text(kind: type, render: Callable[[Any], str]) -> None:
    """Display results of type ``kind`` as plain text with ``render(result)``."""
    _TEXT[kind] = render


def add_provider(module: str) -> None:
    """Import ``module`` (which registers its drawers and renderers) before the first lookup."""
    if module not in _PROVIDERS:
        _PROVIDERS.append(module)


def _load_providers() -> None:
    # importing twice is harmless (the import system keeps one module and locks it)
    for module in list(_PROVIDERS):
        if module not in _LOADED:
            importlib.import_module(module)
            _LOADED.add(module)


def _find(table: dict[Any, Callable[..., Any]], kind: type, view: str | None) -> Any:
    for base in kind.__mro__:
        key = base if view is None else (base, view)
        if key in table:
            return table[key]
    return None


def _lookup(
    table: dict[Any, Callable[..., Any]], kind: type, view: str | None = None
) -> Callable[..., Any] | None:
    found = _find(table, kind, view)
    if found is None and any(m not in _LOADED for m in _PROVIDERS):
        _load_providers()
        found = _find(table, kind, view)
    return found


def registered(kind: type) -> dict[str, bool]:
    """Which displays a type has (after loading the providers): plot, html, text."""
    _load_providers()
    return {
        "plot": _find(_PLOT, kind, "plot") is not None,
        "html": _find(_HTML, kind, None) is not None,
        "text": _find(_TEXT, kind, None) is not None,
    }


def plot(
    result: Any, ax: Any = None, figure: Any = None, *, view: str = "plot", **options: Any
) -> Any:
    """Draw ``result`` with its registered figure function; what it drew."""
    draw = _lookup(_PLOT, type(result), view)
    if draw is None:
        raise StabilityError(
            f"no figure {view!r} is registered for {type(result).__name__}",
            hint="import stability (the package registers the figures) before plotting",
        )
    return draw(result, ax=ax, figure=figure, **options)


def html(result: Any) -> str | None:
    """The HTML display of ``result``, or None when its type has none."""
    render = _lookup(_HTML, type(result))
    return None if render is None else render(result)


def text(result: Any) -> str:
    """The plain-text display of ``result`` (its ``repr`` when its type has none)."""
    render = _lookup(_TEXT, type(result))
    return repr(result) if render is None else render(result)


class Displayable:
    """Rich display for a result type: ``_repr_html_`` and IPython's plain text.

    A result class inherits from it and defines its own ``plot`` (with the
    signature and docstring of its figure) calling :func:`plot`. The methods
    look up this module's registries, so the class needs no import of the
    floors that draw and format it.
    """

    __slots__ = ()

    def _repr_html_(self) -> str | None:
        return html(self)

    def _repr_pretty_(self, printer: Any, cycle: bool) -> None:
        printer.text(repr(self) if cycle else text(self))
