"""Property: the pyarrow engine reads the same Measurement as the pandas engine, bit for bit.

Logs are generated at random over the dialects the pyarrow engine takes: comma,
semicolon (with a decimal comma) or tab; LF or CRLF; a preamble or none; ISO 8601
stamps with or without a zone and with 0, 3 or 6 decimals, whole or decimal
epoch seconds, elapsed seconds, or no time column; fractional frequency,
absolute frequency in Hz or MHz, or time error; missing rows (gaps), repeated
stamps, jittered stamps, instrument sentinels, an extra column, either column
order. Every log is invented. Whatever the log, both engines give the same
measurement and report, or the same error; and where the pyarrow engine cannot
prove it reads the same rows (a bad line, an empty field, stamps typed otherwise
further down), ``engine="auto"`` gives way to pandas and ``engine="pyarrow"``
says so.
"""

from __future__ import annotations

import math
from datetime import UTC, datetime, timedelta

import numpy as np
import pytest
from deep_equal import assert_same
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from stability import InputError
from stability.ingest import arrow_parsing, grid, inspect_log, read_log
from stability.ingest.arrow_parsing import arrow_rows

pytest.importorskip("pyarrow")

T0 = datetime(2026, 3, 2, 8, 0, 0, tzinfo=UTC)


@st.composite
def logs(draw):
    return dict(
        n=draw(st.integers(min_value=8, max_value=300)),
        tau0=draw(st.sampled_from([0.1, 1.0, 10.0])),
        dialect=draw(st.sampled_from(["comma", "semicolon", "tab"])),
        crlf=draw(st.booleans()),
        preamble=draw(st.booleans()),
        time=draw(
            st.sampled_from(
                ["iso_z", "iso", "iso_ms", "iso_us", "epoch", "epoch_f", "elapsed", "none"]
            )
        ),  # fmt: skip
        kind=draw(st.sampled_from(["y", "hz", "mhz", "phase"])),
        gaps=draw(st.integers(min_value=0, max_value=3)),
        repeats=draw(st.integers(min_value=0, max_value=2)),
        jitter=draw(st.integers(min_value=0, max_value=3)),
        sentinels=draw(st.integers(min_value=0, max_value=2)),
        extra=draw(st.booleans()),
        value_first=draw(st.booleans()),
        seed=draw(st.integers(min_value=0, max_value=2**16)),
    )


def _stamp(case, i, t):
    """The time field of row i at ``t`` seconds after the start."""
    when = T0 + timedelta(seconds=t)
    kind = case["time"]
    if kind == "iso_z":
        return when.strftime("%Y-%m-%dT%H:%M:%S") + f".{when.microsecond // 1000:03d}Z"
    if kind == "iso":
        return when.replace(tzinfo=None).isoformat(timespec="seconds")
    if kind == "iso_ms":
        return when.replace(tzinfo=None).isoformat(timespec="milliseconds")
    if kind == "iso_us":
        return when.isoformat(timespec="microseconds")
    if kind == "epoch":
        return str(1_772_438_400 + int(round(t)) * 1)
    if kind == "epoch_f":
        return f"{1_772_438_400 + t:.3f}"
    return f"{t:.3f}"  # elapsed seconds


def _write(path, case):
    rng = np.random.default_rng(case["seed"])
    n, tau0 = case["n"], case["tau0"]
    if case["time"] == "epoch":
        tau0 = max(tau0, 1.0)  # whole seconds
    delim = {"comma": ",", "semicolon": ";", "tab": "\t"}[case["dialect"]]
    comma = case["dialect"] == "semicolon"
    y = rng.normal(0.0, 2e-11, n)  # invented fractional frequency
    values = {
        "y": (("y", [f"{v:.6e}" for v in y + 1e-9])),
        "hz": ("Frequency [Hz]", [f"{v:.5f}" for v in 10e6 + np.round(rng.normal(0, 2e-4, n), 5)]),
        "mhz": ("f [MHz]", [f"{v:.11f}" for v in 5.0 + np.round(rng.normal(0, 2e-10, n), 11)]),
        "phase": ("time error [s]", [f"{v:.6e}" for v in np.cumsum(y) * tau0 + 3e-9]),
    }[case["kind"]]
    vname, vtext = values
    times = np.arange(n) * tau0
    for i in rng.choice(n, size=min(case["jitter"], n), replace=False):
        times[i] += 0.2 * tau0  # a busy PC stamping late, within the tolerance
    rows = []
    for i in range(n):
        v = vtext[i]
        if comma:
            v = v.replace(".", ",")
        fields = [v]
        if case["time"] != "none":
            t = _stamp(case, i, float(times[i]))
            fields = [t, v] if not case["value_first"] else [v, t]
        if case["extra"]:
            fields.append(f"CH{1 + i % 2}")
        rows.append(delim.join(fields))
    for i in sorted(rng.choice(np.arange(1, n), size=min(case["sentinels"], n - 1), replace=False)):
        fields = rows[i].split(delim)
        at = 0 if case["value_first"] or case["time"] == "none" else 1
        fields[at] = "9,91E37" if comma else "9.91E37"  # the SCPI not-a-number sentinel
        rows[i] = delim.join(fields)
    if case["time"] != "none":
        for _ in range(case["gaps"]):
            if len(rows) > 3:
                del rows[int(rng.integers(1, len(rows) - 1))]
        for _ in range(case["repeats"]):
            i = int(rng.integers(1, len(rows)))
            rows.insert(i, rows[i - 1])
    header = [vname]
    if case["time"] != "none":
        tname = "elapsed [s]" if case["time"] == "elapsed" else "time"
        header = [tname, vname] if not case["value_first"] else [vname, tname]
    if case["extra"]:
        header.append("channel")
    preamble = ["# counter log, channel A against the house maser"] if case["preamble"] else []
    lines = [*preamble, delim.join(header), *rows]
    eol = "\r\n" if case["crlf"] else "\n"
    path.write_bytes((eol.join(lines) + eol).encode("utf-8"))
    return tau0


def _read(path, engine, tau0):
    try:
        return read_log(path, engine=engine, tau0=tau0)
    except InputError as exc:
        return exc


@settings(
    max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(case=logs())
def test_pyarrow_and_pandas_engines_read_theassert_same(tmp_path, case):
    path = tmp_path / "random.csv"
    tau0 = _write(path, case)
    given_tau0 = f"{tau0}s" if case["time"] == "none" else None
    slow = _read(path, "pandas", given_tau0)
    fast = _read(path, "pyarrow", given_tau0)
    auto = _read(path, "auto", given_tau0)
    if isinstance(fast, InputError) and "pyarrow engine cannot" in str(fast):
        pytest.fail(f"the pyarrow engine refused a log of a layout it takes: {fast}")
    if isinstance(slow, InputError):
        assert isinstance(fast, InputError) and str(fast) == str(slow), (fast, slow)
        assert isinstance(auto, InputError) and str(auto) == str(slow)
        return
    assert_same(fast, slow, "measurement")
    assert_same(auto, slow, "measurement")
    assert fast.phase.dtype == np.float64 and fast.lines.dtype == np.int32
    assert math.isfinite(fast.tau0)


def _epoch_log(path, rows, float_from):
    """Whole epoch seconds, written with decimals from row ``float_from`` on."""
    rng = np.random.default_rng(3)
    y = rng.normal(0.0, 2e-11, rows)
    text = ["unix_time,y"]
    for i in range(rows):
        t = 1_772_438_400 + i
        text.append(f"{t}.0,{y[i]:.6e}" if i >= float_from else f"{t},{y[i]:.6e}")
    path.write_text("\n".join(text) + "\n")
    return path


def test_many_blocks_and_a_short_estimate_give_the_same_rows(tmp_path, monkeypatch):
    """Rows across many blocks, with arrays grown when the estimate of rows falls short."""
    path = _epoch_log(tmp_path / "long.csv", 40_000, float_from=40_000)  # about 1 MB
    slow = read_log(path, engine="pandas")
    monkeypatch.setattr(arrow_parsing, "estimated_rows", lambda src, d: 10)
    used = []
    real = arrow_rows
    monkeypatch.setattr(
        "stability.ingest.readers.arrow_rows", lambda *a, **k: used.append(1) or real(*a, **k)
    )
    fast = read_log(path, engine="pyarrow")
    assert used
    assert_same(fast, slow, "measurement")
    assert fast.n == 40_001


def test_stamps_typed_otherwise_further_down_give_way_to_pandas(tmp_path):
    """Whole seconds in the first blocks and decimals later: pandas decides the type."""
    path = _epoch_log(tmp_path / "mixed.csv", 30_000, float_from=25_000)
    slow = read_log(path, engine="pandas")
    assert_same(read_log(path), slow, "measurement")
    with pytest.raises(InputError, match="pyarrow engine cannot read this log: a row does not"):
        read_log(path, engine="pyarrow")


@pytest.mark.parametrize(
    "row, why",
    [
        ('"2026-03-02T08:00:05Z",1.0e-11', "quoted"),
        ("2026-03-02T08:00:05Z,", "a row does not parse"),  # an empty field
        ("2026-03-02T08:00:05Z,1.0e-11,extra", "a row does not parse"),  # a row too wide
        ("2026-03-02T08:00:05Z,1.0e-11 ppb", "a row does not parse"),  # one unit suffix
    ],
    ids=["quoted", "empty field", "too wide", "unit suffix"],
)
def test_the_fallback_is_taken_where_equality_is_not_proven(tmp_path, row, why):
    rows = [f"{(T0 + timedelta(seconds=i)).strftime('%Y-%m-%dT%H:%M:%SZ')},{2e-11 * i:.6e}"
            for i in range(30)]  # fmt: skip
    rows[5] = row
    if why == "quoted":
        rows = [f'"{r.split(",")[0]}",{r.split(",")[1]}' for r in rows]
    path = tmp_path / "log.csv"
    path.write_text("time,y\n" + "\n".join(rows) + "\n")
    slow = _read(path, "pandas", None)
    auto = _read(path, "auto", None)
    if isinstance(slow, InputError):
        assert str(auto) == str(slow)
    else:
        assert_same(auto, slow, "measurement")
        assert_same(
            inspect_log(path).to_dict(), inspect_log(path, engine="pandas").to_dict(), "report"
        )
    with pytest.raises(InputError, match=f"pyarrow engine cannot read this log: .*{why}"):
        read_log(path, engine="pyarrow")


@settings(max_examples=40, deadline=None)
@given(
    seed=st.integers(min_value=0, max_value=2**16),
    distinct=st.integers(min_value=1, max_value=5),
    n=st.sampled_from([10, 70_000, 70_001, 100_000]),
)
def test_the_median_of_steps_is_numpys(seed, distinct, n):
    """The counted median equals np.median, whether the sampled candidate is right or not."""
    rng = np.random.default_rng(seed)
    levels = 1.0 + rng.integers(-2, 3, distinct) * 2.0**-52
    values = levels[rng.integers(0, distinct, n)]
    assert grid._median(values) == float(np.median(values))
    spread = rng.normal(1.0, 1e-3, n)  # many distinct values: the full median
    assert grid._median(spread) == float(np.median(spread))
