"""The demo job end to end (``run_demo``) on a small invented Quillhaven corpus.

``small_demo()`` runs the job once per test session; the report, export and CLI tests import it
so that one small project serves them all. Planted facts come from :mod:`tm_compare.demo`
(``DemoTruth``), agreement is checked against the ``krippendorff`` package.
"""

from __future__ import annotations

import atexit
import functools
import shutil
import tempfile
from pathlib import Path

import numpy as np
import pytest

from tm_compare.demo import quillhaven as demo
from tm_compare.demo.run import ANALYSTS, STEPS, demo_labels, run_demo, summary
from tm_compare.errors import SettingsError

SMALL = {"n_docs": 400, "random_state": 0, "k": (4, 6), "seeds": 2, "passes": 2, "n_boot": 100}


@functools.cache
def small_demo():
    """(run, reports by step title) of one small demo, shared by every test module."""
    folder = Path(tempfile.mkdtemp(prefix="tm_compare-demo-"))
    atexit.register(shutil.rmtree, folder, ignore_errors=True)
    reports = {}
    run = run_demo(
        folder / "project",
        echo=lambda title, text: reports.__setitem__(title, text),
        progress=False,
        **SMALL,
    )
    return run, reports


pytestmark = pytest.mark.slow


def test_every_step_runs_and_reports():
    run, reports = small_demo()
    assert list(reports) == [title for title, _ in STEPS]
    assert all(text.strip() for text in reports.values())
    assert run.report_path.exists() and run.report_path.name == "report.html"
    assert (run.report_path.parent / "document_topics.csv").exists()


def test_sweep_grid_and_recommendation_follow_the_saved_scores():
    run, _ = small_demo()
    scores = run.sweep.scores_
    assert sorted(zip(scores["k"], scores["seed"], strict=True)) == [(4, 0), (4, 1), (6, 0), (6, 1)]
    from tm_compare.models.choice import recommend

    again = recommend(scores)  # the rule re-applied to the scores as saved
    assert (run.results.fit.k, run.results.fit.random_state) == (again.k, again.seed)
    assert again.rule in summary(run)


def test_planted_heavy_reader_is_flagged_and_named_in_the_summary():
    # The planted fact: one reader visits one outlet thousands of times (demo.DemoTruth).
    run, _ = small_demo()
    truth = demo.truth(SMALL["n_docs"], SMALL["random_state"])
    heavy = run.results.tables["influence"]
    flagged = heavy[heavy["flagged"] & (heavy["source"] == "visited")]
    assert truth.heavy_reader in set(flagged["group"])
    assert truth.heavy_reader in summary(run)
    assert "cap_effect" in run.results.tables


def test_demo_labels_disagree_on_one_verdict_by_design():
    run, _ = small_demo()
    labels = demo_labels(run.results.fit, run.results.tables["topic_scores"])
    a, b = ([x["verdict"] for x in labels[who]] for who in ANALYSTS)
    assert sum(x != y for x, y in zip(a, b, strict=True)) == 1
    assert a.count("mixed") == 1 and b.count("mixed") == 1 and b.count("noise") == 1


def test_label_agreement_matches_krippendorff_package():
    krippendorff = pytest.importorskip("krippendorff")
    run, _ = small_demo()
    t = run.results.tables
    table = t["labels"].pivot(index="analyst", columns="topic", values="verdict")
    codes = {v: i for i, v in enumerate(sorted(set(table.to_numpy().ravel())))}
    data = np.vectorize(codes.get)(table.to_numpy()).astype(float)
    # Reference: krippendorff.alpha (Castro's package), nominal level.
    expected = krippendorff.alpha(reliability_data=data, level_of_measurement="nominal")
    overall = t["agreement"].query("scope == 'overall' and field == 'verdict'")
    assert overall["alpha"].iloc[0] == pytest.approx(expected, abs=1e-12)
    assert set(t["labels"]["analyst"]) == set(ANALYSTS)
    # The consensus keeps the more cautious verdict of the two (our rule, common practice).
    assert len(t["consensus"]) == run.results.fit.k
    worst = (
        t["labels"]
        .groupby("topic")["verdict"]
        .agg(lambda v: max(v, key={"usable": 0, "mixed": 1, "noise": 2}.get))
    )
    settled = t["consensus"].set_index("topic")["verdict"]
    assert settled.sort_index().tolist() == worst.sort_index().tolist()


def test_rerun_reuses_fits_and_settled_labels():
    run, _ = small_demo()
    fits = sorted(p.name for p in (run.project.path / "fits").iterdir())
    labels_before = len(run.results.tables["labels"])
    again = run_demo(run.project.path, progress=False, **SMALL)
    assert sorted(p.name for p in (run.project.path / "fits").iterdir()) == fits
    assert len(again.results.tables["labels"]) == labels_before


def test_bad_size_fails_before_any_folder_is_made(tmp_path):
    with pytest.raises(SettingsError, match="'n_docs' parameter of run_demo"):
        run_demo(tmp_path / "nothing", n_docs=10)
    assert not (tmp_path / "nothing").exists()
