"""A growing log read a chunk at a time gives exactly what read_log gives for the same bytes.

The check values are ``stability.read_log`` itself, run on a file holding the
complete lines read so far: the follower must not differ from it in one sample,
one line number, one note or the SHA-256.
"""

from __future__ import annotations

import dataclasses
import hashlib
import os
import random

import numpy as np
import pytest
from live_logs import ChunkWriter, counter_bytes

from stability.errors import InputError
from stability.ingest import read_log, validate_read_args
from stability.live.growing import GrowingLog
from stability.live.tail import LogTail, TailUpdate


def _same(a, b):
    assert np.array_equal(a.phase, b.phase, equal_nan=True)
    assert a.tau0 == b.tau0 and a.start == b.start and a.kind == b.kind
    assert a.frequency_offset == b.frequency_offset and a.nominal == b.nominal
    assert np.array_equal(a.lines, b.lines)
    assert (a.segments is None) == (b.segments is None)
    if a.segments is not None:
        assert np.array_equal(a.segments, b.segments)
    assert dataclasses.asdict(a.provenance) == dataclasses.asdict(b.provenance)
    assert a.notes == b.notes


def _one_shot(tmp_path, data: bytes, name: str = "counter.csv", **hints):
    folder = tmp_path / "one-shot"
    folder.mkdir(exist_ok=True)
    (folder / name).write_bytes(data)
    cwd = os.getcwd()
    os.chdir(folder)  # the same relative name as the follower's
    try:
        return read_log(name, **hints)
    finally:
        os.chdir(cwd)


def test_validation_messages(tmp_path):
    g = GrowingLog("x.csv", validate_read_args())
    with pytest.raises(ValueError, match="complete lines"):
        g.extend(b"no newline")
    with pytest.raises(InputError, match="gzip file cannot be followed"):
        g.extend(b"\x1f\x8b\x08\x00\n")
    with pytest.raises(InputError, match="UTF-16"):
        GrowingLog("y.csv", validate_read_args()).extend(b"\xff\xfea\x00\n")
    g = GrowingLog("z.csv", validate_read_args())
    g.extend(b"time_utc,frequency_hz\n")
    with pytest.raises(InputError, match="no data rows"):
        g.measurement()


@pytest.mark.parametrize("seed, n, hi", [(1, 1000, 3000), (2, 300, 600), (3, 3000, 40000)])
def test_chunks_read_like_read_log(tmp_path, monkeypatch, seed, n, hi):
    monkeypatch.chdir(tmp_path)
    data = counter_bytes(n, seed=seed)
    writer = ChunkWriter(tmp_path / "counter.csv", data, seed=seed, hi=hi)
    tail = LogTail("counter.csv")
    growing = GrowingLog("counter.csv", validate_read_args())
    checked = 0
    while not writer.done:
        writer.write()
        update = tail.poll()
        assert not update.restarted
        growing.extend(update.lines)
        assert growing.data() == writer.complete()  # the partial line waits for its newline
        assert growing.sha256() == hashlib.sha256(writer.complete()).hexdigest()
        try:
            expected = _one_shot(tmp_path, growing.data())
        except InputError as exc:  # too short yet: the follower says the same
            with pytest.raises(InputError) as got:
                growing.measurement()
            assert got.value.one_line().split(": ", 1)[1] == exc.one_line().split(": ", 1)[1]
            continue
        m, _ = growing.measurement()
        _same(m, expected)
        # only the new lines were parsed (the dialect is settled after the first 200 lines)
        if growing.lines > 400:
            assert growing.last_parsed_bytes <= len(update.lines) + 200
        checked += 1
    assert checked >= 2
    assert growing.data() == data


def test_crlf_latin1_and_trailing_blank_lines(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    text = counter_bytes(600).replace(b"\n", b"\r\n")
    text = text.replace(b"# counter log", b"# counter log \xb5s", 1)  # Latin-1 byte
    rng = random.Random(5)
    growing = GrowingLog("counter.csv", validate_read_args())
    pos = 0
    while pos < len(text):
        step = rng.randint(1, 5000)
        piece = text[pos : pos + step]
        pos += step
        cut = piece.rfind(b"\n") + 1
        rest = piece[cut:]
        growing.extend(piece[:cut])
        if rest:  # feed only complete lines here; the rest goes with the next piece
            pos -= len(rest)
        try:
            expected = _one_shot(tmp_path, growing.data())
        except InputError:
            continue
        _same(growing.measurement()[0], expected)
    growing.extend(b"\r\n\r\n")
    _same(growing.measurement()[0], _one_shot(tmp_path, growing.data()))


def test_tail_notices_rotation_truncation_and_rewrite(tmp_path):
    log = tmp_path / "counter.csv"
    tail = LogTail(log)
    assert tail.poll().missing
    log.write_bytes(b"a,1\nb,2\nc,")
    first = tail.poll()
    assert first.lines == b"a,1\nb,2\n" and tail.partial == b"c,"
    with open(log, "ab") as fh:
        fh.write(b"3\n")
    assert tail.poll().lines == b"c,3\n"
    # rotation: the file renamed away and a new one started
    log.rename(tmp_path / "counter.csv.1")
    log.write_bytes(b"new,1\n")
    update = tail.poll()
    assert "rotated" in update.restarted and update.lines == b"new,1\n"
    # truncation in place
    with open(log, "r+b") as fh:
        fh.truncate(0)
    update = tail.poll()
    assert "truncated" in update.restarted and update.lines == b""
    with open(log, "ab") as fh:
        fh.write(b"after,1\n")
    assert tail.poll() == TailUpdate(lines=b"after,1\n")
    # a file rewritten in place from its start, longer than before (never seen short)
    log.write_bytes(b"zzz,9\nyyy,8\n")
    update = tail.poll()
    assert "rewritten" in update.restarted and update.lines == b"zzz,9\nyyy,8\n"
    # the log is never written to
    assert log.read_bytes() == b"zzz,9\nyyy,8\n"


def test_decimal_parts_found_in_chunks_give_the_whole_file_differences():
    # exact_delta of the texts at once is the check value; parts split a chunk at a
    # time and joined must give the same bits (fraction lengths differ between chunks)
    from stability.ingest.values import DecimalParts, decimal_parts, exact_delta

    rng = np.random.default_rng(12)
    texts = []
    for i in range(3000):
        digits = int(rng.integers(0, 20))
        sign = "-" if rng.random() < 0.3 else ("+" if rng.random() < 0.1 else "")
        frac = "".join(str(int(d)) for d in rng.integers(0, 10, digits))
        texts.append(f"{sign}{int(rng.integers(0, 10**8))}" + (f".{frac}" if digits else ""))
        if i % 97 == 5:
            texts[-1] = "ERROR"
    texts = np.asarray(texts, dtype=object)
    ok = np.asarray([t != "ERROR" for t in texts])
    whole = exact_delta(texts, ok)
    cuts = sorted(rng.choice(np.arange(1, texts.size), 6, replace=False).tolist())
    pieces = np.split(texts, cuts)
    joined = DecimalParts.join([decimal_parts(p) for p in pieces])
    chunked = exact_delta(texts, ok, joined)
    assert whole[0] == chunked[0]
    assert np.array_equal(whole[1], chunked[1], equal_nan=True)
    assert np.array_equal(whole[2], chunked[2])
    # a text beyond 48 characters anywhere makes the whole column unusable, as at once
    long = texts.copy()
    long[10] = "1." + "1" * 60
    assert exact_delta(long, ok) is None
    pieces = np.split(long, [500])
    assert exact_delta(long, ok, DecimalParts.join([decimal_parts(p) for p in pieces])) is None


def test_tail_reads_a_backlog_in_pieces(tmp_path):
    log = tmp_path / "counter.csv"
    log.write_bytes(b"".join(b"line %d\n" % i for i in range(1000)))
    tail = LogTail(log, read_limit=1000)
    got = b""
    while True:
        update = tail.poll()
        got += update.lines
        if not update.more:
            break
    assert got == log.read_bytes()


def test_tail_refuses_a_file_without_line_ends(tmp_path):
    log = tmp_path / "blob.bin"
    log.write_bytes(b"x" * (2 * 1024 * 1024))
    with pytest.raises(InputError, match="a line longer than 1024 kB"):
        LogTail(log).poll()
