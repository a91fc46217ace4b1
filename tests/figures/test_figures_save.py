"""Tests of stability.figures.save: PNG, SVG and PDF written atomically."""

from __future__ import annotations

import numpy as np
import pytest
from pypdf import PdfReader

import stability
from stability.errors import InputError
from stability.figures import save_figure, stability_figure


def _white_fm(n: int, seed: int = 7) -> np.ndarray:
    # Invented test data: seeded white frequency noise, 1e-11 per sample.
    return np.random.default_rng(seed).normal(0.0, 1e-11, n)


def test_every_validation_message(tmp_path, table):
    drawn = stability_figure(table)
    with pytest.raises(InputError, match="unknown figure format 'gif'.*png, svg, pdf"):
        save_figure(drawn, tmp_path / "a.gif", fmt="gif")
    with pytest.raises(InputError, match="fig must be a matplotlib Figure or a drawn figure"):
        save_figure("figure", tmp_path / "a.png")
    with pytest.raises(InputError, match="dpi must be a number between 10 and 1200"):
        save_figure(drawn, tmp_path / "a.png", dpi=0)
    assert list(tmp_path.iterdir()) == []


def test_svg_and_pdf_formats(tmp_path):
    meas = stability.Measurement.from_frequency(_white_fm(512), 1.0)
    drawn = stability_figure(stability.analyze(meas, stats="oadev"))
    svg = save_figure(drawn, tmp_path / "plot.svg")
    pdf = save_figure(drawn.figure, tmp_path / "plot.out", fmt="PDF")  # a bare Figure too
    unknown_suffix = save_figure(drawn, tmp_path / "plot.figure")
    head = svg.read_bytes()[:400]
    assert b"<svg" in head or b"<?xml" in head
    assert svg.stat().st_size > 10_000
    assert pdf.read_bytes().startswith(b"%PDF")
    assert unknown_suffix.read_bytes().startswith(b"\x89PNG")  # PNG by default
    reader = PdfReader(str(pdf))
    assert len(reader.pages) == 1
    assert "stability" in str(reader.metadata.get("/Creator"))
    assert sorted(p.name for p in tmp_path.iterdir()) == ["plot.figure", "plot.out", "plot.svg"]


def test_a_failed_write_keeps_the_previous_file(tmp_path, table, monkeypatch):
    target = tmp_path / "sigma_tau.png"
    target.write_bytes(b"previous figure")
    drawn = stability_figure(table)

    def broken(*args, **kwargs):
        raise RuntimeError("disk full")

    monkeypatch.setattr(drawn.figure, "savefig", broken)
    with pytest.raises(RuntimeError, match="disk full"):
        save_figure(drawn, target)
    assert target.read_bytes() == b"previous figure"
    assert [p.name for p in tmp_path.iterdir()] == ["sigma_tau.png"]  # no temporary left
