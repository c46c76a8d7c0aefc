"""Every notebook in ``notebooks/`` runs end to end with nbclient, and is stored without outputs."""
from __future__ import annotations

import os
from pathlib import Path

import pytest

nbformat = pytest.importorskip("nbformat")
nbclient = pytest.importorskip("nbclient")

NOTEBOOKS = sorted((Path(__file__).resolve().parents[2] / "notebooks").glob("*.ipynb"))


@pytest.fixture(scope="module")
def kernel_name():
    """The ``python3`` kernel, run by this interpreter (the venv's), installed if missing."""
    from jupyter_client.kernelspec import KernelSpecManager, NoSuchKernel

    try:
        KernelSpecManager().get_kernel_spec("python3")
    except NoSuchKernel:
        import subprocess
        import sys

        subprocess.run([sys.executable, "-m", "ipykernel", "install", "--sys-prefix", "--name", "python3"],
                       check=True, capture_output=True)
    # jupyter_client replaces a kernel argv of "python" by sys.executable, so the
    # notebooks run in the same environment as the tests.
    return "python3"


def test_notebooks_exist():
    names = {p.name for p in NOTEBOOKS}
    assert {"01_explore_demo.ipynb", "02_headless_api.ipynb", "03_seed_a_fit.ipynb"} <= names


@pytest.mark.parametrize("path", NOTEBOOKS, ids=lambda p: p.stem)
def test_notebook_is_stored_without_outputs(path):
    nb = nbformat.read(path, 4)
    for cell in nb.cells:
        if cell.cell_type == "code":
            assert not cell.outputs and cell.execution_count is None, f"{path.name}: clear the outputs"


@pytest.mark.parametrize("path", NOTEBOOKS, ids=lambda p: p.stem)
def test_notebook_executes(path, kernel_name, monkeypatch):
    monkeypatch.setenv("OPENBLAS_NUM_THREADS", os.environ.get("OPENBLAS_NUM_THREADS", "1"))
    nb = nbformat.read(path, 4)
    nbclient.NotebookClient(nb, timeout=180, kernel_name=kernel_name,
                            resources={"metadata": {"path": str(path.parent)}}).execute()
    errors = [o for c in nb.cells if c.cell_type == "code" for o in c.outputs if o.output_type == "error"]
    assert not errors
