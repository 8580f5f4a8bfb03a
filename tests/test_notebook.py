"""The examples notebook runs headless, offline, with this interpreter's kernel, so it cannot rot."""

from pathlib import Path

import nbclient
import nbformat

NOTEBOOK = Path(__file__).resolve().parents[1] / "examples" / "vigil_from_python.ipynb"


def test_examples_notebook_is_stored_without_outputs():
    notebook = nbformat.read(NOTEBOOK, as_version=4)
    code = [cell for cell in notebook.cells if cell.cell_type == "code"]
    assert code and all(not cell.outputs and cell.execution_count is None for cell in code)


def test_examples_notebook_runs(no_network):
    notebook = nbformat.read(NOTEBOOK, as_version=4)
    nbclient.NotebookClient(notebook, timeout=600, kernel_name="python3",
                            resources={"metadata": {"path": str(NOTEBOOK.parent)}}).execute()
    errors = [o for c in notebook.cells if c.cell_type == "code" for o in c.outputs if o.output_type == "error"]
    assert not errors
    texts = [str(o.get("data", {}).get("text/plain", "")) for c in notebook.cells if c.cell_type == "code"
             for o in c.outputs]
    assert any("full" in t for t in texts) and any("reachable" in t for t in texts)
