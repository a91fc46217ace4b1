"""A fleet at once: many logs analysed on Dask, one row each, and the fleet's own view.

``batch`` is the entry point (``stability batch`` on the command line)::

    from stability.fleet import batch, jobs_from_patterns
    fleet = batch("manifest.toml", "out/")                        # a manifest, CSV or TOML
    fleet = batch(jobs_from_patterns(["logs/*.csv"]), "out/", workers=2)
    fleet.table, fleet.plot(), fleet.plot(view="distribution")    # the table, the figures

The package has these parts:

:mod:`stability.fleet.manifest`
    the jobs of a fleet, from a manifest or from file-name patterns;
:mod:`stability.fleet.work`
    one log on a worker: analysed and judged as ``analyze`` and ``record`` do,
    its outputs in ``OUT/<device>/``, a small row sent back;
:mod:`stability.fleet.state`
    the progress file that lets an interrupted fleet resume;
:mod:`stability.fleet.engine`
    the Dask driver: a local cluster of processes or a running scheduler;
:mod:`stability.fleet.table` and :mod:`stability.fleet.batch`
    the fleet table, the ranking, and the fleet's files (CSV, Parquet,
    Markdown, figures, one self-contained HTML page);
:mod:`stability.fleet.result`
    the :class:`Fleet` ``batch`` returns: the table, the curves and the limit,
    the two figures and the notebook display.

Dask (the ``fleet`` extra) is imported only when a fleet runs.
"""

from __future__ import annotations

from .batch import batch, fleet_names
from .engine import FleetRun, run_fleet
from .manifest import FleetJob, device_from_name, jobs_from_patterns, read_manifest
from .result import Fleet, fleet_result
from .state import PROGRESS_NAME, read_progress
from .table import fleet_frame, population, rank_devices

__all__ = [
    "batch",
    "fleet_names",
    "Fleet",
    "fleet_result",
    "FleetJob",
    "FleetRun",
    "run_fleet",
    "read_manifest",
    "jobs_from_patterns",
    "device_from_name",
    "read_progress",
    "PROGRESS_NAME",
    "fleet_frame",
    "population",
    "rank_devices",
]
