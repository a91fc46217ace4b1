"""Every validation message, and clear errors for files that cannot be logs."""

from __future__ import annotations

import hashlib
import os

import numpy as np
import pytest

from stability import InputError
from stability.ingest import read_log


def _good(tmp_path):
    p = tmp_path / "good.csv"
    p.write_text("t,y\n" + "".join(f"{i},{v:.2e}\n" for i, v in enumerate([1e-12, 3e-12, 2e-12])))
    return p


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [
        ({"kind": "bogus"}, "kind must be one of auto, phase, frequency, fractional"),
        ({"column": 0}, "column numbers start at 1"),
        ({"column": 1.5}, "column must be a 1-based number or a name"),
        ({"time_column": 0}, "time_column numbers start at 1"),
        ({"tau0": "-1s"}, "tau0 must be a positive duration"),
        ({"tau0": "fast"}, "cannot read tau0"),
        ({"nominal": "0Hz"}, "nominal must be a positive frequency"),
        ({"wrap": "1 parsec"}, "unknown unit"),
        ({"on_progress": 5}, "on_progress must be a function of"),
    ],
)
def test_validation_messages(tmp_path, kwargs, match):
    with pytest.raises(InputError, match=match):
        read_log(_good(tmp_path), **kwargs)


def test_missing_file_and_folder(tmp_path):
    with pytest.raises(InputError, match="file not found"):
        read_log(tmp_path / "nope.csv")
    with pytest.raises(InputError, match="is a folder"):
        read_log(tmp_path)


def test_unreadable_permissions(tmp_path):
    p = _good(tmp_path)
    p.chmod(0)
    try:
        if os.access(p, os.R_OK):
            pytest.skip("permissions are not enforced for this user")
        with pytest.raises(InputError, match="permission denied"):
            read_log(p)
    finally:
        p.chmod(0o644)


@pytest.mark.parametrize(
    ("content", "match"),
    [
        (b"", "empty"),
        (b"\n\n  \n", "empty"),
        (bytes(range(256)) * 40, "binary"),
        (b"time,frequency\n", "no data rows"),
        (b"# only a comment\n", "only comments"),
        (b"time,y\n0,1e-12\n", "two"),
        (b"\x1f\x8b\x08\x00garbage", "damaged gzip"),
    ],
)
def test_files_that_are_not_logs(tmp_path, content, match):
    p = tmp_path / "bad.csv"
    p.write_bytes(content)
    with pytest.raises(InputError, match=match):
        read_log(p)


def test_time_column_hint_errors_list_columns(tmp_path):
    p = _good(tmp_path)
    with pytest.raises(InputError, match=r"pass --time-column with one of 1='t', 2='y'"):
        read_log(p, time_column="when")
    with pytest.raises(InputError, match="not hold time stamps"):
        read_log(p, time_column="y", column="t")


def test_input_never_modified_and_hash_recorded(tmp_path):
    p = _good(tmp_path)
    before = p.read_bytes()
    stat = p.stat()
    m = read_log(p)
    assert p.read_bytes() == before and p.stat().st_mtime_ns == stat.st_mtime_ns
    assert m.provenance.sha256 == hashlib.sha256(before).hexdigest()
    assert m.provenance.rows == 3
    np.testing.assert_allclose(m.frequency(), [1e-12, 3e-12, 2e-12], rtol=1e-12)


def test_a_stamp_off_by_years_is_refused_not_gridded(tmp_path):
    # One mistyped year in the last stamp of a 1 s log would ask for 2.2e8 missing
    # samples: it is refused, naming the line, instead of exhausting memory.
    from stability.ingest import read_log

    values = np.random.default_rng(0).normal(0.0, 1e-11, 50)  # invented readings
    rows = [f"2024-01-01T00:00:{s:02d}Z,{v:.3e}" for s, v in enumerate(values)]
    rows[-1] = "2031" + rows[-1][4:]
    log = tmp_path / "slip.csv"
    log.write_text("time,y\n" + "\n".join(rows) + "\n")
    with pytest.raises(InputError, match=r"slip.csv:51 column time: the time stamps jump forward"):
        read_log(log, kind="fractional")
