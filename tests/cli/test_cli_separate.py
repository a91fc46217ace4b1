"""``stability separate`` (three-cornered hat) through typer's CliRunner and one subprocess run.

The pair logs are simulated: three oscillators with seeded white FM at known
levels, each log the difference of two of them (first minus second), written
as CSV with ISO 8601 time stamps and fractional frequency.
"""

from __future__ import annotations

import csv
import json
import math
import subprocess
from datetime import UTC, datetime, timedelta

import numpy as np
import pytest
from typer.testing import CliRunner

from stability.errors import InputError
from stability_cli.main import app
from stability_cli.separate_cmd import SEPARATED_COLUMNS, pair_assignment

runner = CliRunner()

N = 2048
START = datetime(2024, 5, 1, tzinfo=UTC)


def _write(path, y, start=START):
    stamps = [
        (start + timedelta(seconds=i)).isoformat(timespec="milliseconds") for i in range(y.size)
    ]
    path.write_text(
        "time,fractional frequency\n"
        + "\n".join(f"{t},{v:.10e}" for t, v in zip(stamps, y, strict=True))
        + "\n"
    )
    return path


def _logs(folder, levels, seed, start_c=START):
    rng = np.random.default_rng(seed)
    y = {k: v * rng.standard_normal(N) for k, v in levels.items()}
    return [
        _write(folder / "ab.csv", y["A"] - y["B"]),
        _write(folder / "bc.csv", y["B"] - y["C"]),
        _write(folder / "ca.csv", y["C"] - y["A"], start_c),
    ]


@pytest.fixture(scope="module")
def distinct(tmp_path_factory):
    # invented levels: white FM of 1e-11, 2e-11 and 4e-11 per 1 s sample
    return _logs(tmp_path_factory.mktemp("distinct"), {"A": 1e-11, "B": 2e-11, "C": 4e-11}, 11)


@pytest.fixture(scope="module")
def one_quiet(tmp_path_factory):
    # C is 50 times quieter than A and B: its variance drowns in theirs (below resolution)
    return _logs(tmp_path_factory.mktemp("quiet"), {"A": 1e-11, "B": 1e-11, "C": 2e-13}, 12)


def _read_csv(path):
    with open(path, newline="") as handle:
        rows = list(csv.DictReader(handle))
    return rows


def _num(text):
    return float(text) if text != "" else math.nan


# ---------------------------------------------------------------------------- options
def test_pair_assignment_rules_and_messages():
    assert pair_assignment(3, None, None) == ([("A", "B"), ("B", "C"), ("C", "A")], ["A", "B", "C"])
    assert pair_assignment(3, "x,y,z", None)[0] == [("x", "y"), ("y", "z"), ("z", "x")]
    keys, order = pair_assignment(6, "A,B,C,D", None)
    assert keys[0] == ("A", "B") and keys[-1] == ("C", "D") and order == ["A", "B", "C", "D"]
    keys, order = pair_assignment(3, "C,B,A", "B-C,C-A,A-B")
    assert keys == [("B", "C"), ("C", "A"), ("A", "B")] and order == ["C", "B", "A"]
    cases = [
        ((2, None, None), "at least 3 pair logs"),
        ((3, "A,B", None), "lists 2 oscillators"),
        ((3, "A,A,B", None), "repeats a name"),
        ((3, "A,,B", None), "empty entry"),
        ((4, None, None), "say which pair each log is"),
        ((3, None, "A-B,B-C"), "2 pair"),
        ((3, None, "AB,B-C,C-A"), "not of the form A-B"),
        ((3, "A,B,C", "A-B,B-C,C-D"), "which --names does not list"),
    ]
    for args, message in cases:
        with pytest.raises(InputError, match=message):
            pair_assignment(*args)


def test_help_states_the_sign_convention_and_an_example():
    result = runner.invoke(app, ["separate", "--help"], env={"COLUMNS": "200"})
    assert result.exit_code == 0, result.output
    assert "stability separate AB.csv BC.csv CA.csv" in result.output
    assert "each log holds the first oscillator minus the second" in result.output


# ---------------------------------------------------------------------------- results
def test_separates_three_levels_and_writes_files(distinct, tmp_path):
    out = tmp_path / "out"
    args = ["separate", *map(str, distinct), "--confidence", "0.95", "--out", str(out)]
    result = runner.invoke(app, args)
    assert result.exit_code == 0, result.output
    assert "each log = first - second" in result.output
    for name in ("separated.csv", "separated.md", "separated_pairs.csv", "separated.png"):
        assert (out / name).stat().st_size > 100, name
    rows = _read_csv(out / "separated.csv")
    assert tuple(rows[0]) == SEPARATED_COLUMNS
    # White FM: ADEV(tau0) equals the standard deviation of the 1 s samples (NIST SP 1065
    # section 5.2.2, AVAR = h0/(2 tau) with h0 = 2 tau0 sigma^2); the hat recovers each
    # oscillator's own level (Gray & Allan 1974). Its error is dominated by the sample
    # cross-covariances of the other oscillators, of relative size sigma_B sigma_C /
    # (sigma_A^2 sqrt(N)), about 18 % in variance for A here (common practice); 25 % in
    # deviation is over 2.5 times that. The written 95 % interval brackets the estimate
    # and is relatively wider for the quieter oscillators.
    widths = {}
    for name, level in (("A", 1e-11), ("B", 2e-11), ("C", 4e-11)):
        row = next(r for r in rows if r["oscillator"] == name and float(r["tau_s"]) == 1.0)
        assert row["status"] == "ok"
        low, dev, high = _num(row["ci_low"]), _num(row["deviation"]), _num(row["ci_high"])
        assert low < dev <= high, row
        assert abs(dev / level - 1.0) < 0.25, row
        widths[name] = (high - low) / dev
    assert widths["A"] > widths["B"] > widths["C"]
    markdown = (out / "separated.md").read_text()
    assert "ab.csv" in markdown and "SHA-256" in markdown and "first oscillator minus" in markdown
    pairs = _read_csv(out / "separated_pairs.csv")
    assert {r["pair"] for r in pairs} == {"A-B", "B-C", "C-A"}


def test_log_order_is_given_by_pairs(distinct, tmp_path):
    # The same three logs given in another order, named by --pairs, separate identically.
    first = runner.invoke(app, ["separate", *map(str, distinct), "--out", str(tmp_path / "a")])
    assert first.exit_code == 0, first.output
    shuffled = [distinct[2], distinct[0], distinct[1]]
    second = runner.invoke(
        app,
        [
            "separate",
            *map(str, shuffled),
            "--pairs",
            "C-A,A-B,B-C",
            "--out",
            str(tmp_path / "b"),
        ],
    )
    assert second.exit_code == 0, second.output
    a = {(r["oscillator"], r["tau_s"]): r for r in _read_csv(tmp_path / "a" / "separated.csv")}
    b = {(r["oscillator"], r["tau_s"]): r for r in _read_csv(tmp_path / "b" / "separated.csv")}
    assert a.keys() == b.keys()
    for key in a:
        assert math.isclose(
            _num(a[key]["deviation"]), _num(b[key]["deviation"]), rel_tol=1e-12
        ) or (math.isnan(_num(a[key]["deviation"])) and math.isnan(_num(b[key]["deviation"])))


def test_below_resolution_is_reported_with_an_upper_bound(one_quiet, tmp_path):
    out = tmp_path / "out"
    result = runner.invoke(
        app, ["separate", *map(str, one_quiet), "--names", "A,B,C", "--json", "--out", str(out)]
    )
    assert result.exit_code == 0, result.output
    document = json.loads(result.output)
    rows = [r for r in document["rows"] if r["oscillator"] == "C"]
    below = [r for r in rows if r["status"] == "below resolution"]
    # A negative variance estimate is reported as "below resolution" with a bound
    # (Gray & Allan 1974 note the estimates can be negative; NIST SP 1065 section 9.2).
    assert below, rows
    for row in below:
        assert row["deviation"] is None
        assert row["upper_bound"] is not None and row["upper_bound"] > 0
    # No oscillator is noisier than a pair it belongs to (common practice): every bound
    # of C is at most the larger of its pairs' levels at tau = 1 s times a margin.
    assert all(r["upper_bound"] <= 2e-11 for r in rows if r["tau_s"] == 1.0)
    text = runner.invoke(app, ["separate", *map(str, one_quiet), "--out", str(out)])
    assert text.exit_code == 0, text.output
    assert "below resolution" in text.output and "< " in text.output
    written = _read_csv(out / "separated.csv")
    assert any(r["status"] == "below resolution" and r["deviation"] == "" for r in written)


def test_misaligned_and_bad_inputs_give_one_line(distinct, tmp_path):
    # exit 2: the arguments contradict each other; exit 1: a file or what the hat can do
    cases = [
        (["separate", str(distinct[0]), str(distinct[1])], "at least 3 pair logs", 2),
        (["separate", *map(str, distinct), "--pairs", "A-B,B-C"], "2 pair(s) for 3 log(s)", 2),
        (["separate", *map(str, distinct[:2]), str(tmp_path / "no.csv")], "no.csv", 1),
        (["separate", *map(str, distinct), "--stats", "mtie"], "does not separate", 1),
    ]
    for args, message, code in cases:
        result = runner.invoke(app, [*args, "--out", str(tmp_path / "x")])
        assert result.exit_code == code, result.output
        assert message in result.output, result.output
        assert "Traceback" not in result.output
        assert len(result.output.strip().splitlines()) == 1, result.output
    # a log half a sample off the common time grid cannot be aligned
    shifted = _write(
        tmp_path / "ca_shift.csv",
        np.random.default_rng(1).standard_normal(N) * 1e-11,
        START + timedelta(milliseconds=500),
    )
    result = runner.invoke(
        app, ["separate", str(distinct[0]), str(distinct[1]), str(shifted), "--out", str(tmp_path)]
    )
    assert result.exit_code == 1, result.output
    assert "off the common grid" in result.output, result.output


def test_separate_subprocess(distinct, tmp_path, stability_command):
    proc = subprocess.run(
        [*stability_command, "separate", *map(str, distinct), "--json", "--out", str(tmp_path)],
        capture_output=True,
        text=True,
        timeout=120,
        check=False,
    )
    assert proc.returncode == 0, proc.stderr
    assert {r["oscillator"] for r in json.loads(proc.stdout)["rows"]} == {"A", "B", "C"}
