"""Run a widget's code cell in a fresh kernel and read back the state it rebuilt."""

from __future__ import annotations

import nbformat
from nbclient import NotebookClient

from posekit.io.state import State, state_from_json


def state_rebuilt_in_fresh_kernel(code_cell: str, variable: str = "widget") -> State:
    """Execute ``code_cell`` in a new python3 kernel; return ``<variable>.to_state()`` as parsed there."""
    cells = [nbformat.v4.new_code_cell(code_cell),
             nbformat.v4.new_code_cell("from posekit.io.state import state_to_json\n"
                                       f"print(state_to_json({variable}.to_state()))")]
    nb = nbformat.v4.new_notebook(cells=cells)
    NotebookClient(nb, timeout=120, kernel_name="python3").execute()
    return state_from_json("".join(o.get("text", "") for o in nb.cells[1].outputs))
