"""Every worked notebook executes top to bottom (nbclient with an ipykernel), offline."""

from __future__ import annotations

from pathlib import Path

import nbformat
import pytest
from nbclient import NotebookClient

NOTEBOOKS = sorted((Path(__file__).resolve().parents[1] / "notebooks").glob("*.ipynb"))


def test_there_are_five_notebooks_stored_without_outputs():
    assert len(NOTEBOOKS) == 5
    for path in NOTEBOOKS:
        book = nbformat.read(path, as_version=4)
        for cell in book.cells:
            if cell.cell_type == "code":
                assert cell.outputs == [] and cell.execution_count is None, path.name
        assert "illustrative" in book.cells[0].source.lower()


@pytest.mark.slow
@pytest.mark.parametrize("path", NOTEBOOKS, ids=lambda p: p.name)
def test_notebook_runs(path, tmp_path, monkeypatch):
    monkeypatch.setenv("MPLBACKEND", "Agg")
    book = nbformat.read(path, as_version=4)
    client = NotebookClient(book, timeout=600, kernel_name="python3",
                            resources={"metadata": {"path": str(tmp_path)}})
    client.execute()  # raises CellExecutionError on any error in any cell
    errors = [o for c in book.cells if c.cell_type == "code" for o in c.outputs
              if o.output_type == "error"]
    assert not errors
