"""Hostile input outside the log reader: specification and information files, confidence
levels, sample intervals of a Measurement, and errors of the system while writing.

Each case was a crash, a hang or a silent nonsense result before it was checked.
"""

from __future__ import annotations

import errno
import os
import threading
from pathlib import Path

import numpy as np
import pytest

from stability import AnalysisError, InputError, SpecError, analyze
from stability.files import special_file
from stability.intervals import check_confidence
from stability.measurement import Measurement
from stability.outputs import OutputSet, same_file
from stability.phase_noise_table import read_phase_noise_table
from stability.run import run_analysis
from stability.spec.reading import MAX_POINTS, load_info, load_spec, parse_spec

DEMO = Path(__file__).resolve().parents[1] / "datasets" / "demo"


# ------------------------------------------------------------------ specification files
def test_absurd_count_of_limits_is_refused_at_once():
    limits = [{"tau_s": float(t), "max": 1e-9} for t in range(1, 100_002)]
    with pytest.raises(SpecError, match=r"lists 100,001 limits, more than the 1,000"):
        parse_spec({"statistic": "oadev", "limit": limits}, path="big.toml")


def test_absurd_count_of_reference_points_is_refused(tmp_path):
    points = ", ".join(f"[{t}, 1e-13]" for t in range(1, MAX_POINTS + 2))
    info = tmp_path / "info.toml"
    info.write_text(f'[device]\nid = "X"\n[reference]\nstability = [{points}]\n')
    with pytest.raises(SpecError, match=r"reference.stability' lists 1,001 points"):
        load_info(info)


def test_oversized_specification_file_is_refused(tmp_path):
    spec = tmp_path / "huge.toml"
    spec.write_text('statistic = "oadev"\n' + "# padding\n" * 200_000)
    with pytest.raises(SpecError, match=r"huge.toml: the specification file holds more than"):
        load_spec(spec)


def test_specification_from_a_device_a_pipe_or_a_loop(tmp_path):
    if os.path.exists("/dev/zero"):
        with pytest.raises(SpecError, match=r"/dev/zero: the specification file is a device"):
            load_spec("/dev/zero")
    loop = tmp_path / "loop.toml"
    loop.symlink_to(loop)
    with pytest.raises(SpecError, match=r"the information file is a symbolic link loop"):
        load_info(loop)
    fifo = tmp_path / "spec.toml"
    os.mkfifo(fifo)
    caught: list[BaseException] = []
    worker = threading.Thread(target=lambda: _catch(load_spec, fifo, caught), daemon=True)
    worker.start()
    worker.join(20)
    if worker.is_alive():
        with open(fifo, "wb"):
            pass
        pytest.fail("reading a named pipe as a specification hangs")
    assert "the specification file is a named pipe" in str(caught[0])


def _catch(func, arg, into):
    try:
        func(arg)
    except BaseException as exc:  # noqa: BLE001 - handed to the test thread
        into.append(exc)


def test_special_file_words():
    assert special_file(DEMO / "spec-example.toml") is None
    assert special_file(DEMO) is None  # a folder: the caller words it
    assert special_file(DEMO / "no-such-file") is None


def test_spec_confidence_too_close_to_one(tmp_path):
    text = (DEMO / "spec-example.toml").read_text().replace("0.95", "0.9999999999999999")
    spec = tmp_path / "spec.toml"
    spec.write_text(text)
    with pytest.raises(SpecError, match=r"key 'confidence'"):
        load_spec(spec)


# ------------------------------------------------------------------ confidence levels
def test_confidence_message_shows_the_level_as_written():
    with pytest.raises(InputError, match=r"got '0.99999999999999999'"):
        check_confidence(float("0.99999999999999999"), "the level", written="0.99999999999999999")
    with pytest.raises(InputError, match=r"'0.9999999999999999' is too close to 1"):
        check_confidence(0.9999999999999999, "the level", written="0.9999999999999999")
    assert check_confidence(0.9999) == 0.9999


# ------------------------------------------------------------------ sample intervals
@pytest.mark.parametrize("tau0", [1e-200, 1e-31, 1e31, 1e300])
def test_measurement_refuses_tau0_the_estimators_cannot_square(tau0):
    y = np.random.default_rng(2).normal(0.0, 1e-11, 600)  # invented white FM
    with pytest.raises(InputError, match=r"beyond the sample intervals that can be computed"):
        Measurement.from_frequency(y, tau0)


def test_extreme_but_computable_tau0_gives_finite_results():
    y = np.random.default_rng(2).normal(0.0, 1e-11, 600)
    for tau0 in (1e-30, 1e30):
        table = analyze(Measurement.from_frequency(y, tau0), stats="oadev")
        frame = table.to_frame()
        assert np.isfinite(frame["deviation"]).all() and (frame["deviation"] > 0).all()


# ------------------------------------------------------------------ writing
def test_full_disk_names_the_output_not_a_hidden_pending_file(tmp_path):
    out = tmp_path / "out"
    with pytest.raises(InputError) as caught, OutputSet(out, ["table.csv"]) as outputs:
        pending = outputs.path("table.csv")
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC), str(pending))
    message = str(caught.value)
    assert message.startswith(f"{out / 'table.csv'}: cannot write the outputs: No space left")
    assert ".pending" not in message
    assert not out.exists()  # nothing left behind


def test_write_error_without_a_file_name_names_the_folder(tmp_path):
    out = tmp_path / "out"
    with pytest.raises(InputError, match=rf"^{out}: cannot write the outputs: Disk quota"):
        with OutputSet(out, ["table.csv"]):
            raise OSError(errno.EDQUOT, os.strerror(errno.EDQUOT))


def test_reading_errors_inside_an_output_set_are_left_alone(tmp_path):
    with pytest.raises(PermissionError), OutputSet(tmp_path / "out", ["table.csv"]):
        raise PermissionError(errno.EACCES, "Permission denied", "/elsewhere/log.csv")


def test_same_file_survives_a_link_loop(tmp_path):
    loop = tmp_path / "loop.csv"
    loop.symlink_to(loop)
    assert same_file(tmp_path / "out" / "table.csv", loop) is False


# ------------------------------------------------------------------ nothing left to estimate
def test_drift_model_with_as_many_parameters_as_samples_is_refused():
    # three invented readings: a quadratic passes through all three, leaving rounding
    m = Measurement.from_frequency(np.array([1.19, 0.3, 0.5]) * 1e-11, 1.0)
    with pytest.raises(AnalysisError, match=r"quadratic drift \(3 parameters\) from 3 usable"):
        run_analysis(m, drift="quadratic", stats="oadev")
    assert run_analysis(m, drift="linear", stats="oadev").table.to_frame()["deviation"][0] > 0


def test_stuck_readings_with_every_other_slot_empty_are_refused():
    # a stuck counter (the same time error every time), read on a grid twice as fine
    phase = np.full(61, 1e-9)
    phase[1::2] = np.nan
    m = Measurement.from_phase(phase, 0.5)
    with pytest.raises(AnalysisError, match=r"no instability to estimate"):
        run_analysis(m, stats="oadev")


def test_phase_noise_table_from_a_device_or_an_oversized_file(tmp_path):
    if os.path.exists("/dev/zero"):
        with pytest.raises(InputError, match=r"/dev/zero: the phase-noise table is a device"):
            read_phase_noise_table("/dev/zero")
    big = tmp_path / "big.txt"
    with open(big, "wb") as handle:
        handle.truncate(17 * 1024 * 1024)
    with pytest.raises(InputError, match=r"big.txt: the phase-noise table holds more than"):
        read_phase_noise_table(big)


@pytest.mark.parametrize(
    ("key", "value", "match"),
    [
        ("tau_s", "1e308", r"'tau_s' in \[\[limit\]\] number 1 must be a positive number of"),
        ("max", "5e-324", r"'max' in \[\[limit\]\] number 1 must be a positive number from"),
    ],
)
def test_spec_numbers_beyond_any_oscillator(tmp_path, key, value, match):
    text = (DEMO / "spec-example.toml").read_text()
    text = text.replace("tau_s = 1\n" if key == "tau_s" else "max = 2e-11", f"{key} = {value}\n", 1)
    spec = tmp_path / "spec.toml"
    spec.write_text(text)
    with pytest.raises(SpecError, match=match):
        load_spec(spec)


@pytest.mark.parametrize(
    ("reference", "match"),
    [
        ("stability = [[1, 1e300]]", r"reference.stability' must be \[\[tau_s, deviation\]"),
        ("levels = {h0 = 1e308}", r"reference.levels.h0' must be a number from 0 to 1000"),
        ("levels = {h0 = 1e-24}\nf_h = 5e-324", r"reference.f_h' must be a positive frequency"),
    ],
)
def test_reference_numbers_beyond_any_oscillator(tmp_path, reference, match):
    info = tmp_path / "info.toml"
    info.write_text(f'[device]\nid = "X"\n[reference]\n{reference}\n')
    with pytest.raises(SpecError, match=match):
        load_info(info)
