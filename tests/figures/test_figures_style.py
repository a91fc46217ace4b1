"""Tests of stability.figures.style and of the figures package as a whole.

Colours, markers and tick labels; the package's structure (layers, no import
inside a function, no pyplot); and that reading and analysing never load
matplotlib.
"""

from __future__ import annotations

import ast
import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from matplotlib.colors import to_rgb

import stability
from stability.deviations import statistic_names
from stability.figures import style
from stability.figures.style import (
    OKABE_ITO,
    STATISTIC_STYLES,
    VERDICT_COLORS,
    PlainScalar,
    PowerLabels,
    deviation_label,
    new_figure,
    power_of_ten,
    statistic_style,
)
from stability.spec import VERDICTS

PACKAGE = Path(stability.__file__).parent
FIGURES = PACKAGE / "figures"


def _lab(color: str) -> np.ndarray:
    """CIE 1976 L*a*b* of an sRGB colour, D65 white (IEC 61966-2-1; CIE 15)."""
    c = np.array(to_rgb(color))
    c = np.where(c <= 0.04045, c / 12.92, ((c + 0.055) / 1.055) ** 2.4)
    m = np.array([[0.4124, 0.3576, 0.1805], [0.2126, 0.7152, 0.0722], [0.0193, 0.1192, 0.9505]])
    xyz = m @ c / np.array([0.95047, 1.0, 1.08883])
    f = np.where(xyz > (6 / 29) ** 3, np.cbrt(xyz), xyz / (3 * (6 / 29) ** 2) + 4 / 29)
    return np.array([116 * f[1] - 16, 500 * (f[0] - f[1]), 200 * (f[1] - f[2])])


# ---------------------------------------------------------------------- colours and markers
def test_every_statistic_has_its_own_colour_and_marker():
    assert set(statistic_names()) <= set(STATISTIC_STYLES)
    pairs = [(s.color, s.marker) for s in STATISTIC_STYLES.values()]
    assert len(set(pairs)) == len(pairs)  # no two statistics look alike
    assert {s.color for s in STATISTIC_STYLES.values()} <= set(OKABE_ITO.values())
    # Okabe and Ito's palette as published (hex from the 2002 CUD page, from memory)
    assert OKABE_ITO["blue"] == "#0072b2" and OKABE_ITO["vermillion"] == "#d55e00"
    # looked up by name, whatever else is drawn: the same answer every time
    assert statistic_style("oadev") == STATISTIC_STYLES["oadev"]
    spare = statistic_style("a_later_statistic")
    assert spare == statistic_style("a_later_statistic") and spare not in STATISTIC_STYLES.values()


def test_verdict_colours_are_the_spec_words_and_unlike_any_statistic():
    assert list(VERDICT_COLORS) == list(VERDICTS)
    # CIE 1976 colour difference; about 2.3 is just noticeable (common practice): 35 is
    # far apart, which the palette's own green, vermillion and orange would not be.
    for stat in STATISTIC_STYLES.values():
        for verdict, color in VERDICT_COLORS.items():
            gap = float(np.linalg.norm(_lab(stat.color) - _lab(color)))
            assert gap > 35.0, (stat.color, verdict, gap)
    # the palette's colours left out for being too near a verdict colour
    for name, verdict in (("bluish green", "pass"), ("vermillion", "inconclusive"),
                          ("orange", "inconclusive")):  # fmt: skip
        assert np.linalg.norm(_lab(OKABE_ITO[name]) - _lab(VERDICT_COLORS[verdict])) < 35.0


# ---------------------------------------------------------------------- ticks and wording
def test_power_of_ten_labels_are_plain_text():
    # Decade labels read 10^n in superscripts, without math typesetting; the
    # exponents are the decades of the axis (common practice on sigma-tau plots).
    assert power_of_ten(-12) == "10\u207b\u00b9\u00b2"
    assert power_of_ten(0) == "10\u2070" and power_of_ten(5) == "10\u2075"
    fig = new_figure(6.0, 4.0, layout="fixed")
    ax = fig.add_subplot()
    style.log_axes(ax)
    ax.plot([1.0, 1e4], [1e-13, 1e-10])
    fig.canvas.draw()
    majors = [t.get_text() for t in ax.get_yticklabels() if t.get_text()]
    assert "10\u207b\u00b9\u00b9" in majors and not any("$" in t for t in majors)
    minors = [t.get_text() for t in ax.get_yticklabels(minor=True) if t.get_text()]
    assert minors == []  # three decades: decades only


def test_an_axis_within_a_decade_labels_its_minor_ticks():
    fig = new_figure(6.0, 4.0, layout="fixed")
    ax = fig.add_subplot()
    style.log_axes(ax)
    ax.plot([1.0, 1e4], [2e-12, 6e-12])  # no decade inside the y range
    fig.canvas.draw()
    minors = [t.get_text() for t in ax.get_yticklabels(minor=True) if t.get_text()]
    twelve = "\u00d710\u207b\u00b9\u00b2"
    assert minors[:3] == [f"2{twelve}", f"3{twelve}", f"4{twelve}"]
    assert isinstance(ax.yaxis.get_minor_formatter(), PowerLabels)


@pytest.mark.parametrize(
    ("low", "high", "offset"),
    [
        # the multiplier and offset matplotlib's own scalar labels use (common practice)
        (-2e-11, 3e-11, "\u00d710\u207b\u00b9\u00b9"),
        (0.0, 12345.0, "\u00d710\u2074"),
        (1e-6 - 2e-12, 1e-6 + 3e-12, "\u00d710\u207b\u00b9\u00b2+10\u207b\u2076"),
        (1_000_000.0, 1_000_010.0, "+10\u2076"),
        (0.0, 1.0, ""),
    ],
)
def test_linear_axis_multiplier_and_offset_are_plain_text(low, high, offset):
    fig = new_figure(6.0, 4.0, layout="fixed")
    ax = fig.add_subplot()
    ax.plot([0.0, 1.0], [low, high])
    ax.yaxis.set_major_formatter(PlainScalar())
    fig.canvas.draw()
    assert ax.yaxis.get_offset_text().get_text() == offset
    labels = [t.get_text() for t in ax.get_yticklabels()]
    assert len(set(labels)) == len(labels)  # enough decimals to tell the ticks apart
    assert not any("$" in t or "e" in t for t in labels)


def test_axis_wording_comes_from_the_registry():
    assert deviation_label(["mdev"]) == "modified Allan deviation, MDEV"
    assert deviation_label(["tdev"]) == "time deviation, TDEV (s)"
    assert deviation_label(["oadev", "mdev"]) == "fractional frequency deviation"
    assert deviation_label(["tdev", "mtie"]) == "time statistic (s)"
    assert deviation_label(["oadev", "mdev"], several="titles") == (
        "overlapping Allan deviation (OADEV), modified Allan deviation (MDEV)"
    )
    assert deviation_label(["adev", "tdev"]) == "deviation (TDEV in s)"


# ---------------------------------------------------------------------- the package
def _modules() -> list[Path]:
    return sorted(FIGURES.glob("*.py"))


def test_every_module_has_a_docstring_and_all_and_stays_short():
    for path in _modules():
        tree = ast.parse(path.read_text(encoding="utf-8"))
        assert ast.get_docstring(tree), path.name
        names = {t.id for n in tree.body if isinstance(n, ast.Assign) for t in n.targets
                 if isinstance(t, ast.Name)}  # fmt: skip
        assert "__all__" in names, path.name
        assert len(path.read_text(encoding="utf-8").splitlines()) < 600, path.name
    assert not (PACKAGE / "plots.py").exists()


#: Project modules below the figures' layer (8) that a figure module may import.
_BELOW = (
    "_version", "errors", "units", "files", "measurement", "taus", "intervals", "table",
    "settings", "display", "ingest", "prepare", "deviations", "confidence", "powerlaw", "noise",
    "qualify", "analysis", "spec", "hat", "phase_noise", "dynamic", "simulate", "aging", "run",
    "figures", "timing", "spectrum", "periodic", "environment", "causes",
)  # fmt: skip


def _project_target(node: ast.ImportFrom, module: str) -> str | None:
    if node.level == 0:
        name = node.module or ""
        return name.split(".", 1)[1] if name.startswith("stability.") else None
    parts = module.split(".")[: -node.level]
    return ".".join([*parts, node.module or ""]).split(".", 1)[1]


def test_imports_follow_the_layers_and_sit_at_module_level():
    for path in _modules():
        module = f"stability.figures.{path.stem}"
        tree = ast.parse(path.read_text(encoding="utf-8"))
        for node in ast.walk(tree):
            if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef)):
                inner = [n for n in ast.walk(node) if isinstance(n, (ast.Import, ast.ImportFrom))]
                assert not inner, f"{path.name}: import inside {node.name}()"
            if isinstance(node, ast.ImportFrom):
                target = _project_target(node, module)
                if target is not None:
                    assert target.split(".")[0] in _BELOW, f"{path.name} imports {target}"
                    assert target != "", f"{path.name} imports the package face"


def test_the_library_never_touches_pyplot():
    # figures are built with Figure + FigureCanvasAgg only: no pyplot import anywhere
    for source in sorted(PACKAGE.rglob("*.py")):
        tree = ast.parse(source.read_text(encoding="utf-8"))
        for node in ast.walk(tree):
            names = []
            if isinstance(node, ast.Import):
                names = [a.name for a in node.names]
            elif isinstance(node, ast.ImportFrom):
                names = [node.module or ""] + [f"{node.module}.{a.name}" for a in node.names]
            assert not any("pyplot" in n for n in names), f"{source.name} imports pyplot"


def test_reading_and_analysing_do_not_load_matplotlib(tmp_path):
    log = tmp_path / "log.csv"
    y = np.random.default_rng(2).normal(0.0, 1e-11, 2000)  # invented white FM
    log.write_text("".join(f"{v:.6e}\n" for v in y))
    script = (
        "import sys, stability\n"
        "loaded = lambda: sorted(m for m in sys.modules if m.split('.')[0] == 'matplotlib')\n"
        "assert not loaded(), loaded()\n"
        f"m = stability.read_log({str(log)!r}, kind='fractional', tau0=1.0)\n"
        "prepared, report = stability.prepare_measurement(m)\n"
        "table = stability.analyze(prepared, stats='oadev,mdev,tdev')\n"
        "from stability.summary import build_summary\n"
        "from stability.reports.tables import table_csv\n"
        "table_csv(table); build_summary(table)\n"
        "run = stability.run_analysis(m, stats='oadev')\n"
        "run.summary()\n"
        "assert not loaded(), loaded()\n"
        "import stability.figures\n"
        "assert loaded()\n"
    )
    env = {**os.environ, "PYTHONPATH": str(PACKAGE.parent)}
    done = subprocess.run(
        [sys.executable, "-c", script], capture_output=True, text=True, env=env, timeout=120
    )
    assert done.returncode == 0, done.stderr
