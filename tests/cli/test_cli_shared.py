"""What every command shares: one declaration per option, one-line errors, exit codes.

Exit codes (written down in cli/common.py, common practice for command lines):
0 success, also when the reader of standard output stops early (``| head``);
1 input or analysis error; 2 usage error (the command line alone is wrong).
Every log here is invented, generated in the test.
"""

from __future__ import annotations

import ast
import io
import json
import re
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from rich.console import Console
from typer.testing import CliRunner

import stability_cli
from stability.deviations.registry import statistic_names
from stability_cli import analyze_cmd
from stability_cli.main import app
from stability_cli.progress import ProgressDisplay, step_count

runner = CliRunner()
WIDE = {"COLUMNS": "200"}

READING = ("--kind", "--column", "--time-column", "--tau0", "--nominal", "--wrap", "--strict")
PREPARING = ("--outliers", "--drift", "--average")
ANALYSING = ("--stats", "--taus", "--confidence")
WRITING = ("--out", "--plot-format", "--title", "--json")

#: The shared options each command takes (DESIGN "The command line").
SHARED = {
    "analyze": READING + PREPARING + ANALYSING + WRITING,
    "record": READING + PREPARING + ANALYSING + WRITING,
    "overlay": READING + PREPARING + ANALYSING + WRITING,
    "separate": READING + PREPARING + ANALYSING + WRITING,
    "timeline": READING + PREPARING + ANALYSING + WRITING,
    "batch": READING + PREPARING + ANALYSING + WRITING,
    "phase-noise": READING + PREPARING + ("--stats", "--confidence") + WRITING,
    "inspect": READING + ("--json",),
    "simulate": ("--tau0", "--nominal"),
    "demo": ("--out", "--plot-format"),
    "time-error": READING + ("--taus",) + WRITING,
    "masks": ("--json",),
}
DRAWING = ("analyze", "record", "overlay", "separate", "timeline", "phase-noise", "demo")


def _stamps(n: int) -> list[str]:
    t = np.datetime64("2026-01-01T00:00:00", "s") + np.arange(n).astype("timedelta64[s]")
    return np.datetime_as_string(t, unit="s").tolist()


@pytest.fixture(scope="module")
def log(tmp_path_factory) -> Path:
    """An invented 10 MHz counter log: 600 s of white FM at 1e-11 around a 1e-9 offset."""
    y = 1e-9 + 1e-11 * np.random.default_rng(17).standard_normal(600)
    rows = [f"{t}Z,{10e6 * (1 + v):.6f}" for t, v in zip(_stamps(600), y, strict=True)]
    path = tmp_path_factory.mktemp("shared") / "counter.csv"
    path.write_text("time,frequency_hz\n" + "\n".join(rows) + "\n")
    return path


def _help(command: str) -> str:
    result = runner.invoke(app, [command, "--help"], env=WIDE)
    assert result.exit_code == 0, result.output
    return result.output


def _option_lines(text: str, flag: str) -> int:
    """How many option rows of a help text declare ``flag``."""
    return len(re.findall(rf"^\s+{re.escape(flag)}(?=[\s,])", text, flags=re.MULTILINE))


# ---------------------------------------------------------------------- the help
def test_python_m_stability_runs_the_command_line():
    done = subprocess.run(
        [sys.executable, "-m", "stability", "--help"],
        capture_output=True,
        text=True,
        timeout=120,
        check=False,
    )
    assert done.returncode == 0, done.stderr
    assert "python -m stability" in done.stdout  # the program name as it was called
    for command in SHARED:
        assert command in done.stdout, command
    assert "Exit codes: 0 success, 1 input or analysis error, 2 usage error" in done.stdout


@pytest.mark.parametrize("command", sorted(SHARED))
def test_help_lists_each_shared_option_once(command):
    text = _help(command)
    for flag in SHARED[command]:
        assert _option_lines(text, flag) == 1, (command, flag, text)
    assert _option_lines(text, "--debug") == 1, text
    # flags are shown as flags: no value placeholder, no --no-... twin
    assert "<bool>" not in text and "BOOLEAN" not in text and "--no-" not in text, text


@pytest.mark.parametrize("command", ["analyze", "record", "overlay", "separate"])
def test_stats_help_names_every_registered_statistic(command):
    text = " ".join(_help(command).split())
    listed = re.search(r"--stats LIST Comma list of statistics: ([a-z0-9_, ]+)\.", text)
    assert listed, text
    assert [n.strip() for n in listed.group(1).split(",")] == statistic_names()


def test_help_texts_state_what_the_code_does():
    separate = " ".join(_help("separate").split())
    assert "separated-stability/" in separate  # the folder separate writes by default
    simulate = " ".join(_help("simulate").split())
    assert "Sample interval of the simulated log" in simulate
    assert "time stamps" not in simulate  # simulate reads no log
    timeline = " ".join(_help("timeline").split())
    assert "One statistic: oadev, mdev, tdev, ohdev." in timeline  # stability.dynamic's list
    record = " ".join(_help("record").split())
    assert "default: the specification's own level" in record


def test_command_modules_form_no_cycle():
    # main imports the command modules; they import neither main nor each other
    # (entry, the program's entry point above main, is the one module that imports it)
    folder = Path(stability_cli.__path__[0])
    commands = {p.stem for p in folder.glob("*_cmd.py")}
    assert len(commands) == 17
    for path in folder.glob("*.py"):
        tree = ast.parse(path.read_text(encoding="utf-8"))
        imported = set()
        for node in ast.walk(tree):
            if isinstance(node, ast.ImportFrom) and node.level == 1:
                imported |= {node.module} if node.module else {a.name for a in node.names}
        if path.stem == "main":
            assert commands <= imported
            continue
        if path.stem == "entry":
            assert not (imported & commands), imported
            continue
        assert "main" not in imported, path.name
        assert not (imported & commands), (path.name, imported & commands)


# ---------------------------------------------------------------------- errors
@pytest.mark.parametrize(
    ("args", "named"),
    [
        (["analyze", "{log}", "--confidence", "95"], "--confidence"),
        (["analyze", "{log}", "--kind", "freq"], "--kind"),
        (["analyze", "{log}", "--average", "0"], "--average"),
        (["analyze", "{log}", "--no-such-option"], "--no-such-option"),
        (["analyze"], "LOG"),
        (["inspect", "{log}", "--tau0", "soon"], "--tau0"),
        (
            ["record", "{log}", "--spec", "s.toml", "--info", "i.toml", "--plot-format", "gif"],
            "gif",
        ),
        (["timeline", "{log}", "--window", "1min", "--drift", "cubic"], "--drift"),
        (["overlay", "{log}", "--nominal", "fast"], "--nominal"),
        (["separate", "{log}", "{log}", "{log}", "--taus", "1,ten"], "--taus"),
        (["simulate", "x.csv", "--wfm", "1e-11", "--at", "later"], "--at"),
    ],
)
def test_usage_errors_are_one_line_and_exit_2(log, tmp_path, args, named):
    argv = [a.replace("{log}", str(log)) for a in args]
    result = runner.invoke(app, argv, env=WIDE)
    assert result.exit_code == 2, result.output
    assert result.stdout == "", result.stdout
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("error: "), result.stderr
    assert named in lines[0], lines[0]
    assert "╭" not in result.stderr and "Usage:" not in result.stderr


@pytest.mark.parametrize(
    "args",
    [
        ["analyze", "{missing}", "--out", "{out}"],
        ["inspect", "{missing}"],
        ["timeline", "{missing}", "--window", "1min", "--out", "{out}"],
        ["overlay", "{log}", "{missing}", "--out", "{out}"],
        ["record", "{missing}", "--spec", "{missing}", "--info", "{missing}", "--out", "{out}"],
        ["phase-noise", "{missing}", "--nominal", "10MHz", "--out", "{out}"],
    ],
)
def test_missing_input_is_one_line_and_exit_1(log, tmp_path, args):
    missing = tmp_path / "nowhere.csv"
    names = {"{log}": str(log), "{missing}": str(missing), "{out}": str(tmp_path / "o")}
    result = runner.invoke(app, [names.get(a, a) for a in args], env=WIDE)
    assert result.exit_code == 1, result.output
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("error: "), result.stderr
    assert "nowhere.csv" in lines[0] and "Traceback" not in result.output


def test_unexpected_failure_is_one_line_naming_the_input(log, tmp_path, monkeypatch):
    # A defect inside a command (here forced) is reported, not shown as a traceback.
    def broken(*args, **kwargs):
        raise ZeroDivisionError("float division by zero")

    monkeypatch.setattr(analyze_cmd, "analyze_into", broken)
    result = runner.invoke(app, ["analyze", str(log), "--out", str(tmp_path)])
    assert result.exit_code == 1, result.output
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1, result.stderr
    assert lines[0].startswith("error: counter.csv: internal error"), lines[0]
    assert "ZeroDivisionError" in lines[0] and "--debug" in lines[0]
    debug = runner.invoke(app, ["analyze", str(log), "--out", str(tmp_path), "--debug"])
    assert debug.exit_code == 1
    assert "Traceback" in debug.stderr and "ZeroDivisionError" in debug.stderr


def test_a_closed_pipe_ends_quietly(log, tmp_path):
    # The reader goes away before the table is printed (as `| head -1` does once it
    # has its line): no error line, exit code 0.
    process = subprocess.Popen(
        [sys.executable, "-m", "stability", "analyze", str(log), "--out", str(tmp_path)],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
    )
    process.stdout.close()
    _, err = process.communicate(timeout=120)
    assert process.returncode == 0, err.decode()
    assert err.decode().strip() == ""
    assert (tmp_path / "table.csv").is_file()  # the work itself was done


def test_a_shell_pipe_into_head(log, tmp_path):
    done = subprocess.run(
        ["bash", "-c", 'set -o pipefail; "$0" -m stability analyze "$1" --out "$2" | head -1']
        + [sys.executable, str(log), str(tmp_path)],
        capture_output=True,
        text=True,
        timeout=120,
        check=False,
    )
    assert done.returncode == 0, done.stderr
    assert done.stderr == ""
    assert done.stdout.count("\n") == 1 and "statistic" in done.stdout, done.stdout


# ---------------------------------------------------------------------- options reach the work
def test_title_reaches_the_stability_figure(log, tmp_path):
    title = "OCXO 7 against the house maser"
    result = runner.invoke(
        app,
        ["analyze", str(log), "--out", str(tmp_path), "--plot-format", "svg", "--title", title],
    )
    assert result.exit_code == 0, result.output
    assert title in (tmp_path / "sigma_tau.svg").read_text(encoding="utf-8")
    assert title not in (tmp_path / "series.svg").read_text(encoding="utf-8")


def test_timeline_draws_in_the_plot_format_with_its_title(log, tmp_path):
    args = ["timeline", str(log), "--window", "2min", "--out", str(tmp_path)]
    result = runner.invoke(app, [*args, "--plot-format", "svg", "--title", "warm-up study"])
    assert result.exit_code == 0, result.output
    svg = (tmp_path / "timeline.svg").read_text(encoding="utf-8")
    assert svg.lstrip().startswith("<?xml") and "warm-up study" in svg
    assert not (tmp_path / "timeline.png").exists()


def test_record_takes_wrap_average_and_json(tmp_path):
    # 1 PPS time-interval readings around coincidence written in a 0..0.5 s range:
    # a reading just below zero appears just below 0.5 s (common practice for a
    # time-interval counter range); --wrap 0.5s unwraps it.
    rng = np.random.default_rng(23)
    x = np.mod(1e-9 * rng.standard_normal(600), 0.5)
    rows = [f"{t}Z,{v:.12f}" for t, v in zip(_stamps(600), x, strict=True)]
    log = tmp_path / "pps.csv"
    log.write_text("time,phase_s\n" + "\n".join(rows) + "\n")
    (tmp_path / "spec.toml").write_text(
        'statistic = "oadev"\nconfidence = 0.95\n[[limit]]\ntau_s = 2\nmax = 1e-8\n'
    )
    (tmp_path / "info.toml").write_text('[device]\nid = "PPS-1"\n')
    args = ["record", str(log), "--spec", str(tmp_path / "spec.toml")]
    args += ["--info", str(tmp_path / "info.toml"), "--out", str(tmp_path / "rec")]
    result = runner.invoke(app, [*args, "--wrap", "0.5s", "--average", "2", "--json"])
    assert result.exit_code == 0, result.output
    data = json.loads(result.stdout)
    assert data == json.loads((tmp_path / "rec" / "record.json").read_text())
    assert data["settings"]["wrap"] == "0.5s" and data["settings"]["average"] == 2
    taus = [r["tau_s"] for r in data["results"] if r["statistic"] == "oadev"]
    assert min(taus) == 2.0  # averaged pairs: the first tau is 2 tau0
    # unwrapped white PM of 1 ns: sigma_y(2 s) ~ 1e-9, far below the 0.5 s jumps
    assert max(r["deviation"] for r in data["results"] if r["deviation"]) < 1e-7
    assert data["overall_verdict"] == "pass"


@pytest.mark.parametrize("fmt", ["svg", "pdf"])
def test_record_draws_in_the_plot_format(log, tmp_path, fmt):
    (tmp_path / "spec.toml").write_text('statistic = "oadev"\n[[limit]]\ntau_s = 1\nmax = 1e-9\n')
    (tmp_path / "info.toml").write_text('[device]\nid = "OCXO-9"\n')
    args = ["record", str(log), "--spec", str(tmp_path / "spec.toml")]
    args += ["--info", str(tmp_path / "info.toml"), "--out", str(tmp_path / "r")]
    result = runner.invoke(app, [*args, "--plot-format", fmt])
    assert result.exit_code == 0, result.output
    assert (tmp_path / "r" / f"sigma_tau.{fmt}").is_file()
    assert not (tmp_path / "r" / "sigma_tau.png").exists()


def test_separate_and_phase_noise_draw_in_the_plot_format(tmp_path):
    # three invented oscillators with white FM (1e-11, 2e-11, 4e-11 per 1 s sample)
    rng = np.random.default_rng(31)
    y = {
        k: level * rng.standard_normal(600)
        for k, level in zip("ABC", (1e-11, 2e-11, 4e-11), strict=True)
    }
    logs = []
    for a, b in (("A", "B"), ("B", "C"), ("C", "A")):
        rows = [f"{t}Z,{v:.10e}" for t, v in zip(_stamps(600), y[a] - y[b], strict=True)]
        path = tmp_path / f"{a}{b}.csv".lower()
        path.write_text("time,fractional_frequency\n" + "\n".join(rows) + "\n")
        logs.append(str(path))
    out = tmp_path / "hat"
    result = runner.invoke(
        app, ["separate", *logs, "--out", str(out), "--plot-format", "svg", "--title", "hat 3"]
    )
    assert result.exit_code == 0, result.output
    assert "hat 3" in (out / "separated.svg").read_text(encoding="utf-8")
    assert not (out / "separated.png").exists()
    # an invented white-FM phase-noise table: L(f) = -100 dBc/Hz - 20 log10(f)
    table = tmp_path / "pn.csv"
    table.write_text("".join(f"{f},{-100 - 20 * np.log10(f):.3f}\n" for f in (1, 10, 100, 1000)))
    out = tmp_path / "pn"
    args = ["phase-noise", str(table), "--nominal", "10MHz", "--out", str(out)]
    result = runner.invoke(app, [*args, "--plot-format", "pdf", "--title", "pn sketch"])
    assert result.exit_code == 0, result.output
    assert (out / "phase_noise.pdf").read_bytes()[:5] == b"%PDF-"  # ISO 32000 header
    assert not (out / "phase_noise.png").exists()


# ---------------------------------------------------------------------- progress
def test_progress_shows_only_on_a_terminal():
    assert step_count("oadev,mdev") == 3 and step_count(["hdev"]) == 2
    quiet = ProgressDisplay(console=Console(file=io.StringIO(), force_terminal=False))
    with quiet as bar:
        assert bar.steps("a.csv", 3) is None and bar.reading("a.csv") is None
    off = ProgressDisplay(enabled=False, console=Console(file=io.StringIO(), force_terminal=True))
    with off as bar:
        assert bar.steps("a.csv", 3) is None
    screen = io.StringIO()
    shown = ProgressDisplay(console=Console(file=screen, force_terminal=True, width=80))
    with shown as bar:
        on_step = bar.steps("a.csv", 3)
        for label in ("oadev", "mdev", "qualification"):
            on_step(label)
    assert "analysing a.csv" in screen.getvalue()


def test_no_progress_output_when_not_a_terminal(log, tmp_path):
    result = runner.invoke(app, ["analyze", str(log), "--out", str(tmp_path)])
    assert result.exit_code == 0, result.output
    assert result.stderr == ""  # CliRunner's standard error is not a terminal
