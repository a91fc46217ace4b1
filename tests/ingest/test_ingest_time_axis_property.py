"""Property: beside a row-number column, tau0 is the stamps' tau0, or reading stops loudly.

Logs are generated at random: a row-number column, a date-time column at tau0 in
{0.1, 1, 10, 60} s, a column of invented 10 MHz counter readings, in a random
order, with random header words (German, English, empty, time-like words for the
counter), random dialect (comma, semicolon with decimal comma, tab), and
sometimes a preamble line stating the interval (agreeing or not). Whatever
happens, the detected tau0 is never a different one without an InputError.
"""

from __future__ import annotations

from datetime import datetime, timedelta

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from stability import InputError
from stability.ingest import read_log

COUNTER_NAMES = ["Nr.", "Sample", "Index", "n", "", "Zeile", "row", "count", "Messung", "No.",
                 "time", "t", "elapsed", "sec", "elapsed [s]", "Zähler", "Punkt"]  # fmt: skip
TIME_NAMES = ["Time", "Zeitstempel", "timestamp", "Datum/Uhrzeit", "date", "", "Messzeit",
              "when", "stamp", "UTC", "Zeit"]  # fmt: skip
VALUE_NAMES = ["Frequency (Hz)", "Frequenz [Hz]", "freq", "value", "Messwert", "", "f", "CH1"]
T0 = datetime(2026, 5, 4, 13, 0, 0)


@st.composite
def logs(draw):
    tau0 = draw(st.sampled_from([0.1, 1.0, 10.0, 60.0]))
    n = draw(st.integers(min_value=6, max_value=40))
    order = draw(st.permutations([0, 1, 2]))
    names = [
        draw(st.sampled_from(COUNTER_NAMES)),
        draw(st.sampled_from(TIME_NAMES)),
        draw(st.sampled_from(VALUE_NAMES)),
    ]
    dialect = draw(st.sampled_from(["comma", "semicolon", "tab"]))
    dotted = draw(st.booleans())
    first = draw(st.integers(min_value=0, max_value=1000))
    preamble = draw(st.sampled_from([None, "agrees", "disagrees"]))
    seed = draw(st.integers(min_value=0, max_value=2**16))
    return tau0, n, order, names, dialect, dotted, first, preamble, seed


def _write(path, tau0, n, order, names, dialect, dotted, first, preamble, seed):
    delim = {"comma": ",", "semicolon": ";", "tab": "\t"}[dialect]
    comma = dialect == "semicolon"
    rng = np.random.default_rng(seed)
    readings = 10e6 + np.round(rng.normal(0.0, 1e-3, n), 4)  # invented 10 MHz readings
    lines = []
    if preamble is not None:
        said = tau0 if preamble == "agrees" else tau0 * 10
        lines.append(f"# gate time: {said:g} s".replace(".", "," if comma else "."))
    lines.append(delim.join(names[k] for k in order))
    for i in range(n):
        t = T0 + timedelta(seconds=tau0 * i)
        if dotted:
            stamp = t.strftime("%d.%m.%Y %H:%M:%S.%f")[:-3]
        else:
            stamp = t.isoformat(timespec="milliseconds")
        value = f"{readings[i]:.4f}"
        if comma:
            value = value.replace(".", ",")
        fields = [str(first + i), stamp, value]
        lines.append(delim.join(fields[k] for k in order))
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return preamble


@settings(
    max_examples=80,
    deadline=None,
    suppress_health_check=[HealthCheck.function_scoped_fixture],
)
@given(case=logs())
def test_tau0_is_the_stamps_or_an_input_error(tmp_path, case):
    tau0 = case[0]
    path = tmp_path / "random.csv"
    preamble = _write(path, *case)
    try:
        m = read_log(path)
    except InputError:
        return  # loud: acceptable
    assert m.tau0 == pytest.approx(tau0, rel=1e-9), (case, m.notes)
    assert preamble != "disagrees", "a preamble that disagrees must stop the read"
    assert m.n == case[1] + 1
