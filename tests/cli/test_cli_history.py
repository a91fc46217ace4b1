"""``stability record --history`` and ``stability history`` through typer's CliRunner.

Records are invented (tests/history_records.py): one real record from an invented
log, and yearly copies of it for one device aging on a known line.
"""

from __future__ import annotations

import hashlib
import json
import os
import subprocess
from datetime import UTC, datetime

import pytest
from history_records import derive, make_record, write_inputs, yearly_records
from typer.testing import CliRunner

from stability.history import open_history
from stability_cli.main import app

runner = CliRunner()


@pytest.fixture(scope="module")
def template(tmp_path_factory):
    return make_record(tmp_path_factory.mktemp("template"))


@pytest.fixture
def inputs(tmp_path):
    log = write_inputs(tmp_path)
    return log, tmp_path / "spec.toml", tmp_path / "info.toml"


@pytest.fixture
def yearly(tmp_path, template):
    """Ten invented yearly record.json files of OSC-TEST-1 aging 2e-13 a day."""
    records, _, _ = yearly_records(template, rate_per_day=2e-13, seed=12)
    paths = []
    for k, record in enumerate(records):
        path = tmp_path / "old" / f"{k}" / "record.json"
        path.parent.mkdir(parents=True)
        path.write_text(json.dumps(record, indent=2), encoding="utf-8")
        paths.append(path)
    return paths


def _record(inputs, out, *extra, env=None):
    log, spec, info = inputs
    args = ["record", str(log), "--spec", str(spec), "--info", str(info), "--out", str(out)]
    return runner.invoke(app, [*args, "--outliers", "off", *extra], env=env)


def _sha(path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def test_record_stores_in_the_history_and_refuses_a_duplicate(inputs, tmp_path):
    history = tmp_path / "lab.sqlite"
    first = _record(inputs, tmp_path / "a", "--history", str(history))
    assert first.exit_code == 0, first.output
    assert f"stored as record 1 of OSC-TEST-1 in the calibration history {history}" in first.output
    again = _record(inputs, tmp_path / "b", "--history", str(history))
    assert again.exit_code == 1, again.output
    assert "already in the calibration history as record 1" in again.output
    assert "pass --force" in again.output
    assert not (tmp_path / "b").exists()
    forced = _record(inputs, tmp_path / "b", "--history", str(history), "--force")
    assert forced.exit_code == 0, forced.output
    assert "replaced as record 1" in forced.output
    with open_history(history) as store:
        assert len(store.records()) == 1


def test_history_is_on_when_the_variable_is_set(inputs, tmp_path):
    named = tmp_path / "from-env.sqlite"
    off = _record(inputs, tmp_path / "a", env={"STABILITY_HISTORY": ""})
    assert off.exit_code == 0 and "calibration history" not in off.output, off.output
    on = _record(inputs, tmp_path / "b", "--force", env={"STABILITY_HISTORY": str(named)})
    assert on.exit_code == 0, on.output
    assert named.exists() and f"history {named}" in on.output
    # --history wins over the variable
    given = tmp_path / "given.sqlite"
    both = _record(
        inputs, tmp_path / "c", "--history", str(given), env={"STABILITY_HISTORY": str(named)}
    )
    assert both.exit_code == 0 and given.exists(), both.output


def test_device_review_with_tolerance_and_figure(yearly, tmp_path):
    history = tmp_path / "h.sqlite"
    argv = ["history", "import", *map(str, yearly), "--history", str(history)]
    imported = runner.invoke(app, argv)
    assert imported.exit_code == 0, imported.output
    assert "10 record(s) in" in imported.output
    listed = runner.invoke(app, ["history", "--history", str(history)])
    assert listed.exit_code == 0, listed.output
    assert "OSC-TEST-1" in listed.output and "2023-03-03" in listed.output
    assert "2024-03-03" in listed.output  # due: last calibration + 12 months (default)
    out = tmp_path / "fig"
    shown = runner.invoke(
        app,
        ["history", "--history", str(history), "--device", "OSC-TEST-1", "--tolerance", "2e-9",
         "--interval", "12mo", "--model", "linear", "--out", str(out)],
    )  # fmt: skip
    assert shown.exit_code == 0, shown.output
    lines = shown.output.splitlines()
    assert sum(line.strip().startswith(tuple("0123456789")) for line in lines) >= 10
    assert "aging model: linear (as asked); 10 records fitted" in shown.output
    assert "stays within it until the due date" in shown.output
    assert "longest interval within tolerance" in shown.output
    assert "ILAC-G24 / OIML D 10" in shown.output and "from memory" in shown.output
    assert (out / "history.png").stat().st_size > 10_000
    as_json = runner.invoke(
        app,
        ["history", "--history", str(history), "--device", "OSC-TEST-1", "--tolerance", "2e-9",
         "--model", "linear", "--out", str(out), "--json"],
    )  # fmt: skip
    assert as_json.exit_code == 0, as_json.output
    review = json.loads(as_json.output)
    fit = review["fit"]
    # the known aging of the invented records, within t(0.975, 8) = 2.306 standard errors
    assert abs(fit["rate_per_day_at_last"] - 2e-13) <= 2.306 * fit["u_rate_per_day_at_last"]
    assert review["within_tolerance_until_due"] is True
    assert review["interval"] == "12mo" and review["interval_from"] == "default"


def test_set_interval_export_and_show(yearly, tmp_path, inputs):
    history = tmp_path / "h.sqlite"
    made = _record(inputs, tmp_path / "rec", "--history", str(history))
    assert made.exit_code == 0, made.output
    older = runner.invoke(app, ["history", "import", str(yearly[0]), "--history", str(history)])
    assert older.exit_code == 0 and "as record 2 of OSC-TEST-1" in older.output, older.output
    stored = runner.invoke(
        app,
        ["history", "set-interval", "--device", "OSC-TEST-1", "--interval", "6mo",
         "--history", str(history)],
    )  # fmt: skip
    assert stored.exit_code == 0 and "interval of OSC-TEST-1: 6mo" in stored.output, stored.output
    listed = runner.invoke(app, ["history", "--history", str(history)])
    assert "6mo (stored)" in listed.output, listed.output
    assert "2020-07-06" in listed.output  # 6 January 2020 (the newest record) + 6 months
    given = runner.invoke(app, ["history", "--history", str(history), "--interval", "90d"])
    assert "90d" in given.output and "2020-04-05" in given.output, given.output
    export = runner.invoke(
        app, ["history", "export", "--out", str(tmp_path / "x"), "--history", str(history)]
    )
    assert export.exit_code == 0, export.output
    assert {p.name for p in (tmp_path / "x").iterdir()} == {
        "devices.csv", "records.csv", "checks.csv", "history.json",
    }  # fmt: skip
    pdf = tmp_path / "again.pdf"
    show = runner.invoke(
        app, ["history", "show", "--record", "1", "--pdf", str(pdf), "--history", str(history)]
    )
    assert show.exit_code == 0, show.output
    assert "record 1: device OSC-TEST-1" in show.output and "record.pdf kept" in show.output
    assert _sha(pdf) == _sha(tmp_path / "rec" / "record.pdf")  # the record as issued
    no_pdf = runner.invoke(
        app,
        ["history", "show", "--record", "2", "--pdf", str(tmp_path / "x.pdf"),
         "--history", str(history)],
    )  # fmt: skip
    assert no_pdf.exit_code == 1 and "stored from its record.json alone" in no_pdf.output


def test_odd_device_id_shown_as_given(template, tmp_path):
    odd = "Ro'bert\"; DROP TABLE records;-- ,\u00e9 x"
    path = tmp_path / "odd.json"
    path.write_text(
        json.dumps(
            derive(template, device=odd, when=datetime(2022, 1, 3, tzinfo=UTC), offset=1e-9,
                   u_offset=1e-11)
        ),
        encoding="utf-8",
    )  # fmt: skip
    history = tmp_path / "h.sqlite"
    imported = runner.invoke(app, ["history", "import", str(path), "--history", str(history)])
    assert imported.exit_code == 0, imported.output
    listed = runner.invoke(app, ["history", "--history", str(history), "--json"])
    assert json.loads(listed.output)[0]["device_id"] == odd
    shown = runner.invoke(
        app, ["history", "--history", str(history), "--device", odd, "--out", str(tmp_path)]
    )
    assert shown.exit_code == 0 and f"device {odd}:" in shown.output, shown.output


def test_truncated_history_is_one_line_and_untouched(inputs, tmp_path, template):
    history = tmp_path / "h.sqlite"
    with open_history(history) as store:
        store.add(template)
    data = history.read_bytes()
    history.write_bytes(data[: len(data) // 3])
    before = _sha(history)
    for argv in (
        ["history", "--history", str(history)],
        ["history", "import", "x.json", "--history", str(history)],
    ):
        result = runner.invoke(app, argv)
        assert result.exit_code == 1, result.output
        lines = result.output.strip().splitlines()
        assert len(lines) == 1 and lines[0].startswith("error: "), result.output
        assert "damaged calibration history (truncated" in lines[0] and str(history) in lines[0]
    recorded = _record(inputs, tmp_path / "rec", "--history", str(history))
    assert recorded.exit_code == 1 and "damaged" in recorded.output, recorded.output
    assert not (tmp_path / "rec").exists()
    assert _sha(history) == before


def test_usage_errors(tmp_path):
    history = ["--history", str(tmp_path / "h.sqlite")]
    cases = [
        (["history", *history, "--device", "X", "--interval", "12 parsecs"], "--interval"),
        (["history", *history, "--device", "X", "--tolerance", "-1"], "--tolerance"),
        (["history", *history, "--device", "X", "--model", "cubic"], "--model"),
        (["history", *history, "--tolerance", "1e-9"], "--tolerance needs --device"),
        (["history", "--device", "X", "import", "a.json"], "belong to 'stability history'"),
    ]
    for argv, needle in cases:
        result = runner.invoke(app, argv)
        assert result.exit_code == 2, (argv, result.output)
        assert needle in result.output, (argv, result.output)


def test_default_location_from_the_environment(tmp_path, stability_command):
    # no --history and no STABILITY_HISTORY: the default location under XDG_DATA_HOME
    env = {
        "XDG_DATA_HOME": str(tmp_path / "data"),
        "HOME": str(tmp_path),
        "PATH": "/usr/bin",
        "PYTHONPATH": os.environ["PYTHONPATH"],
    }
    done = subprocess.run(
        [*stability_command, "history"], env=env, capture_output=True, text=True, timeout=120
    )
    assert done.returncode == 1, done.stderr
    expected = tmp_path / "data" / "stability" / "history.sqlite"
    assert done.stderr.strip() == (
        f"error: {expected}: no calibration history here (store records with stability "
        "record --history FILE, or import record.json files with stability history import)"
    )
