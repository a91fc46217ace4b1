"""The fleet as a result: its table, its curves and its limit, drawn and shown in a notebook.

:func:`stability.fleet.batch` returns a :class:`Fleet`: the fleet table
(``.table``, the DataFrame written as ``fleet.csv``), the ranking, each
device's curve and the specification the fleet shares. Its figures are the
ones ``stability batch`` writes, drawn by the same functions
(:func:`draw_fleet` for ``fleet.png``, :func:`draw_distribution` for
``fleet_distribution.png``), and in a notebook it shows the counts, the
devices furthest from the limit or the fleet, and the table with its statuses
and verdicts, sortable by a click on a heading (:func:`stability.reports.fleet.fleet_fragment`).
:func:`fleet_result` makes one from the results of a fleet run, so a fleet read
back or run by other means is drawn the same way. The display is registered
with :mod:`stability.display` when this module is imported (a fleet exists
only once it is).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from datetime import datetime
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from ..display import Displayable, register_html, register_plot, register_text
from ..display import plot as _plot
from ..errors import InputError
from ..figures.fleet import DistributionDrawn, FleetDrawn, distribution_figure, fleet_figure
from ..figures.labels import tool_footer
from ..reports.fleet import fleet_fragment, fleet_text
from ..spec import Spec
from .engine import FleetRun
from .table import curves_of, fleet_frame, population, rank_devices

__all__ = [
    "Fleet",
    "fleet_result",
    "draw_fleet",
    "draw_distribution",
    "NAMED_DEVICES",
    "BAND_MINIMUM",
]

#: How many devices the fleet figure names at most (and a quarter of the fleet at most).
NAMED_DEVICES = 5
#: Devices needed at a tau for the fleet figure's median and band there.
BAND_MINIMUM = 3
_VIEWS = {"curves": "plot", "distribution": "distribution"}


@dataclass(frozen=True)
class Fleet(Displayable):
    """A fleet of logs analysed together: what ``stability batch`` writes, as one object.

    Attributes
    ----------
    table
        The fleet table, one row per log (the content of ``fleet.csv``); a failed
        log has status ``error`` and its message.
    ranking
        The devices furthest from the limit (when judged) or from the fleet, worst first.
    curves
        Device -> (tau, deviation) of ``statistic`` for every log that finished.
    statistic, key_taus
        What the table shows.
    spec
        The specification every log is judged against, drawn as the limit (None
        when there is none, several, or one of another statistic).
    at
        The tau of the distribution view, s.
    title
        The heading of the figures and pages.
    generated
        When the fleet's table was made.
    settings
        The settings every log shares (empty when they differ).
    folder
        The output folder, or None for a fleet made in memory.
    """

    table: pd.DataFrame
    ranking: pd.DataFrame
    curves: dict[str, tuple[np.ndarray, np.ndarray]]
    statistic: str
    key_taus: tuple[float, ...]
    spec: Spec | None = None
    at: float = 100.0
    title: str = "fleet"
    generated: datetime | None = None
    settings: dict[str, Any] = field(default_factory=dict)
    folder: Path | None = None

    def __repr__(self) -> str:
        counts = self.table["status"].value_counts().to_dict() if len(self.table) else {}
        shown = ", ".join(f"{n} {s}" for s, n in counts.items()) or "no logs"
        return f"Fleet({len(self.table)} logs of {self.statistic}: {shown})"

    def __len__(self) -> int:
        return len(self.table)

    def to_frame(self) -> pd.DataFrame:
        """The fleet table (a copy): one row per log, as in ``fleet.csv``."""
        return self.table.copy()

    @property
    def named(self) -> list[str]:
        """The devices the fleet figure draws in colour: the worst ranked, a quarter of
        the finished devices at most."""
        count = min(NAMED_DEVICES, max(1, len(self.curves) // 4))
        return list(self.ranking["device"].head(count)) if "device" in self.ranking else []

    def limit_at(self, tau: float) -> float | None:
        """The specification's limit at ``tau`` (None without a specification or outside it)."""
        if self.spec is None:
            return None
        limit = float(self.spec.limit_at(tau))
        return limit if math.isfinite(limit) else None

    def values_at(self, tau: float) -> dict[str, float]:
        """Device -> deviation at ``tau`` (the devices measured there)."""
        out = {}
        for name, (taus, dev) in self.curves.items():
            hit = np.flatnonzero(np.isclose(taus, tau, rtol=1e-9, atol=0.0))
            if hit.size:
                out[name] = float(dev[hit[0]])
        return out

    def plot(
        self, ax: Any = None, *, figure: Any = None, view: str = "curves", **options: Any
    ) -> Any:
        """The fleet's figures, as ``stability batch`` draws them.

        Parameters
        ----------
        ax
            A matplotlib ``Axes`` to draw onto (the legend beside it), or None for
            a figure of its own (never pyplot).
        figure
            A ``Figure`` or ``SubFigure`` to draw the whole figure into instead.
        view
            ``"curves"``: every device's curve, the median and 10-90 % band, the
            limit and the worst devices named (``fleet.png``);
            ``"distribution"``: how the devices are spread at one tau
            (``fleet_distribution.png``; ``at=`` another tau than the fleet's).
        options
            Those of :func:`stability.figures.fleet.fleet_figure` or
            :func:`~stability.figures.fleet.distribution_figure` (title, footer, named).

        Returns
        -------
        stability.figures.fleet.FleetDrawn or DistributionDrawn
            The figure, its panel and the data as drawn.
        """
        if view not in _VIEWS:
            raise InputError(f"view must be 'curves' or 'distribution', got {view!r}")
        return _plot(self, ax=ax, figure=figure, view=_VIEWS[view], **options)


def fleet_result(
    run: FleetRun,
    *,
    at: float = 100.0,
    title: str | None = None,
    generated: datetime | None = None,
    settings: Mapping[str, Any] | None = None,
) -> Fleet:
    """The :class:`Fleet` of a fleet run's results (the table, ranking, curves and limit)."""
    if not isinstance(run, FleetRun):
        raise InputError(f"run must be a stability.fleet.FleetRun, got {type(run).__name__}")
    table = fleet_frame(run.results, run.statistic, run.key_taus, run.judged)
    spec = next(iter(run.specs.values())) if len(run.specs) == 1 else None
    if spec is not None and spec.statistic != run.statistic:
        spec = None
    return Fleet(
        table=table,
        ranking=rank_devices(table),
        curves=curves_of(run.results),
        statistic=run.statistic,
        key_taus=tuple(run.key_taus),
        spec=spec,
        at=float(at),
        title=title or f"fleet of {len(run.results)} logs: {run.statistic}",
        generated=generated,
        settings=dict(settings or {}),
        folder=run.folder,
    )


def _own(ax: Any, figure: Any, fleet: Fleet, options: dict[str, Any], title: str) -> None:
    """A figure of its own carries the fleet's title and footer, as the command's does."""
    if ax is None and figure is None:
        options.setdefault("title", title)
        options.setdefault("footer", tool_footer(fleet.generated))


def draw_fleet(fleet: Fleet, ax: Any = None, figure: Any = None, **options: Any) -> FleetDrawn:
    """``fleet.png`` and ``Fleet.plot()``: every curve, the band, the limit, the worst named."""
    _own(ax, figure, fleet, options, fleet.title)
    options.setdefault("named", fleet.named)
    limits = fleet.spec.limits if fleet.spec is not None else None
    return fleet_figure(
        fleet.curves,
        population(fleet.curves, BAND_MINIMUM),
        statistic=fleet.statistic,
        limits=limits,
        axes=ax,
        into=figure,
        **options,
    )


def draw_distribution(
    fleet: Fleet, ax: Any = None, figure: Any = None, *, at: float | None = None, **options: Any
) -> DistributionDrawn:
    """``fleet_distribution.png`` and ``Fleet.plot(view="distribution")``: the spread at a tau."""
    tau = fleet.at if at is None else float(at)
    if not (tau > 0 and math.isfinite(tau)):
        raise InputError(f"at must be a positive tau in seconds, got {at!r}")
    _own(ax, figure, fleet, options, f"{fleet.title}: spread at \u03c4 = {tau:g} s")
    options.setdefault("named", fleet.named)
    return distribution_figure(
        fleet.values_at(tau),
        tau,
        statistic=fleet.statistic,
        limit=fleet.limit_at(tau),
        axes=ax,
        into=figure,
        **options,
    )


def _html(fleet: Fleet) -> str:
    return fleet_fragment(
        fleet.table,
        fleet.ranking,
        statistic=fleet.statistic,
        key_taus=fleet.key_taus,
        title=fleet.title,
        settings=fleet.settings,
    )


def _text(fleet: Fleet) -> str:
    return fleet_text(fleet.table, fleet.ranking, title=fleet.title)


register_plot(Fleet, draw_fleet)
register_plot(Fleet, draw_distribution, view="distribution")
register_html(Fleet, _html)
register_text(Fleet, _text)
