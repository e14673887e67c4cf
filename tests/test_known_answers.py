"""The suggested k on corpora with a known answer, through the user's path with default settings:
Corpus -> prepare -> sweep -> recommend, then topic recovery of the suggested fit."""

from __future__ import annotations

import numpy as np
import pytest
from _known_corpora import bars_corpus, best_match_cosine, lda_corpus
from sklearn.metrics import normalized_mutual_info_score

from tm_compare.demo import quillhaven as demo
from tm_compare.demo.run import GRID
from tm_compare.models.quality import fit_quality
from tm_compare.models.sweeps import sweep
from tm_compare.text.corpus import Corpus
from tm_compare.text.prepared import prepare

pytestmark = pytest.mark.slow


def _suggested(prepared, ks, **grid):
    # Default fit settings and seeds (3) unless said; n_jobs only spreads the fits over
    # processes (results do not depend on it, see test_sweeps).
    result = sweep(prepared, k=ks, n_jobs=2, progress=False, **grid)
    rec = result.recommend()
    return result, rec, result.get_fit(rec.k, rec.seed)


def test_bars_of_griffiths_and_steyvers_give_k_10_recovered():
    # Griffiths & Steyvers (2004), "Finding scientific topics", PNAS 101 suppl. 1: a 5x5 image,
    # 10 bars, 2,000 documents of 100 words, alpha = 1; the true k is 10.
    corpus, truth, vocab = bars_corpus()
    # Every pixel occurs in most documents, so the default cut of words in over half of the
    # documents (max_doc_fraction=0.5, meant for natural text) is lifted; nothing else changes.
    prepared = prepare(corpus, max_doc_fraction=1.0, progress=False)
    assert sorted(prepared.dictionary.token2id) == sorted(vocab)
    result, rec, fit = _suggested(prepared, [8, 10, 12, 14])
    assert rec.k == 10, (rec.rule, rec.details)
    assert rec.runner_up in (8, 12, 14) and rec.why_not_runner_up
    # Recovery of the bars: mean cosine of each bar with its matched topic (Hungarian method);
    # 0.95 is the bar of the issue (about 0.88 with the former fixed settings, see NOTES.md).
    assert best_match_cosine(fit.topic_term, fit.vocab, truth, vocab) > 0.95
    assert fit.converged and fit.passes_used < result.settings_["passes"]
    assert fit_quality(fit) == {"near_empty": 0, "rarely_dominant": 0, "near_duplicate": 0}


def test_planted_themes_of_the_demo_give_their_number():
    # The demo scenario plants nine themes, each article with one dominant theme
    # (tm_compare.demo.quillhaven); the suggested k should be 9 and its topics should find
    # the dominant themes: NMI (scikit-learn) between each document's most probable topic and
    # its planted theme.
    # The demo's own size and grid (tm_compare.demo.run: 3,000 rows, k = 6, 9, 12).
    frame, truth = demo.scenario(3000, 0)
    corpus = Corpus.from_frame(frame, **demo.CORPUS_COLUMNS)
    prepared = prepare(corpus, progress=False)
    result, rec, fit = _suggested(prepared, list(GRID["k"]))
    assert rec.k == len(truth.themes) == 9, (rec.rule, rec.details)
    # all used and distinct: no near-empty, rarely dominant or near-duplicate topic
    assert fit_quality(fit) == {"near_empty": 0, "rarely_dominant": 0, "near_duplicate": 0}
    themes = truth.docs.set_index("id").loc[prepared.doc_ids, "theme"].to_numpy()
    nmi = normalized_mutual_info_score(themes, fit.doc_topic.argmax(axis=1))
    # Threshold chosen here: 0.9. Measured on the demo with its rising festival theme: with one
    # start per fit the three k = 9 seeds gave 0.88, 0.82 and 0.83 (each merged two planted
    # themes and left a topic near-empty or rarely dominant); with the default eight starts
    # (models/_starts.py) they give 0.92, 0.92 and 0.92 (measured), all without junk. k = 6
    # gives about 0.8.
    assert nmi > 0.9, nmi


def test_lda_generated_corpus_with_unequal_prevalences_gives_its_k():
    # LDA's own generative process (Blei, Ng & Jordan 2003, section 3) with 6 topics of
    # unequal prevalence (alpha from 0.05 to 0.3): the true k is 6.
    alpha = np.array([0.3, 0.25, 0.2, 0.1, 0.08, 0.05])
    corpus, truth, vocab = lda_corpus(k=6, n_docs=1500, alpha=alpha, random_state=3)
    prepared = prepare(corpus, progress=False)
    # Five seeds: with one start per fit, online LDA left a topic empty at k = 6 in about a
    # third of the seeds here (seeds 1 and 2 of 0-5, measured), so with three seeds the junk
    # step dropped k = 6 and the rule proposed 4; kept at five with today's eight starts.
    result, rec, fit = _suggested(prepared, [4, 6, 8], seeds=5)
    assert rec.k == 6, (rec.rule, rec.details)
    # Recovery floor chosen here: 0.8 (0.83 measured; the rarest topic, alpha 0.05, is the one
    # read worst).
    assert best_match_cosine(fit.topic_term, fit.vocab, truth, vocab) > 0.8
