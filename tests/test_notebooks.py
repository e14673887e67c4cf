"""The notebooks run top to bottom in a fresh kernel (nbclient) with no error, the quickstart
reads as a tutorial (no hostile article, progress shown, a computed and explained agreement),
and the notebook the demo writes opens its views."""

from __future__ import annotations

import json
import re
from pathlib import Path

import nbformat
import pytest
from _probes import HOSTILE_ID, quickstart_with_hostile_article

REPO = Path(__file__).resolve().parent.parent
WIDGET = "application/vnd.jupyter.widget-view+json"


def _run(path: Path, workdir: Path, rerun: str | None = None) -> nbformat.NotebookNode:
    """Run a notebook top to bottom; then run again the code cell containing ``rerun``, as a
    user re-running a cell would (its outputs are those of the second run)."""
    from nbclient import NotebookClient

    nb = nbformat.read(path, as_version=4)
    client = NotebookClient(
        nb, timeout=600, kernel_name="python3", resources={"metadata": {"path": str(workdir)}}
    )
    if rerun is None:
        client.execute()
        return nb
    with client.setup_kernel():
        for index, cell in enumerate(nb.cells):
            client.execute_cell(cell, index)
        index = nb.cells.index(_cell(nb, rerun))
        client.execute_cell(nb.cells[index], index)
    return nb


def _errors(nb) -> list[str]:
    return [
        o.get("ename", o.get("text", ""))
        for c in nb.cells
        if c.cell_type == "code"
        for o in c.get("outputs", [])
        if o.output_type == "error" or o.get("name") == "stderr" and "Error" in o.get("text", "")
    ]


def _cell(nb, marker: str):
    (cell,) = [c for c in nb.cells if c.cell_type == "code" and marker in c.source]
    return cell


def test_quickstart_source_is_a_tutorial_and_the_probe_still_fits_it(tmp_path):
    # The tutorial shows no hostile markup; the browser test adds it from tests/_probes.py.
    text = (REPO / "notebooks" / "quickstart.ipynb").read_text(encoding="utf-8")
    assert "<script" not in text and "onerror" not in text and HOSTILE_ID not in text
    assert "progress=False" not in text
    probe = nbformat.read(quickstart_with_hostile_article(tmp_path / "probe.ipynb"), as_version=4)
    sources = [c.source for c in probe.cells if c.cell_type == "code"]
    added = next(i for i, s in enumerate(sources) if "<script>alert('title')</script>" in s)
    assert sources[added + 1].startswith("corpus = tm_compare.Corpus.from_frame(")
    assert any(HOSTILE_ID in s and "view.topic =" in s for s in sources[added + 2 :])


@pytest.mark.slow
def test_quickstart_runs_and_ends_on_a_computed_agreement(tmp_path):
    import krippendorff

    from tm_compare.labels.store import LabelStore

    nb = _run(REPO / "notebooks" / "quickstart.ipynb", tmp_path, rerun="their_store.save(")
    assert _errors(nb) == []
    assert all(c.get("execution_count") for c in nb.cells if c.cell_type == "code")
    # progress bars (tqdm widgets) in the two long steps
    for marker in ("prepared = prepare(", "result = sweep("):
        assert any(WIDGET in o.get("data", {}) for o in _cell(nb, marker).outputs), marker
    # The last code cell prints alpha for both fields; the figure is the reference library's.
    store = LabelStore(tmp_path / "quickstart-project")
    fit_id = store.history()["fit"].iloc[0]
    printed = "".join(
        o.get("text", "")
        for o in _cell(nb, "explain_agreement").outputs
        if o.output_type == "stream"
    )
    assert "needs labels" not in printed and "nan" not in printed.lower()
    for field, words in (("verdict", "verdicts"), ("category", "categories")):
        side = store.side_by_side(fit_id, field)
        assert list(side.columns) == ["analyst_a", "analyst_b"] and side.notna().all().all()
        values = {v: i for i, v in enumerate(sorted(set(side.to_numpy().ravel())))}
        codes = side.map(values.get).to_numpy(dtype=float).T  # coders x units
        # Reference: the `krippendorff` package (PyPI), nominal level.
        expected = krippendorff.alpha(reliability_data=codes, level_of_measurement="nominal")
        shown = re.search(rf"alpha for {words} is (-?\d\.\d\d) on {len(side)} topics", printed)
        assert shown and float(shown.group(1)) == pytest.approx(expected, abs=0.005), printed
    # Every topic labelled once by each analyst although the labelling cell ran twice: saving
    # an unchanged label adds no version.
    assert len(store.history()) == 2 * len(side)


@pytest.mark.slow
def test_demo_views_notebook_opens_the_views(tmp_path):
    from test_pipeline import small_demo

    from tm_compare.cli._demo import open_views_command

    run, _ = small_demo()
    path = run.views_path
    assert path == run.project.path / "views.ipynb"
    cells = json.loads(path.read_text(encoding="utf-8"))["cells"]
    rec = run.results.recommendation
    assert f"%tm_compare . --k {rec.k} --seed {rec.seed}" in cells[-1]["source"]
    command = open_views_command(path)
    assert command.endswith("&& jupyter lab views.ipynb") and str(path.parent) in command
    nb = _run(path, path.parent)
    assert _errors(nb) == []
    shown = [o for o in nb.cells[-1].outputs if WIDGET in o.get("data", {})]
    assert shown, "the cell shows no view"


@pytest.mark.slow
def test_your_data_runs_on_the_sample(tmp_path, monkeypatch):
    sample = REPO / "fixtures" / "quillhaven_sample.csv"
    monkeypatch.setenv("TM_COMPARE_DATA", str(sample))
    nb = _run(REPO / "notebooks" / "your-data.ipynb", tmp_path)
    assert _errors(nb) == []
    assert (tmp_path / "your-data-project" / "comparison" / "differences.csv").exists()
