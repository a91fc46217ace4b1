"""A fleet on a real Dask cluster: ``stability batch`` against single ``analyze`` runs.

The logs are invented (seeded white FM from :func:`stability.simulate.simulate`,
each at its own known level). A local ``dask.distributed`` cluster of two worker
processes on the loopback address analyses 20 of them, two broken. The batch is
first stopped with SIGINT (sent to its whole process group, as a terminal's
Ctrl-C is) after a few logs, then run again: the second run must analyse only
the rest (and a finished log changed meanwhile), and the 18 good rows, resumed
or not, must carry exactly the numbers single analyses of the same logs give.
"""

from __future__ import annotations

import importlib.util
import json
import os
import re
import shutil
import signal
import subprocess
import time
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import pytest
from typer.testing import CliRunner

from stability.fleet import PROGRESS_NAME, read_manifest, read_progress
from stability.run import run_analysis
from stability.settings import RunSettings
from stability.simulate import h_from_deviation, simulate
from stability.workflow import analyze_into

pytest.importorskip("dask.distributed")

N = 1200  # readings per log: short, the test is about the fleet, not the statistics
GOOD = 18
DEVICE_FILES = {"table.csv", "table.md", "summary.json", "sigma_tau.png", "series.png"}


def _level(k: int) -> float:
    """The known Allan deviation at 1 s of device k (invented: 8e-12 to 1.5e-11)."""
    return 8e-12 * (1.0 + 0.05 * k)


def _write_logs(folder: Path) -> Path:
    """18 good logs (two layouts), one unreadable log, one missing; their CSV manifest."""
    rows = ["path,device,column,tau0"]
    for k in range(GOOD):
        y = simulate(N, 1.0, levels={0: h_from_deviation(0, _level(k), 1.0)}, seed=100 + k)
        name = f"unit-{k:02d}.txt"
        if k % 3 == 0:  # a two-channel layout: the manifest names the column
            other = np.random.default_rng(k).normal(0.0, 1e-9, N)
            text = "reference,fractional_frequency\n" + "".join(
                f"{a:.6e},{b:.6e}\n" for a, b in zip(other, y, strict=True)
            )
            rows.append(f"{name},OCXO-{k:02d},2,1s")
        else:
            text = "fractional_frequency\n" + "".join(f"{v:.6e}\n" for v in y)
            rows.append(f"{name},OCXO-{k:02d},,1s")
        (folder / name).write_text(text)
    (folder / "unit-18.txt").write_text("counter offline\nno readings today\n")
    rows.append("unit-18.txt,OCXO-18,,1s")
    rows.append("unit-19.txt,OCXO-19,,1s")  # never written: a missing log
    manifest = folder / "fleet.csv"
    manifest.write_text("\n".join(rows) + "\n")
    return manifest


@dataclass
class Fleet:
    manifest: Path
    out: Path
    stopped: subprocess.CompletedProcess  # the run stopped by SIGINT
    first: dict  # the progress file after it
    folders: dict  # device folder -> its files after it
    before: dict  # device -> summary.json time after it
    changed: str  # the finished device whose log changed before the second run
    result: Any  # the second run (CliRunner result)


def _devices_done(out: Path) -> dict[str, int]:
    """Device -> modification time of its summary.json."""
    return {p.parent.name: p.stat().st_mtime_ns for p in out.glob("*/summary.json")}


def _stopped_run(command: list[str], progress: Path) -> subprocess.CompletedProcess:
    """Run ``command`` in its own process group and send the group SIGINT once two logs
    are finished."""
    process = subprocess.Popen(
        command, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, start_new_session=True
    )
    deadline = time.monotonic() + 180
    while time.monotonic() < deadline and process.poll() is None:
        if sum(e["status"] == "ok" for e in read_progress(progress.parent).values()) >= 2:
            break
        time.sleep(0.05)
    os.killpg(process.pid, signal.SIGINT)
    out, err = process.communicate(timeout=180)
    return subprocess.CompletedProcess(command, process.returncode, out, err)


@pytest.fixture(scope="module")
def fleet(tmp_path_factory, stability_command):
    """A batch of the 20 logs stopped after a few, then run again to its end (2 workers)."""
    from stability_cli.main import app

    folder = tmp_path_factory.mktemp("fleet")
    manifest = _write_logs(folder)
    out = folder / "out"
    args = ["batch", "--manifest", str(manifest), "--workers", "2", "--out", str(out)]
    stopped = _stopped_run([*stability_command, *args], out / PROGRESS_NAME)
    first = read_progress(out)
    folders = {p.name: {f.name for f in p.iterdir()} for p in out.iterdir() if p.is_dir()}
    before = _devices_done(out)
    changed = sorted(d for d, e in first.items() if e["status"] == "ok")[0]
    log = Path(first[changed]["file"])
    log.write_text("# read again after a repair\n" + log.read_text())  # same data, new input
    result = CliRunner().invoke(app, args, catch_exceptions=False)
    return Fleet(manifest, out, stopped, first, folders, before, changed, result)


def test_a_stopped_batch_leaves_whole_device_folders_only(fleet):
    assert fleet.stopped.returncode == 130, fleet.stopped.stderr[-2000:]
    assert "stopped by SIGINT" in fleet.stopped.stderr
    done = {d for d, e in fleet.first.items() if e["status"] == "ok"}
    assert 2 <= len(done) < GOOD, "the batch finished before it could be stopped"
    # each device folder holds the whole set or is not there (no pending file either);
    # logs a worker was finishing when the signal came are whole but not in the
    # progress file (their rows never reached the driver): the next run redoes them
    for name, files in fleet.folders.items():
        assert files == DEVICE_FILES, name
    assert done <= set(fleet.before)


def test_the_second_run_analyses_only_the_rest(fleet):
    done = {d for d, e in fleet.first.items() if e["status"] == "ok"}
    kept = done - {fleet.changed}
    assert (
        f"({len(kept)} unchanged since an earlier run, not analysed again)" in fleet.result.stdout
    )
    after = _devices_done(fleet.out)
    assert len(after) == GOOD
    redone = {d for d in after if after[d] != fleet.before.get(d)}
    assert redone == set(after) - kept  # the rest, and the log that changed
    assert fleet.changed in redone


def test_batch_exit_code_and_error_lines(fleet):
    out, result = fleet.out, fleet.result
    assert result.exit_code == 1, result.output
    assert "20 logs: 18 analysed, 2 failed" in result.stdout
    errors = [line for line in result.stderr.splitlines() if line.startswith("error:")]
    assert len(errors) == 2, result.stderr
    assert re.search(r"error: OCXO-18: .*unit-18\.txt: no data rows", errors[0]), errors
    assert re.search(r"error: OCXO-19: .*unit-19\.txt: no such file", errors[1]), errors
    frame = pd.read_csv(out / "fleet.csv", keep_default_na=False)
    bad = frame[frame["status"] == "error"].set_index("device")
    assert list(bad.index) == ["OCXO-18", "OCXO-19"]
    assert "no data rows" in bad.at["OCXO-18", "error"]
    assert "no such file" in bad.at["OCXO-19", "error"]
    assert not (out / "OCXO-18").exists() and not (out / "OCXO-19").exists()


def test_good_rows_equal_single_analyze_runs(fleet, tmp_path):
    manifest, out = fleet.manifest, fleet.out
    frame = pd.read_csv(out / "fleet.csv").set_index("device")
    jobs = read_manifest(manifest, RunSettings.from_options(taus="decade"))
    good = [job for job in jobs if job.device not in ("OCXO-18", "OCXO-19")]
    assert len(good) == GOOD
    for k, job in enumerate(good):
        row = frame.loc[job.device]
        assert row["status"] == "ok"
        run = run_analysis(job.path, job.settings)
        od = run.table.extras["offset_drift"]
        assert row["readings"] == N and row["gaps"] == 0
        assert row["outliers_removed"] == len(run.preparation.outliers.samples)
        assert row["offset"] == od.offset and row["u_offset"] == od.u_offset  # to the last digit
        assert row["drift_per_day"] == od.drift_per_day
        assert row["u_drift_per_day"] == od.u_drift_per_day
        oadev = run.table["oadev"]
        assert np.isnan(row["oadev_1000s"])  # 1200 readings: 1000 s is not measured
        for tau in (1.0, 10.0, 100.0):
            index = int(np.flatnonzero(oadev.tau == tau)[0])
            name = f"oadev_{tau:g}s"
            assert row[name] == oadev.deviation[index], (job.device, name)
            assert row[f"{name}_low"] == oadev.ci_low[index]
            assert row[f"{name}_high"] == oadev.ci_high[index]
        # the known level: white FM simulated at this ADEV at 1 s (edf > 800: within 10 %)
        assert row["oadev_1s"] == pytest.approx(_level(k), rel=0.1)
        assert row["sha256"] == run.sha256
    # the device folder holds what a single analysis writes, byte for byte but the time
    job = good[4]
    single = tmp_path / "single"
    analyze_into(job.path, single, job.settings)
    device = out / job.device
    assert {p.name for p in device.iterdir()} == DEVICE_FILES
    assert (device / "table.csv").read_bytes() == (single / "table.csv").read_bytes()
    mine, theirs = (json.loads((f / "summary.json").read_text()) for f in (device, single))
    mine.pop("analysis_time"), theirs.pop("analysis_time")
    assert mine == theirs


def test_fleet_outputs(fleet):
    out = fleet.out
    names = {"fleet.csv", "fleet.md", "fleet.png", "fleet_distribution.png", "fleet.html"}
    assert names <= {p.name for p in out.iterdir()}
    frame = pd.read_csv(out / "fleet.csv")
    if importlib.util.find_spec("pyarrow") is not None:
        assert pd.read_parquet(out / "fleet.parquet")["device"].tolist() == frame["device"].tolist()
    text = (out / "fleet.md").read_text()
    assert "20 logs: 18 analysed, 2 failed." in text
    assert "Settings of every log: outliers 5, drift none, average 1, stats oadev,mdev" in text
    assert all(f"| OCXO-{k:02d} |" in text for k in range(20))
    page = (out / "fleet.html").read_text()
    assert "http://" not in page and "https://" not in page  # nothing to fetch
    assert page.count('src="data:image/png;base64,') == 2
    assert '<p id="settings">Settings of every log:' in page
    # the progress file holds the 18 finished logs and the 2 failed ones, one line each
    entries = read_progress(out)
    assert sorted(e["status"] for e in entries.values()) == ["error"] * 2 + ["ok"] * GOOD
    assert len((out / PROGRESS_NAME).read_text().splitlines()) == 20


def _chromium() -> str | None:
    return shutil.which("chromium") or shutil.which("chromium-browser")


def test_fleet_page_in_headless_chromium(fleet, tmp_path):
    browser = _chromium()
    if browser is None:
        pytest.skip("Chromium is not installed (Debian package chromium; .ci/run installs it)")
    page = (fleet.out / "fleet.html").resolve().as_uri()
    flags = [
        "--headless",
        "--no-sandbox",
        "--disable-gpu",
        "--disable-background-networking",
        "--disable-component-update",
        "--disable-sync",
        "--no-first-run",
        "--enable-logging=stderr",
        "--v=0",
    ]
    dom = subprocess.run(
        [browser, *flags, f"--user-data-dir={tmp_path / 'a'}", "--dump-dom", page],
        capture_output=True,
        text=True,
        timeout=120,
    )
    assert dom.returncode == 0, dom.stderr[-2000:]
    console = [line for line in dom.stderr.splitlines() if ":CONSOLE" in line]
    assert console == [], console  # no console message at all, errors included
    assert 'id="fleet" data-sortable="ready"' in dom.stdout  # the sorting script ran
    table = dom.stdout.split('id="fleet"', 1)[1].split("</table>", 1)[0]
    for k in range(20):
        assert f">OCXO-{k:02d}</td>" in table
    shot = tmp_path / "page.png"
    run = subprocess.run(
        [
            browser,
            *flags,
            f"--user-data-dir={tmp_path / 'b'}",
            f"--screenshot={shot}",
            "--window-size=1280,1600",
            page,
        ],
        capture_output=True,
        text=True,
        timeout=120,
    )
    assert run.returncode == 0 and shot.is_file(), run.stderr[-2000:]
    import matplotlib.image

    pixels = matplotlib.image.imread(shot)[..., :3]
    assert pixels.std() > 0.05  # not blank: figures and table drawn
    assert (pixels < 0.5).mean() > 0.01  # dark pixels of text and lines


def test_a_running_scheduler_takes_the_fleet(tmp_path):
    from dask.distributed import Client, LocalCluster

    from stability.fleet import batch, jobs_from_patterns

    for k in range(3):
        y = simulate(N, 1.0, levels={0: h_from_deviation(0, _level(k), 1.0)}, seed=500 + k)
        (tmp_path / f"rx-{k}.txt").write_text(
            "fractional_frequency\n" + "".join(f"{v:.6e}\n" for v in y)
        )
    jobs = jobs_from_patterns([tmp_path / "rx-*.txt"], RunSettings.from_options(tau0="1s"))
    results, dashboards = [], []
    with (
        LocalCluster(
            n_workers=1, threads_per_worker=1, processes=True, host="127.0.0.1",
            dashboard_address=None,
        ) as cluster,
        Client(cluster) as client,
    ):  # fmt: skip
        pids = set(client.run(os.getpid).values())
        frame = batch(
            jobs,
            tmp_path / "out",
            scheduler=cluster.scheduler_address,
            on_start=dashboards.append,
            on_result=lambda done, total, result: results.append(result),
        ).table
        assert len(client.scheduler_info()["workers"]) == 1  # the cluster outlives the batch
    assert (frame["status"] == "ok").all() and len(frame) == 3
    assert {int(r["worker"].rsplit(":", 1)[1]) for r in results} == pids  # its worker did it
    assert len(dashboards) == 1  # the scheduler's dashboard address, if it serves one
