"""Several starts per fit (tm_compare.models._starts): the probes and the fit of the winner,
checked against gensim's own LdaModel run by hand."""

from __future__ import annotations

import numpy as np
import pytest
import scipy.sparse as sp
from gensim.models import LdaModel

from tm_compare.models import _engines
from tm_compare.models._starts import PROBE_UPDATES, start_seed, word_likelihood
from tm_compare.models.fits import TrainingData, fit_lda
from tm_compare.models.quality import junk_of_shares

K = 5
SETTINGS = {"passes": 3, "iterations": 50, "chunksize": 30, "tol": 0}


@pytest.fixture(scope="module")
def lee():
    # The first 120 documents of gensim's shipped Lee corpus (tests/test_fits.py builds it).
    from test_fits import lee_corpus

    return lee_corpus(120)


def _gensim(corpus, vocab, seed, passes, chunksize):
    # Reference: gensim's LdaModel called directly (gensim 4.x API), the engine's settings.
    return LdaModel(
        corpus,
        id2word=dict(enumerate(vocab)),
        num_topics=K,
        chunksize=chunksize,
        passes=passes,
        iterations=SETTINGS["iterations"],
        eval_every=None,
        random_state=seed,
        dtype=np.float64,
    )


def test_one_start_is_the_engines_own_fit(lee):
    one = fit_lda(lee, K, random_state=3, holdout=0.2, starts=1, **SETTINGS)
    train = [doc for doc, held in zip(lee.bow, one.heldout, strict=True) if not held]
    reference = _gensim(train, one.vocab, 3, SETTINGS["passes"], SETTINGS["chunksize"]).get_topics()
    np.testing.assert_allclose(
        one.topic_term, reference / reference.sum(1, keepdims=True), rtol=1e-10
    )
    assert start_seed(3, 0) == 3 and start_seed(3, 1) != start_seed(4, 1) != 3


class Recorded(LdaModel):
    """gensim's LdaModel recording, per chunk of its training loop, the gamma its E-step
    (``do_estep``) returns and the topics (lambda) after each M-step (``do_mstep``)."""

    def do_estep(self, chunk, state=None):
        gamma = super().do_estep(chunk, state)
        self.estep_gamma.append(gamma.copy())
        return gamma

    def do_mstep(self, rho, other, extra_pass=False):
        super().do_mstep(rho, other, extra_pass)
        self.lambdas.append(self.state.get_lambda().copy())


def _dense(docs, n_terms):
    """Bag-of-words documents as a dense (documents x terms) count matrix."""
    counts = np.zeros((len(docs), n_terms))
    for d, doc in enumerate(docs):
        for term, n in doc:
            counts[d, term] = n
    return counts


def _recorded(corpus, vocab, seed, k, chunksize):
    # gensim 4.x: the training loop of LdaModel(corpus, passes=1) is update(); recording starts
    # empty before it runs.
    Recorded.estep_gamma, Recorded.lambdas = [], []
    model = Recorded(
        corpus,
        id2word=dict(enumerate(vocab)),
        num_topics=k,
        chunksize=chunksize,
        passes=1,
        iterations=SETTINGS["iterations"],
        eval_every=None,
        random_state=seed,
        dtype=np.float64,
    )
    return model.estep_gamma, model.lambdas


@pytest.mark.parametrize("k", [K, 7])  # k = 7 > 5: gensim's M-step draws k uniforms as it logs
def test_a_probe_is_the_fits_own_first_updates_and_next_e_step(lee, k):
    fit = fit_lda(lee, k, random_state=3, holdout=0.2, starts=1, **SETTINGS)
    train = [doc for doc, held in zip(lee.bow, fit.heldout, strict=True) if not held]
    gammas, lambdas = _recorded(train, fit.vocab, 9, k, SETTINGS["chunksize"])
    data = TrainingData.from_prepared(lee, holdout=0.2)
    for engine in ("compiled", "gensim"):
        _, rows, gamma, lam = _engines.probe(
            engine, data.matrix, data.heldout, k, 9, SETTINGS, data.vocab, PROBE_UPDATES
        )
        # Reference: gensim's own training loop, chunk PROBE_UPDATES (0-based): the E-step of
        # the fit's next update, with the topics its first PROBE_UPDATES updates left.
        size = SETTINGS["chunksize"]
        np.testing.assert_array_equal(
            rows, np.flatnonzero(~data.heldout)[PROBE_UPDATES * size : (PROBE_UPDATES + 1) * size]
        )
        np.testing.assert_allclose(gamma, gammas[PROBE_UPDATES], rtol=1e-8)
        np.testing.assert_allclose(lam, lambdas[PROBE_UPDATES - 1], rtol=1e-8)


@pytest.mark.parametrize("tol", [0, 0.05])
def test_a_fit_continued_from_its_probe_equals_a_fresh_fit(lee, tol):
    # Reference: the compiled engine's fresh fit from the same seed, itself equal to gensim's
    # LdaModel (tests/test_vb.py). k = 7 > 5, so the M-step's extra draws are in the stream.
    data = TrainingData.from_prepared(lee, holdout=0.2)
    settings = {**SETTINGS, "tol": tol, "passes": 6}
    state, *_ = _engines.probe(
        "compiled", data.matrix, data.heldout, 7, 9, settings, data.vocab, PROBE_UPDATES
    )
    args = ("compiled", data.matrix, data.heldout, 7, 9, settings, data.vocab)
    continued, fresh = _engines.run(*args, start=state), _engines.run(*args)
    np.testing.assert_allclose(continued.topic_term, fresh.topic_term, rtol=1e-8)
    np.testing.assert_allclose(continued.gamma, fresh.gamma, rtol=1e-8)
    assert continued.word_bound == pytest.approx(fresh.word_bound, rel=1e-8)
    assert (continued.passes_used, continued.converged) == (fresh.passes_used, fresh.converged)


def test_the_fit_runs_from_the_start_whose_probe_ranks_best(lee):
    starts = 4
    fit = fit_lda(lee, K, random_state=3, holdout=0.2, starts=starts, **SETTINGS)
    train = [doc for doc, held in zip(lee.bow, fit.heldout, strict=True) if not held]
    size = SETTINGS["chunksize"]
    # The documents ranked: the chunk after the probe's updates.
    ranked_docs = train[PROBE_UPDATES * size : (PROBE_UPDATES + 1) * size]
    counts = _dense(ranked_docs, len(fit.vocab))
    ranked = []
    for start in range(starts):
        seed = start_seed(3, start)
        gammas, lambdas = _recorded(train, fit.vocab, seed, K, size)
        shares = gammas[PROBE_UPDATES] / gammas[PROBE_UPDATES].sum(1, keepdims=True)
        topics = lambdas[PROBE_UPDATES - 1]
        topics = topics / topics.sum(1, keepdims=True)
        # Per-word log-likelihood by hand: sum of count * log(shares . topics) over words.
        by_hand = (counts * np.log(shares @ topics)).sum() / counts.sum()
        assert word_likelihood(sp.csr_matrix(counts), shares, topics) == pytest.approx(by_hand)
        ranked.append((junk_of_shares(shares), -by_hand, start, seed))
    winner = min(ranked)[3]
    assert winner != 3  # here another start than random_state's own wins (measured)
    reference = _gensim(train, fit.vocab, winner, SETTINGS["passes"], size).get_topics()
    np.testing.assert_allclose(
        fit.topic_term, reference / reference.sum(1, keepdims=True), rtol=1e-10
    )
    assert fit.random_state == 3 and fit.settings["starts"] == starts
    # The gensim engine ranks alike (its probe draws the same numbers) and fits the same.
    other = fit_lda(lee, K, random_state=3, holdout=0.2, starts=starts, engine="gensim", **SETTINGS)
    np.testing.assert_allclose(other.topic_term, fit.topic_term, rtol=1e-8)


def test_passes_of_three_chunks_or_fewer_keep_the_former_probe(lee):
    # 96 training documents in chunks of 40: three chunks a pass, none left after a probe's
    # three updates, so the former probe serves: a one-pass fit on those chunks, ranked on a
    # fresh inference of their documents, then a fresh fit of the winner.
    starts = 4
    settings = {**SETTINGS, "chunksize": 40}
    fit = fit_lda(lee, K, random_state=3, holdout=0.2, starts=starts, **settings)
    train = [doc for doc, held in zip(lee.bow, fit.heldout, strict=True) if not held]
    size = settings["chunksize"]
    first = train[: size * PROBE_UPDATES]  # the chunks every start's fit begins with
    counts = _dense(first, len(fit.vocab))
    ranked = []
    for start in range(starts):
        seed = start_seed(3, start)
        probe = _gensim(first, fit.vocab, seed, 1, size)
        # The engine infers the shares chunk by chunk with the model's own random state.
        gamma = np.concatenate(
            [probe.inference(first[i : i + size])[0] for i in range(0, len(first), size)]
        )
        shares = gamma / gamma.sum(1, keepdims=True)
        topics = probe.get_topics()
        topics = topics / topics.sum(1, keepdims=True)
        # Per-word log-likelihood by hand: sum of count * log(shares . topics) over words.
        by_hand = (counts * np.log(shares @ topics)).sum() / counts.sum()
        assert word_likelihood(sp.csr_matrix(counts), shares, topics) == pytest.approx(by_hand)
        ranked.append((junk_of_shares(shares), -by_hand, start, seed))
    winner = min(ranked)[3]
    reference = _gensim(train, fit.vocab, winner, settings["passes"], size).get_topics()
    np.testing.assert_allclose(
        fit.topic_term, reference / reference.sum(1, keepdims=True), rtol=1e-10
    )
    assert fit.random_state == 3 and fit.settings["starts"] == starts
