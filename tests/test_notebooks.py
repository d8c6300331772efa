"""Every notebook runs top to bottom on the demo data, offline, and is stored without outputs."""
from __future__ import annotations

from pathlib import Path

import nbformat
import pytest

NOTEBOOKS = sorted((Path(__file__).resolve().parents[1] / "notebooks").glob("*.ipynb"))


def test_there_are_notebooks():
    names = [p.name for p in NOTEBOOKS]
    assert len(names) >= 4, names


@pytest.mark.parametrize("path", NOTEBOOKS, ids=lambda p: p.name)
def test_notebook_is_stored_without_outputs(path):
    nb = nbformat.read(path, as_version=4)
    for cell in nb.cells:
        if cell.cell_type == "code":
            assert cell.outputs == [] and cell.execution_count is None, path.name


@pytest.mark.notebook
@pytest.mark.slow
@pytest.mark.parametrize("path", NOTEBOOKS, ids=lambda p: p.name)
def test_notebook_runs_without_error(path, tmp_path, monkeypatch):
    from nbclient import NotebookClient

    monkeypatch.setenv("MPLBACKEND", "Agg")
    nb = nbformat.read(path, as_version=4)
    client = NotebookClient(nb, timeout=600, kernel_name="python3",
                            resources={"metadata": {"path": str(tmp_path)}})
    client.execute()  # raises CellExecutionError on the first failing cell
    outputs = [o for c in nb.cells if c.cell_type == "code" for o in c.outputs]
    errors = [o for o in outputs if o.output_type == "error"]
    assert not errors
    # nothing on stderr (e.g. "TqdmWarning: IProgress not found"), no numpy scalar reprs
    stderr = [o.text for o in outputs if o.output_type == "stream" and o.name == "stderr"]
    assert not [t for t in stderr if "Warning" in t], stderr
    texts = [o.text if o.output_type == "stream" else o.get("data", {}).get("text/plain", "")
             for o in outputs]
    clutter = [t for t in texts if "np.float64(" in t or "np.int64(" in t]
    assert not clutter, clutter


def test_notebooks_start_with_your_data_here():
    """Each notebook has a "Your data here" cell before any cell that reads data, and no
    cell takes the calls from the demo's truth file."""
    for path in NOTEBOOKS:
        nb = nbformat.read(path, as_version=4)
        code = [c.source for c in nb.cells if c.cell_type == "code"]
        first = next(i for i, src in enumerate(code) if "Your data here" in src)
        reads = [i for i, src in enumerate(code) if "read_spots(" in src]
        assert reads and first < min(reads), path.name
        assert "DEMO / " in code[first], path.name  # defaults to the demo data
        joined = "\n".join(code)
        assert "truth.a" not in joined and "truth.b" not in joined, path.name
