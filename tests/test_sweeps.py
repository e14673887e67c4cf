"""Tests for tm_compare.sweeps: the grid of fits, its scores, resuming and bad input."""

from __future__ import annotations

import errno
import os
import signal
import socket
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from gensim.models import CoherenceModel
from test_fits import corpus_of, lee_corpus

import tm_compare.models.sweeps as sweep_module
from tm_compare.errors import ClusterUnavailableError, InputError, SettingsError, SweepError
from tm_compare.models.fits import fit_lda
from tm_compare.models.quality import fit_quality
from tm_compare.models.sweeps import Sweep, sweep

FAST = {"passes": 1, "chunksize": 100, "progress": False}
GRID = {"k": [3, 4], "seeds": 2}


@pytest.fixture(scope="module")
def small():
    return lee_corpus(120)


@pytest.fixture(scope="module")
def saved(small, tmp_path_factory):
    project = tmp_path_factory.mktemp("study")
    return sweep(small, **GRID, project=project, **FAST), project


def test_tables_have_one_row_per_fit_and_per_topic(saved):
    result, _ = saved
    assert list(result.scores_.columns[:4]) == ["k", "seed", "engine", "fit_seconds"]
    for column in ("npmi", "c_v", "uci", "umass", "perplexity", "stability", "diversity"):
        assert result.scores_[column].notna().all(), column
    assert result.scores_[["k", "seed"]].values.tolist() == [[3, 0], [3, 1], [4, 0], [4, 1]]
    assert len(result.topic_scores_) == 3 + 3 + 4 + 4
    assert list(result.topic_scores_.columns) == [
        "k",
        "seed",
        "topic",
        "top_words",
        "npmi",
        "c_v",
        "uci",
        "umass",
        "prevalence",
        "near_empty",
        "dominant_share",
        "rarely_dominant",
        "duplicate_of",
        "stability",
    ]
    # Each fit's convergence and junk topics are those of the fit itself.
    for row in result.scores_.itertuples():
        fit = result.get_fit(row.k, row.seed)
        assert (row.passes, row.converged) == (fit.passes_used, fit.converged)
        assert row.near_empty == fit_quality(fit)["near_empty"]
        assert row.rarely_dominant == fit_quality(fit)["rarely_dominant"]
        assert row.near_duplicate == fit_quality(fit)["near_duplicate"]
    prevalence = result.topic_scores_.query("k == 4 and seed == 1")["prevalence"]
    np.testing.assert_allclose(prevalence, result.get_fit(4, 1).doc_topic.mean(axis=0))
    assert all(len(words) == 10 for words in result.topic_scores_["top_words"])
    means = result.topic_scores_.groupby(["k", "seed"])[["npmi", "umass"]].mean().reset_index()
    np.testing.assert_allclose(means[["npmi", "umass"]], result.scores_[["npmi", "umass"]])


def test_a_fit_of_the_sweep_is_the_fit_run_alone(saved, small):
    result, _ = saved
    alone = fit_lda(small, 4, random_state=1, passes=1, chunksize=100)
    fit = result.get_fit(k=4, seed=1)
    np.testing.assert_array_equal(fit.topic_term, alone.topic_term)
    assert fit.fingerprint == alone.fingerprint
    row = result.scores_.query("k == 4 and seed == 1").iloc[0]
    assert row["perplexity"] == fit.perplexity
    assert result.topic_scores_.query("k == 4 and seed == 1")[
        "top_words"
    ].tolist() == fit.top_words(10)
    with pytest.raises(SweepError, match=r"no fit with k=5 .* Existing fits are: \(k=3, seed=0\)"):
        result.get_fit(k=5, seed=0)


def test_coherence_and_diversity_against_their_definitions(saved, small):
    result, _ = saved
    fit = result.get_fit(k=3, seed=0)
    # Reference: gensim's CoherenceModel, one model, its default NPMI window (10).
    reference = CoherenceModel(
        topics=fit.top_words(10),
        texts=small.texts,
        dictionary=small.dictionary,
        coherence="c_npmi",
        topn=10,
        processes=1,
    ).get_coherence()
    row = result.scores_.query("k == 3 and seed == 0").iloc[0]
    assert row["npmi"] == pytest.approx(reference, abs=1e-9)
    # Dieng, Ruiz & Blei (2020): unique words among all topics' top 25, over 25 k.
    top25 = fit.top_words(25)
    assert row["diversity"] == len({w for t in top25 for w in t}) / (25 * 3)


def test_tables_are_saved_and_the_sweep_reopens(saved):
    result, project = saved
    for name in ("scores.csv", "scores.parquet", "topic_scores.csv", "topic_scores.parquet"):
        assert (project / "scores" / name).stat().st_size > 0
    csv = pd.read_csv(project / "scores" / "scores.csv")
    np.testing.assert_allclose(csv["npmi"], result.scores_["npmi"])
    again = Sweep.load(project)
    pd.testing.assert_frame_equal(again.scores_, result.scores_)
    pd.testing.assert_frame_equal(again.topic_scores_, result.topic_scores_)
    assert again.get_fit(k=3, seed=1).fingerprint == result.get_fit(k=3, seed=1).fingerprint
    assert again.recommend().k in (3, 4) and "stability" in again.recommend().rule


def test_old_names_work_with_a_future_warning_naming_the_new_one(saved):
    result, _ = saved
    for old, new in (("scores", "scores_"), ("topic_scores", "topic_scores_"), ("fits", "fits_")):
        with pytest.warns(FutureWarning, match=rf"Sweep.{old} is deprecated.*use .{new} instead"):
            assert getattr(result, old) is getattr(result, new)
    with pytest.warns(FutureWarning, match=r"Sweep.model\(k, seed\).*use Sweep.get_fit"):
        assert result.model(3, 1).fingerprint == result.get_fit(3, 1).fingerprint
    with pytest.warns(FutureWarning) as caught:
        old = Sweep(k=[3], holdout_seed=2, topn=5)
    assert (old.holdout_random_state, old.n_terms) == (2, 5)
    assert "use holdout_random_state=... instead" in str(caught[0].message)
    assert "use n_terms=... instead" in str(caught[1].message)
    with pytest.warns(FutureWarning, match="use .n_terms instead"):
        assert old.topn == 5


def test_rerun_skips_finished_fits_and_new_settings_make_new_fits(saved, small, monkeypatch):
    result, project = saved
    files = sorted((project / "fits").glob("*.npz"))
    stamps = [f.stat().st_mtime_ns for f in files]

    def refuse(*args, **kwargs):
        raise AssertionError("a finished fit was fitted again")

    monkeypatch.setattr(sweep_module, "train", refuse)
    again = sweep(small, **GRID, project=project, **FAST)
    pd.testing.assert_frame_equal(again.scores_, result.scores_)
    assert [f.stat().st_mtime_ns for f in files] == stamps
    monkeypatch.undo()
    sweep(small, k=[3], seeds=1, project=project, **{**FAST, "passes": 2})
    assert len(list((project / "fits").glob("*.npz"))) == len(files) + 1
    assert [f.stat().st_mtime_ns for f in files] == stamps


def test_a_corrupt_saved_fit_is_refit(small, tmp_path, monkeypatch):
    first = sweep(small, k=[3], seeds=2, project=tmp_path, **FAST)
    victim = sorted((tmp_path / "fits").glob("*seed1*.npz"))[0]
    data = bytearray(victim.read_bytes())
    data[len(data) // 2] ^= 0xFF
    victim.write_bytes(bytes(data))
    calls = []
    real = sweep_module.train
    monkeypatch.setattr(
        sweep_module, "train", lambda *a, **kw: calls.append(a[1:3]) or real(*a, **kw)
    )
    with pytest.warns(UserWarning, match="integrity check|cannot be read"):
        again = sweep(small, k=[3], seeds=2, project=tmp_path, **FAST)
    assert calls == [(3, 1)]
    assert victim.with_name(victim.name + ".corrupt").exists()  # kept aside, not deleted
    pd.testing.assert_frame_equal(
        again.scores_.drop(columns="fit_seconds"), first.scores_.drop(columns="fit_seconds")
    )


def test_disk_full_mid_save_keeps_earlier_fits_and_leaves_no_half_file(
    small, tmp_path, monkeypatch
):
    import numpy.lib.format

    real = numpy.lib.format.write_array
    calls = []

    def fill_disk(fp, array, *args, **kwargs):
        calls.append(1)
        if len(calls) > 6:  # the first fit file (5 arrays) is whole; the second fails mid-way
            raise OSError(errno.ENOSPC, "No space left on device")
        return real(fp, array, *args, **kwargs)

    monkeypatch.setattr(numpy.lib.format, "write_array", fill_disk)
    with pytest.raises(SweepError, match=r"(?s)seed=1 .*No space left.*run the same sweep again"):
        sweep(small, k=[3], seeds=2, project=tmp_path, **FAST)
    monkeypatch.undo()
    left = sorted(p.name for p in (tmp_path / "fits").iterdir())
    assert len(left) == 1 and left[0].endswith(".npz") and "seed0" in left[0]
    resumed = sweep(small, k=[3], seeds=2, project=tmp_path, **FAST)
    assert len(resumed.scores_) == 2


def test_sklearn_engine_sweeps_like_gensim(small, tmp_path):
    result = sweep(small, k=[3], seeds=2, engine="sklearn", project=tmp_path, **FAST)
    assert result.scores_["engine"].tolist() == ["sklearn", "sklearn"]
    assert sorted(p.name[:11] for p in (tmp_path / "fits").glob("*.npz")) == ["sklearn-k3-"] * 2
    alone = fit_lda(small, 3, random_state=1, engine="sklearn", passes=1, chunksize=100)
    np.testing.assert_array_equal(result.get_fit(k=3, seed=1).topic_term, alone.topic_term)


def test_progress_bar_counts_fits_done_of_total(small, capsys):
    sweep(small, k=[3], seeds=2, **{**FAST, "progress": True})
    err = capsys.readouterr().err
    assert "2/2" in err and "LDA fits (gensim)" in err


# -- bad input -----------------------------------------------------------------------------------
@pytest.mark.parametrize(
    ("options", "match"),
    [
        (
            {"k": [1, 3]},
            r"'k' parameter of sweep must be an integer or a non-empty list of integers >= 2. Got 1",
        ),
        (
            {"k": [3, 500]},
            r"'k' parameter of sweep must be integers from 2 to the number of training documents \(108\)\. Got 500",
        ),
        ({"k": []}, r"'k' parameter of sweep .* Got \[\] instead. The grid of fits would be empty"),
        ({"k": [3], "seeds": []}, r"'seeds' parameter .* grid of fits would be empty"),
        ({"k": [3], "seeds": 0}, r"'seeds' parameter .* number of seeds >= 1 .* Got 0"),
        ({"k": [3], "seeds": [0, -1]}, r"'seeds' parameter .* >= 0. Got -1"),
        (
            {"k": [3], "engine": "other"},
            r"'engine' parameter of sweep must be one of 'gensim', 'sklearn'",
        ),
        ({"k": [3], "measures": ["c_w2v"]}, r"'measures' parameter of sweep must be one of 'npmi'"),
    ],
)
def test_bad_grid_is_refused_before_any_fit(small, tmp_path, options, match):
    with pytest.raises(SettingsError, match=match):
        sweep(small, project=tmp_path, **{**FAST, **options})
    assert not (tmp_path / "fits").exists() or not any((tmp_path / "fits").iterdir())


def test_empty_vocabulary_is_refused():
    with pytest.raises(InputError, match="0 terms in its vocabulary"):
        sweep(corpus_of([[], [], []], "empty"), k=[2], **FAST)


def _closed_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def test_unreachable_scheduler_names_the_address(small, monkeypatch):
    pytest.importorskip("distributed")
    monkeypatch.setattr(sweep_module, "CONNECT_TIMEOUT", 1)
    address = f"tcp://127.0.0.1:{_closed_port()}"
    with pytest.raises(ClusterUnavailableError, match=f"scheduler at '{address}' did not answer"):
        sweep(small, k=[3], seeds=1, scheduler=address, **FAST)
    with pytest.warns(UserWarning, match="Fitting on this machine"):
        local = sweep(small, k=[3], seeds=1, scheduler=address, fallback_local=True, **FAST)
    assert len(local.scores_) == 1


# -- processes -----------------------------------------------------------------------------------
@pytest.mark.slow
def test_worker_processes_give_the_sequential_results(saved, small):
    result, _ = saved
    parallel = sweep(small, **GRID, n_jobs=2, **FAST)
    pd.testing.assert_frame_equal(
        parallel.scores_.drop(columns="fit_seconds"), result.scores_.drop(columns="fit_seconds")
    )


KILLED_GRID = {"k": [2, 3, 4, 5, 6], "seeds": 1, "passes": 4, "chunksize": 20}


@pytest.mark.slow
def test_sweep_killed_mid_way_resumes_to_the_uninterrupted_result(small, tmp_path):
    project = tmp_path / "killed"
    script = textwrap.dedent(f"""
        import sys
        sys.path.insert(0, {str(Path(__file__).parent)!r})
        from test_fits import lee_corpus
        from tm_compare.models.sweeps import sweep
        sweep(lee_corpus(120), project={str(project)!r}, progress=False, **{KILLED_GRID!r})
    """)
    child = subprocess.Popen([sys.executable, "-c", script])
    fits = project / "fits"
    deadline = time.monotonic() + 300
    while not (fits.exists() and list(fits.glob("*.npz"))):
        assert child.poll() is None and time.monotonic() < deadline, "the sweep ended early"
        time.sleep(0.02)
    os.kill(child.pid, signal.SIGKILL)
    child.wait()
    finished = sorted(fits.glob("*.npz"))
    assert 1 <= len(finished) < 5, "the kill came too late to test resuming"
    stamps = [f.stat().st_mtime_ns for f in finished]

    resumed = sweep(small, project=project, progress=False, **KILLED_GRID)
    whole = sweep(small, project=tmp_path / "whole", progress=False, **KILLED_GRID)
    assert [f.stat().st_mtime_ns for f in finished] == stamps  # kept, not refit
    pd.testing.assert_frame_equal(
        resumed.scores_.drop(columns="fit_seconds"), whole.scores_.drop(columns="fit_seconds")
    )
    for key in whole.fits_:
        np.testing.assert_array_equal(resumed.fits_[key].doc_topic, whole.fits_[key].doc_topic)


# -- command line --------------------------------------------------------------------------------
def test_cli_sweeps_the_projects_prepared_corpus(tmp_path, capsys):
    from tm_compare.cli import main
    from tm_compare.cli._sweep import k_grid
    from tm_compare.text.corpus import Corpus
    from tm_compare.text.prepared import prepare

    # Article texts from gensim's lee_background.cor, split between two invented outlets.
    texts = [" ".join(t) for t in lee_corpus(120).texts]
    frame = pd.DataFrame({"text": texts, "source": ["Quillhaven Ledger", "Harbour Lantern"] * 60})
    prepared = prepare(Corpus.from_frame(frame), project=tmp_path, progress=False)
    code = main(
        [
            "sweep",
            str(tmp_path),
            "--k",
            "3:4",
            "--seeds",
            "2",
            "--jobs",
            "1",
            "--passes",
            "1",
            "--no-progress",
        ]
    )
    out = capsys.readouterr().out
    assert code == 0
    assert "Scores of 4 fits (gensim)" in out and "Proposed: k = " in out
    reopened = Sweep.load(tmp_path)
    assert reopened.scores_[["k", "seed"]].values.tolist() == [[3, 0], [3, 1], [4, 0], [4, 1]]
    assert reopened.corpus_fingerprint_ == prepared.fingerprint
    assert k_grid("5:40:5") == list(range(5, 41, 5)) and k_grid("5,10") == [5, 10]
    assert main(["sweep", str(tmp_path), "--k", "1:3", "--no-progress"]) == 1
    assert "'k' parameter of sweep" in capsys.readouterr().err


def test_unconverged_fits_and_junk_topics_are_named_on_every_surface(saved):
    # One pass cannot show two settled passes in a row, so every fit of FAST is unconverged.
    from tm_compare.models.quality import describe
    from tm_compare.models.sweep_summary import summary
    from tm_compare.views import SweepView

    result, _ = saved
    assert not result.scores_["converged"].any() and (result.scores_["passes"] == 1).all()
    text = summary(result)
    assert "NOT CONVERGED: 4 of 4 fits still moved after 1 passes" in text
    junk = result.scores_.groupby("k")[["near_empty", "rarely_dominant", "near_duplicate"]].sum()
    for k, row in junk.iterrows():
        assert describe(k, row.near_empty, row.near_duplicate, row.rarely_dominant) in text
    rec = result.recommend()
    assert f"Proposed: {rec.rule}" in text and rec.details[0] in text
    # Two seeds: the rule says stability cannot be judged (no zero spread is computed).
    assert rec.rule.endswith("(stability across seeds cannot be judged with fewer than 3 seeds)")
    assert rec.runner_up in (3, 4) and rec.runner_up != rec.k and rec.why_not_runner_up in rec.rule
    view = SweepView(result)
    assert "4 of 4 fits did not converge" in view.health.value
    assert view.numbers.selected_index is None  # the numbers are one click away
    assert all(line.split(":")[0] in view.numbers.children[0].value for line in rec.details)
    frame = view._table_frame()
    assert {"near_empty", "rarely_dominant", "near_duplicate", "passes", "converged"} <= set(
        frame.columns
    )
    for row in result.scores_.itertuples():  # each fit with junk is named in the view
        counts = (row.near_empty, row.near_duplicate, row.rarely_dominant)
        if any(counts):
            assert describe(row.k, *counts) + f" (seed {row.seed})" in view.health.value
    assert set(frame["converged"]) == {"NO"}
