"""The causes study inside an analysis: auxiliary columns, regression, lines, dead time.

The logs here are invented in the test (power-law noise from stability.simulate);
check values are the parameters they were made with, and the published relations
named in tests/test_causes_library.py.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from stability import InputError, Measurement, read_log
from stability.causes import (
    CauseSettings,
    cause_notes,
    correct_dead_time,
    periodic_marks,
    run_with_causes,
)
from stability.dead_time import dead_time_bias
from stability.environment import lagged
from stability.figures import environment_figure, spectrum_figure, stability_figure
from stability.ingest.auxiliary import aux_quantity_of, parse_aux_spec, read_auxiliary
from stability.periodic import find_lines
from stability.simulate import h_from_deviation, power_law, simulate
from stability.spectrum import compare_models, welch_spectrum


def _log(path, n=8192, *, amp=0.0, beta=0.0, header="timestamp,frequency_hz,temperature_C"):
    rng = np.random.default_rng(3)
    t = np.arange(n, dtype=float)
    temp = 22.0 + 0.4 * np.sin(2 * np.pi * t / 900.0) + rng.normal(0, 0.005, n)
    y = power_law(0, n, h=2e-24, seed=8) + amp * np.sin(2 * np.pi * t / 300.0)
    y = 1e-9 + y + beta * lagged(temp, 1.0, 120.0)
    stamps = np.datetime64("2026-05-01T00:00:00", "s") + np.arange(n).astype("timedelta64[s]")
    rows = [
        f"{s}Z,{10e6 * (1 + v):.7f},{c:.3f}"
        for s, v, c in zip(np.datetime_as_string(stamps), y, temp, strict=True)
    ]
    path.write_text(header + "\n" + "\n".join(rows) + "\n")
    return path


def test_aux_header_recognition():
    assert aux_quantity_of("temperature_C") == ("temperature", "degC", 1.0)
    assert aux_quantity_of("Temp (K)") == ("temperature", "K", 1.0)
    assert aux_quantity_of("pressure_hPa") == ("pressure", "Pa", 100.0)
    assert aux_quantity_of("supply_mV") == ("voltage", "V", 1e-3)
    assert aux_quantity_of("RH %")[0] == "humidity"
    assert aux_quantity_of("frequency_hz") is None
    assert parse_aux_spec("temperature=3, voltage=Vs") == {"temperature": 3, "voltage": "Vs"}
    with pytest.raises(InputError, match="auxiliary name must be a word"):
        parse_aux_spec("3=temperature")


def test_read_auxiliary_aligns_by_line(tmp_path):
    path = _log(tmp_path / "lab.csv", n=600)
    text = path.read_text().splitlines()
    text[10] = text[10].rsplit(",", 1)[0] + ",n/a"  # a probe reading missing on one line
    path.write_text("\n".join(text) + "\n")
    m = read_auxiliary(read_log(path))
    aux = m.auxiliary["temperature"]
    assert aux.unit == "degC" and aux.column == "temperature_C"
    assert aux.values.size == m.n - 1  # one per frequency reading
    assert math.isnan(aux.values[9]) and np.isfinite(aux.values[8])
    assert aux.values[0] == pytest.approx(float(text[1].rsplit(",", 1)[1]))
    assert "Auxiliary column 'temperature_C' read as temperature" in m.notes[-1]
    with pytest.raises(InputError, match="no column of pressure"):
        read_auxiliary(read_log(path), "pressure")
    with pytest.raises(InputError, match="not in the log"):
        read_auxiliary(read_log(path), "pressure=9")


def test_aux_column_is_not_taken_as_the_value(tmp_path):
    path = _log(tmp_path / "first.csv", n=300, header="timestamp,frequency_hz,temperature_C")
    lines = path.read_text().splitlines()
    swapped = ["timestamp,temperature_C,frequency_hz"] + [
        ",".join([r.split(",")[0], r.split(",")[2], r.split(",")[1]]) for r in lines[1:]
    ]
    path.write_text("\n".join(swapped) + "\n")
    m = read_log(path)
    assert m.provenance.details["value_column"] == "frequency_hz"


def test_regression_and_removal_in_a_run(tmp_path):
    path = _log(tmp_path / "lab.csv", beta=-8e-12)
    causes = CauseSettings(regress="temperature", lag_range=(0, 900), remove=True)
    run = run_with_causes(path, None, causes, stats="oadev")
    sens = run.table.extras["causes"]["sensitivity"]
    assert sens["coefficient_per_unit"] == pytest.approx(-8e-12, abs=3 * sens["uncertainty"])
    assert sens["unit"] == "K" and sens["removed"] is True
    assert any("Removed the fitted temperature effect" in n for n in run.measurement.notes)
    assert any("temperature sensitivity" in n and "removed" in n for n in cause_notes(run.table))
    summary = run.summary()
    assert summary["causes"]["sensitivity"]["lag_range_s"] == [0.0, 900.0]


def test_periodic_component_noted_and_marked(tmp_path):
    path = _log(tmp_path / "lab.csv", amp=4e-12)
    run = run_with_causes(path, None, CauseSettings(), stats="oadev,mdev")
    lines = run.table.extras["causes"]["periodic"]["lines"]
    assert len(lines) == 1
    assert lines[0]["period_s"] == pytest.approx(300.0, rel=0.03)
    assert lines[0]["summary"].startswith("periodic component, period ")
    # the taus of the first Allan-deviation lobe, around 0.371 T = 111 s
    assert 128.0 in lines[0]["affected_taus_s"]
    marks = periodic_marks(run.table)
    assert len(marks) == 1 and marks[0][0] < 0.371 * 300 < marks[0][1]
    assert run.table.extras["causes"]["periodic"]["longest_period_searched_s"] < 8192 / 2
    drawn = stability_figure(run.table, marks=marks)
    assert drawn.marks and drawn.marks[0][2].startswith("taus a periodic component")
    assert any(n.startswith("periodic component") for n in cause_notes(run.table))


def test_dead_time_correction_of_a_table():
    fine = power_law(0, 10 * 2**12, h=1.0, tau0=0.1, seed=4)
    gated = fine.reshape(-1, 10)[:, :8].mean(axis=1)
    run = run_with_causes(
        Measurement.from_frequency(gated, 1.0),
        None,
        CauseSettings(dead_time=0.2, counter="pi"),
        stats="oadev,mdev",
        taus="1,4,16",
    )
    res = run.table["oadev"]
    # WFM: the correction at every tau is r = 1.25 in variance (Barnes' B2 with r^-mu)
    np.testing.assert_allclose(res.bias_factor, 1 / math.sqrt(1.25), rtol=1e-6)
    assert run.table.extras["causes"]["dead_time"]["statistics_corrected"] == ["oadev"]
    assert np.all(run.table["mdev"].bias_factor == 1.0)
    notes = cause_notes(run.table)
    assert any("Not corrected for dead time" in n and "mdev" in n for n in notes)
    assert any("counter type pi" in n for n in notes)
    same, said = correct_dead_time(run.table, 1.0)
    assert same is run.table and "No dead time" in said[0]
    assert dead_time_bias(16, 1.25, -1.0) == pytest.approx(1.25)


def test_cause_settings_checks():
    with pytest.raises(InputError, match="counter must be one of pi, lambda, omega"):
        CauseSettings(counter="delta")
    with pytest.raises(InputError, match="not both"):
        CauseSettings(dead_time=0.1, dead_time_ratio=1.1)
    with pytest.raises(InputError, match="needs the quantity"):
        CauseSettings(remove=True)


def test_spectrum_and_allan_model_agree_on_simulated_noise():
    levels = {0: h_from_deviation(0, 1e-11, 1.0), -1: h_from_deviation(-1, 2e-12, 1.0)}
    y = simulate(2**15, 1.0, levels=levels, seed=12)
    run = run_with_causes(Measurement.from_frequency(y, 1.0), None, CauseSettings(), stats="oadev")
    rows = run.table.extras["causes"]["periodic"]["model_comparison"]
    both = [r for r in rows if r["h_spectrum"] > 0 and r["h_allan"] > 0]
    assert {r["alpha"] for r in both} >= {0}
    for row in both:  # two views of one model agree within three combined uncertainties
        assert abs(row["z"]) < 3, row
    assert not run.table.extras["causes"]["periodic"]["lines"]


def test_spectrum_and_environment_figures():
    y = power_law(0, 4096, h=1e-22, seed=2) + 3e-11 * np.sin(2 * np.pi * np.arange(4096) / 300)
    spec = welch_spectrum(Measurement.from_frequency(y, 1.0, nominal=5e6))
    lines = find_lines(spec)
    drawn = spectrum_figure(spec, models={"fit to this spectrum": spec.fit.h}, lines=lines)
    assert drawn.right == "L(f)" and len(drawn.lines) == 1
    assert drawn.models["fit to this spectrum"].shape == spec.f.shape
    assert compare_models(spec.fit, None) == []
    temp = np.sin(np.arange(4096) / 200.0)
    from stability.environment import regress  # noqa: PLC0415 - tests may import locally

    sens = regress(Measurement.from_frequency(1e-12 * temp + y, 1.0), temp, lag_range=(0, 100))
    env = environment_figure(y, temp, 1.0, sens, aux_unit="degC")
    assert env.y.size <= 1000 and env.fitted.size == env.lagged_aux.size
    with pytest.raises(InputError, match="one length"):
        environment_figure(y, temp[:10], 1.0, sens)


def test_demo_log_is_made_by_its_script():
    import gzip  # noqa: PLC0415
    import importlib.util  # noqa: PLC0415
    from pathlib import Path  # noqa: PLC0415

    folder = Path(__file__).resolve().parents[1] / "datasets" / "demo"
    spec = importlib.util.spec_from_file_location("make_lab_cycle", folder / "make_lab_cycle.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    stored = gzip.decompress((folder / module.AIRCON_NAME).read_bytes()).decode("ascii")
    assert stored == module.aircon_log()
    assert stored.splitlines()[0] == "timestamp,frequency_hz,temperature_C"


def test_regression_refuses_a_changed_grid(tmp_path):
    from stability import AnalysisError  # noqa: PLC0415

    path = _log(tmp_path / "lab.csv", n=2048)
    with pytest.raises(AnalysisError, match="preparation changed the grid"):
        run_with_causes(path, None, CauseSettings(regress="temperature"), average=2)
