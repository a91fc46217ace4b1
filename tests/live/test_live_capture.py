"""``Capture`` against a simulated counter on 127.0.0.1 that drops the connection twice.

The log it writes must be read by ``read_log`` as it is; the outages must show
as gaps with their comment lines; every reading the server sent must be in the
log once, in order, and nothing else.
"""

from __future__ import annotations

from datetime import UTC, datetime, timedelta

import numpy as np
import pytest
from counter_server import IDENTITY, CounterServer

from stability.errors import InputError
from stability.ingest import read_log
from stability.live.capture import HEADER, Capture
from stability.live.scpi import (
    CaptureSettings,
    LinkLost,
    SocketLink,
    check_command,
    load_capture_settings,
)
from stability.live.watch import Watcher
from stability.run import run_analysis
from stability.settings import RunSettings
from stability.workflow import analyze_into

START = datetime(2026, 3, 4, 22, 0, 0, tzinfo=UTC)


class FakeTime:
    """A monotonic clock and a UTC wall clock that move only when slept."""

    def __init__(self) -> None:
        self.t = 0.0

    def clock(self) -> float:
        return self.t

    def now(self) -> datetime:
        return START + timedelta(seconds=self.t)

    def sleep(self, seconds: float) -> None:
        self.t += max(0.0, seconds)


def _settings(port: int, **kw) -> CaptureSettings:
    return CaptureSettings(
        query="MEAS:FREQ?",
        address="127.0.0.1",
        port=port,
        setup=("*CLS", "CONF:FREQ", "SENS:GATE:TIME 1", "SENS:GATE:TIME?"),
        timeout=2.0,
        **kw,
    )


def _readings(path) -> list[str]:
    rows = [ln for ln in path.read_text().splitlines() if ln and not ln.startswith("#")]
    assert rows[0] == HEADER
    return [r.split(",", 1)[1] for r in rows[1:]]


def test_validation_messages(tmp_path):
    with pytest.raises(InputError, match="more than one line"):
        check_command("READ?\n*RST")
    with pytest.raises(InputError, match="control characters"):
        check_command("READ?\x07")
    with pytest.raises(InputError, match="is empty"):
        check_command("  ")
    with pytest.raises(InputError, match="longer than 200"):
        check_command("A" * 201)
    with pytest.raises(InputError, match="not a query"):
        CaptureSettings(query="*RST", address="127.0.0.1", port=5025)
    with pytest.raises(InputError, match="host name or an IP address"):
        CaptureSettings(query="READ?", address="http://10.0.0.1/x", port=5025)
    with pytest.raises(InputError, match="port must be a number from 1 to 65535"):
        CaptureSettings(query="READ?", address="10.0.0.1", port=70000)
    with pytest.raises(InputError, match="no instrument"):
        CaptureSettings(query="READ?")
    with pytest.raises(InputError, match="either a VISA resource or an address"):
        CaptureSettings(query="READ?", address="10.0.0.1", port=5025, visa="TCPIP0::x::INSTR")
    with pytest.raises(InputError, match="interval must be from"):
        CaptureSettings(query="READ?", address="10.0.0.1", port=5025, interval=0.0)
    with pytest.raises(InputError, match="setup command"):
        CaptureSettings(query="READ?", address="10.0.0.1", port=5025, setup=("CONF\r\nX",))
    bad = tmp_path / "bad.toml"
    bad.write_text('[instrument]\naddress = "10.0.0.1"\nport = 5025\nquery = "READ?"\ngate = 1\n')
    with pytest.raises(InputError, match="unknown key 'gate'"):
        load_capture_settings(bad)
    with pytest.raises(InputError, match="no reading query"):
        load_capture_settings(address="10.0.0.1", port=5025)


def test_settings_from_toml_with_options_on_top(tmp_path):
    f = tmp_path / "counter.toml"
    f.write_text(
        "[instrument]\n"
        'address = "192.168.1.50"\nport = 5025\n'
        'setup = ["*RST", "CONF:FREQ 10MHZ"]\nquery = "READ?"\ninterval = "100ms"\n'
    )
    s = load_capture_settings(f, interval="1s", timeout=None)
    assert (s.address, s.port, s.setup, s.query) == (
        "192.168.1.50",
        5025,
        ("*RST", "CONF:FREQ 10MHZ"),
        "READ?",
    )
    assert s.interval == 1.0 and s.timeout == 5.0


def test_capture_survives_two_drops_and_an_error(tmp_path):
    log = tmp_path / "counter.csv"
    fake = FakeTime()
    with CounterServer(drop_at={20, 45}, error_at={30}) as server:
        cap = Capture(_settings(server.port), log, now=fake.now, clock=fake.clock, sleep=fake.sleep)
        result = cap.run(count=70)
    text = log.read_text()
    # every reading sent is in the log once, in order, and nothing else
    readings = _readings(log)
    assert [r for r in readings if r != "error"] == server.sent
    assert readings.count("error") == 1 and result.errors == 1
    # 70 answers: 69 readings and the error; 72 queries, of which 2 met a dropped connection
    assert result.readings == len(server.sent) == 69 and server.queries == 72
    assert result.outages == 2 and server.connections == 3
    # the preamble says who, where, what and when
    assert f"# instrument: {IDENTITY}" in text
    assert "# address: 127.0.0.1:" in text and "# query: MEAS:FREQ?" in text
    assert "# setup: SENS:GATE:TIME? -> 1" in text
    assert "started 2026-03-04T22:00:00.000000Z" in text
    assert text.count("connection lost (the instrument closed the connection)") == 2
    assert text.count("connection restored after 1 s") == 2
    assert "the instrument answered '-230,\"Data corrupt or stale\"'; a gap" in text
    # the setup is sent again after each reconnection
    assert server.commands.count("CONF:FREQ") == 3
    # the reader reads the log as it is: the outages are gaps of the time grid
    m = read_log(log)
    assert m.provenance.details["kind"] == "frequency" and m.tau0 == 1.0
    y = m.frequency()
    missing = np.flatnonzero(np.isnan(y))
    # the drop at t = 20 s (reconnected after the 1 s back-off, in time for slot 21),
    # the error answer at 30 s, the drop at 45 s
    assert missing.tolist() == [20, 30, 45]
    assert m.provenance.details["bad_value_count"] == 1
    # and analysed as it is: each missing frequency reading drops the two m = 1 second
    # differences that use it (NIST SP 1065 section 5.14: terms across a gap are left out)
    run = run_analysis(log, stats="oadev")
    assert run.table["oadev"].n_terms[0] == m.n - 2 - 2 * 3


def test_existing_log_is_refused_and_append_resumes(tmp_path):
    log = tmp_path / "counter.csv"
    fake = FakeTime()
    with CounterServer() as server:
        Capture(_settings(server.port), log, now=fake.now, clock=fake.clock, sleep=fake.sleep).run(
            count=5
        )
        before = log.read_bytes()
        with pytest.raises(InputError, match="capture never overwrites a log"):
            Capture(_settings(server.port), log).run(count=1)
        assert log.read_bytes() == before
        fake.sleep(10)
        Capture(
            _settings(server.port),
            log,
            append=True,
            now=fake.now,
            clock=fake.clock,
            sleep=fake.sleep,
        ).run(count=5)
    assert log.read_bytes().startswith(before)  # never truncated
    text = log.read_text()
    assert text.count(HEADER) == 1 and "resumed 2026-03-04T22:00:14" in text
    assert _readings(log) == server.sent
    m = read_log(log)
    assert np.isnan(m.frequency()).sum() == 9  # readings at 0-4 s and 14-18 s: 5-13 s missing


def test_append_refuses_a_log_of_another_format(tmp_path):
    other = tmp_path / "other.csv"
    other.write_text("time,phase_s\n1,0\n")
    with CounterServer() as server, pytest.raises(InputError, match="not a capture log"):
        Capture(_settings(server.port), other, append=True).run(count=1)
    assert other.read_text() == "time,phase_s\n1,0\n"


def test_socket_talks_only_to_the_given_address_with_timeouts():
    calls = []

    def opener(address, timeout):
        calls.append((address, timeout))
        raise ConnectionRefusedError(111, "Connection refused")

    link = SocketLink("10.1.2.3", 5025, timeout=0.5, opener=opener)
    with pytest.raises(LinkLost, match="Connection refused"):
        link.connect()
    assert calls == [(("10.1.2.3", 5025), 0.5)]
    with CounterServer(silent=True) as server:
        link = SocketLink("127.0.0.1", server.port, timeout=0.2)
        link.connect()
        with pytest.raises(LinkLost, match="no answer within the timeout"):
            link.query("*IDN?")
        link.close()


def test_unreachable_instrument_is_an_error_and_writes_nothing(tmp_path):
    with CounterServer() as server:
        port = server.port
    log = tmp_path / "counter.csv"
    with pytest.raises(InputError, match="cannot reach the instrument at 127.0.0.1"):
        Capture(_settings(port), log).run(count=1)
    assert not log.exists()


def test_duration_and_interrupt_stop_cleanly(tmp_path):
    fake = FakeTime()
    with CounterServer() as server:
        result = Capture(
            _settings(server.port, interval=2.0),
            tmp_path / "a.csv",
            now=fake.now,
            clock=fake.clock,
            sleep=fake.sleep,
        ).run(duration=20)
        assert result.readings == 10 and result.stopped == "duration reached"

        def sleep(seconds):
            fake.sleep(seconds)
            if fake.t > 40:
                raise KeyboardInterrupt

        result = Capture(
            _settings(server.port), tmp_path / "b.csv", now=fake.now, clock=fake.clock, sleep=sleep
        ).run()
    assert result.stopped == "stopped by the user"
    last = (tmp_path / "b.csv").read_text().splitlines()[-1]
    assert "capture ended (stopped by the user)" in last
    read_log(tmp_path / "b.csv")  # a whole log, read as it is


def test_capture_through_visa(tmp_path):
    pytest.importorskip("pyvisa")
    pytest.importorskip("pyvisa_py")
    fake = FakeTime()
    with CounterServer() as server:
        settings = CaptureSettings(
            query="MEAS:FREQ?",
            visa=f"TCPIP0::127.0.0.1::{server.port}::SOCKET",
            setup=("CONF:FREQ",),
            timeout=2.0,
        )
        result = Capture(
            settings, tmp_path / "v.csv", now=fake.now, clock=fake.clock, sleep=fake.sleep
        ).run(count=6)
    assert result.readings == 6 and result.identity == IDENTITY
    assert _readings(tmp_path / "v.csv") == server.sent
    assert read_log(tmp_path / "v.csv").n == 7  # six frequency readings, seven phase points


def test_an_instrument_slower_than_the_interval_is_said_once(tmp_path):
    fake = FakeTime()

    class SlowLink:
        """An instrument whose reading takes 1.5 intervals (a gate as long as the interval)."""

        where = "slow"

        def connect(self):
            pass

        def write(self, command):
            pass

        def query(self, command):
            if command == "*IDN?":
                return IDENTITY
            fake.sleep(1.5)
            return "+1.000000000000E+07" if int(fake.t) % 4 else "+1.000000000010E+07"

        def close(self):
            pass

    settings = CaptureSettings(query="MEAS:FREQ?", address="127.0.0.1", port=5025)
    result = Capture(
        settings,
        tmp_path / "s.csv",
        link=SlowLink(),
        now=fake.now,
        clock=fake.clock,
        sleep=fake.sleep,
    ).run(count=10)
    text = (tmp_path / "s.csv").read_text()
    assert text.count("took longer than the interval") == 1 and result.late == 9
    # the stamps say the truth: one reading every 2 s, which the reader finds as tau0
    assert "# requested interval: 1 s" in text
    assert read_log(tmp_path / "s.csv").tau0 == 2.0


def test_watch_follows_a_capture_as_it_is_written(tmp_path, monkeypatch):
    # capture and watch together: the watcher looks in as the capture writes (outages
    # and all), and its last outputs equal a one-shot analysis of the finished log
    monkeypatch.chdir(tmp_path)
    fake = FakeTime()
    settings = RunSettings.from_options(stats="oadev")
    watcher = Watcher("night.csv", "live", settings, every=3600, rows=150, clock=fake.clock)
    written = []

    def on_line(line):
        written.append(line)
        if len(written) % 50 == 0:
            watcher.step()

    with CounterServer(drop_at={120}, error_at={200}) as server:
        Capture(
            _settings(server.port),
            "night.csv",
            now=fake.now,
            clock=fake.clock,
            sleep=fake.sleep,
            on_line=on_line,
        ).run(count=300)
    status = watcher.finish()
    assert status.analyses >= 2 and status.waiting == ""
    _, files = analyze_into("night.csv", "once", settings)
    assert watcher.written["table.csv"].read_bytes() == files["table.csv"].read_bytes()
