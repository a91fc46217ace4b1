"""What the reader says reads as a person would write it (units, columns, periods)."""

from __future__ import annotations

import numpy as np
import pytest

import stability
from stability.errors import InputError


def test_header_less_column_is_not_named_twice(tmp_path):
    p = tmp_path / "log.txt"
    p.write_text("1\n2\nbanana\n" + "".join(f"{v}\n" for v in range(3, 40)))
    with pytest.raises(InputError) as caught:
        stability.read_log(p, kind="fractional", tau0="1s", strict=True)
    assert "column column" not in caught.value.one_line()


def test_units_and_periods_in_the_report(tmp_path):
    y = np.random.default_rng(3).normal(0.0, 1e-3, 300)  # invented counter readings
    p = tmp_path / "counter.csv"
    p.write_text("t,frequency (hz)\n" + "".join(f"{i},{10e6 + v:.4f}\n" for i, v in enumerate(y)))
    text = stability.inspect_log(p).to_text()
    assert "Hz" in text and "(hz)" not in text.replace("frequency (hz)", "")
    q = tmp_path / "y.csv"
    q.write_text("".join(f"{v:.3e}\n" for v in np.random.default_rng(4).normal(0, 1e-11, 50)))
    shown = stability.inspect_log(q, kind="fractional", tau0="1s").to_text()
    assert "in no unit" not in shown and "fractional (no unit)" in shown


def test_unknown_values_without_a_header_name_the_value_column(tmp_path):
    p = tmp_path / "odd.csv"
    p.write_text("".join(f"{i},{1000 + 7 * i}\n" for i in range(60)))
    with pytest.raises(InputError) as caught:
        stability.read_log(p)
    assert "'of values'" not in caught.value.one_line()
