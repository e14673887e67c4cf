"""New documents in a fit's topics: ``infer`` / ``Fit.transform``, ``with_new_documents``, CLI.

References: the engines' own inference (gensim ``LdaModel.inference``, scikit-learn
``LatentDirichletAllocation.transform``) produced ``fit.doc_topic`` at fit time, so inferring
the training documents again must give it back; preparation must give back the prepared
corpus's own tokens (``prepared.texts``).
"""

from __future__ import annotations

import warnings

import numpy as np
import pandas as pd
import pytest

from tm_compare.cli import main
from tm_compare.demo.quillhaven import make_corpus
from tm_compare.errors import InputError
from tm_compare.models.fits import fit_lda
from tm_compare.models.inference import infer, with_new_documents
from tm_compare.results import ModelResults
from tm_compare.text.corpus import Corpus
from tm_compare.text.prepared import prepare

# Largest difference per share between re-inferred and stored shares on the demo corpus.
# Sources of the gap: lambda is rebuilt from the normalised topics (see models/inference.py);
# gensim's E-step starts at random and stops once the mean change is below gamma_threshold
# (1e-3, gensim's default), so two runs agree to about that much. Measured (k=6, 400
# documents): largest 3.5e-4 gensim, 2.0e-3 scikit-learn; median about 5e-9 for both.
TOLERANCE = 5e-3
K = 6


@pytest.fixture(scope="module")
def corpus():
    return make_corpus(400, random_state=1)


@pytest.fixture(scope="module")
def prepared(corpus):
    return prepare(corpus)


@pytest.fixture(scope="module", params=["compiled", "gensim", "sklearn"])
def fit(request, prepared):
    return fit_lda(prepared, K, engine=request.param, random_state=3)


def _shares(frame, ids):
    return frame.set_index("id").loc[ids, [f"topic_{t}" for t in range(K)]].to_numpy()


def test_training_documents_give_back_the_fits_shares(fit, prepared, corpus):
    # With the default starts the fitted start is not start 0 here (seed 3): inference must
    # start from the fitted start's seed, as the fit's own shares did (measured: 0.031 from
    # seed 3, 3.4e-5 from the fitted start's seed).
    if fit.engine != "sklearn":
        assert fit.engine_seed != fit.random_state
    new = fit.transform(corpus, prepared)
    got = _shares(new.frame, prepared.doc_ids)
    # Reference: the engine's own inference at fit time (fit.doc_topic); tolerance above.
    assert np.abs(got - fit.doc_topic).max() < TOLERANCE
    # Rows are distributions.
    np.testing.assert_allclose(new.doc_topic.sum(axis=1), 1.0, atol=1e-12)
    # Preparation reproduces the prepared corpus's tokens (reference: prepared.texts); the
    # vocabulary words kept are counted in n_tokens.
    tokens = dict(zip(new.frame["id"], new.texts, strict=True))
    for i, doc_id in enumerate(prepared.doc_ids[:50]):
        assert tokens[doc_id] == prepared.texts[i]
    # Every training document is flagged as a copy of itself (Jaccard 1; text/_neardup).
    flagged = new.report.set_index("id").loc[prepared.doc_ids]
    assert (flagged["near_duplicate_of"] == flagged.index).mean() > 0.95
    assert (flagged["similarity"] >= 0.5).all()


def test_same_random_state_same_shares(fit, prepared, corpus):
    a = infer(fit, prepared, corpus, random_state=5)
    b = infer(fit, prepared, corpus, random_state=5)
    np.testing.assert_array_equal(a.doc_topic, b.doc_topic)
    assert a.random_state == 5


def _new_frame(corpus, rows, texts):
    frame = corpus.frame.iloc[rows][["id", "source", "group", "outlet"]].copy()
    frame["id"] = [f"new{i}" for i in range(len(rows))]
    frame["text"] = texts
    return frame.reset_index(drop=True)


def test_unknown_words_are_dropped_and_counted(fit, prepared, corpus):
    text = corpus.frame["text"].iloc[0]
    extra = "Zorblax quixotrope zorblax.\n"  # invented words, on a line of their own
    frame = _new_frame(corpus, [0, 0], [text, extra + text])
    new = infer(fit, prepared, Corpus.from_frame(frame), random_state=1)
    report = new.report.set_index("id")
    assert report.loc["new1", "n_unknown"] - report.loc["new0", "n_unknown"] == 3
    assert report.loc["new1", "n_tokens"] == report.loc["new0", "n_tokens"]
    assert new.unknown_words["zorblax"] == 2 and new.unknown_words["quixotrope"] == 1
    # Dropped words change nothing: the same tokens give the same shares, to gensim's stopping
    # rule (its rows start from different random draws; gamma_threshold 1e-3).
    np.testing.assert_allclose(new.doc_topic[0], new.doc_topic[1], atol=1e-3)


def test_boilerplate_lines_of_the_training_corpus_are_removed(fit, prepared, corpus):
    table = prepared.boilerplate
    outlet, line = table["group"].iloc[0], table["line"].iloc[0]
    row = int(np.flatnonzero(corpus.frame["outlet"].to_numpy() == outlet)[0])
    text = corpus.frame["text"].iloc[row]
    frame = _new_frame(corpus, [row, row], [text, line + "\n" + text + "\n" + line])
    new = infer(fit, prepared, frame, random_state=1)
    assert new.texts[0] == new.texts[1]


def test_near_copy_of_a_training_document_is_flagged(fit, prepared, corpus):
    doc_id = prepared.doc_ids[7]
    text = prepared.meta["text"].iloc[7]
    fresh = "The harbour board met on a quiet Tuesday to discuss ferry timetables and fares."
    frame = _new_frame(corpus, [0, 1], [text + " One more sentence here.", fresh])
    new = infer(fit, prepared, frame)
    report = new.report.set_index("id")
    assert report.loc["new0", "near_duplicate_of"] == doc_id
    assert report.loc["new0", "similarity"] >= 0.5
    assert pd.isna(report.loc["new1", "near_duplicate_of"])


def test_only_unknown_words_get_a_clear_message(fit, prepared, corpus):
    frame = _new_frame(corpus, [0, 1], ["Zorblax quixotrope flumbergast.", "the and of it"])
    with pytest.raises(InputError, match="None of the 2 new documents holds a word") as err:
        infer(fit, prepared, frame)
    assert "zorblax" in str(err.value)
    # One such document among others: a warning naming it, no NaN anywhere.
    frame = _new_frame(corpus, [0, 1], [corpus.frame["text"].iloc[0], "Zorblax quixotrope."])
    with pytest.warns(UserWarning, match="new1"):
        new = infer(fit, prepared, frame)
    assert new.frame["id"].tolist() == ["new0"]
    assert not new.frame.filter(like="topic_").isna().any().any()
    assert new.report.set_index("id").loc["new1", "status"] == "no known words"


def test_new_documents_join_the_comparison_as_a_source(fit, prepared, corpus):
    frame = _new_frame(corpus, list(range(20)), corpus.frame["text"].iloc[:20].tolist())
    frame["weight"] = np.arange(1, 21, dtype=float)
    new = infer(fit, prepared, Corpus.from_frame(frame))
    joined, combined = with_new_documents(fit, prepared, new, source="archive")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", UserWarning)
        prev = ModelResults(joined, combined, n_boot=20, cluster=None).prevalence()
    got = prev[prev["source"] == "archive"].sort_values("topic")["prevalence"].to_numpy()
    # Hand computation (exposure weighting: the weight-averaged shares; compare/prevalence.py).
    w = new.frame["weight"].to_numpy()
    np.testing.assert_allclose(got, w @ new.doc_topic / w.sum(), rtol=1e-12)
    old = prev[prev["source"] != "archive"]
    before = ModelResults(fit, prepared, n_boot=20, cluster=None).prevalence()
    np.testing.assert_allclose(
        old.sort_values(["source", "topic"])["prevalence"].to_numpy(),
        before.sort_values(["source", "topic"])["prevalence"].to_numpy(),
        rtol=1e-12,
    )
    with pytest.raises(InputError, match="distinct ids"):
        clash = infer(fit, prepared, corpus.frame.iloc[:3][["id", "source", "text"]])
        with_new_documents(fit, prepared, clash)


@pytest.mark.slow
def test_cli_infer_writes_shares_and_report(tmp_path, prepared, corpus, capsys):
    from tm_compare.models.sweeps import sweep
    from tm_compare.project import Project

    project = Project.create(tmp_path / "p")
    small = prepare(corpus, project=project)
    sweep(small, k=[3], seeds=1, project=project, passes=2)
    file = tmp_path / "wave2.csv"
    pd.DataFrame({"id": ["w1", "w2"], "text": corpus.frame["text"].iloc[:2].tolist()}).to_csv(
        file, index=False
    )
    assert main(["infer", str(project.path), str(file), "--k", "3", "--as-source", "wave2"]) == 0
    out = capsys.readouterr().out
    assert "2 of 2 documents inferred" in out
    written = pd.read_csv(project.path / "inferred" / "wave2-k3_seed0.csv")
    assert written["id"].tolist() == ["w1", "w2"] and set(written["source"]) == {"wave2"}
    np.testing.assert_allclose(written.filter(like="topic_").sum(axis=1), 1.0, atol=1e-9)
    bad = tmp_path / "bad.csv"
    pd.DataFrame({"id": ["x"], "text": ["Zorblax quixotrope."]}).to_csv(bad, index=False)
    assert main(["infer", str(project.path), str(bad), "--k", "3", "--as-source", "w"]) == 1
    err = capsys.readouterr().err
    assert err.startswith("Error: None of the 1 new documents") and err.count("\n") == 1


def test_planted_topics_use_the_variational_e_step_with_fixed_topics():
    from scipy.special import digamma

    from tests._builders import build_prepared
    from tm_compare.models.fits import Fit

    vocab = ["ferry", "harbour", "court", "judge"]
    topic_term = np.array([[0.45, 0.45, 0.05, 0.05], [0.05, 0.05, 0.45, 0.45]])
    prepared = build_prepared(["only"], [vocab], vocab=vocab)  # tokens given, not prepared here
    fit = Fit.from_arrays(prepared, topic_term, np.full((1, 2), 0.5))
    frame = pd.DataFrame(
        {"id": ["a", "b"], "source": "new", "text": ["ferry ferry harbour judge", "court zz"]}
    )
    new = infer(fit, prepared, frame, random_state=0)
    assert new.report["n_unknown"].tolist() == [0, 1]
    # Reference: Blei, Ng & Jordan (2003), section 5.2 / figure 6: iterate
    # phi_wk ~ beta_kw exp(digamma(gamma_k)), gamma = alpha + sum_w n_w phi_w, beta fixed.
    alpha = 1 / 2
    for row, counts in enumerate(([2, 1, 0, 1], [0, 0, 1, 0])):
        n = np.array(counts, dtype=float)
        gamma = np.full(2, alpha + n.sum() / 2)
        for _ in range(500):
            phi = topic_term * np.exp(digamma(gamma))[:, None]
            phi /= phi.sum(axis=0, keepdims=True)
            gamma = alpha + phi @ n
        # gensim stops once the mean change is below gamma_threshold (1e-3).
        np.testing.assert_allclose(new.doc_dirichlet[row], gamma, atol=2e-3)
