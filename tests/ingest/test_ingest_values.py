"""Value kinds and units, nominal inference, sentinels, strict mode and numerical care."""

from __future__ import annotations

import math

import numpy as np
import pytest

from stability import InputError, analyze
from stability.ingest import inspect_log, read_log


def _write(tmp_path, text, name="v.csv"):
    p = tmp_path / name
    p.write_text(text)
    return p


# invented offsets of an oscillator from its nominal, in parts of 1e-12
OFFS = np.array([1, 3, -2, 5, 0, -4, 2, 1])


def test_absolute_frequency_header_hz_with_given_nominal(tmp_path):
    text = "time,Frequency [Hz]\n" + "".join(
        f"{i},{5e6 * (1 + o * 1e-12):.7f}\n" for i, o in enumerate(OFFS)
    )
    m = read_log(_write(tmp_path, text), nominal="5MHz")
    # y = (f - f0)/f0 (IEEE Std 1139-2008); digits as written
    np.testing.assert_allclose(m.frequency(), OFFS * 1e-12, rtol=0, atol=1e-19)
    assert m.nominal == 5e6


@pytest.mark.parametrize(
    ("nominal", "header"), [(10e6, "f"), (1.544e6, "freq"), (156.25e6, "Frequency")]
)
def test_nominal_inferred_and_announced(tmp_path, nominal, header):
    text = f"t,{header}\n" + "".join(
        f"{i},{nominal + o * 1e-12 * nominal:.9f}\n" for i, o in enumerate(OFFS)
    )
    m = read_log(_write(tmp_path, text))
    assert m.nominal == nominal
    assert any("inferred" in n for n in m.notes)
    np.testing.assert_allclose(m.frequency(), OFFS * 1e-12, rtol=0, atol=2e-16)


def test_frequency_without_header_found_by_values(tmp_path):
    text = "".join(f"{i},{10e6 + o * 1e-5:.6f}\n" for i, o in enumerate(OFFS))
    rep = inspect_log(_write(tmp_path, text), tau0="1s")  # column 1 counts rows
    assert (rep.kind, rep.nominal) == ("frequency", 10e6)


def test_unknown_nominal_asks_for_it(tmp_path):
    text = "t,Frequency [Hz]\n" + "".join(f"{i},{7.3e6 + o:.3f}\n" for i, o in enumerate(OFFS))
    with pytest.raises(InputError, match="--nominal"):
        read_log(_write(tmp_path, text))


def test_fractional_readings_of_one_or_more_are_another_kind(tmp_path):
    # 1.25 "fractional" is 125 % off nominal: ppm without a unit, or hertz
    text = "t,y\n" + "".join(f"{i},{v}\n" for i, v in enumerate([0.5, 1.25, 0.75, 1.0]))
    with pytest.raises(InputError, match=r"v.csv:3 column y: .*not a fractional frequency"):
        read_log(_write(tmp_path, text))


@pytest.mark.parametrize(
    ("header", "scale", "kind"),
    [
        ("Frequency (MHz)", 1e6, "frequency"),
        ("TI (ns)", 1e-9, "phase"),
        ("tie [ps]", 1e-12, "phase"),
        ("ppb", 1e-9, "fractional"),
        ("y (ppm)", 1e-6, "fractional"),
        ("y", 1.0, "fractional"),
    ],
)
def test_units_from_header(tmp_path, header, scale, kind):
    raw = np.array([1.25, 2.5, -0.75, 3.0, 0.5, 1.0])
    written = raw.copy()
    if kind == "frequency":
        raw = 10.0 + raw * 1e-9
    if kind == "fractional" and scale == 1.0:
        raw = raw * 1e-3  # a fractional frequency is below 1 (refused otherwise, above)
    text = f"t,{header}\n" + "".join(f"{i},{v:.12f}\n" for i, v in enumerate(raw))
    m = read_log(_write(tmp_path, text), nominal="10MHz")
    if kind == "phase":
        np.testing.assert_allclose(m.phase, (raw - raw[0]) * scale, rtol=1e-12, atol=1e-24)
    elif kind == "fractional":
        np.testing.assert_allclose(m.frequency(), raw * scale, rtol=1e-12)
    else:
        # 10 MHz + raw * 1 mHz: y = raw * 1e-10 (IEEE Std 1139-2008, y = (f - f0)/f0)
        np.testing.assert_allclose(m.frequency(), written * 1e-10, rtol=0, atol=1e-17)
    assert m.provenance.details["kind"] == kind


def test_unit_suffix_on_each_value(tmp_path):
    vals = [10.000000012, 10.000000011, 10.000000013, 10.000000012]
    text = "".join(f"{i}, {v:.9f} MHz\n" for i, v in enumerate(vals))
    m = read_log(_write(tmp_path, text), tau0="1s")  # column 1 counts rows
    np.testing.assert_allclose(m.frequency(), [1.2e-9, 1.1e-9, 1.3e-9, 1.2e-9], atol=1e-18)
    rep = m.provenance.details
    assert rep["unit"] == "MHz" and "after each value" in rep["kind_reason"]


def test_time_suffix_values_are_phase(tmp_path):
    text = "".join(f"{i}\t{v} ns\n" for i, v in enumerate([1.2, 1.4, 1.1, 1.5]))
    m = read_log(_write(tmp_path, text), tau0="1s")  # column 1 counts rows
    np.testing.assert_allclose(m.phase, [0, 0.2e-9, -0.1e-9, 0.3e-9], atol=1e-21)


def test_bare_small_numbers_ask_for_kind(tmp_path):
    text = "".join(f"{i},{v:.3e}\n" for i, v in enumerate(OFFS * 1e-12))
    with pytest.raises(InputError, match="--kind"):
        read_log(_write(tmp_path, text), tau0="1s")
    m = read_log(_write(tmp_path, text), kind="fractional", tau0="1s")  # column 1 counts rows
    np.testing.assert_allclose(m.frequency(), OFFS * 1e-12, rtol=1e-12, atol=1e-26)


@pytest.mark.parametrize(("unit", "factor"), [("cycles", 1.0), ("rad", 1 / (2 * math.pi))])
def test_carrier_phase(tmp_path, unit, factor):
    cyc = np.array([0.0, 0.25, 0.5, 0.375, 0.125])
    vals = cyc / factor
    text = f"t,phase ({unit})\n" + "".join(f"{i},{v:.15f}\n" for i, v in enumerate(vals))
    p = _write(tmp_path, text)
    with pytest.raises(InputError, match="--nominal"):
        read_log(p)
    m = read_log(p, nominal="10MHz")
    # x = phi / (2 pi f0) (IEEE Std 1139-2008)
    np.testing.assert_allclose(m.phase, cyc / 1e7, rtol=1e-12, atol=1e-24)


def test_sentinels_and_error_strings_become_gaps(tmp_path):
    fields = [
        "1e-12",
        "9.9e37",
        "2e-12",
        "-9.91e37",
        "NaN",
        "nan",
        "---",
        "ERR",
        "Error -410",
        "OVLD",
        "",
        "3e-12",
        "4e-12",
        "5e-12",
        "6e-12",
        "7e-12",
        "8e-12",
        "9e-12",
        "1e-12",
        "2e-12",
        "3e-12",
        "4e-12",
        "5e-12",
    ]
    text = "t,y\n" + "".join(f"{i},{f}\n" for i, f in enumerate(fields))
    p = _write(tmp_path, text)
    m = read_log(p)
    rep = inspect_log(p)
    bad = {e["line"]: e["text"] for e in rep.bad_values}
    expect = {i + 2: f for i, f in enumerate(fields) if not f.endswith("e-12")}
    assert bad == expect
    y = m.frequency()
    good = np.array([f.endswith("e-12") for f in fields])
    np.testing.assert_allclose(y[good], [float(f) for f in np.array(fields)[good]], rtol=1e-12)
    assert np.isnan(y[~good]).all()
    with pytest.raises(InputError, match=r"v\.csv:3 column y"):
        read_log(p, strict=True)


def test_mostly_unreadable_column_is_an_error(tmp_path):
    text = "t,y\n" + "".join(f"{i},{'ERR' if i % 3 else '1e-12'}\n" for i in range(30))
    with pytest.raises(InputError, match="unreadable"):
        read_log(_write(tmp_path, text))


def test_multichannel_log_lists_channels(tmp_path):
    text = "time,chA (Hz),chB (Hz),chC (Hz)\n" + "".join(
        f"{i},{1e7 + o * 1e-5:.5f},{1e7 - o * 1e-5:.5f},{1e7:.5f}\n" for i, o in enumerate(OFFS)
    )
    p = _write(tmp_path, text)
    rep = inspect_log(p)
    assert rep.channels == ["chA (Hz)", "chB (Hz)", "chC (Hz)"]
    assert rep.value_column == "chA (Hz)"
    assert any("analysing the first" in n for n in rep.notes)
    m = read_log(p, column="chB (Hz)")
    # 13 written digits go through float64: within 1e-3 of the last digit (1e-12 here)
    np.testing.assert_allclose(m.frequency(), -OFFS * 1e-12, atol=2e-16)
    m3 = read_log(p, column=3)
    np.testing.assert_allclose(m3.frequency(), -OFFS * 1e-12, atol=2e-16)
    with pytest.raises(InputError, match=r"chA \(Hz\)"):
        read_log(p, column="chD")
    with pytest.raises(InputError, match="4 column"):
        read_log(p, column=9)


def test_large_constant_phase_keeps_picosecond_steps(tmp_path):
    rng = np.random.default_rng(7)
    steps = rng.integers(-5, 6, size=400)  # picoseconds, invented
    counts = np.cumsum(steps)
    counts -= counts.min()
    text = "t,TI (s)\n" + "".join(f"{i},0.3{c:011d}\n" for i, c in enumerate(counts))
    m = read_log(_write(tmp_path, text))
    expected = (counts - counts[0]) * 1e-12
    assert np.max(np.abs(m.phase - expected)) <= 1e-18
    plain = read_log(
        _write(
            tmp_path,
            "t,TI (ps)\n" + "".join(f"{i},{c}\n" for i, c in enumerate(counts)),
            "plain.csv",
        )
    )
    a = analyze(m, stats="oadev").to_frame()
    b = analyze(plain, stats="oadev").to_frame()
    # the constant 0.3 s does not change the Allan deviation (NIST SP 1065, section 5.2)
    np.testing.assert_allclose(a["deviation"], b["deviation"], rtol=1e-9)


def test_frequency_digits_beyond_float64_subtracted_in_decimal(tmp_path):
    text = "t,f (Hz)\n" + "".join(f"{i},10000000.00000{o + 5:02d}\n" for i, o in enumerate(OFFS))
    m = read_log(_write(tmp_path, text))
    # (f - f0)/f0 with f - f0 = (o + 5) * 1e-7 Hz exactly as written
    np.testing.assert_allclose(m.frequency(), (OFFS + 5) * 1e-14, rtol=1e-12, atol=0)


def test_fractional_stated_by_the_user_is_read_as_written(tmp_path):
    # published data sets (NBS14, NIST SP 1065 section 12.3) are written in arbitrary units
    text = "t,y\n" + "".join(f"{i},{v}\n" for i, v in enumerate([892, 809, 823, 798]))
    np.testing.assert_allclose(
        read_log(_write(tmp_path, text), kind="fractional").frequency(), [892, 809, 823, 798]
    )
