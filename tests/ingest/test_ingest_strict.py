"""Strict mode: the error names the first bad line of the log, whatever made it bad.

A log can hold two kinds of bad line: a line that is not a data row (junk text
where a time stamp should be) and a data row whose value cannot be read (an
instrument error string or an overflow sentinel such as 9.91e37, common practice
for SCPI counters). With ``strict=True`` the first of them in file order is the
error, so that the user fixes the log from the top.
"""

from __future__ import annotations

from datetime import datetime, timedelta

import numpy as np
import pytest

from stability import InputError
from stability.ingest import inspect_log, read_log

T0 = datetime(2024, 5, 6, 7, 0, 0)


def _log(tmp_path, replace: dict[int, str]) -> str:
    """A 1 s log of 40 rows under a header; ``replace`` maps file line numbers to new text."""
    rng = np.random.default_rng(11)  # invented fractional frequency readings
    lines = ["time,y"] + [
        f"{(T0 + timedelta(seconds=i)).isoformat()},{v:.6e}"
        for i, v in enumerate(rng.normal(0.0, 1e-11, 40))
    ]
    for number, text in replace.items():
        lines[number - 1] = text
    p = tmp_path / "strict.csv"
    p.write_text("\n".join(lines) + "\n")
    return str(p)


def _bad_value(line: int, field: str) -> str:
    return f"{(T0 + timedelta(seconds=line - 2)).isoformat()},{field}"


JUNK = "counter restarted"


@pytest.mark.parametrize("field", ["9.91e37", "ERR -410"])
def test_junk_line_before_an_unreadable_value_is_reported_first(tmp_path, field):
    p = _log(tmp_path, {12: JUNK, 32: _bad_value(32, field)})
    rep = inspect_log(p)  # without strict both are reported, each at its own line
    assert [e["line"] for e in rep.junk_lines] == [12]
    assert [e["line"] for e in rep.bad_values] == [32]
    with pytest.raises(InputError) as info:
        read_log(p, strict=True)
    assert info.value.line == 12
    assert repr(JUNK) in str(info.value)


@pytest.mark.parametrize("field", ["9.91e37", "ERR -410"])
def test_unreadable_value_before_a_junk_line_is_reported_first(tmp_path, field):
    p = _log(tmp_path, {12: _bad_value(12, field), 32: JUNK})
    with pytest.raises(InputError) as info:
        read_log(p, strict=True)
    assert info.value.line == 12
    assert field in str(info.value)


def test_strict_passes_a_clean_log(tmp_path):
    m = read_log(_log(tmp_path, {}), strict=True)
    assert m.frequency().size == 40 and not np.isnan(m.frequency()).any()
