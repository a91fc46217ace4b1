"""The time axis chosen by evidence, and the tau0 cross-checks, on logs as lab PCs write them.

Every log here is invented: a 10 MHz counter (readings near 10 MHz, in Hz) or
fractional-frequency readings, logged by a PC program with a preamble, units in
the headers, German or English words and decimal points or commas. Each test
asserts tau0 and the number of readings, and that ``inspect`` states where tau0
came from.
"""

from __future__ import annotations

from datetime import datetime, timedelta

import numpy as np
import pytest

from stability import InputError
from stability.ingest import inspect_log, read_log

T0 = datetime(2026, 3, 2, 8, 0, 0)
N = 120
# invented counter readings: 10 MHz plus a few mHz of noise
RNG = np.random.default_rng(7)
HZ = 10e6 + np.round(RNG.normal(0.0, 2e-3, N), 4)


def _german(tmp_path, step=10.0, preamble=("# Zähler: Kanal A", "# Torzeit: 10 s"), n=N):
    """``Nr.;Zeitstempel;Frequenz [Hz]`` with decimal commas and a dd.mm.yyyy stamp."""
    lines = list(preamble) + ["Nr.;Zeitstempel;Frequenz [Hz]"]
    frac = step < 1
    for i in range(n):
        stamp = (T0 + timedelta(seconds=step * i)).strftime(
            "%d.%m.%Y %H:%M:%S.%f" if frac else "%d.%m.%Y %H:%M:%S"
        )
        reading = f"{HZ[i]:.4f}".replace(".", ",")  # decimal comma
        lines.append(f"{i + 1};{stamp};{reading}")
    p = tmp_path / "messung.csv"
    p.write_text("\n".join(lines) + "\n", encoding="latin-1")
    return p


def _english(tmp_path, step=0.1, header="Sample,Time,Frequency (Hz)", preamble=(), n=N):
    lines = list(preamble) + [header]
    for i in range(n):
        stamp = (T0 + timedelta(seconds=step * i)).isoformat(timespec="milliseconds")
        lines.append(f"{i},{stamp},{HZ[i]:.4f}")
    p = tmp_path / "counter log.csv"
    p.write_text("\r\n".join(lines) + "\r\n")
    return p


# ------------------------------------------------------------------ row numbers
def test_german_row_number_is_not_the_time_axis(tmp_path):
    p = _german(tmp_path)
    m = read_log(p)
    assert m.tau0 == 10.0 and m.n == N + 1  # N frequency readings give N + 1 phase points
    rep = inspect_log(p)
    roles = {c.name: c.role for c in rep.columns}
    assert roles == {"Nr.": "row number", "Zeitstempel": "time", "Frequenz [Hz]": "value"}
    text = rep.to_text()
    assert "1 'Nr.': row number" in text
    assert (
        f"tau0 10 s from column 'Zeitstempel' (median spacing of {N} stamps); "
        "preamble line 2 says gate 10 s: agrees" in text
    )


def test_german_time_and_value_columns_given_independently(tmp_path):
    p = _german(tmp_path)
    for options in (
        {"time_column": "Zeitstempel"},
        {"column": "Frequenz [Hz]"},
        {"time_column": 2},
        {"column": 3},
        {"time_column": "zeitstempel", "column": "frequenz [hz]"},
    ):
        m = read_log(p, **options)
        assert (m.tau0, m.n) == (10.0, N + 1), options


def test_english_sample_counter_and_iso_stamps_at_100_ms(tmp_path):
    p = _english(tmp_path)
    m = read_log(p)
    assert m.tau0 == pytest.approx(0.1, abs=1e-12) and m.n == N + 1
    rep = inspect_log(p)
    assert rep.columns[0].role == "row number" and rep.time_column == "Time"
    assert f"tau0 100 ms from column 'Time' (median spacing of {N} stamps)" in rep.to_text()
    # the value column alone, or the time column alone, is enough
    assert read_log(p, column="Frequency (Hz)").tau0 == pytest.approx(0.1, abs=1e-12)
    assert read_log(p, time_column="Time").n == N + 1


def test_counter_without_stamps_needs_tau0_and_says_why(tmp_path):
    p = tmp_path / "zaehler.csv"
    p.write_text(
        "# Messintervall: 10 s\nNr.;Frequenz [Hz]\n"
        + "".join(f"{i + 1};{v:.4f}\n".replace(".", ",") for i, v in enumerate(HZ))
    )
    with pytest.raises(InputError) as err:
        read_log(p)
    msg = str(err.value)
    assert "column 'Nr.' counts rows, not seconds" in msg
    assert "pass --tau0 10s if the preamble line 1 (interval 10 s) is right" in msg
    assert "--time-column 1 if that column counts seconds" in msg
    m = read_log(p, tau0="10s")
    assert (m.tau0, m.n) == (10.0, N + 1)
    rep = inspect_log(p, tau0="10s")
    assert "preamble line 1 says interval 10 s: agrees" in rep.to_text()


def test_counter_named_in_seconds_is_elapsed_time(tmp_path):
    p = tmp_path / "t.csv"
    p.write_text("time [s],y\n" + "".join(f"{i},{v:.3e}\n" for i, v in enumerate(HZ - 10e6)))
    m = read_log(p, kind="fractional")
    assert (m.tau0, m.n) == (1.0, N + 1)


@pytest.mark.parametrize(
    ("header", "values", "tau0", "words"),
    [
        ("elapsed_ms", [0, 100, 200, 300, 400], 0.1, "elapsed milliseconds"),
        ("time [ms]", [0, 250, 500, 750, 1000], 0.25, "elapsed milliseconds"),
        ("t (us)", [0, 500, 1000, 1500, 2000], 5e-4, "elapsed microseconds"),
        ("Zeit [s]", ["0,0", "0,1", "0,2", "0,3", "0,4"], 0.1, "elapsed seconds"),
        ("elapsed", [0.0, 0.5, 1.0, 1.5, 2.0], 0.5, "elapsed seconds"),
        ("Zeit [min]", [0, 1, 2, 3, 4], 60.0, "elapsed minutes"),
    ],
)
def test_elapsed_time_units_from_the_header(tmp_path, header, values, tau0, words):
    delim = ";" if any("," in str(v) for v in values) else ","
    y = ["1e-12", "2e-12", "-1e-12", "3e-12", "0"]
    p = tmp_path / "e.csv"
    rows = "".join(f"{t}{delim}{v}\n" for t, v in zip(values, y, strict=True))
    p.write_text(f"{header}{delim}y\n" + rows)
    m = read_log(p, kind="fractional")
    assert m.tau0 == pytest.approx(tau0, rel=1e-12) and m.n == 6
    rep = inspect_log(p, kind="fractional")
    assert rep.time_format.startswith(words) and f"from column {header!r}" in rep.tau0_source


# ------------------------------------------------------------------ cross-checks
def test_counter_in_seconds_loses_to_date_time_stamps_with_a_note(tmp_path):
    lines = ["elapsed [s],time,Frequency [Hz]"]
    for i in range(N):
        stamp = (T0 + timedelta(seconds=10 * i)).isoformat()
        lines.append(f"{i},{stamp},{HZ[i]:.4f}")
    p = tmp_path / "c.csv"
    p.write_text("\n".join(lines) + "\n")
    m = read_log(p)
    assert (m.tau0, m.n) == (10.0, N + 1)
    assert any("counts rows, not seconds" in n and "stamps win" in n for n in m.notes)
    rep = inspect_log(p)
    assert "column 'elapsed [s]' says 1 s between rows" in rep.to_text()
    assert "DISAGREES" in rep.to_text()


def test_second_time_column_that_disagrees_is_an_error(tmp_path):
    lines = ["time,elapsed (s),y"]
    for i in range(N):
        stamp = (T0 + timedelta(seconds=10 * i)).isoformat()
        lines.append(f"{stamp},{i * 1.5:.1f},{HZ[i] - 10e6:.4e}")
    p = tmp_path / "two.csv"
    p.write_text("\n".join(lines) + "\n")
    with pytest.raises(InputError) as err:
        read_log(p, kind="fractional")
    msg = str(err.value)
    assert "column 'elapsed (s)' says 1.5 s between rows" in msg
    assert "tau0 is 10 s from column 'time'" in msg
    assert "--tau0 10s" in msg and "--tau0 1.5s" in msg
    m = read_log(p, kind="fractional", tau0="10s")  # the user decides: a note, not an error
    assert m.tau0 == 10.0 and any("disagrees" in n for n in m.notes)


@pytest.mark.parametrize(
    "preamble", ["# gate time: 1 s", "Gate=1s", "Sample interval 1 s", "# Abtastrate: 1 Hz"]
)
def test_preamble_interval_that_disagrees_is_an_error(tmp_path, preamble):
    p = _english(tmp_path, step=10.0, preamble=(preamble,))
    with pytest.raises(InputError) as err:
        read_log(p)
    msg = str(err.value)
    assert "preamble line 1 says" in msg and "tau0 1 s" in msg
    assert "tau0 is 10 s from column 'Time'" in msg and "--tau0" in msg


def test_preamble_interval_that_agrees_is_shown(tmp_path):
    p = _english(tmp_path, step=0.1, preamble=("Instrument: counter", "Sample interval 0.1 s"))
    m = read_log(p)
    assert m.tau0 == pytest.approx(0.1, abs=1e-12) and m.n == N + 1
    rep = inspect_log(p)
    assert rep.tau0_evidence == [
        {"source": "preamble line 2", "says": "interval 0.1 s", "tau0_s": 0.1, "agrees": True}
    ]
    assert "preamble line 2 says interval 0.1 s: agrees" in rep.to_text()


# ------------------------------------------------------------------ hints name the option
def test_unknown_kind_hint_names_the_other_columns(tmp_path):
    p = tmp_path / "k.csv"
    p.write_text("time,a,b\n" + "".join(f"{i}.5,{i % 3}e-3,{i % 5}\n" for i in range(20)))
    with pytest.raises(InputError) as err:
        read_log(p)
    msg = str(err.value)
    assert "--kind phase" in msg and "if 'a' is not the value column, pass --column 3" in msg


def test_no_nominal_hint_names_the_other_columns(tmp_path):
    p = _english(tmp_path)
    with pytest.raises(InputError) as err:
        read_log(p, column="Sample", kind="frequency")
    assert "pass --column 3" in str(err.value) and "--nominal" in str(err.value)


def test_same_column_for_time_and_value_is_refused(tmp_path):
    p = _english(tmp_path)
    with pytest.raises(InputError, match="both as the time column and as the value column"):
        read_log(p, time_column=2, column="Time")


@pytest.mark.parametrize("decimals", [6, 8])
def test_coarse_mjd_stamps_give_the_round_interval(tmp_path, decimals):
    """MJD stamps written with 8 decimals (0.864 ms) or 6 (86 ms) one second apart:
    each rounded step is 0.99965 s or 1.00051 s (8 decimals), and the median of
    them is one of those; tau0 is the 1 s the stamps tell to their resolution.
    The expected value is the interval the invented log was written at."""
    n = 2000
    mjd = 61000.25 + np.arange(n) / 86400.0
    y = np.round(RNG.normal(0.0, 1e-11, n), 15)
    lines = ["MJD,y"] + [f"{m:.{decimals}f},{v:.6e}" for m, v in zip(mjd, y, strict=True)]
    p = tmp_path / "mjd.csv"
    p.write_text("\n".join(lines) + "\n")
    meas = read_log(p)
    assert meas.tau0 == 1.0
    assert meas.phase.size == n + 1  # n frequency readings, one phase sample more
    assert int(np.isnan(meas.phase).sum()) == 0
    assert "resolution of the stamps" in inspect_log(p).to_text()


def test_exact_stamps_keep_an_unusual_interval(tmp_path):
    """Stamps written with every digit of an interval of 1.25 s keep it exactly."""
    n = 500
    lines = ["t,y"] + [f"{1.25 * i:.6f},{v:.6e}" for i, v in enumerate(RNG.normal(0, 1e-11, n))]
    p = tmp_path / "elapsed.csv"
    p.write_text("\n".join(lines) + "\n")
    meas = read_log(p)
    assert meas.tau0 == 1.25
    assert meas.phase.size == n + 1
