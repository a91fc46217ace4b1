"""``stability demo``: the whole job on the bundled (invented) demo data.

The demo data (``datasets/demo/`` in the repository, made by ``make_demo.py``
beside them, and installed with the package as ``stability_cli/demo_data/``) are
an invented oscillator qualification: a counter log of a 10 MHz OCXO against a
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
* when the example specification and information files are there, the
  calibration record of the counter log;
* when the timing demo log is there (``make_timing_demo.py``, a second invented
  scenario), ``stability time-error`` on it: the receiver's sawtooth removed and
  the time error judged against the bundled PRTC-A mask (limits recalled from
  ITU-T G.8272, from memory).

References
----------
.. [1] W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST SP 1065
   (2008), section 5.16 (frequency drift; log model after turn-on).
.. [2] ITU-T Recommendation G.810 (1996), *Definitions and terminology for
   synchronization networks* (TIE, MTIE, TDEV).
"""

from __future__ import annotations

from importlib import resources
from pathlib import Path
from typing import Annotated

import typer

from stability.errors import InputError
from stability.reports.tables import terminal_table
from stability.reports.timing import time_error_lines
from stability.run import AnalysisRun
from stability.settings import RunSettings
from stability.workflow import analyze_into, record_into
from stability.workflow_timing import time_error_into

from .common import echo
from .options import PLOT_FORMAT, RunOptions, command
from .progress import ProgressDisplay, step_count
from .reporting import record_lines, summary_block

__all__ = [
    "demo",
    "default_data_folder",
    "COUNTER_LOG",
    "PPS_LOG",
    "SPEC_FILE",
    "INFO_FILE",
    "TIMING_LOG",
    "TIMING_SETTINGS",
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
#: The timing demo log (optional) and how the demo analyses it.
TIMING_LOG = "gnss-timing-receiver-pps.csv.gz"
TIMING_SETTINGS = {"column": "pps_te_ns", "mask": "g8272-prtc-a", "sawtooth": "qerr_ns"}

DemoOutOpt = Annotated[
    Path | None,
    typer.Option(
        "--out",
        help="Output folder (default: stability-demo/ in the current folder).",
        metavar="DIR",
    ),
]
DataOpt = Annotated[
    Path | None,
    typer.Option(
        "--data",
        help="Folder of the demo logs (default: the demo data installed with the tool).",
        metavar="DIR",
    ),
]


def default_data_folder() -> Path:
    """The bundled demo data.

    Installed, they are the package data ``demo_data/`` of the command-line
    package; in a source tree (or an editable install) they are the
    repository's ``datasets/demo/`` beside the ``cli/`` folder.
    """
    bundled = Path(str(resources.files(__package__ or "stability_cli") / "demo_data"))
    if bundled.is_dir():
        return bundled
    return Path(__file__).resolve().parents[1] / "datasets" / "demo"


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
    return (folder / SPEC_FILE).is_file() and (folder / INFO_FILE).is_file()


def _show(title: str, run: AnalysisRun) -> None:
    echo(f"== {title}")
    echo(terminal_table(run.table))
    echo(summary_block(run))
    echo("")


def _analysed(
    log: Path, folder: Path, settings: RunSettings, opts: RunOptions
) -> tuple[AnalysisRun, dict[str, Path]]:
    with ProgressDisplay() as bar:
        return analyze_into(
            log,
            folder,
            settings,
            plot_format=opts.plot_format,
            on_progress=bar.reading(log.name),
            on_step=bar.steps(log.name, step_count(settings.analysis.stats)),
        )


@command(PLOT_FORMAT, subject="data")
def demo(out: DemoOutOpt = None, data: DataOpt = None, *, opts: RunOptions) -> None:
    """Run the whole job on the bundled demo data (an invented OCXO qualification).

    Analyses the counter log (oadev, mdev, hdev; log drift model) into counter/,
    the 1 PPS log (tdev, mtie, oadev) into pps/, writes the calibration
    record into record/ when the example spec and info files are there, and
    judges the timing demo log against PRTC-A into timing/ when it is there.

    Example: stability demo --out stability-demo
    """
    folder, counter, pps = _validate_demo_args(data)
    target = out if out is not None else Path.cwd() / "stability-demo"
    echo(f"demo data: {folder} (invented scenario, see its README.md)")

    counter_run, counter_files = _analysed(
        counter, target / "counter", RunSettings.from_options(**COUNTER_SETTINGS), opts
    )
    _show("OCXO against the rubidium reference (counter log)", counter_run)

    pps_run, pps_files = _analysed(
        pps, target / "pps", RunSettings.from_options(**PPS_SETTINGS), opts
    )
    _show("receiver 1 PPS against the rubidium reference (time-interval log)", pps_run)

    record_folder = None
    if _record_available(folder):
        record_folder = target / "record"
        echo("== calibration record of the OCXO (example specification)")
        with ProgressDisplay() as bar:
            outcome = record_into(
                counter,
                record_folder,
                folder / SPEC_FILE,
                folder / INFO_FILE,
                RunSettings.from_options(**COUNTER_SETTINGS),
                force=True,  # the demo's own record, remade on every run
                plot_format=opts.plot_format,
                on_progress=bar.reading(counter.name),
            )
        for line in record_lines(outcome):
            echo(line)
        echo("")

    timing_files = None
    if (folder / TIMING_LOG).is_file():
        echo("== GNSS timing receiver 1 PPS against PRTC-A (second invented scenario)")
        settings = dict(TIMING_SETTINGS)
        with ProgressDisplay() as bar:
            timing, timing_files = time_error_into(
                folder / TIMING_LOG,
                target / "timing",
                RunSettings.from_options(column=settings.pop("column")),
                plot_format=opts.plot_format,
                on_progress=bar.reading(TIMING_LOG),
                **settings,
            )
        for line in time_error_lines(timing):
            echo(line)
        echo("")

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
    if timing_files is not None:
        shown += [
            ("timing: time interval error", timing_files[f"tie.{opts.plot_format}"]),
            ("timing: MTIE and TDEV, mask", timing_files[f"mtie_tdev.{opts.plot_format}"]),
            ("timing: report", timing_files["time_error.md"]),
        ]
    width = max(len(what) for what, _ in shown)
    echo("Open these:")
    for what, path in shown:
        echo(f"  {what.ljust(width)}  {path}")
    if record_folder is None:
        echo("  (no calibration record: the example spec and info files are missing)")
