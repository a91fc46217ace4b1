"""The README's promises, run as a user would: real processes, real signals, real files.

* the input is never written: an output that is (or links to) an input is refused;
* outputs are all or nothing, for analyze and record alike, also under Ctrl-C,
  SIGTERM and SIGHUP (exit 128 + the signal, one line, no partial output);
* a second run into a folder another run is writing is refused, and two record
  runs into one folder never leave a mixed record.
"""

from __future__ import annotations

import json
import os
import shutil
import signal
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pytest

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "datasets" / "demo"


def _stability(*args: str, cwd: Path | None = None) -> subprocess.CompletedProcess:
    return subprocess.run(
        [sys.executable, "-m", "stability", *args],
        capture_output=True,
        text=True,
        cwd=cwd,
        timeout=300,
    )


def _start(*args: str) -> subprocess.Popen:
    return subprocess.Popen(
        [sys.executable, "-m", "stability", *args],
        stdout=subprocess.DEVNULL,
        stderr=subprocess.PIPE,
        text=True,
    )


def _log(path: Path, n: int = 3000, seed: int = 8) -> Path:
    # Invented fractional-frequency readings of a lab counter, 1 s apart.
    y = np.random.default_rng(seed).normal(0.0, 1e-11, n)
    path.write_text("elapsed_s,fractional\n" + "".join(f"{i},{v:.6e}\n" for i, v in enumerate(y)))
    return path


def _visible(folder: Path) -> list[str]:
    return sorted(p.name for p in folder.iterdir() if not p.name.startswith("."))


def _hidden(folder: Path) -> list[str]:
    return sorted(p.name for p in folder.iterdir() if p.name.startswith("."))


def test_analyze_refuses_to_overwrite_its_own_log(tmp_path):
    log = _log(tmp_path / "table.csv")
    before = log.read_bytes()
    done = _stability("analyze", "table.csv", "--out", ".", cwd=tmp_path)
    assert done.returncode == 1, done.stderr
    assert done.stderr.count("\n") == 1 and "would overwrite the input file" in done.stderr
    assert log.read_bytes() == before
    assert _visible(tmp_path) == ["table.csv"]


def test_record_and_overlay_refuse_to_overwrite_an_input(tmp_path):
    log = _log(tmp_path / "summary.json")
    before = log.read_bytes()
    shutil.copy(DEMO / "spec-example.toml", tmp_path / "spec.toml")
    shutil.copy(DEMO / "info-example.toml", tmp_path / "info.toml")
    rec = _stability(
        "record", "summary.json", "--spec", "spec.toml", "--info", "info.toml",
        "--out", ".", cwd=tmp_path,
    )  # fmt: skip
    assert rec.returncode == 1 and "would overwrite the input file" in rec.stderr, rec.stderr
    other = _log(tmp_path / "other.csv", seed=9)
    over = _stability("overlay", "summary.json", str(other), "--out", ".", cwd=tmp_path)
    assert over.returncode == 1 and "would overwrite the input file" in over.stderr, over.stderr
    assert log.read_bytes() == before


def _record_args(log: Path, folder: Path, tmp_path: Path) -> list[str]:
    return [
        "record", str(log), "--spec", str(DEMO / "spec-example.toml"),
        "--info", str(DEMO / "info-example.toml"), "--out", str(folder),
    ]  # fmt: skip


def _consistent_record(folder: Path) -> None:
    """A complete record set whose PDF/JSON and table/summary describe the same input."""
    names = _visible(folder)
    assert names in (
        [],
        ["record.json", "record.pdf", "series.png", "sigma_tau.png", "summary.json",
         "table.csv", "table.md"],
    ), names  # fmt: skip
    assert _hidden(folder) == []
    if names:
        record = json.loads((folder / "record.json").read_text())
        summary = json.loads((folder / "summary.json").read_text())
        assert json.dumps(record).count(summary["input"]["sha256"]) >= 1


def test_record_force_rerun_interrupted_keeps_one_whole_record(tmp_path):
    first = _log(tmp_path / "first.csv", n=20_000, seed=1)
    second = _log(tmp_path / "second.csv", n=20_000, seed=2)
    folder = tmp_path / "rec"
    made = _stability(*_record_args(first, folder, tmp_path))
    assert made.returncode == 0, made.stderr
    for signum, delay in [(signal.SIGINT, 1.0), (signal.SIGTERM, 1.5), (signal.SIGHUP, 2.5)]:
        child = _start(*_record_args(second, folder, tmp_path), "--force")
        time.sleep(delay)
        child.send_signal(signum)
        _, err = child.communicate(timeout=300)
        # 128 + n from the program's own handling; -n when the signal met the
        # interpreter's start or shutdown. Either way the folder holds one whole record.
        assert child.returncode in (0, 128 + signum, -signum), err
        if child.returncode > 0:  # stopped while starting, or while working
            assert err.count("\n") == 1, err
            assert "no partial output" in err or "nothing was done" in err, err
        _consistent_record(folder)


def test_two_record_runs_into_one_folder_never_mix(tmp_path):
    logs = [_log(tmp_path / f"log{k}.csv", n=20_000, seed=k) for k in range(2)]
    folder = tmp_path / "rec"
    children = [_start(*_record_args(log, folder, tmp_path)) for log in logs]
    results = [(c.wait(timeout=300), c.stderr.read()) for c in children]
    codes = sorted(code for code, _ in results)
    assert codes == [0, 1], results  # one lands, the other is refused with one line
    refused = next(err for code, err in results if code == 1)
    assert refused.count("\n") == 1
    assert "another stability run" in refused or "exists already" in refused, refused
    _consistent_record(folder)


def test_a_folder_being_written_is_refused(tmp_path):
    import fcntl

    log = _log(tmp_path / "raw.csv")
    folder = tmp_path / "out"
    folder.mkdir()
    fd = os.open(folder, os.O_RDONLY)
    try:
        fcntl.flock(fd, fcntl.LOCK_EX)  # as a running analysis holds it
        done = _stability("analyze", str(log), "--out", str(folder))
    finally:
        os.close(fd)
    assert done.returncode == 1 and "another stability run is writing" in done.stderr
    assert _visible(folder) == []


def test_analyze_into_a_record_folder_is_refused(tmp_path):
    log = _log(tmp_path / "raw.csv")
    folder = tmp_path / "rec"
    assert _stability(*_record_args(log, folder, tmp_path)).returncode == 0
    before = (folder / "sigma_tau.png").read_bytes()
    done = _stability("analyze", str(log), "--out", str(folder))
    assert done.returncode == 1 and "holds a calibration record" in done.stderr
    assert (folder / "sigma_tau.png").read_bytes() == before


@pytest.mark.parametrize("signum", [signal.SIGTERM, signal.SIGHUP])
def test_analyze_stopped_by_a_signal_says_one_line_and_leaves_nothing(tmp_path, signum):
    log = _log(tmp_path / "raw.csv", n=200_000)
    folder = tmp_path / "out"
    child = _start("analyze", str(log), "--out", str(folder), "--stats", "oadev,mdev,totdev")
    time.sleep(2.0)
    child.send_signal(signum)
    _, err = child.communicate(timeout=300)
    whole = ["series.png", "sigma_tau.png", "summary.json", "table.csv", "table.md"]
    if child.returncode == 0:  # finished before the signal: the whole set is there
        assert _visible(folder) == whole
        return
    if child.returncode == -signum:
        # killed while the interpreter was starting or shutting down (its own signal
        # handlers are not in place then): nothing, or the whole set
        assert not folder.exists() or (_visible(folder) in ([], whole) and not _hidden(folder))
        return
    assert child.returncode == 128 + signum, err
    assert err.count("\n") == 1, err
    assert signal.Signals(signum).name in err or "nothing was done" in err, err
    assert not folder.exists() or (_visible(folder) == [] and _hidden(folder) == [])


def test_ctrl_c_while_starting_is_one_line(tmp_path):
    # what the console script `stability` runs; its first lines install the handler
    script = "from stability_cli.entry import main; main()"
    child = subprocess.Popen(
        [sys.executable, "-c", script, "--help"],
        stdout=subprocess.DEVNULL,
        stderr=subprocess.PIPE,
        text=True,
    )
    time.sleep(0.4)  # past the interpreter's own start, inside numpy, pandas, matplotlib
    child.send_signal(signal.SIGINT)
    _, err = child.communicate(timeout=60)
    if child.returncode == 0:
        pytest.skip("the help was printed before the signal arrived")
    assert child.returncode == 130, err
    assert "Traceback" not in err and err.count("\n") <= 1, err
