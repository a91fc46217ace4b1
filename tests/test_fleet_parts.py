"""The parts of a fleet that need no cluster: manifests, device ids, the progress file,
the fleet table and ranking, the figures and the pages.

The data are invented; the ranking's robust z-score is checked against a value
worked by hand from its definition (median and 1.4826 MAD, common practice).
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest

from stability.errors import InputError
from stability.figures.fleet import distribution_figure, fleet_figure
from stability.fleet import (
    device_from_name,
    fleet_frame,
    jobs_from_patterns,
    population,
    rank_devices,
    read_manifest,
    read_progress,
)
from stability.fleet.engine import fleet_statistic
from stability.fleet.manifest import FleetJob
from stability.fleet.state import PROGRESS_NAME, ProgressLog
from stability.fleet.work import FleetTask, job_hash, run_task
from stability.reports.fleet import fleet_html, fleet_markdown, settings_line
from stability.settings import RunSettings
from stability.simulate import h_from_deviation, simulate
from stability.workflow import record_into


# ---------------------------------------------------------------------- manifests
def test_manifest_errors_name_what_and_where(tmp_path):
    bad = tmp_path / "m.csv"
    bad.write_text("path,device,colour\na.csv,A,red\n")
    with pytest.raises(InputError, match=r"m\.csv:2: unknown field\(s\) colour \(known fields"):
        read_manifest(bad)
    bad.write_text("device\nA\n")
    with pytest.raises(InputError, match="header has no path column"):
        read_manifest(bad)
    bad.write_text("path,device\na.csv,A\nb.csv,A\n")
    with pytest.raises(InputError, match=r"m\.csv:3: device id 'A' is given twice \(also at"):
        read_manifest(bad)
    bad.write_text("path,device\na.csv,../up\n")
    with pytest.raises(InputError, match="device id '../up' cannot name an output folder"):
        read_manifest(bad)
    bad.write_text("path,strict\na.csv,maybe\n")
    with pytest.raises(InputError, match="strict must be true or false"):
        read_manifest(bad)
    bad.write_text("path,device\na.csv,A,extra\n")
    with pytest.raises(InputError, match="3 cells where the header has 2"):
        read_manifest(bad)
    with pytest.raises(InputError, match="no such manifest file"):
        read_manifest(tmp_path / "none.csv")
    toml = tmp_path / "m.toml"
    toml.write_text("[[logs]]\npath = 'a.csv'\n")
    with pytest.raises(InputError, match=r"unknown table\(s\) logs"):
        read_manifest(toml)
    toml.write_text("[[log]]\npath = 'a.csv'\ninfo = 'i.toml'\n")
    with pytest.raises(InputError, match="an information file without a specification"):
        read_manifest(toml)


def test_csv_and_toml_manifests_give_the_same_jobs(tmp_path):
    (tmp_path / "logs").mkdir()
    base = RunSettings.from_options(stats="oadev,mdev", nominal="10MHz")
    csv_file = tmp_path / "fleet.csv"
    csv_file.write_text(
        "# production week 12\n"
        "path,device,column,tau0,spec,strict\n"
        "logs/ocxo-1.csv,OCXO-1,2,,spec.toml,\n"
        "logs/ocxo-2.csv,,,10s,,yes\n"
    )
    toml_file = tmp_path / "fleet.toml"
    toml_file.write_text(
        '[defaults]\nspec = "spec.toml"\n\n'
        '[[log]]\npath = "logs/ocxo-1.csv"\ndevice = "OCXO-1"\ncolumn = "2"\n\n'
        '[[log]]\npath = "logs/ocxo-2.csv"\ntau0 = "10s"\nstrict = true\nspec = ""\n'
    )
    from_csv = read_manifest(csv_file, base)
    from_toml = read_manifest(toml_file, base)
    assert [j.device for j in from_csv] == ["OCXO-1", "ocxo-2"]  # the name's stem by default
    assert from_csv[0].path == tmp_path / "logs" / "ocxo-1.csv"  # from the manifest's folder
    assert from_csv[0].spec == tmp_path / "spec.toml" and from_csv[1].spec is None
    assert from_csv[0].settings.read.column == "2" and from_csv[0].settings.read.nominal == "10MHz"
    assert from_csv[1].settings.read.tau0 == "10s" and from_csv[1].settings.read.strict is True
    assert from_csv[1].settings.analysis.stats == "oadev,mdev"  # the fleet's own settings kept
    assert [(j.device, j.path, j.settings) for j in from_csv] == [
        (j.device, j.path, j.settings) for j in from_toml
    ]
    assert from_toml[1].spec is None  # an empty value takes the default back


def test_device_ids_from_file_names(tmp_path):
    assert device_from_name("logs/OCXO-0042.csv.gz") == "OCXO-0042"
    assert device_from_name("bench3_OCXO-0042_night.csv", r"OCXO-(\d+)") == "0042"
    assert device_from_name("bench3_OCXO-0042.csv", r"(?P<id>OCXO-\d+)") == "OCXO-0042"
    assert device_from_name("rx-17.log", r"rx-\d+") == "rx-17"
    with pytest.raises(InputError, match="does not match the file name"):
        device_from_name("other.csv", r"OCXO-(\d+)")
    with pytest.raises(InputError, match="is not a regular expression"):
        device_from_name("other.csv", r"OCXO-(")
    for name in ("b.csv", "a.csv", "sub/c.csv"):
        (tmp_path / name).parent.mkdir(exist_ok=True)
        (tmp_path / name).write_text("1\n")
    jobs = jobs_from_patterns([tmp_path / "*.csv", tmp_path / "**" / "*.csv"])
    assert [j.device for j in jobs] == ["a", "b", "c"]  # sorted, each file once
    with pytest.raises(InputError, match="no log matches this pattern"):
        jobs_from_patterns([tmp_path / "*.txt"])


# ---------------------------------------------------------------------- progress file
def test_progress_file_survives_a_torn_line_and_the_last_line_wins(tmp_path):
    with ProgressLog(tmp_path) as log:
        log.add({"device": "A", "status": "ok", "sha256": "1", "row": {"x": math.nan}})
        log.add({"device": "B", "status": "ok", "sha256": "2"})
        log.add({"device": "A", "status": "error", "sha256": "3"})
    with open(tmp_path / PROGRESS_NAME, "a") as handle:
        handle.write('{"format": "stability fleet progress 1", "device": "C", "sta')  # killed
    entries = read_progress(tmp_path)
    assert sorted(entries) == ["A", "B"]
    assert entries["A"]["status"] == "error" and entries["A"]["sha256"] == "3"
    assert read_progress(tmp_path / "none") == {}


def test_job_hash_follows_settings_spec_and_outputs(tmp_path):
    spec = tmp_path / "spec.toml"
    spec.write_text('statistic = "oadev"\n[[limit]]\ntau_s = 1\nmax = 1e-11\n')
    jobs = jobs_from_patterns([spec])  # any file will do as a log here
    job = jobs[0]
    first = job_hash(job, "oadev", (1.0,), "png", False)
    assert first == job_hash(job, "oadev", (1.0,), "png", False)
    assert first != job_hash(job, "oadev", (1.0,), "svg", False)
    assert first != job_hash(job, "mdev", (1.0,), "png", False)
    judged = type(job)(job.device, job.path, job.settings, spec=spec)
    before = job_hash(judged, "oadev", (1.0,), "png", False)
    spec.write_text('statistic = "oadev"\n[[limit]]\ntau_s = 1\nmax = 2e-11\n')
    assert job_hash(judged, "oadev", (1.0,), "png", False) != before  # the spec's content counts


# ---------------------------------------------------------------------- table and ranking
def _result(device: str, level: float, status: str = "ok") -> dict:
    taus = [1.0, 10.0, 100.0]
    curve = [(t, level / math.sqrt(t)) for t in taus]
    row = {"readings": 1000, "gaps": 0, "outliers_removed": 1, "offset": 1e-12, "noise": "WFM"}
    for t, d in curve:
        row[f"oadev_{t:g}s"] = d
    return {
        "device": device,
        "file": f"{device}.csv",
        "sha256": "0" * 64,
        "status": status,
        "error": "" if status != "error" else f"{device}.csv: no such file",
        "row": row if status != "error" else {},
        "curve": curve if status != "error" else [],
        "seconds": 1.0,
    }


def test_fleet_frame_band_and_ranking():
    levels = {"A": 1.0e-11, "B": 1.1e-11, "C": 1.2e-11, "D": 0.9e-11, "E": 4.0e-11}
    results = [_result(d, v) for d, v in levels.items()] + [_result("F", 0, "error")]
    frame = fleet_frame(results, "oadev", (1.0, 10.0, 100.0), judged=False)
    assert list(frame["device"]) == list("ABCDEF")
    assert frame["readings"].dtype == "Int64" and frame["status"].tolist()[-1] == "error"
    assert "verdict" not in frame  # a fleet without a specification has no verdicts
    # robust z of E at every tau: logs of the five levels, median log10(1.1e-11),
    # |log10(v / 1.1e-11)| sorted: 0, log10(1.2/1.1), log10(1.1/1.0), log10(1.1/0.9), log10(4/1.1);
    # MAD = log10(1.1), z = log10(4 / 1.1) / (1.4826 MAD)
    expected = math.log10(4.0 / 1.1) / (1.4826 * math.log10(1.1))
    assert frame.set_index("device").at["E", "population_z"] == pytest.approx(expected, rel=1e-12)
    ranked = rank_devices(frame)
    assert ranked["device"].tolist()[0] == "E" and "F" not in ranked["device"].tolist()
    tau, med, low, high = population(
        {d: (np.array([1.0]), np.array([v])) for d, v in levels.items()}
    )
    assert med[0] == pytest.approx(1.1e-11)
    assert low[0] == pytest.approx(np.percentile(list(levels.values()), 10))
    assert high[0] == pytest.approx(np.percentile(list(levels.values()), 90))


def test_pages_hold_every_device_and_escape_log_text():
    results = [_result(f"U{k}", 1e-11 * (1 + k / 10)) for k in range(5)]
    results.append(_result("X", 0, "error"))
    results[-1]["error"] = "<script>alert(1)</script>.csv: no such file"
    frame = fleet_frame(results, "oadev", (1.0, 10.0), judged=False)
    ranked = rank_devices(frame)
    page = fleet_html(
        frame,
        ranked,
        statistic="oadev",
        key_taus=(1.0, 10.0),
        figures={"a figure": b"\x89PNG"},
        title="week <12>",
    )
    assert "<script>alert(1)</script>" not in page and "&lt;script&gt;" in page
    assert "<title>week &lt;12&gt;</title>" in page
    assert page.count("<tr") == 1 + len(ranked) + 1 + len(frame)
    assert 'src="data:image/png;base64,iVBORw=="' in page
    text = fleet_markdown(
        frame, ranked, statistic="oadev", key_taus=(1.0, 10.0), figures={"fleet": "fleet.png"}
    )
    assert "6 logs: 5 analysed, 1 failed." in text and "![fleet](fleet.png)" in text
    assert all(f"| U{k} |" in text for k in range(5))


# ---------------------------------------------------------------------- figures
def test_fleet_figures_draw_what_they_are_given():
    rng = np.random.default_rng(2)  # invented curves around 1e-11 / sqrt(tau)
    tau = np.array([1.0, 10.0, 100.0, 1000.0])
    curves = {f"U{k}": (tau, 1e-11 * rng.uniform(0.8, 1.3) / np.sqrt(tau)) for k in range(12)}
    band = population(curves, 3)
    drawn = fleet_figure(
        curves,
        band,
        statistic="oadev",
        limits=[(1.0, 2e-11), (100.0, 2e-12)],
        named=["U3", "U5", "nobody"],
        title="fleet",
        footer="footer",
    )
    assert set(drawn.curves) == set(curves) and drawn.named == ("U3", "U5")
    assert drawn.limits == ((1.0, 2e-11), (100.0, 2e-12))
    np.testing.assert_allclose(drawn.band[1], np.median([c[1] for c in curves.values()], axis=0))
    values = {name: float(c[1][2]) for name, c in curves.items()}
    spread = distribution_figure(values, 100.0, statistic="oadev", limit=2e-12, named=["U3"])
    assert spread.counts.sum() == 12 and spread.limit == 2e-12
    assert spread.median == pytest.approx(np.median(list(values.values())))
    empty = distribution_figure({"U1": math.nan}, 100.0, statistic="oadev")
    assert empty.values == {} and math.isnan(empty.median)
    nothing = fleet_figure({}, population({}), statistic="oadev")
    assert nothing.curves == {}
    with pytest.raises(InputError, match="curve of 'U1'"):
        fleet_figure({"U1": ([1.0], [1.0, 2.0])}, band, statistic="oadev")


# ---------------------------------------------------------------------- judged logs
SPEC = """statistic = "oadev"
confidence = 0.95
[[limit]]
tau_s = 1
max = 1.2e-11
[[limit]]
tau_s = 10
max = 3e-12
[[limit]]
tau_s = 100
max = 1e-13
"""


def _judged_fleet(tmp_path):
    # invented: white FM 1e-11 at 1 s; the spec passes at 1 s, is close at 10 s, fails at 100 s
    y = simulate(2000, 1.0, levels={0: h_from_deviation(0, 1e-11, 1.0)}, seed=11)
    log = tmp_path / "OCXO-7.txt"
    log.write_text("fractional_frequency\n" + "".join(f"{v:.6e}\n" for v in y))
    spec = tmp_path / "spec.toml"
    spec.write_text(SPEC)
    info = tmp_path / "info.toml"
    info.write_text('[device]\nid = "OCXO-7"\n')
    return log, spec, info


def _task(job, folder, taus):
    return FleetTask(job=job, folder=folder, statistic="oadev", key_taus=taus, settings_hash="h")


def test_a_judged_log_gets_the_verdicts_of_a_record(tmp_path):
    log, spec, info = _judged_fleet(tmp_path)
    settings = RunSettings.from_options(tau0="1s", stats="mdev", taus="decade")
    job = FleetJob("OCXO-7", log, settings, spec=spec, info=info)
    statistic, taus, _ = fleet_statistic([job])
    assert statistic == "oadev" and taus == (1.0, 10.0, 100.0)  # the specification's own
    result = run_task(_task(job, tmp_path / "out" / "OCXO-7", taus))
    assert result["status"] == "ok", result["error"]
    record = record_into(log, tmp_path / "single", spec, info, settings)
    row = result["row"]
    assert row["verdict"] == str(record.judgement.overall) == "fail"
    for check in record.judgement.listed:
        assert row[f"verdict_{check.tau_s:g}s"] == str(check.verdict)
        assert row[f"oadev_{check.tau_s:g}s"] == check.deviation
    ratios = [c.deviation / c.limit for c in record.judgement.listed]
    assert row["worst_ratio"] == max(ratios) > 1
    names = {p.name for p in (tmp_path / "out" / "OCXO-7").iterdir()}
    assert {"record.pdf", "record.json", "summary.json", "sigma_tau.png"} <= names
    # judged without an information file: the same verdicts, the analysis outputs only
    bare = FleetJob("OCXO-7", log, settings, spec=spec)
    again = run_task(_task(bare, tmp_path / "bare", taus))
    assert again["row"] == row
    assert "record.pdf" not in {p.name for p in (tmp_path / "bare").iterdir()}
    # an information file naming another device is refused for this one
    other = FleetJob("OCXO-8", log, settings, spec=spec, info=info)
    refused = run_task(_task(other, tmp_path / "other", taus))
    assert refused["status"] == "error"
    assert "the information file is for device 'OCXO-7', not 'OCXO-8'" in refused["error"]
    assert not (tmp_path / "other").exists()


def test_a_finished_log_is_skipped_only_while_input_settings_and_outputs_hold(tmp_path):
    log, spec, _ = _judged_fleet(tmp_path)
    job = FleetJob("OCXO-7", log, RunSettings.from_options(tau0="1s"))
    folder = tmp_path / "out"
    first = run_task(_task(job, folder, (1.0,)))
    entry = {**first, "status": "ok"}
    skipped = run_task(dataclasses.replace(_task(job, folder, (1.0,)), previous=entry))
    assert skipped["status"] == "skipped" and skipped["row"] == first["row"]
    moved = dataclasses.replace(_task(job, folder, (1.0,)), previous=entry, settings_hash="new")
    assert run_task(moved)["status"] == "ok"  # other settings: done again
    (folder / "summary.json").unlink()
    gone = dataclasses.replace(_task(job, folder, (1.0,)), previous=entry)
    assert run_task(gone)["status"] == "ok"  # outputs removed meanwhile: done again


# ---------------------------------------------------------------------- the command line
@pytest.mark.parametrize(
    ("args", "message"),
    [
        (["a.csv", "--manifest", "m.csv"], "give either a --manifest or log patterns, not both"),
        ([], "no logs given"),
        (["a.csv", "--device-id", "OCXO-("], "is not a regular expression"),
        (["a.csv", "--info", "i.toml"], "--info needs --spec"),
        (["a.csv", "--at", "soon"], "--at"),
        (["a.csv", "--workers", "0"], "--workers"),
    ],
)
def test_batch_usage_errors_are_one_line_exit_2(args, message, tmp_path, monkeypatch):
    from typer.testing import CliRunner

    from stability_cli.main import app

    monkeypatch.chdir(tmp_path)
    result = CliRunner().invoke(app, ["batch", *args])
    assert result.exit_code == 2, result.output
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("error:") and message in lines[0], lines


def test_a_fleet_never_writes_over_its_manifest_and_logs_and_shows_its_progress(tmp_path):
    import io

    from rich.console import Console

    from stability.fleet import batch
    from stability_cli.progress import LogsProgress

    manifest = tmp_path / "fleet.csv"
    manifest.write_text("path,device\nlog.txt,A\n")
    jobs = read_manifest(manifest)
    with pytest.raises(InputError, match="the output fleet.csv would overwrite the input file"):
        batch(jobs, tmp_path, inputs=[manifest])  # refused before any cluster starts
    with pytest.raises(InputError, match="the output fleet.csv would overwrite the input file"):
        batch(manifest, tmp_path)
    assert manifest.read_text() == "path,device\nlog.txt,A\n"
    screen = io.StringIO()
    console = Console(file=screen, force_terminal=True, width=100)
    with LogsProgress(console=console) as bar:
        bar.update(1, 3, {"status": "ok"})
        bar.update(2, 3, {"status": "error"})
        console.file.flush()
    assert bar.shown and bar.failed == 1 and "logs (1 failed)" in screen.getvalue()
    with LogsProgress(console=Console(file=io.StringIO())) as quiet:  # not a terminal
        quiet.update(1, 1, {"status": "ok"})
    assert not quiet.shown


def test_the_pages_say_the_fleet_settings_and_what_a_specification_changes(tmp_path):
    from stability.fleet.batch import _shared_settings

    settings = RunSettings.from_options(stats="oadev", drift="linear")
    plain = FleetJob("A", tmp_path / "a.csv", settings)
    judged = FleetJob("B", tmp_path / "b.csv", settings, spec=tmp_path / "spec.toml")
    line = settings_line(_shared_settings([plain, plain]))
    assert "stats oadev" in line and "drift linear" in line and "confidence 0.683" in line
    mixed = settings_line(_shared_settings([plain, judged]))
    assert "confidence 0.683 (the specification's level where judged)" in mixed
    other = FleetJob("C", tmp_path / "c.csv", settings.replace(stats="mdev"))
    assert _shared_settings([plain, other]) == {}  # differing settings are not summed up
