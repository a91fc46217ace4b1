"""``stability demo`` end to end on a shortened copy of the demo data, and the data maker."""

from __future__ import annotations

import importlib.util
import shutil
from pathlib import Path

import pytest
from typer.testing import CliRunner

from stability.errors import InputError
from stability.ingest import inspect_log
from stability.reports.tables import read_table_csv
from stability_cli.demo_cmd import COUNTER_LOG, INFO_FILE, PPS_LOG, SPEC_FILE, default_data_folder
from stability_cli.main import app

runner = CliRunner()
DEMO = Path(__file__).resolve().parents[2] / "datasets" / "demo"


def _maker():
    spec = importlib.util.spec_from_file_location("make_demo", DEMO / "make_demo.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


@pytest.fixture(scope="module")
def short_data(tmp_path_factory):
    folder = tmp_path_factory.mktemp("demo-data")
    _maker().make_demo(folder, hours=1.0)
    for name in (SPEC_FILE, INFO_FILE):
        if (DEMO / name).is_file():
            shutil.copy(DEMO / name, folder / name)
    return folder


def test_demo_end_to_end(short_data, tmp_path):
    out = tmp_path / "demo-out"
    result = runner.invoke(app, ["demo", "--data", str(short_data), "--out", str(out)])
    assert result.exit_code == 0, result.output
    for part in ("counter", "pps"):
        for name in ("table.csv", "table.md", "summary.json", "sigma_tau.png", "series.png"):
            assert (out / part / name).is_file(), (part, name)
    counter = read_table_csv(out / "counter" / "table.csv")
    assert set(counter["statistic"]) == {"oadev", "mdev", "hdev"} and len(counter) > 10
    pps = read_table_csv(out / "pps" / "table.csv")
    assert set(pps["statistic"]) == {"tdev", "mtie", "oadev"} and len(pps) > 10
    assert "drift       removed (log model)" in result.output  # the drift model is reported
    assert "Open these:" in result.output
    assert str(out / "counter" / "sigma_tau.png") in result.output
    record_possible = (
        importlib.util.find_spec("stability_cli.record_cmd") is not None
        and (short_data / SPEC_FILE).is_file()
        and (short_data / INFO_FILE).is_file()
    )
    if record_possible:
        assert (out / "record" / "record.pdf").is_file()
        assert str(out / "record" / "record.pdf") in result.output


def test_demo_missing_data(tmp_path):
    result = runner.invoke(app, ["demo", "--data", str(tmp_path / "nowhere")])
    assert result.exit_code == 1, result.output
    assert "demo data folder is missing" in result.output and "Traceback" not in result.output
    (tmp_path / PPS_LOG).write_text("x\n")
    result = runner.invoke(app, ["demo", "--data", str(tmp_path)])
    assert result.exit_code == 1, result.output
    assert COUNTER_LOG in result.output and "make_demo.py" in result.output


def test_default_data_folder_is_the_bundled_one():
    assert default_data_folder() == DEMO


def test_short_logs_read_as_designed(short_data):
    maker = _maker()
    counter = inspect_log(short_data / COUNTER_LOG)
    assert counter.container == "gzip"  # detected from the magic bytes (RFC 1952)
    assert counter.kind == "frequency" and counter.nominal == 10e6
    assert counter.bad_value_count == 4  # three 9.91E+37 and one ERROR, placed by make_demo
    assert counter.gap_samples == 180  # one hour: n // 20 missing rows
    pps = inspect_log(short_data / PPS_LOG)
    assert pps.kind == "phase" and pps.samples == 3600 and pps.gap_samples == 0
    # reproducible from the fixed seeds
    assert maker.counter_log(0.25) == maker.counter_log(0.25)
    assert maker.pps_log(0.25) == maker.pps_log(0.25)
    with pytest.raises(InputError, match="hours must be"):
        maker.counter_log(0.0)


@pytest.mark.skipif(not (DEMO / COUNTER_LOG).is_file(), reason="demo data not generated")
def test_committed_counter_log():
    report = inspect_log(DEMO / COUNTER_LOG)
    assert report.samples == 16 * 3600
    assert report.gap_samples == 240 and report.bad_value_count == 4
    total = sum(p.stat().st_size for p in DEMO.iterdir() if p.is_file())
    assert total < 5e6
