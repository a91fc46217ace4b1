"""Hostile input at the command line: one ``error:`` line and exit 1, never a traceback;
text from files never acts on the terminal; errors of the system name their file.

The reading rules themselves are tested in tests/ingest/test_ingest_hostile.py; here
each kind of failure is seen once as a user sees it. Logs and information files are
invented.
"""

from __future__ import annotations

import errno
import io
import os
import subprocess
import sys
import zipfile
from pathlib import Path

import numpy as np
import pytest
from typer.testing import CliRunner

from stability import workflow
from stability_cli.common import printable
from stability_cli.main import app

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "datasets" / "demo"
runner = CliRunner()


def _values(n: int) -> list[str]:
    return [f"{v:.4e}" for v in np.random.default_rng(11).normal(0.0, 1e-11, n)]


def _log(path: Path, stamps=None, n: int = 300, header: str = "elapsed") -> Path:
    stamps = list(range(n)) if stamps is None else stamps
    rows = [f"{s!r},{v}" for s, v in zip(stamps, _values(len(stamps)), strict=True)]
    path.write_text(f"{header},fractional\n" + "\n".join(rows) + "\n")
    return path


def _one_line(result, code: int = 1) -> str:
    assert result.exit_code == code, result.output
    assert "Traceback" not in result.output, result.output
    lines = [ln for ln in result.output.splitlines() if ln.strip()]
    assert len(lines) == 1 and lines[0].startswith("error: "), result.output
    return lines[0]


def _analyze(*args: str):
    return runner.invoke(app, ["analyze", *args])


def test_encrypted_zip(tmp_path):
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w", zipfile.ZIP_DEFLATED) as zf:
        zf.writestr("log.csv", _log(tmp_path / "plain.csv").read_text())
    data = bytearray(buf.getvalue())
    data[6] |= 1
    data[data.find(b"PK\x01\x02") + 8] |= 1
    (tmp_path / "locked.zip").write_bytes(data)
    line = _one_line(_analyze(str(tmp_path / "locked.zip"), "--out", str(tmp_path / "o")))
    assert "locked.zip: the zip member 'log.csv' is encrypted" in line
    assert not (tmp_path / "o").exists()


def test_mjd_stamps_outside_any_calendar(tmp_path):
    log = _log(tmp_path / "mjd.csv", [9e9 + i / 86400 for i in range(300)], header="mjd")
    line = _one_line(_analyze(str(log), "--out", str(tmp_path / "o")))
    assert "mjd.csv:2 column mjd: the time stamp 9000000000" in line


@pytest.mark.parametrize("tau0", ["1e-200s", "1e-20s"])
def test_absurd_tau0_option(tmp_path, tau0):
    log = tmp_path / "rows.csv"
    log.write_text("fractional\n" + "\n".join(_values(600)) + "\n")
    line = _one_line(_analyze(str(log), "--tau0", tau0, "--out", str(tmp_path / "o")))
    assert f"tau0 '{tau0}'" in line


def test_absurd_tau0_in_an_overlay_suffix(tmp_path):
    a, b = _log(tmp_path / "a.csv"), _log(tmp_path / "b.csv")
    result = runner.invoke(app, ["overlay", f"{a}:tau0=1e-200s", str(b), "--out", str(tmp_path)])
    assert "tau0 '1e-200s' is beyond the sample intervals" in _one_line(result)


def test_unusual_timing_is_read_when_asked(tmp_path):
    log = tmp_path / "rows.csv"
    log.write_text("fractional\n" + "\n".join(_values(600)) + "\n")
    out = tmp_path / "o"
    result = _analyze(str(log), "--tau0", "1e-12s", "--unusual-timing", "--out", str(out))
    assert result.exit_code == 0, result.output
    assert (out / "table.csv").exists()


def test_jump_that_makes_the_grid_mostly_gap_names_its_line(tmp_path):
    log = _log(tmp_path / "pause.csv", [float(i) for i in range(101)] + [9.999e6 + 100])
    line = _one_line(_analyze(str(log), "--out", str(tmp_path / "o")))
    assert "pause.csv:103 column elapsed: the time stamps jump forward" in line
    assert "--unusual-timing" in line


def test_max_expansion_is_checked_as_usage(tmp_path):
    log = _log(tmp_path / "a.csv")
    line = _one_line(_analyze(str(log), "--max-expansion", "0.5"), code=2)
    assert "--max-expansion" in line


def test_special_files_and_link_loops(tmp_path):
    loop = tmp_path / "loop.csv"
    loop.symlink_to(loop)
    assert "loop.csv: symbolic link loop" in _one_line(_analyze(str(loop)))
    if os.path.exists("/dev/zero"):
        line = _one_line(_analyze("/dev/zero", "--out", str(tmp_path / "o")))
        assert "/dev/zero: is a device, not a regular file" in line


def test_confidence_is_quoted_as_given(tmp_path):
    log = _log(tmp_path / "a.csv")
    for given in ("0.9999999999999999", "0.99999999999999999"):
        line = _one_line(_analyze(str(log), "--confidence", given), code=2)
        assert f"'{given}'" in line and "got 1.0" not in line


def test_disk_full_names_the_output_folder(tmp_path, monkeypatch):
    def full(*args, **kwargs):
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))  # as write() raises it

    monkeypatch.setattr(workflow, "_write_all", full)
    out = tmp_path / "out"
    line = _one_line(_analyze(str(_log(tmp_path / "a.csv")), "--out", str(out)))
    assert f"{out}: cannot write the outputs: No space left on device" in line
    assert "[Errno" not in line


def test_other_system_errors_name_their_file(tmp_path, monkeypatch):
    def denied(*args, **kwargs):
        raise PermissionError(errno.EACCES, "Permission denied", "/somewhere/else.csv")

    monkeypatch.setattr(workflow, "read_and_prepare", denied)
    line = _one_line(_analyze(str(_log(tmp_path / "a.csv")), "--out", str(tmp_path / "o")))
    assert line == "error: /somewhere/else.csv: Permission denied"


def test_control_characters_never_reach_the_terminal(tmp_path):
    # a device id with an escape sequence (set the window title, clear the screen)
    info = (DEMO / "info-example.toml").read_text()
    info = info.replace('id = "HM-OCXO-0417"', 'id = "HM-\\u001b]0;owned\\u0007OCXO\\u001b[2J"')
    (tmp_path / "info.toml").write_text(info)
    result = runner.invoke(
        app,
        [
            "record",
            str(DEMO / "ocxo-vs-rb-counter.csv.gz"),
            "--spec",
            str(DEMO / "spec-example.toml"),
            "--info",
            str(tmp_path / "info.toml"),
            "--out",
            str(tmp_path / "rec"),
        ],
    )
    assert result.exit_code == 0, result.output
    assert "HM-]0;ownedOCXO[2J" in result.output  # shown as text, its control bytes gone
    assert "\x1b" not in result.output and "\x07" not in result.output
    # and in the one error line: a missing file whose name holds an escape
    line = _one_line(_analyze(str(tmp_path / "no\x1b[2Jsuch.csv")))
    assert "no[2Jsuch.csv: file not found" in line and "\x1b" not in line


def test_printable_keeps_tabs_newlines_and_text():
    assert printable("a\tb\nc\x1b[31md\x9b\x7fe\r") == "a\tb\nc[31mde"
    assert printable("µs, 10 MHz, Zeitfehler") == "µs, 10 MHz, Zeitfehler"


def test_one_real_process_on_a_named_pipe_ends_at_once(tmp_path):
    fifo = tmp_path / "pipe.csv"
    os.mkfifo(fifo)
    done = subprocess.run(
        [sys.executable, "-m", "stability", "analyze", str(fifo), "--out", str(tmp_path / "o")],
        capture_output=True,
        text=True,
        timeout=120,
    )
    assert done.returncode == 1, done.stderr
    assert done.stderr.strip().splitlines() == [
        f"error: {fifo}: is a named pipe, not a regular file "
        "(save the log to a file and give the path of that file)"
    ]
