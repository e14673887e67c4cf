"""Both notebooks run top to bottom in a fresh kernel (nbclient) with no error."""

from __future__ import annotations

from pathlib import Path

import nbformat
import pytest

pytestmark = pytest.mark.slow

REPO = Path(__file__).resolve().parent.parent


def _run(name: str, workdir: Path) -> nbformat.NotebookNode:
    from nbclient import NotebookClient

    nb = nbformat.read(REPO / "notebooks" / name, as_version=4)
    NotebookClient(
        nb, timeout=600, kernel_name="python3", resources={"metadata": {"path": str(workdir)}}
    ).execute()
    return nb


def _errors(nb) -> list[str]:
    return [
        o.get("ename", o.get("text", ""))
        for c in nb.cells
        if c.cell_type == "code"
        for o in c.get("outputs", [])
        if o.output_type == "error" or o.get("name") == "stderr" and "Error" in o.get("text", "")
    ]


def test_quickstart_runs(tmp_path):
    from tm_compare.labels.store import LabelStore

    nb = _run("quickstart.ipynb", tmp_path)
    assert _errors(nb) == []
    assert all(c.get("execution_count") for c in nb.cells if c.cell_type == "code")
    # the colleague's label written by the last cell is in the project's store
    history = LabelStore(tmp_path / "quickstart-project").history()
    assert (history["name"] == "rents and tenants").any()


def test_your_data_runs_on_the_sample(tmp_path, monkeypatch):
    sample = REPO / "fixtures" / "quillhaven_sample.csv"
    monkeypatch.setenv("TM_COMPARE_DATA", str(sample))
    nb = _run("your-data.ipynb", tmp_path)
    assert _errors(nb) == []
    assert (tmp_path / "your-data-project" / "comparison" / "differences.csv").exists()
