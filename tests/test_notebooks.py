"""Every notebook executes headless in a fresh kernel, and is stored without outputs."""

from __future__ import annotations

from pathlib import Path

import nbformat
import pytest
from nbclient import NotebookClient

NOTEBOOKS = sorted((Path(__file__).resolve().parents[1] / "notebooks").glob("*.ipynb"))

# A phrase each notebook's own outputs must contain: the job it claims to do was done.
EXPECTED = {
    "tour.ipynb": ["written scalar-last but read scalar-first", "inverse transform", "report:"],
    "bug-report-template.ipynb": ["attach:"],
    "convention-walkthrough.ipynb": ["JPL matrix == transpose of Hamilton matrix: True", "only first + third"],
}


def _text(nb) -> str:
    parts = []
    for cell in nb.cells:
        for out in cell.get("outputs", []):
            parts.append(out.get("text", ""))
            data = out.get("data", {})
            parts.append(data.get("text/plain", ""))
    return "\n".join(parts)


def test_there_are_notebooks():
    assert {p.name for p in NOTEBOOKS} >= set(EXPECTED)


@pytest.mark.parametrize("path", NOTEBOOKS, ids=[p.name for p in NOTEBOOKS])
def test_stored_without_outputs(path):
    nb = nbformat.read(path, as_version=4)
    for cell in nb.cells:
        if cell.cell_type == "code":
            assert cell.outputs == [] and cell.execution_count is None, f"{path.name}: strip outputs before commit"


@pytest.mark.parametrize("path", NOTEBOOKS, ids=[p.name for p in NOTEBOOKS])
def test_notebook_executes(path, tmp_path):
    nb = nbformat.read(path, as_version=4)
    NotebookClient(nb, timeout=300, kernel_name="python3", resources={"metadata": {"path": str(tmp_path)}}).execute()
    text = _text(nb)
    for phrase in EXPECTED.get(path.name, []):
        assert phrase in text, f"{path.name}: expected {phrase!r} in the outputs"
