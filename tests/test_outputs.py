"""Outputs all or nothing: stability.outputs.OutputSet and the analysis written through it."""

from __future__ import annotations

import fcntl
import os
import signal
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import numpy as np
import pytest

from stability.errors import InputError
from stability.outputs import Interrupted, OutputSet
from stability.workflow import analyze_into


def _log(path: Path, n: int = 600, seed: int = 3) -> Path:
    # Invented fractional-frequency readings, 1 s apart, as a lab PC would log them.
    y = np.random.default_rng(seed).normal(0.0, 1e-11, n)
    path.write_text("elapsed_s,fractional\n" + "".join(f"{i},{v:.6e}\n" for i, v in enumerate(y)))
    return path


def _visible(folder: Path) -> dict[str, bytes]:
    return {p.name: p.read_bytes() for p in sorted(folder.iterdir()) if not p.name.startswith(".")}


def _hidden_leftovers(folder: Path) -> list[str]:
    return [p.name for p in folder.iterdir() if p.name.startswith(".")]


def test_an_output_that_is_the_input_is_refused_before_anything_is_written(tmp_path):
    log = _log(tmp_path / "table.csv")
    before = log.read_bytes()
    with pytest.raises(InputError, match="would overwrite the input file"):
        analyze_into(log, tmp_path)
    assert log.read_bytes() == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["table.csv"]


def test_an_input_reached_through_a_link_is_refused(tmp_path):
    log = _log(tmp_path / "raw.csv")
    out = tmp_path / "out"
    out.mkdir()
    (out / "summary.json").symlink_to(log)
    with pytest.raises(InputError, match="summary.json would overwrite the input file"):
        analyze_into(log, out)
    other = tmp_path / "other"
    other.mkdir()
    os.link(log, other / "table.csv")  # a hard link is the same file under another name
    with pytest.raises(InputError, match="table.csv would overwrite the input file"):
        analyze_into(log, other)
    assert log.read_bytes().startswith(b"elapsed_s,fractional")


def test_a_failed_commit_keeps_the_earlier_outputs(tmp_path):
    log = _log(tmp_path / "raw.csv")
    out = tmp_path / "out"
    analyze_into(log, out)
    (out / "summary.json").unlink()
    (out / "summary.json").mkdir()  # something in the way of one output
    before = {
        p.name: p.read_bytes() for p in out.iterdir() if p.is_file() and not p.name.startswith(".")
    }
    with pytest.raises(InputError, match="summary.json is a folder"):
        analyze_into(log, out, stats="oadev,mdev,hdev")
    after = {
        p.name: p.read_bytes() for p in out.iterdir() if p.is_file() and not p.name.startswith(".")
    }
    assert after == before  # tables and figures of the earlier run untouched
    assert _hidden_leftovers(out) == []


def test_a_move_that_fails_midway_restores_the_earlier_set(tmp_path, monkeypatch):
    log = _log(tmp_path / "raw.csv")
    out = tmp_path / "out"
    analyze_into(log, out)
    before = _visible(out)
    real_replace = os.replace
    calls = {"n": 0}

    def failing(src, dst):
        if str(src).endswith(".pending"):
            calls["n"] += 1
            if calls["n"] == 3:  # the third new file cannot be moved in (disk trouble)
                raise OSError(28, "No space left on device")
        return real_replace(src, dst)

    monkeypatch.setattr(os, "replace", failing)
    with pytest.raises(InputError, match="cannot write the outputs: No space left on device"):
        analyze_into(log, out, stats="oadev,hdev")
    monkeypatch.setattr(os, "replace", real_replace)
    assert _visible(out) == before
    assert _hidden_leftovers(out) == []


def test_a_locked_folder_is_refused(tmp_path):
    log = _log(tmp_path / "raw.csv")
    out = tmp_path / "out"
    out.mkdir()
    fd = os.open(out, os.O_RDONLY)  # another run holds the folder
    try:
        fcntl.flock(fd, fcntl.LOCK_EX)
        with pytest.raises(InputError, match="another stability run is writing into this folder"):
            analyze_into(log, out)
    finally:
        os.close(fd)
    assert _visible(out) == {}


def test_without_force_an_existing_output_is_kept(tmp_path):
    (tmp_path / "record.json").write_text("earlier")
    with pytest.raises(InputError, match="exists already and is not overwritten"):
        with OutputSet(tmp_path, ["record.json", "record.pdf"], force=False) as out:
            out.path("record.json").write_text("new")
            out.path("record.pdf").write_text("new")
            out.commit()
    assert (tmp_path / "record.json").read_text() == "earlier"
    assert not (tmp_path / "record.pdf").exists()
    assert _hidden_leftovers(tmp_path) == []


def test_another_plot_format_of_an_earlier_run_is_removed(tmp_path):
    log = _log(tmp_path / "raw.csv")
    out = tmp_path / "out"
    analyze_into(log, out, plot_format="png")
    analyze_into(log, out, plot_format="svg")
    names = sorted(_visible(out))
    assert names == ["series.svg", "sigma_tau.svg", "summary.json", "table.csv", "table.md"]


def test_stale_pending_files_of_dead_processes_are_swept(tmp_path):
    dead = subprocess.run(
        [sys.executable, "-c", "import os; print(os.getpid())"],
        capture_output=True,
        text=True,
        check=True,
    )
    pid = int(dead.stdout)
    left = tmp_path / f".series.png.{pid}.0123abcd.pending"
    left.write_text("half a figure")
    mine = tmp_path / f".table.csv.{os.getpid()}.89abcdef.pending"
    mine.write_text("this process is alive")
    with OutputSet(tmp_path, ["a.txt"]) as out:
        out.path("a.txt").write_text("x")
        out.commit()
    assert not left.exists() and mine.exists()


def test_a_signal_inside_the_set_becomes_interrupted_and_cleans_up(tmp_path):
    with pytest.raises(Interrupted) as caught:
        with OutputSet(tmp_path / "new", ["a.txt"]) as out:
            out.path("a.txt").write_text("x")
            os.kill(os.getpid(), signal.SIGTERM)
            time.sleep(1)  # the handler raises before this returns
    assert caught.value.signum == signal.SIGTERM
    assert not (tmp_path / "new").exists()  # the folder made for the run went again
    assert signal.getsignal(signal.SIGTERM) is signal.SIG_DFL


CHILD = textwrap.dedent(
    """
    import sys
    from stability.outputs import Interrupted
    from stability.workflow import analyze_into
    try:
        analyze_into(sys.argv[1], sys.argv[2], stats="oadev,mdev,hdev,totdev")
    except Interrupted as exc:
        sys.exit(128 + exc.signum)
    """
)


@pytest.mark.parametrize("signum", [signal.SIGTERM, signal.SIGHUP, signal.SIGINT])
def test_signals_at_several_moments_leave_all_or_nothing(tmp_path, signum):
    log = _log(tmp_path / "raw.csv", n=40_000)
    for k, delay in enumerate((0.3, 0.8, 1.4, 2.2)):
        out = tmp_path / f"out{k}"
        child = subprocess.Popen(
            [sys.executable, "-c", CHILD, str(log), str(out)], stderr=subprocess.PIPE, text=True
        )
        time.sleep(delay)
        child.send_signal(signum)
        _, err = child.communicate(timeout=120)
        if out.exists():
            assert _hidden_leftovers(out) == [], err
            names = sorted(_visible(out))
            assert names in (
                [],
                ["series.png", "sigma_tau.png", "summary.json", "table.csv", "table.md"],
            ), names
        assert "Traceback" not in err or child.returncode == 128 + signum or signum == 2, err
