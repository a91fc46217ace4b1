"""The calibration history: storing records, reviewing a device, files that are not ours.

The records are invented (tests/history_records.py): one real record made from
an invented log, and copies of it with other devices, dates and offsets. The
aging of the yearly records is a known line; the fit through the stored
records recovers it (the statistics of the fit itself are tested in
tests/test_aging.py).
"""

from __future__ import annotations

import hashlib
import json
import os
import signal
import sqlite3
import subprocess
import sys
import textwrap
import time
from datetime import UTC, datetime, timedelta
from pathlib import Path

import pytest
from history_records import derive, make_record, yearly_records
from scipy import stats

from stability.aging import CalendarInterval
from stability.errors import InputError
from stability.history import (
    APPLICATION_ID,
    SCHEMA_VERSION,
    HistoryFileError,
    default_location,
    entry_from_record,
    export_history,
    history_for_record,
    history_to_read,
    import_records,
    inspect_file,
    open_history,
    review_device,
    write_stored_record,
)
from stability.history.schema import SCHEMA_1

ODD_ID = "Ro'bert\"; DROP TABLE records;-- ,\u00e9\u6642\u8a08 %_ x"


@pytest.fixture(scope="module")
def made(tmp_path_factory):
    """A real record made with record_into into a history, and the folder it is in."""
    folder = tmp_path_factory.mktemp("made")
    history = folder / "history.sqlite"
    record = make_record(folder, history=history)
    return folder, record, history


@pytest.fixture
def template(made):
    return made[1]


def _sha(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def _listing(folder: Path) -> set[str]:
    return {p.name for p in folder.iterdir()}


def test_validation_messages(tmp_path, template):
    with pytest.raises(InputError, match="schema_version '7'"):
        entry_from_record({**template, "schema_version": "7"})
    broken = json.loads(json.dumps(template))
    broken["identification"]["device"]["id"] = ""
    with pytest.raises(InputError, match="identification.device.id must be a non-empty text"):
        entry_from_record(broken)
    broken = json.loads(json.dumps(template))
    broken["input"]["sha256"] = None
    with pytest.raises(InputError, match="input.sha256 must be the input's SHA-256"):
        entry_from_record(broken)
    broken = json.loads(json.dumps(template))
    broken["measurement"]["offset"] = "high"
    with pytest.raises(InputError, match="measurement.offset must be a finite number"):
        entry_from_record(broken)
    with pytest.raises(InputError, match="not a calibration record"):
        entry_from_record([1, 2])
    with pytest.raises(InputError, match="no calibration history here"):
        open_history(tmp_path / "none.sqlite", create=False)
    with open_history(tmp_path / "h.sqlite") as store:
        with pytest.raises(InputError, match="no device 'nobody'"):
            store.device("nobody")
        with pytest.raises(InputError, match="no record number 5"):
            store.record(5)
        store.add(template)
        device = template["identification"]["device"]["id"]
        with pytest.raises(InputError, match="unknown aging model 'spline'"):
            review_device(store, device, model="spline")
        with pytest.raises(InputError, match="tolerance must be a positive number"):
            review_device(store, device, tolerance=0.0)
        with pytest.raises(InputError, match="nothing to write"):
            write_stored_record(store, 1)
        with pytest.raises(InputError, match="no record.json given"):
            import_records(store, [])


def test_a_record_made_with_history_is_stored_whole(made):
    folder, record, history = made
    with open_history(history) as store:
        (row,) = store.records()
        assert row.device_id == record["identification"]["device"]["id"]
        assert row.input_sha256 == record["input"]["sha256"]
        assert row.settings_hash == record["settings_hash"]
        assert row.offset == record["measurement"]["offset"]
        assert row.u_offset == record["measurement"]["u_offset"]
        assert row.drift_per_day == record["measurement"]["drift_per_day"]
        assert row.reference_id == "REF-TEST" and row.spec_statistic == "oadev"
        assert row.calibrated_at == datetime(2020, 1, 6, 8, 0, tzinfo=UTC)
        assert row.has_pdf
        _, text, pdf = store.record(row.number)
        assert text == (folder / "rec" / "record.json").read_text(encoding="utf-8")
        assert pdf == (folder / "rec" / "record.pdf").read_bytes()
        checks = store.checks(row.number)
        assert [c.tau_s for c in checks] == [c["tau_s"] for c in record["checks"]]
        assert [c.verdict for c in checks] == [c["verdict"] for c in record["checks"]]
        # noise type at each judged tau: the results row at that tau
        noise = {r["tau_s"]: r["noise"] for r in record["results"] if r["statistic"] == "oadev"}
        assert all(c.noise == noise[c.tau_s] for c in checks if c.tau_s in noise)
        assert store.schema_versions() == list(range(1, SCHEMA_VERSION + 1))


def test_duplicate_refused_without_force_and_replaced_with_it(made, tmp_path):
    folder, record, history = made
    copy = tmp_path / "h.sqlite"
    copy.write_bytes(history.read_bytes())
    log = folder / "log-5.csv"
    again = tmp_path / "again"
    from stability.workflow import record_into

    with pytest.raises(InputError, match="already in the calibration history as record 1"):
        record_into(
            log, again, folder / "spec.toml", folder / "info.toml", outliers="off", history=copy
        )
    assert not again.exists()  # refused: no record files either
    outcome = record_into(
        log,
        again,
        folder / "spec.toml",
        folder / "info.toml",
        outliers="off",
        history=copy,
        force=True,
    )
    assert outcome.history.number == 1 and outcome.history.replaced
    with open_history(copy) as store:
        assert len(store.records()) == 1
        _, text, _ = store.record(1)
        assert text == (again / "record.json").read_text(encoding="utf-8")


def test_yearly_records_recover_the_aging_rate(tmp_path, template):
    # ten invented yearly records of one device aging 2e-13 a day, stored and fitted
    rate = 2e-13
    records, _, _ = yearly_records(template, rate_per_day=rate, seed=4)
    with open_history(tmp_path / "h.sqlite") as store:
        for record in records[::-1]:  # any order of arrival
            store.add(record)
        review = review_device(store, "OSC-TEST-1", interval="12mo", tolerance=2e-9, model="linear")
    fit = review.fit
    assert fit is not None and fit.dof == 8
    fitted, u_rate = fit.rate_per_day()
    assert abs(fitted - rate) <= stats.t.ppf(0.975, fit.dof) * u_rate
    assert [c.number for c in review.calibrations] == list(range(10, 0, -1))
    assert review.due == CalendarInterval(months=12).after(review.last.when)
    assert review.at_due is not None and review.at_due.low[0] < review.at_due.high[0]
    # the offset grows to about 1.2e-9 by the due date: within 2e-9, and the longest
    # interval is at least the 12 months asked about
    assert review.within is True
    assert review.longest is not None and review.longest[0] >= 12


def test_device_ids_with_odd_characters_are_kept_as_given(tmp_path, template):
    record = derive(
        template, device=ODD_ID, when=datetime(2021, 2, 3, tzinfo=UTC), offset=1e-9, u_offset=1e-11
    )
    with open_history(tmp_path / "h.sqlite") as store:
        store.add(record)
        assert [d.device_id for d in store.devices()] == [ODD_ID]
        assert store.device(ODD_ID).records == 1
        assert store.records(ODD_ID)[0].device_id == ODD_ID
        store.set_interval(ODD_ID, "6mo")
        assert store.device(ODD_ID).interval == "6mo"
        folder = export_history(store, tmp_path / "export")
    import csv

    with open(folder["records.csv"], newline="", encoding="utf-8") as handle:
        rows = list(csv.DictReader(handle))
    assert rows[0]["device_id"] == ODD_ID
    document = json.loads(folder["history.json"].read_text(encoding="utf-8"))
    assert document["devices"][0]["device_id"] == ODD_ID
    assert document["records"][0]["record"]["identification"]["device"]["id"] == ODD_ID


def test_export_holds_every_record_and_check(made, tmp_path, template):
    records, _, _ = yearly_records(template, years=3, seed=9)
    with open_history(tmp_path / "h.sqlite") as store:
        for record in records:
            store.add(record)
        files = export_history(store, tmp_path / "out")
        assert set(files) == {"devices.csv", "records.csv", "checks.csv", "history.json"}
        import pandas as pd

        table = pd.read_csv(files["records.csv"])
        assert list(table["frequency_offset" if "frequency_offset" in table else "offset"]) == [
            r["measurement"]["offset"] for r in records
        ]
        checks = pd.read_csv(files["checks.csv"])
        assert len(checks) == sum(len(r["checks"]) for r in records)
        document = json.loads(files["history.json"].read_text(encoding="utf-8"))
        assert [r["record"] for r in document["records"]] == records


def test_stored_record_written_out_byte_for_byte(made, tmp_path):
    folder, _, history = made
    with open_history(history) as store:
        written = write_stored_record(
            store, 1, pdf=tmp_path / "again.pdf", json_path=tmp_path / "again.json"
        )
        assert _sha(written["record.pdf"]) == _sha(folder / "rec" / "record.pdf")
        assert _sha(written["record.json"]) == _sha(folder / "rec" / "record.json")
        with pytest.raises(InputError, match="exists already"):
            write_stored_record(store, 1, pdf=tmp_path / "again.pdf")


def test_import_brings_the_pdf_along_and_is_all_or_nothing(made, tmp_path, template):
    folder, _, _ = made
    good = tmp_path / "older.json"
    good.write_text(
        json.dumps(
            derive(
                template,
                device="OSC-TEST-1",
                when=datetime(2019, 1, 7, tzinfo=UTC),
                offset=2e-10,
                u_offset=1e-11,
            )
        ),
        encoding="utf-8",
    )
    bad = tmp_path / "bad.json"
    bad.write_text('{"schema_version": "1"}', encoding="utf-8")
    with open_history(tmp_path / "h.sqlite") as store:
        with pytest.raises(InputError, match="identification is missing"):
            import_records(store, [good, bad])
        assert store.records() == []  # nothing from a refused import
        stored = import_records(store, [folder / "rec" / "record.json", good])
        assert [pdf for _, _, pdf in stored] == [True, False]
        _, _, pdf = store.record(stored[1][1].number)
        assert pdf is None
        with pytest.raises(InputError, match="stored from its record.json alone"):
            write_stored_record(store, stored[1][1].number, pdf=tmp_path / "x.pdf")


# ------------------------------------------------------------------ hostile files
def _foreign_files(folder: Path, history: Path) -> dict[str, tuple[Path, str]]:
    text = folder / "text.sqlite"
    text.write_text("device,offset\nA,1e-9\n", encoding="utf-8")
    empty = folder / "empty.sqlite"
    empty.write_bytes(b"")
    other = folder / "other-app.sqlite"
    con = sqlite3.connect(other)
    con.execute("CREATE TABLE notes (body TEXT)")
    con.execute("INSERT INTO notes VALUES ('not ours')")
    con.commit()
    con.close()
    truncated = folder / "truncated.sqlite"
    data = history.read_bytes()
    truncated.write_bytes(data[: len(data) // 2])
    scrambled = folder / "scrambled.sqlite"
    page = int.from_bytes(data[16:18], "big")
    scrambled.write_bytes(data[: page + 8] + b"\xa5" * (page - 8) + data[2 * page :])
    newer = folder / "newer.sqlite"
    newer.write_bytes(data)
    con = sqlite3.connect(newer)
    con.execute("INSERT INTO schema_version VALUES (99, '2099-01-01', '9.9')")
    con.commit()
    con.close()
    return {
        "text": (text, "not an SQLite database"),
        "empty": (empty, "an empty file"),
        "other": (other, "an SQLite database but not a stability calibration history"),
        "truncated": (truncated, "damaged calibration history \\(truncated"),
        "scrambled": (scrambled, "damaged"),
        "newer": (newer, "schema 99, newer than this version"),
    }


def test_foreign_and_damaged_files_are_refused_untouched(made, tmp_path):
    _, _, history = made
    files = _foreign_files(tmp_path, history)
    before = {name: _sha(path) for name, (path, _) in files.items()}
    listing = _listing(tmp_path)
    for name, (path, message) in files.items():
        with pytest.raises(HistoryFileError, match=message) as caught:
            open_history(path)
        line = caught.value.one_line()
        assert "\n" not in line and str(path) in line and "left as it is" in line
        assert _sha(path) == before[name], name
    assert _listing(tmp_path) == listing  # no journal, WAL or shared-memory file was made


def test_a_truncated_history_refuses_a_record_run_before_analysis(made, tmp_path):
    folder, _, history = made
    truncated = tmp_path / "truncated.sqlite"
    truncated.write_bytes(history.read_bytes()[:3000])
    from stability.workflow import record_into

    with pytest.raises(HistoryFileError, match="damaged"):
        record_into(
            folder / "log-5.csv",
            tmp_path / "rec",
            folder / "spec.toml",
            folder / "info.toml",
            history=truncated,
        )
    assert not (tmp_path / "rec").exists()


def test_migration_from_a_schema_1_file(tmp_path, template):
    # a schema-1 file as the first version wrote it, made here with its own statements
    path = tmp_path / "old.sqlite"
    con = sqlite3.connect(path, isolation_level=None)
    con.execute(f"PRAGMA application_id = {APPLICATION_ID}")
    for statement in SCHEMA_1:
        con.execute(statement)
    con.execute("INSERT INTO schema_version VALUES (1, '2024-01-01T00:00:00+00:00', '0.0.9')")
    con.execute("INSERT INTO devices VALUES ('OLD-1', 'kept from schema 1')")
    con.execute(
        "INSERT INTO records (record_no, device_id, calibrated_at, input_sha256, settings_hash, "
        "overall_verdict, frequency_offset, u_frequency_offset, record_json, stored_at) "
        "VALUES (7, 'OLD-1', '2023-05-01T00:00:00.000000+00:00', ?, 'abc', 'pass', 1e-9, 1e-11, "
        "?, '2023-05-02T00:00:00+00:00')",
        ("0" * 64, json.dumps(template)),
    )
    con.close()
    assert inspect_file(path) == 1
    with open_history(path) as store:
        assert store.schema_versions() == [1, 2]
        (row,) = store.records("OLD-1")
        assert row.number == 7 and row.offset == 1e-9 and not row.has_pdf
        assert store.device("OLD-1").description == "kept from schema 1"
        store.set_interval("OLD-1", "18mo")  # a schema-2 column
        stored = store.add(
            derive(
                template,
                device="OLD-1",
                when=datetime(2024, 5, 1, tzinfo=UTC),
                offset=1.1e-9,
                u_offset=1e-11,
            ),
            pdf=b"%PDF-1.4 invented",
        )
        assert stored.number == 8
    assert inspect_file(path) == SCHEMA_VERSION
    with open_history(path) as store:
        assert store.device("OLD-1").interval == "18mo"
        assert store.record(8)[2] == b"%PDF-1.4 invented"
        review = review_device(store, "OLD-1")
        assert review.interval_from == "stored" and review.interval.months == 18


# ------------------------------------------------------------------ processes
_WRITER = textwrap.dedent(
    """
    import json, sys, time
    from pathlib import Path
    from stability.history import open_history
    path, records, go = sys.argv[1], json.loads(Path(sys.argv[2]).read_text()), Path(sys.argv[3])
    while not go.exists():
        time.sleep(0.005)
    for record in records:
        with open_history(path) as store:
            store.add(record)
    """
)


def _records_file(folder: Path, records: list[dict], name: str) -> Path:
    path = folder / name
    path.write_text(json.dumps(records), encoding="utf-8")
    return path


def test_two_processes_writing_at_once_both_land(tmp_path, template):
    history = tmp_path / "h.sqlite"
    go = tmp_path / "go"
    batches = [yearly_records(template, device=f"DEV-{k}", years=12, seed=k)[0] for k in range(2)]
    writers = [
        subprocess.Popen(
            [
                sys.executable,
                "-c",
                _WRITER,
                str(history),
                str(_records_file(tmp_path, b, f"{k}.json")),
                str(go),
            ],  # noqa: E501
            stdout=subprocess.PIPE,
            stderr=subprocess.PIPE,
            text=True,
        )
        for k, b in enumerate(batches)
    ]
    time.sleep(0.5)
    go.touch()  # both start at once, on a history file neither has made yet
    for writer in writers:
        _, err = writer.communicate(timeout=120)
        assert writer.returncode == 0, err
    with open_history(history) as store:
        assert {d.device_id: d.records for d in store.devices()} == {"DEV-0": 12, "DEV-1": 12}


_RECORDER = textwrap.dedent(
    """
    import sys, time
    from pathlib import Path
    from history_records import write_inputs
    from stability.workflow import record_into
    folder, seed, history, go = Path(sys.argv[1]), int(sys.argv[2]), sys.argv[3], Path(sys.argv[4])
    log = write_inputs(folder, seed=seed)
    while not go.exists():
        time.sleep(0.005)
    outcome = record_into(log, folder / "rec", folder / "spec.toml", folder / "info.toml",
                          outliers="off", history=history)
    print(outcome.history.number)
    """
)


def test_two_record_runs_at_once_both_land(tmp_path):
    history, go = tmp_path / "lab.sqlite", tmp_path / "go"
    env = {
        **os.environ,
        "PYTHONPATH": os.pathsep.join(
            [str(Path(__file__).parent), os.environ.get("PYTHONPATH", "")]
        ),
    }
    runs = [
        subprocess.Popen(
            [sys.executable, "-c", _RECORDER, str(tmp_path / f"run{k}"), str(k + 1), str(history),
             str(go)],
            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=env,
        )
        for k in range(2)
    ]  # fmt: skip
    time.sleep(1.0)
    go.touch()
    numbers = []
    for run in runs:
        out, err = run.communicate(timeout=300)
        assert run.returncode == 0, err
        numbers.append(int(out.strip()))
    assert sorted(numbers) == [1, 2]
    with open_history(history) as store:
        rows = store.records()
        assert len(rows) == 2 and all(r.has_pdf for r in rows)
        assert len({r.input_sha256 for r in rows}) == 2


def test_a_writer_waits_for_a_transaction_held_by_another(tmp_path, template):
    history = tmp_path / "h.sqlite"
    records, _, _ = yearly_records(template, years=2, seed=3)
    with open_history(history) as store:
        with store.transaction():
            store.add(records[0])
            child = subprocess.Popen(
                [sys.executable, "-c", _WRITER, str(history),
                 str(_records_file(tmp_path, records[1:], "one.json")), str(history)],
                stderr=subprocess.PIPE,
                text=True,
            )  # fmt: skip
            time.sleep(1.5)  # the child is now waiting on the busy timeout
            assert child.poll() is None
        _, err = child.communicate(timeout=60)
        assert child.returncode == 0, err
        assert len(store.records()) == 2


_KILLED = textwrap.dedent(
    """
    import json, sys, time
    from pathlib import Path
    from stability.history import open_history
    records = json.loads(Path(sys.argv[2]).read_text())
    with open_history(sys.argv[1]) as store:
        for record in records[:3]:
            store.add(record)
        with store.transaction():
            store.add(records[3])
            store.set_interval(records[3]["identification"]["device"]["id"], "3mo")
            print("inside", flush=True)
            time.sleep(60)
    """
)


def test_sigkill_mid_transaction_keeps_the_earlier_records(tmp_path, template):
    history = tmp_path / "h.sqlite"
    records, _, _ = yearly_records(template, years=4, seed=8)
    child = subprocess.Popen(
        [sys.executable, "-c", _KILLED, str(history), str(_records_file(tmp_path, records, "r"))],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
    )
    assert child.stdout.readline().strip() == "inside", child.stderr.read()
    os.kill(child.pid, signal.SIGKILL)
    child.wait(timeout=30)
    assert inspect_file(history) == SCHEMA_VERSION  # quick_check passes
    with open_history(history) as store:
        stored = store.records()
        assert [r.input_sha256 for r in stored] == [r["input"]["sha256"] for r in records[:3]]
        assert store.device("OSC-TEST-1").interval is None  # the killed transaction's write
        store.add(records[3])  # and the history takes the fourth record now
        assert len(store.records()) == 4
    con = sqlite3.connect(history)
    assert con.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
    con.close()


# ------------------------------------------------------------------ location
def test_location_rule(tmp_path):
    env = {"HOME": str(tmp_path)}
    assert default_location(env) == tmp_path / ".local/share/stability/history.sqlite"
    xdg = {**env, "XDG_DATA_HOME": str(tmp_path / "data")}
    assert default_location(xdg) == tmp_path / "data/stability/history.sqlite"
    assert default_location({**env, "XDG_DATA_HOME": "relative"}) == default_location(env)
    # record: only when asked, by --history or the variable; --history wins
    assert history_for_record(None, env) is None
    assert history_for_record(None, {**env, "STABILITY_HISTORY": "  "}) is None
    named = {**env, "STABILITY_HISTORY": str(tmp_path / "lab.sqlite")}
    assert history_for_record(None, named) == tmp_path / "lab.sqlite"
    assert history_for_record(tmp_path / "given.sqlite", named) == tmp_path / "given.sqlite"
    assert history_for_record("default", env) == default_location(env)
    assert history_for_record(None, {**xdg, "STABILITY_HISTORY": "default"}) == default_location(
        xdg
    )
    # history: the same, else the default location
    assert history_to_read(None, env) == default_location(env)
    assert history_to_read(None, named) == tmp_path / "lab.sqlite"


def test_due_date_and_overdue(tmp_path, template):
    record = derive(
        template, device="D", when=datetime(2020, 1, 31, tzinfo=UTC), offset=1e-9, u_offset=1e-11
    )
    with open_history(tmp_path / "h.sqlite") as store:
        store.add(record)
        review = review_device(store, "D", interval="1mo")
    assert review.due == datetime(2020, 2, 29, tzinfo=UTC)  # 2020 is a leap year
    assert review.overdue(datetime(2020, 3, 1, tzinfo=UTC))
    assert not review.overdue(datetime(2020, 2, 1, tzinfo=UTC))
    assert review.fit is None and "at least two calibrations" in review.fit_note
    assert review.interval_from == "given"
    assert review.due - review.last.when == timedelta(days=29)
