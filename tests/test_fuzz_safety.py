"""Fuzzing the edges a user's files reach: only the documented errors, never anything else.

Random bytes, random mutations of a small valid log, the same wrapped in gzip, bz2,
xz and zip containers (whole, cut short or with a byte flipped), the analysis of
whatever the reader accepts, and random or mutated specification and information
files. The only exceptions allowed are :class:`stability.errors.StabilityError` and
its subclasses; the only warning allowed is :class:`stability.errors.StabilityWarning`
(every other warning is raised as an error here, so a numpy or pandas warning is
never the only sign of trouble). Hypothesis runs derandomized (a fixed seed per
test), so CI sees the same examples every time; the whole file takes well under a
minute.
"""

from __future__ import annotations

import bz2
import gzip
import io
import lzma
import warnings
import zipfile
from pathlib import Path

import numpy as np
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from stability.errors import StabilityError, StabilityWarning
from stability.ingest import read_log
from stability.run import run_analysis
from stability.spec.reading import load_info, load_spec

DEMO = Path(__file__).resolve().parents[1] / "datasets" / "demo"


def _fuzz(examples: int):
    return settings(
        max_examples=examples,
        deadline=None,
        derandomize=True,
        suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow],
    )


def _valid_log() -> str:
    # invented: a 10 MHz counter read every second for 40 s
    y = np.random.default_rng(21).normal(0.0, 2e-11, 40)
    rows = [f"2024-05-01T00:00:{i:02d}Z,{10e6 * (1 + v):.6f}" for i, v in enumerate(y)]
    return "time,frequency_hz\n" + "\n".join(rows) + "\n"


def _only_documented(call, *args, **kwargs):
    """Run ``call``; a StabilityError is an accepted outcome (None), anything else fails."""
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        warnings.simplefilter("ignore", StabilityWarning)
        try:
            return call(*args, **kwargs)
        except StabilityError:
            return None


def _read_then_analyse(path: Path) -> None:
    before = path.read_bytes()
    m = _only_documented(read_log, path)
    assert path.read_bytes() == before  # the input is never written
    if m is None:
        return
    assert m.n >= 2 and np.isfinite(m.tau0) and m.tau0 > 0
    run = _only_documented(run_analysis, m, stats="oadev,mdev", taus="octave")
    if run is not None:
        frame = run.table.to_frame()
        assert ((frame["deviation"] > 0) | frame["deviation"].isna()).all()


# ------------------------------------------------------------------ mutations
_PIECES = st.sampled_from(
    [
        ",", ";", "\t", " ", "\n", "\r", '"', "#", "e", "E+999", "-", ".", ":", "T", "Z",
        "9.91e37", "nan", "inf", "1e308", "-1e308", "0", "99999999999999999999", "\x00",
        "\xff", "\u00b5s", "2300-01-01T00:00:00Z", "1677-01-01", "ERROR", "mjd", "elapsed_ms",
    ]
)  # fmt: skip
_OPS = st.lists(
    st.tuples(
        st.sampled_from(["insert", "delete", "replace", "duplicate-line", "truncate"]),
        st.integers(0, 10_000),
        _PIECES,
    ),
    min_size=1,
    max_size=5,
)


def _mutate(text: str, ops: list[tuple[str, int, str]]) -> str:
    for op, at, piece in ops:
        at %= max(1, len(text))
        if op == "insert":
            text = text[:at] + piece + text[at:]
        elif op == "delete":
            text = text[:at] + text[at + len(piece) :]
        elif op == "replace":
            text = text[:at] + piece + text[at + len(piece) :]
        elif op == "duplicate-line":
            lines = text.split("\n")
            k = at % len(lines)
            lines.insert(k, lines[k] * (1 + len(piece) % 3))
            text = "\n".join(lines)
        else:
            text = text[: max(1, at)]
    return text


@_fuzz(300)
@given(data=st.binary(max_size=1500))
def test_random_bytes(tmp_path, data):
    p = tmp_path / "random.bin"
    p.write_bytes(data)
    _read_then_analyse(p)


@_fuzz(300)
@given(ops=_OPS)
def test_mutations_of_a_valid_log(tmp_path, ops):
    p = tmp_path / "log.csv"
    p.write_bytes(_mutate(_valid_log(), ops).encode("utf-8", errors="surrogatepass"))
    _read_then_analyse(p)


# ------------------------------------------------------------------ containers
def _wrap(data: bytes, container: str) -> bytes:
    if container == "gzip":
        return gzip.compress(data)
    if container == "bz2":
        return bz2.compress(data)
    if container == "xz":
        return lzma.compress(data)
    buf = io.BytesIO()
    method = zipfile.ZIP_STORED if container == "zip-stored" else zipfile.ZIP_DEFLATED
    with zipfile.ZipFile(buf, "w", method) as zf:
        zf.writestr("log.csv", data)
    return buf.getvalue()


@_fuzz(200)
@given(
    ops=st.one_of(st.just([]), _OPS),
    container=st.sampled_from(["gzip", "bz2", "xz", "zip", "zip-stored"]),
    damage=st.sampled_from(["none", "cut", "flip"]),
    where=st.integers(0, 10_000),
)
def test_logs_in_containers(tmp_path, ops, container, damage, where):
    packed = bytearray(_wrap(_mutate(_valid_log(), ops).encode(), container))
    at = where % len(packed)
    if damage == "cut":
        packed = packed[: max(1, at)]
    elif damage == "flip":
        packed[at] ^= 0x5A
    p = tmp_path / "log.pack"
    p.write_bytes(bytes(packed))
    _read_then_analyse(p)


# ------------------------------------------------------------------ spec and info files
_TOMLISH = st.text(
    alphabet=st.sampled_from(
        list("[]{}=\",.\n #'-+_:") + list("abcdefilmnorstuvxy0123456789eE") + ["\t", "\\", "\x00"]
    ),
    max_size=300,
)
_KEYS = st.sampled_from(
    [
        'statistic = "oadev"\n', 'statistic = "bogus"\n', "confidence = 0.95\n",
        "confidence = 1e400\n", "interpolate = true\n", "[[limit]]\n", "tau_s = 1\n",
        "tau_s = -1\n", "tau_s = inf\n", "max = 1e-11\n", "max = nan\n", "[device]\n",
        'id = "X"\n', "[reference]\n", "stability = [[1, 2e-13], [10, 1e-13]]\n",
        "stability = [[1], [0, 0]]\n", "levels = {h0 = 1e-24}\n", "levels = {h9 = -1}\n",
        "f_h = 0\n", "[lab]\n", 'notes = """x\n', "x = 1979-05-27T07:32:00Z\n",
        "nominal = 10e6\n", 'nominal = "10 MHz"\n', "[instrument]\n", "a = [[[[[[[[[1]]]]]]]]]\n",
    ]
)  # fmt: skip


def _load_both(tmp_path: Path, text: str) -> None:
    p = tmp_path / "file.toml"
    p.write_bytes(text.encode("utf-8", errors="surrogatepass"))
    _only_documented(load_spec, p)
    _only_documented(load_info, p)


@_fuzz(400)
@given(text=st.one_of(_TOMLISH, st.lists(_KEYS, max_size=12).map("".join)))
def test_random_spec_and_info_text(tmp_path, text):
    _load_both(tmp_path, text)


@_fuzz(300)
@given(which=st.sampled_from(["spec-example.toml", "info-example.toml"]), ops=_OPS)
def test_mutations_of_the_example_spec_and_info(tmp_path, which, ops):
    _load_both(tmp_path, _mutate((DEMO / which).read_text(), ops))
