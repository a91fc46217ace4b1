"""``stability overlay``: several logs on one plot (the figure: tests/figures)."""

from __future__ import annotations

import csv
import json

import numpy as np
import pytest
from typer.testing import CliRunner

from stability.errors import InputError
from stability.simulate import h_from_deviation, simulate
from stability.table import COLUMNS
from stability_cli.main import app
from stability_cli.overlay_cmd import PER_LOG_KEYS, parse_log_spec

runner = CliRunner()


def _write_log(path, level, seed, n=1500):
    """Invented white-FM log with ISO time stamps (fractional frequency)."""
    y = simulate(n, 1.0, levels={0: h_from_deviation(0, level, 1.0)}, seed=seed)
    stamps = np.datetime64("2026-01-01T00:00:00", "s") + np.arange(n).astype("timedelta64[s]")
    rows = np.char.add(
        np.char.add(np.datetime_as_string(stamps, unit="s"), "Z,"), np.char.mod("%.17g", y)
    )
    path.write_text("time,fractional_frequency\n" + "\n".join(rows.tolist()) + "\n")
    return path


@pytest.fixture(scope="module")
def logs(tmp_path_factory):
    folder = tmp_path_factory.mktemp("overlay")
    a = _write_log(folder / "ocxo.csv", 1e-11, 1)
    b = _write_log(folder / "rb.csv", 3e-12, 2)
    # a bare phase column without time stamps: needs kind and tau0 given per log
    x = np.cumsum(simulate(1500, 1.0, levels={0: h_from_deviation(0, 2e-12, 1.0)}, seed=3))
    c = folder / "maser.txt"
    c.write_text("\n".join(np.char.mod("%.17g", x).tolist()) + "\n")
    return a, b, c


def test_parse_log_spec():
    spec = parse_log_spec("ocxo.csv:kind=fractional,tau0=1s")
    assert str(spec.path) == "ocxo.csv"
    assert spec.options == {"kind": "fractional", "tau0": "1s"}
    spec = parse_log_spec("a.csv:column=2,time-column=Time,average=4,outliers=off")
    assert spec.options == {"column": 2, "time_column": "Time", "average": 4, "outliers": None}
    # Windows paths and colons that are not options stay in the path
    assert str(parse_log_spec(r"C:\logs\a.csv").path) == r"C:\logs\a.csv"
    assert parse_log_spec(r"C:\logs\a.csv").options == {}
    assert str(parse_log_spec("run 12:30.csv").path) == "run 12:30.csv"
    spec = parse_log_spec(r"C:\logs\a.csv:drift=linear")
    assert str(spec.path) == r"C:\logs\a.csv" and spec.options == {"drift": "linear"}
    with pytest.raises(InputError, match="unknown per-log option 'colour'"):
        parse_log_spec("a.csv:colour=red")
    with pytest.raises(InputError, match="empty value for kind"):
        parse_log_spec("a.csv:kind=")
    assert "nominal" in PER_LOG_KEYS and "drift" in PER_LOG_KEYS


def test_parse_log_spec_prefers_an_existing_file(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "x:kind=phase").write_text("1\n2\n")
    spec = parse_log_spec("x:kind=phase")
    assert str(spec.path) == "x:kind=phase" and spec.options == {}


def test_overlay_writes_plot_and_combined_table(logs, tmp_path):
    a, b, c = logs
    out = tmp_path / "ov"
    result = runner.invoke(
        app,
        [
            "overlay",
            str(a),
            str(b),
            f"{c}:kind=phase,tau0=1s",
            "--labels",
            "ocxo,rb,maser",
            "--stats",
            "oadev,mdev",
            "--out",
            str(out),
        ],
    )
    assert result.exit_code == 0, result.output
    assert (out / "overlay.png").read_bytes()[:4] == b"\x89PNG"
    with open(out / "table.csv", newline="") as handle:
        rows = list(csv.reader(handle))
    assert rows[0] == ["label", *COLUMNS]  # DESIGN columns with a leading label
    assert {r[0] for r in rows[1:]} == {"ocxo", "rb", "maser"}
    assert {r[1] for r in rows[1:]} == {"oadev", "mdev"}
    md = (out / "table.md").read_text().splitlines()
    assert md[0].startswith("| label | statistic |")
    assert sum(line.startswith("| maser |") for line in md) == sum(
        r[0] == "maser" for r in rows[1:]
    )
    summary = json.loads((out / "summary.json").read_text())
    assert summary["labels"] == ["ocxo", "rb", "maser"]
    assert summary["inputs"]["maser"]["settings"]["kind"] == "phase"
    assert len(summary["inputs"]["ocxo"]["input"]["sha256"]) == 64
    for label in ("ocxo", "rb", "maser"):
        assert label in result.output
    # the level of each log is where it was made: OADEV(1 s) of white FM (SP 1065)
    first = {r[0]: float(r[5]) for r in rows[1:] if r[1] == "oadev" and r[2] == "1.0"}
    assert first["ocxo"] == pytest.approx(1e-11, rel=0.1)
    assert first["rb"] == pytest.approx(3e-12, rel=0.1)


def test_overlay_errors(logs, tmp_path):
    a, b, _ = logs
    out = str(tmp_path / "e")
    # exit 2: the command line alone is wrong; exit 1: a file cannot be used
    cases = [
        ([str(a), str(b), "--labels", "one"], "--labels", 2),
        ([str(a), str(a)], "labels must differ", 2),
        ([str(a), f"{b}:speed=3"], "unknown per-log option", 2),
        ([str(a), f"{b}:kind=freq"], "kind must be one of", 2),
        ([str(a), str(tmp_path / "none.csv")], "none.csv", 1),
        ([str(a), "--plot-format", "bmp"], "--plot-format", 2),
    ]
    for args, text, code in cases:
        result = runner.invoke(app, ["overlay", *args, "--out", out])
        assert result.exit_code == code, result.output
        assert len(result.output.strip().splitlines()) == 1, result.output
        assert "Traceback" not in result.output
        assert text in result.output, result.output
    result = runner.invoke(app, ["overlay", "--out", out])
    assert result.exit_code == 2, result.output


def test_overlay_json_and_svg(logs, tmp_path):
    a, b, _ = logs
    out = tmp_path / "j"
    result = runner.invoke(
        app, ["overlay", str(a), str(b), "--json", "--plot-format", "svg", "--out", str(out)]
    )
    assert result.exit_code == 0, result.output
    data = json.loads(result.stdout)
    assert data["labels"] == ["ocxo.csv", "rb.csv"]  # default labels: the file names
    assert (out / "overlay.svg").is_file()
