"""``stability demo``: the whole job on the bundled (invented) demo data.

The demo data (``datasets/demo/``, made by ``make_demo.py`` beside them) are an
invented oscillator qualification: a counter log of a 10 MHz OCXO against a
rubidium reference, and a 1 PPS time-interval log of a satellite-disciplined
receiver against the same reference. The demo runs what a practitioner would:

* the counter log with ``--stats oadev,mdev,hdev --drift log``: the oscillator
  is still settling after switch-on, and the logarithmic model
  y = a ln(b t + 1) + c is the usual model of a quartz oscillator after turn-on
  (NIST SP 1065 [1]_); a linear model leaves most of the settling in the data and
  the long-tau deviations rise with it;
* the PPS log with ``--stats tdev,mtie,oadev``: time statistics for a timing
  source (ITU-T G.810 [2]_), no drift removed (the frequency offset of the
  reference is part of the time error that MTIE judges);
* when the ``record`` command and the example specification and information
  files are there, the calibration record of the counter log.

References
----------
.. [1] W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065
   (2008), section 5.16 (frequency drift; log model after turn-on).
.. [2] ITU-T Recommendation G.810 (1996), *Definitions and terminology for
   synchronization networks* (TIE, MTIE, TDEV).
"""

from __future__ import annotations

import importlib
import importlib.util
from pathlib import Path
from typing import Annotated

import typer

import stability
from stability.errors import InputError
from stability.reports.tables import terminal_table
from stability.run import AnalysisRun
from stability.workflow import analyze_into

from . import main as _app_first  # noqa: F401  (the app and analyze load first)
from .analyze_cmd import summary_block
from .common import DebugOpt, handle_errors
from .main import app

__all__ = [
    "demo",
    "default_data_folder",
    "COUNTER_LOG",
    "PPS_LOG",
    "SPEC_FILE",
    "INFO_FILE",
    "COUNTER_SETTINGS",
    "PPS_SETTINGS",
]

COUNTER_LOG = "ocxo-vs-rb-counter.csv.gz"
PPS_LOG = "gnss-rx-vs-rb-pps.csv"
SPEC_FILE = "spec-example.toml"
INFO_FILE = "info-example.toml"

#: How the demo analyses the counter log (see the module docstring for why).
COUNTER_SETTINGS = {"nominal": "10MHz", "stats": "oadev,mdev,hdev", "drift": "log"}
#: How the demo analyses the PPS log.
PPS_SETTINGS = {"stats": "tdev,mtie,oadev", "drift": "none"}

DemoOutOpt = Annotated[
    Path | None,
    typer.Option("--out", help="Output folder (default: stability-demo/ here)."),
]
DataOpt = Annotated[
    Path | None,
    typer.Option("--data", help="Folder of the demo logs (default: the bundled datasets/demo/)."),
]


def default_data_folder() -> Path:
    """The bundled demo data: ``datasets/demo/`` of the source tree the package runs from."""
    return Path(stability.__file__).resolve().parents[1] / "datasets" / "demo"


def _validate_demo_args(data: Path | None) -> tuple[Path, Path, Path]:
    folder = data if data is not None else default_data_folder()
    if not folder.is_dir():
        raise InputError(
            "the demo data folder is missing",
            path=str(folder),
            hint="pass --data DIR, or make it with python datasets/demo/make_demo.py",
        )
    logs = []
    for name in (COUNTER_LOG, PPS_LOG):
        path = folder / name
        if not path.is_file():
            raise InputError(
                "demo log missing",
                path=str(path),
                hint=f"make it with python datasets/demo/make_demo.py --out {folder}",
            )
        logs.append(path)
    return folder, logs[0], logs[1]


def _record_available(folder: Path) -> bool:
    if importlib.util.find_spec("cli.record_cmd") is None:
        return False
    if importlib.util.find_spec("stability.spec") is None:
        return False
    return (folder / SPEC_FILE).is_file() and (folder / INFO_FILE).is_file()


def _show(title: str, run: AnalysisRun) -> None:
    typer.echo(f"== {title}")
    typer.echo(terminal_table(run.table))
    typer.echo(summary_block(run))
    typer.echo("")


@app.command("demo")
@handle_errors
def demo(
    out: DemoOutOpt = None,
    data: DataOpt = None,
    debug: DebugOpt = False,
) -> None:
    """Run the whole job on the bundled demo data (an invented OCXO qualification).

    Analyses the counter log (oadev, mdev, hdev; log drift model) into counter/,
    the 1 PPS log (tdev, mtie, oadev) into pps/, and writes the calibration
    record into record/ when the example spec and info files are there.

    Example: stability demo --out stability-demo
    """
    folder, counter, pps = _validate_demo_args(data)
    target = out if out is not None else Path.cwd() / "stability-demo"
    typer.echo(f"demo data: {folder} (invented scenario, see its README.md)")

    counter_run, counter_files = analyze_into(counter, target / "counter", **COUNTER_SETTINGS)
    _show("OCXO against the rubidium reference (counter log)", counter_run)

    pps_run, pps_files = analyze_into(pps, target / "pps", **PPS_SETTINGS)
    _show("receiver 1 PPS against the rubidium reference (time-interval log)", pps_run)

    record_folder = None
    if _record_available(folder):
        record_cmd = importlib.import_module("cli.record_cmd")
        record_folder = target / "record"
        typer.echo("== calibration record of the OCXO (example specification)")
        record_cmd.record(
            log=counter,
            spec=folder / SPEC_FILE,
            info=folder / INFO_FILE,
            nominal=COUNTER_SETTINGS["nominal"],
            stats=COUNTER_SETTINGS["stats"],
            drift=COUNTER_SETTINGS["drift"],
            out=record_folder,
            force=True,  # the demo's own record, remade on every run
            debug=debug,
        )
        typer.echo("")

    shown: list[tuple[str, Path]] = []
    for label, files in (("counter", counter_files), ("pps", pps_files)):
        shown += [
            (f"{label} stability plot", files["sigma_tau"]),
            (f"{label} data over time", files["series"]),
            (f"{label} results table", files["table.md"]),
            (f"{label} summary", files["summary.json"]),
        ]
    if record_folder is not None:
        shown.append(("calibration record", record_folder / "record.pdf"))
    width = max(len(what) for what, _ in shown)
    typer.echo("Open these:")
    for what, path in shown:
        typer.echo(f"  {what.ljust(width)}  {path}")
    if record_folder is None:
        typer.echo("  (no calibration record: the record command or the example files are missing)")
