"""``stability validate``: options, exit codes, and a run from outside the source tree."""

from __future__ import annotations

import dataclasses
import json
import os
import re
import shutil
import subprocess
import sys
from pathlib import Path

import pytest
from typer.testing import CliRunner

from stability.deviations import STATISTICS
from stability.validation import report as report_module
from stability.validation.coverage import CoveragePlan
from stability_cli.main import app

REPO = Path(__file__).resolve().parents[2]
runner = CliRunner()
#: A short coverage run for tests whose subject is not the coverage.
SMALL_PLAN = CoveragePlan(points=128, trials=60, factors=(1, 4))


def test_help_lists_the_options_once():
    done = runner.invoke(app, ["validate", "--help"])
    assert done.exit_code == 0, done.output
    for flag in ("--stats", "--spec", "--thorough", "--out", "--debug"):
        assert len(re.findall(rf"^\s+{flag}\b", done.output, re.MULTILINE)) == 1, flag


@pytest.mark.parametrize(
    ("argv", "words"),
    [
        (["--stats", "mtie"], "no chi-squared interval"),
        (["--stats", "theo1"], "tau = 0.75"),
        (["--stats", "xdev"], "unknown statistic"),
        (["--thorough", "yes"], "unexpected extra argument"),
    ],
)
def test_usage_errors_are_one_line_and_exit_2(tmp_path, argv, words):
    done = runner.invoke(app, ["validate", "--out", str(tmp_path / "v"), *argv])
    assert done.exit_code == 2, done.output
    assert words in done.output and not (tmp_path / "v").exists()


def test_a_missing_spec_is_an_input_error(tmp_path):
    done = runner.invoke(app, ["validate", "--spec", str(tmp_path / "no.toml"),
                               "--out", str(tmp_path / "v")])  # fmt: skip
    assert done.exit_code == 1, done.output
    assert "error:" in done.output and not (tmp_path / "v").exists()


def test_a_failed_check_exits_1_and_names_it(tmp_path, monkeypatch):
    stat = STATISTICS["mdev"]

    def off(x, tau0, m, seg):  # a broken estimator: 1e-5 too low
        value, n = stat.func(x, tau0, m, seg)
        return value * (1 - 1e-5), n

    monkeypatch.setattr(report_module, "DEFAULT_PLAN", SMALL_PLAN)  # coverage is not the subject
    monkeypatch.setitem(STATISTICS, "mdev", dataclasses.replace(stat, func=off, multi=None))
    done = runner.invoke(app, ["validate", "--stats", "hdev", "--out", str(tmp_path)])
    assert done.exit_code == 1, done.output
    assert "FAIL:" in done.output and "failed: NBS14: mdev at tau = 2 s" in done.output
    report = json.loads((tmp_path / "validation.json").read_text(encoding="utf-8"))
    assert report["result"] == "fail" and (tmp_path / "validation.pdf").is_file()


def test_runs_from_a_copy_without_tests_or_source_tree(tmp_path):
    # Only the two packages, as an installation holds them: no tests/, no datasets/.
    site = tmp_path / "site"
    ignore = shutil.ignore_patterns("__pycache__")
    shutil.copytree(REPO / "stability", site / "stability", ignore=ignore)
    shutil.copytree(REPO / "cli", site / "stability_cli", ignore=ignore)
    work = tmp_path / "elsewhere"
    work.mkdir()
    env = {k: v for k, v in os.environ.items() if k != "PYTHONPATH"}
    env["PYTHONPATH"] = str(site)
    env["MPLBACKEND"] = "Agg"
    done = subprocess.run(
        [sys.executable, "-m", "stability", "validate", "--out", "v"],
        cwd=work, env=env, capture_output=True, text=True, timeout=300, check=False,
    )  # fmt: skip
    assert done.returncode == 0, done.stdout + done.stderr
    assert "PASS:" in done.stdout
    report = json.loads((work / "v" / "validation.json").read_text(encoding="utf-8"))
    assert report["result"] == "pass"
    assert report["environment"]["installed_at"]["stability"] == str(site / "stability")
    assert sorted(p.name for p in (work / "v").iterdir()) == ["validation.json", "validation.pdf"]
