"""Property-based fuzzing of the reader: only InputError or a good read, no lost rows."""

from __future__ import annotations

import numpy as np
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from stability import InputError, Measurement
from stability.ingest import inspect_log, read_log

N = 12
_FUZZ = settings(
    max_examples=40, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)


def _valid_lines() -> list[str]:
    # invented log: ISO time stamps, 10 MHz frequency readings
    return ["time,Frequency [Hz]"] + [
        f"2024-01-01T00:00:{i:02d}Z,{10e6 + (i % 5) * 1e-4:.5f}" for i in range(N)
    ]


def _attempt(path):
    try:
        return read_log(path)
    except InputError:
        return None


def _check_outcome(path, before: bytes) -> None:
    """A read gives a usable Measurement or a clean InputError; the input is never modified."""
    m = _attempt(path)
    assert path.read_bytes() == before
    if m is not None:
        assert isinstance(m, Measurement)
        assert m.n >= 2 and np.isfinite(m.tau0) and m.tau0 > 0


@_FUZZ
@given(data=st.binary(max_size=400))
def test_random_bytes(tmp_path, data):
    p = tmp_path / "rand.bin"
    p.write_bytes(data)
    _check_outcome(p, data)


@_FUZZ
@given(
    ops=st.lists(
        st.tuples(
            st.sampled_from(["drop", "swap", "truncate", "junk"]),
            st.integers(0, 10_000),
            st.sampled_from([",", ";", "\t", " ", "|", "x", '"', "#", "\n", "9"]),
        ),
        min_size=1,
        max_size=4,
    )
)
def test_random_mutations(tmp_path, ops):
    text = "\n".join(_valid_lines()) + "\n"
    for op, pos, ch in ops:
        pos = pos % max(1, len(text))
        if op == "drop":
            text = text[:pos] + text[pos + 1 :]
        elif op == "swap":
            text = text.replace(",", ch, 1 + pos % 3)
        elif op == "truncate":
            text = text[: max(1, pos)]
        else:
            text = text[:pos] + ch + "junk" + text[pos:]
    p = tmp_path / "mut.csv"
    p.write_text(text)
    _check_outcome(p, p.read_bytes())


@_FUZZ
@given(
    junk=st.lists(
        st.tuples(
            st.integers(1, N),
            st.text(alphabet="abcXYZ ,;:-#!?\t0123456789.", min_size=1, max_size=30),
        ),
        min_size=1,
        max_size=4,
    )
)
def test_inserted_junk_lines_lose_no_row(tmp_path, junk):
    lines = _valid_lines()
    valid_rows = list(range(N))
    for at, text in sorted(junk, reverse=True):
        lines.insert(at + 1, text)
    p = tmp_path / "junk.csv"
    p.write_text("\n".join(lines) + "\n")
    try:
        m = read_log(p)
        rep = inspect_log(p)
    except InputError:
        return
    kept = np.asarray(m.lines)
    texts = p.read_text().splitlines()
    listed = {e["line"] for e in rep.junk_lines} | {e["line"] for e in rep.bad_values}
    listed |= {e["line"] for e in rep.duplicates} | {e["line"] for e in rep.off_grid}
    listed |= {e["line"] for e in rep.preamble}
    for r in valid_rows:
        row_text = _valid_lines()[r + 1]
        line_no = texts.index(row_text) + 1
        # every valid row is read, or the report names its line
        assert line_no in kept or line_no in listed
