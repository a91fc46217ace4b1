"""Make the demo's calibration history: invented follow-up checks of HM-OCXO-0417, and a figure.

The scenario is invented (see README.md beside this file). After its
qualification on 2 March 2026 (the demo's own record, made from
``ocxo-vs-rb-counter.csv.gz``), the fictional Harbour Metrology Lab checks the
new oscillator against its rubidium every month or two during its first year,
as is common practice for a young quartz oscillator whose aging is still
settling. Each check is a 4-hour counter log, simulated here with
:func:`stability.simulate.simulate` (white FM 1e-12 and a flicker floor 3e-13 at
1 s, as in the demo log) at a frequency offset that follows the logarithmic
aging of a young crystal (NIST SP 1065 [1]_ section 5.16),

    y(t) = y_q + 1.2e-10 ln(1 + t / 30 d) + e,

with y_q the offset of the qualification record, t the days since it, and e a
day-to-day reproducibility of 4e-12 (retrace and environment; normal). Each log
is recorded with :func:`stability.workflow.record_into` against the demo's
specification; only the ``record.json`` of each check is kept, in ``history/``
(``HM-OCXO-0417-YYYY-MM-DD.json``). The logs themselves are not kept (each record
holds its log's SHA-256).

``history/history.png`` is the figure ``stability history --device HM-OCXO-0417
--tolerance 3e-9`` draws from the qualification record and these checks.

Usage::

    python datasets/demo/make_history.py [--out DIR]

References
----------
.. [1] W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST Special
   Publication 1065 (2008), section 5.16 (log model of a quartz oscillator).
"""

from __future__ import annotations

import argparse
import gzip
import json
import os
import shutil
import sys
import tempfile
from collections.abc import Sequence
from datetime import UTC, datetime, timedelta
from pathlib import Path

import numpy as np

from stability.errors import StabilityError
from stability.figures import history_figure, save_figure
from stability.files import atomic_write_text, ensure_folder
from stability.history import open_history, review_device
from stability.settings import RunSettings
from stability.simulate import h_from_deviation, simulate
from stability.workflow import record_into

__all__ = ["CHECKS", "DEVICE", "TOLERANCE", "check_log", "make_history", "main"]

HERE = Path(__file__).resolve().parent
DEVICE = "HM-OCXO-0417"
#: Start of each follow-up check (UTC), after the qualification of 2 March 2026.
CHECKS = (
    datetime(2026, 4, 6, 9, 0, tzinfo=UTC),
    datetime(2026, 5, 4, 9, 0, tzinfo=UTC),
    datetime(2026, 6, 1, 9, 0, tzinfo=UTC),
    datetime(2026, 7, 6, 9, 0, tzinfo=UTC),
    datetime(2026, 9, 7, 9, 0, tzinfo=UTC),
    datetime(2026, 11, 2, 9, 0, tzinfo=UTC),
)
QUALIFIED = datetime(2026, 3, 2, 18, 4, tzinfo=UTC)
#: The offset tolerance the figure is drawn with.
TOLERANCE = 3e-9
_AGING = 1.2e-10  # b of y = a + b ln(1 + t / 30 d)
_TIME_CONSTANT_D = 30.0
_REPRODUCIBILITY = 4e-12
_HOURS = 4
_SEED = 4170417
#: How the demo analyses its counter log (the same as ``stability demo``).
_DEMO_SETTINGS = {"nominal": "10MHz", "stats": "oadev,mdev,hdev", "drift": "log"}
_CHECK_SETTINGS = {"nominal": "10MHz", "stats": "oadev,mdev", "drift": "none"}

INFO = """# Information file of an invented follow-up check (see make_history.py).
procedure = "HML-TF-07 rev 3"
notes = "Follow-up check {k} of the new OCXO, on since 2 March 2026; 4 h at 1 s."

[device]
id = "HM-OCXO-0417"
description = "10 MHz oven-controlled crystal oscillator"
nominal = "10 MHz"

[reference]
id = "HML-RB-01"
description = "House rubidium frequency standard"
statistic = "oadev"
stability = [[1, 2e-13], [10, 8e-14], [100, 6e-14], [1000, 1.5e-13], [10000, 3e-13]]

[instrument]
description = "Frequency counter, 1 s gate, rubidium as timebase"
gate_time = "1 s"

[lab]
name = "Harbour Metrology Lab"
operator = "J. Doe"
"""


def check_log(start: datetime, offset: float, drift_per_day: float, rng: np.random.Generator):
    """Gzipped text of one check's counter log: ISO stamps, absolute frequency in Hz."""
    n = _HOURS * 3600
    levels = {0: h_from_deviation(0, 1.0e-12, 1.0), -1: h_from_deviation(-1, 3.0e-13, 1.0)}
    y = simulate(n, 1.0, levels=levels, offset=offset, drift_per_day=drift_per_day, seed=rng)
    stamps = [(start + timedelta(seconds=i)).strftime("%Y-%m-%dT%H:%M:%SZ") for i in range(n)]
    values = np.char.mod("%.7f", 10e6 * (1.0 + y))
    text = "timestamp,frequency_hz\n" + "\n".join(
        f"{s},{v}" for s, v in zip(stamps, values.tolist(), strict=True)
    )
    return gzip.compress((text + "\n").encode("ascii"), compresslevel=6, mtime=0)


def _qualification(work: Path) -> Path:
    """The demo's own record of the qualification (as ``stability demo`` makes it)."""
    outcome = record_into(
        HERE / "ocxo-vs-rb-counter.csv.gz",
        work / "qualification",
        HERE / "spec-example.toml",
        HERE / "info-example.toml",
        RunSettings.from_options(**_DEMO_SETTINGS),
    )
    return outcome.files["record.json"]


def _checks(work: Path, offset0: float, out: Path) -> list[Path]:
    rng = np.random.default_rng(_SEED)
    shutil.copyfile(HERE / "spec-example.toml", work / "spec-example.toml")
    written = []
    for k, start in enumerate(CHECKS, start=1):
        days = (start - QUALIFIED).total_seconds() / 86400.0
        aging = _AGING * np.log1p(days / _TIME_CONSTANT_D)
        offset = offset0 + aging + _REPRODUCIBILITY * rng.standard_normal()
        rate = _AGING / (_TIME_CONSTANT_D + days)
        name = f"ocxo-check-{start:%Y-%m-%d}.csv.gz"
        (work / name).write_bytes(check_log(start, offset, rate, rng))
        (work / f"info-{k}.toml").write_text(INFO.format(k=k), encoding="utf-8")
        outcome = record_into(
            name,
            work / f"check-{k}",
            "spec-example.toml",
            f"info-{k}.toml",
            RunSettings.from_options(**_CHECK_SETTINGS),
        )
        target = out / f"{DEVICE}-{start:%Y-%m-%d}.json"
        atomic_write_text(target, outcome.files["record.json"].read_text(encoding="utf-8"))
        written.append(target)
    return written


def _figure(records: list[Path], out: Path) -> Path:
    with tempfile.TemporaryDirectory() as folder:
        with open_history(Path(folder) / "demo.sqlite") as store:
            for path in records:
                store.add(path.read_text(encoding="utf-8"), source=str(path))
            review = review_device(store, DEVICE, tolerance=TOLERANCE)
        drawn = history_figure(
            review.calibrations,
            review.fit,
            due=review.due,
            tolerance=TOLERANCE,
            confidence=review.confidence,
            title=f"calibration history of {DEVICE} (invented demo data)",
            footer="invented demo data · datasets/demo/make_history.py",
        )
        return save_figure(drawn, out / "history.png", dpi=100)


def make_history(out: str | Path = HERE / "history") -> dict[str, Path]:
    """Write the follow-up records and history.png into ``out``; return name -> path."""
    folder = ensure_folder(out)
    work = Path(tempfile.mkdtemp(prefix="stability-history-demo-"))
    here = Path.cwd()
    try:
        os.chdir(work)  # the records name each input by its file name alone
        qualification = _qualification(work)
        offset0 = json.loads(qualification.read_text(encoding="utf-8"))["measurement"]["offset"]
        checks = _checks(work, offset0, folder)
        figure = _figure([qualification, *checks], folder)
    finally:
        os.chdir(here)
        shutil.rmtree(work, ignore_errors=True)
    return {**{p.name: p for p in checks}, figure.name: figure}


def main(argv: Sequence[str] | None = None) -> int:
    """Command-line entry: ``python datasets/demo/make_history.py [--out DIR]``."""
    parser = argparse.ArgumentParser(description="Make the demo's calibration history.")
    parser.add_argument("--out", type=Path, default=HERE / "history", help="output folder")
    args = parser.parse_args(argv)
    try:
        written = make_history(args.out)
    except StabilityError as exc:
        print(f"error: {exc.one_line()}", file=sys.stderr)
        return 1
    for path in written.values():
        print(f"wrote {path} ({path.stat().st_size / 1e3:.0f} kB)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
