"""Bias corrections are traceable: raw estimate, factor and switch, in every table."""

from __future__ import annotations

import csv
from pathlib import Path

import numpy as np
import pytest

import stability
from stability.figures import stability_figure
from stability.reports.tables import table_markdown, terminal_table
from stability.workflow import analyze_into

ROOT = Path(__file__).resolve().parents[1]
NBS14 = ROOT / "stability/validation/data/nbs14.txt"


def _rows(path: Path) -> list[dict[str, str]]:
    with open(path, newline="") as handle:
        return list(csv.DictReader(handle))


def test_nbs14_totdev_raw_value_is_the_published_one(tmp_path):
    # NIST SP 1065 (2008) section 12.3 and Riley, The Calculation of Time Domain
    # Frequency Stability, table I: TOTDEV(2 s) = 93.90379 for the NBS14 frequency
    # data (tolerance: the 7 published digits). The table prints the raw estimate
    # beside the bias-corrected deviation, so a reader can check it against the book.
    _, files = analyze_into(
        NBS14, tmp_path / "out", kind="fractional", tau0="1s", stats="totdev", taus="1,2"
    )
    rows = {float(r["tau_s"]): r for r in _rows(files["table.csv"]) if r["statistic"] == "totdev"}
    assert float(rows[1.0]["raw_deviation"]) == pytest.approx(91.22945, abs=5e-6)
    assert float(rows[2.0]["raw_deviation"]) == pytest.approx(93.90379, abs=5e-6)
    for row in rows.values():
        dev, raw, factor = (float(row[k]) for k in ("deviation", "raw_deviation", "bias_factor"))
        assert dev == pytest.approx(raw * factor, rel=1e-12)


def _white_fm(seed: int = 4, n: int = 4000) -> stability.Measurement:
    y = np.random.default_rng(seed).normal(0.0, 1e-11, n)  # invented white FM
    return stability.Measurement.from_frequency(y, tau0=1.0)


def test_bias_correction_off_reports_the_raw_estimates():
    m = _white_fm()
    on = stability.analyze(m, stats="totdev,mtot,theo1")
    off = stability.analyze(m, stats="totdev,mtot,theo1", bias_correction=False)
    assert off.settings["bias_correction"] is False and on.settings["bias_correction"] is True
    for name in ("totdev", "mtot", "theo1"):
        np.testing.assert_array_equal(off[name].bias_factor, 1.0)
        np.testing.assert_array_equal(off[name].deviation, off[name].raw_deviation)
        np.testing.assert_array_equal(off[name].raw_deviation, on[name].raw_deviation)
    # MTOT(tau0)^2 = MVAR(tau0)/2 exactly, so its correction at m = 1 is sqrt(2)
    assert on["mtot"].bias_factor[0] == pytest.approx(np.sqrt(2.0), rel=1e-12)
    assert not off["mtot"].bias_corrected and on["mtot"].bias_corrected


def test_corrected_rows_are_marked_in_the_text_tables():
    m = _white_fm()
    table = stability.analyze(m, stats="oadev,mtot")
    md = table_markdown(table)
    assert "| bias factor |" in md.splitlines()[0]
    cells = [
        [c.strip() for c in line.strip(" |").split("|")]
        for line in md.splitlines()
        if line.startswith("| mtot |")
    ]
    identified = [row for row in cells if row[5]]  # a noise type, hence a correction
    assert identified and all(row[-1].startswith("x") for row in identified)
    assert "Rows with a bias factor are bias-corrected" in md
    text = terminal_table(table)
    assert any(line.startswith("mtot") and " * " in line for line in text.splitlines())
    assert "--bias-correction off" in text
    plain = table_markdown(stability.analyze(m, stats="oadev,mdev"))
    assert "bias factor" not in plain  # nothing corrected, nothing to explain


def test_the_stability_figure_says_which_statistics_are_bias_corrected():
    table = stability.analyze(_white_fm(), stats="oadev,mtot")
    drawn = stability_figure(table)
    labels = [
        t.get_text() for ax in drawn.axes if ax.get_legend() for t in ax.get_legend().get_texts()
    ]
    assert any("MTOT" in s and "bias-corrected" in s for s in labels), labels
    assert not any("OADEV" in s and "bias-corrected" in s for s in labels), labels


def test_the_summary_names_every_model_that_is_not_confirmed():
    run = stability.run_analysis(_white_fm(), stats="oadev,totdev,theo1")
    stats = run.summary()["statistics"]
    assert stats["oadev"]["unconfirmed_model"] is None  # Greenhall & Riley, checked
    assert "recalled" in stats["totdev"]["unconfirmed_model"]
    assert "recalled" in stats["theo1"]["unconfirmed_model"]
