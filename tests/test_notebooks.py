"""Every example notebook runs from top to bottom without an error.

Notebooks are executed with nbclient on the ``python3`` kernel. Its spec (shipped by ipykernel)
starts ``python``, which jupyter_client replaces with the running interpreter, so the kernel sees
the same environment, rankfold included, as this test.
"""

from __future__ import annotations

import sys
from pathlib import Path

import nbformat
import pytest
from jupyter_client.kernelspec import KernelSpecManager
from nbclient import NotebookClient

NOTEBOOKS = sorted((Path(__file__).parent.parent / "example_notebooks").glob("*.ipynb"))


def test_there_are_notebooks_and_none_has_outputs():
    names = {path.name for path in NOTEBOOKS}
    assert {"quickstart.ipynb", "scripting.ipynb"} <= names
    for path in NOTEBOOKS:
        notebook = nbformat.read(path, as_version=4)
        stored = [c for c in notebook.cells if c.cell_type == "code" and c.get("outputs")]
        assert not stored, f"{path.name} is committed with outputs; clear them"


def test_kernel_runs_this_interpreter():
    spec = KernelSpecManager().get_kernel_spec("python3")
    assert spec.argv[0] in ("python", "python3", sys.executable)


#: Run first in every notebook: any warning a reader would see becomes an error. Left alone:
#: unclosed-socket notices from the Dask cluster's shutdown and a dashboard port that another
#: program on the machine holds (facts about the machine, not about the notebook).
WARNINGS_AS_ERRORS = """import warnings
warnings.simplefilter("error")
warnings.filterwarnings("ignore", category=ResourceWarning)
warnings.filterwarnings("ignore", message="Port .* is already in use")"""


@pytest.mark.slow
@pytest.mark.parametrize("path", NOTEBOOKS, ids=[p.stem for p in NOTEBOOKS])
def test_notebook_executes_without_errors_or_warnings(path, tmp_path):
    notebook = nbformat.read(path, as_version=4)
    notebook.cells.insert(0, nbformat.v4.new_code_cell(WARNINGS_AS_ERRORS))
    client = NotebookClient(
        notebook, kernel_name="python3", timeout=600,
        resources={"metadata": {"path": str(tmp_path)}},  # files a notebook saves go here
    )
    client.execute()  # raises CellExecutionError, naming the cell, on any error
    errors = [o for c in notebook.cells if c.cell_type == "code"
              for o in c.get("outputs", []) if o.get("output_type") == "error"]
    assert not errors
    warned = [o.get("text", "") for c in notebook.cells if c.cell_type == "code"
              for o in c.get("outputs", []) if o.get("name") == "stderr"]
    assert not warned, f"{path.name} printed to stderr: {warned}"
