"""The worked example notebook runs from top to bottom, and its results show themselves.

``datasets/demo/qualify-in-a-notebook.ipynb`` walks the demo scenario (read, inspect,
prepare, analyse, compare drift models, judge, write the record). It is executed
here with nbclient in a Jupyter kernel, in its own folder as Jupyter would; any cell
that raises fails the test. The kernel is the ``python3`` kernel ipykernel provides
from the running environment (jupyter_client starts it with this interpreter), so no
kernel needs registering with ``ipykernel install``: the first test checks that.
"""

from __future__ import annotations

import sys
from pathlib import Path

import pytest

nbformat = pytest.importorskip("nbformat")
nbclient = pytest.importorskip("nbclient")

NOTEBOOK = Path(__file__).resolve().parents[1] / "datasets" / "demo" / "qualify-in-a-notebook.ipynb"


def _run(notebook, folder: Path, timeout: int = 240):
    client = nbclient.NotebookClient(
        notebook,
        kernel_name="python3",
        timeout=timeout,
        resources={"metadata": {"path": str(folder)}},
    )
    client.execute()
    return notebook


def test_the_python3_kernel_is_this_interpreter(tmp_path):
    probe = nbformat.v4.new_notebook(
        cells=[nbformat.v4.new_code_cell("import sys, stability\nprint(sys.executable)")]
    )
    _run(probe, tmp_path, timeout=120)
    printed = probe.cells[0].outputs[0]["text"].strip()
    assert Path(printed).resolve() == Path(sys.executable).resolve()


def _outputs(cell) -> set[str]:
    kinds = set()
    for output in cell.get("outputs", []):
        kinds |= set(output.get("data", {}))
        if output.get("output_type") == "error":
            kinds.add("error")
    return kinds


def test_the_demo_notebook_runs_and_its_results_show_themselves(tmp_path, monkeypatch):
    monkeypatch.setenv("TMPDIR", str(tmp_path))  # the kernel writes the record in here
    notebook = nbformat.read(NOTEBOOK, as_version=4)
    assert all(not c.get("outputs") for c in notebook.cells if c.cell_type == "code"), (
        "the notebook is kept without outputs"
    )
    _run(notebook, NOTEBOOK.parent)  # raises CellExecutionError if any cell fails
    code = [c for c in notebook.cells if c.cell_type == "code"]
    by_source = {c.source.strip().splitlines()[-1]: _outputs(c) for c in code}
    # tables and verdicts as HTML, figures as PNG (a Drawn shows itself; pyplot its own)
    for last_line in ("measurement", "preparation", "run.table", "judgement", "outcome"):
        assert "text/html" in by_source[last_line], last_line
    for last_line in ("measurement.plot()", "run.plot()", "run.plot(judgement=judgement)"):
        assert "image/png" in by_source[last_line], last_line
    compare = next(c for c in code if "plt.subplots(1, 2" in c.source)
    assert "image/png" in _outputs(compare)
    record = next(c for c in code if "record_into(" in c.source)
    listed = record.outputs[0]["data"]["text/plain"]
    assert "record.pdf" in listed and "record.json" in listed and "sigma_tau.png" in listed
    written = list(tmp_path.glob("stability-record-*/record.pdf"))
    assert len(written) == 1 and written[0].read_bytes().startswith(b"%PDF")
    shown = next(c for c in code if c.source.strip() == "outcome").outputs[0]["data"]["text/html"]
    assert "Calibration record" in shown and "record.pdf" in shown and 'class="verdict"' in shown
