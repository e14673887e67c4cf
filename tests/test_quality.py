"""Junk topics of a fit (tm_compare.models.quality) on planted cases."""

from __future__ import annotations

import numpy as np
import pytest
from _builders import topics_fit
from scipy.spatial.distance import jensenshannon

from tm_compare.models.quality import (
    DOMINANT_SHARE,
    DUPLICATE_JSD,
    EMPTY_SHARE,
    describe,
    divergences,
    duplicate_pairs,
    fit_quality,
    topic_badge,
    topic_quality,
)

VOCAB = [f"w{chr(97 + i)}" for i in range(12)]


def _distinct(k, width=3):
    """k topics over disjoint blocks of ``width`` words (Jensen-Shannon divergence 1)."""
    topics = np.full((k, len(VOCAB)), 1e-6)
    for i in range(k):
        topics[i, i * width : (i + 1) * width] = 1.0
    return topics / topics.sum(axis=1, keepdims=True)


def test_an_empty_topic_is_counted_and_flagged():
    # Planted: 4 distinct topics; documents use topics 0-2 and give topic 3 only the
    # prior's crumbs (share 0.001, as an unused topic of online LDA gets, see module notes).
    topics = _distinct(4)
    rng = np.random.default_rng(0)
    shares = rng.dirichlet(np.ones(3), size=50)
    doc_topic = np.column_stack([shares * 0.999, np.full(50, 0.001)])
    fit = topics_fit(topics, VOCAB, doc_topic=doc_topic)
    table = topic_quality(fit)
    assert table["near_empty"].tolist() == [False, False, False, True]
    # Prevalence is the mean share over documents; by hand topic 3 has 0.001 in every one.
    assert table.loc[3, "prevalence"] == pytest.approx(0.001)
    assert fit_quality(fit) == {"near_empty": 1, "rarely_dominant": 0, "near_duplicate": 0}
    assert describe(4, 1, 0) == "k = 4: 1 topic near-empty"
    # An empty topic is the main topic of no document, but it counts once, as near-empty.
    assert table.loc[3, "dominant_share"] == 0 and not table.loc[3, "rarely_dominant"]


def test_threshold_is_a_tenth_of_the_fair_share():
    # Prevalence just above and just below EMPTY_SHARE / k (k = 4: 0.025).
    topics = _distinct(4)
    for share, flagged in ((0.026, False), (0.024, True)):
        rest = (1 - share) / 3
        fit = topics_fit(topics, VOCAB, doc_topic=[[rest, rest, rest, share]])
        assert bool(topic_quality(fit)["near_empty"].iloc[3]) is flagged
    assert EMPTY_SHARE / 4 == pytest.approx(0.025)


def test_two_copies_of_one_topic_are_a_near_duplicate_pair():
    topics = _distinct(4)
    topics[3] = topics[1]  # planted copy
    fit = topics_fit(topics, VOCAB)
    assert duplicate_pairs(fit) == [(1, 3)]
    table = topic_quality(fit)
    assert table["duplicate_of"].tolist() == [-1, 3, -1, 1]
    assert table.loc[1, "divergence"] == pytest.approx(0.0, abs=1e-12)
    assert fit_quality(fit) == {"near_empty": 0, "rarely_dominant": 0, "near_duplicate": 1}
    assert describe(4, 2, 1) == "k = 4: 2 topics near-empty, 1 pair near-duplicate"
    assert describe(4, 0, 0) == "k = 4: no junk topics"


def test_a_topic_used_everywhere_but_main_nowhere_is_rarely_dominant():
    # Planted: 4 distinct topics; each of 60 documents has one main topic among 0-2 (0.7),
    # gives topic 3 a steady 0.2 everywhere and the rest 0.05 each. Topic 3's prevalence is
    # 0.2, near its fair share (0.25), so it is not near-empty; yet it is the most probable
    # topic of no document: the thin, spread-out topic a fit that merged two themes leaves.
    topics = _distinct(4)
    doc_topic = np.full((60, 4), 0.05)
    doc_topic[:, 3] = 0.2
    doc_topic[np.arange(60), np.arange(60) % 3] = 0.7
    fit = topics_fit(topics, VOCAB, doc_topic=doc_topic)
    table = topic_quality(fit)
    # By hand: topics 0-2 are each the main topic of 20 of 60 documents, topic 3 of none.
    assert table["dominant_share"].tolist() == pytest.approx([1 / 3, 1 / 3, 1 / 3, 0])
    assert table["near_empty"].tolist() == [False] * 4
    assert table["rarely_dominant"].tolist() == [False, False, False, True]
    assert fit_quality(fit) == {"near_empty": 0, "rarely_dominant": 1, "near_duplicate": 0}
    assert describe(4, 0, 0, rarely_dominant=1) == "k = 4: 1 topic rarely dominant"
    assert describe(4, 1, 1, 2) == (
        "k = 4: 1 topic near-empty, 2 topics rarely dominant, 1 pair near-duplicate"
    )
    assert topic_badge(table.iloc[3]) == "rarely dominant (the main topic of 0.0% of the documents)"
    assert topic_badge(table.iloc[0]) == ""


def test_rarely_dominant_threshold_is_a_fifth_of_the_fair_share():
    # k = 4: a topic is rarely dominant when it is the main topic of fewer than 0.2 / 4 = 5% of
    # the documents. 100 documents, topic 3 the main topic of 6 (kept) or 4 (flagged).
    assert DOMINANT_SHARE / 4 == pytest.approx(0.05)
    for main, flagged in ((6, False), (4, True)):
        doc_topic = np.full((100, 4), 0.1)
        doc_topic[:, 3] = 0.2
        doc_topic[np.arange(100), np.arange(100) % 3] = 0.6
        doc_topic[:main] = [0.1, 0.1, 0.1, 0.7]
        fit = topics_fit(_distinct(4), VOCAB, doc_topic=doc_topic)
        assert bool(topic_quality(fit)["rarely_dominant"].iloc[3]) is flagged


def test_ties_at_the_top_count_in_equal_parts():
    # One document with equal shares: each of the 4 topics is its main topic in a quarter part,
    # so none is rarely dominant (a planted fit with uniform shares has no junk).
    fit = topics_fit(_distinct(4), VOCAB)
    assert topic_quality(fit)["dominant_share"].tolist() == pytest.approx([0.25] * 4)
    assert fit_quality(fit)["rarely_dominant"] == 0


def test_divergence_is_scipys_jensen_shannon_squared_base_2():
    # Reference: scipy.spatial.distance.jensenshannon returns the distance (square root of
    # the divergence); base 2 puts the divergence in [0, 1] (Lin 1991).
    rng = np.random.default_rng(1)
    topics = rng.dirichlet(np.full(len(VOCAB), 0.5), size=5)
    jsd = divergences(topics)
    for i in range(5):
        for j in range(5):
            expected = 0.0 if i == j else jensenshannon(topics[i], topics[j], base=2) ** 2
            assert jsd[i, j] == pytest.approx(expected, abs=1e-12)
    assert np.allclose(divergences(_distinct(4))[~np.eye(4, dtype=bool)], 1.0, atol=1e-4)


def test_a_topic_split_in_two_halves_counts_and_distinct_topics_do_not():
    # One theme split into two topics that share 4 of their 5 words (a split a too-large k
    # makes); a disjoint third topic.
    topics = np.full((3, len(VOCAB)), 1e-9)
    topics[0, [0, 1, 2, 3, 4]] = [0.3, 0.2, 0.2, 0.2, 0.1]
    topics[1, [0, 1, 2, 3, 5]] = [0.3, 0.2, 0.2, 0.2, 0.1]
    topics[2, [8, 9, 10]] = 1 / 3
    fit = topics_fit(topics / topics.sum(1, keepdims=True), VOCAB)
    # By hand (base 2): the halves differ only in 0.1 of mass on one word each; the mixture
    # gives those words 0.05, so KL(P || M) = 0.1 * log2(0.1 / 0.05) = 0.1 both ways, JSD 0.1.
    assert divergences(fit.topic_term)[0, 1] == pytest.approx(0.1, abs=1e-6)
    assert 0.1 < DUPLICATE_JSD
    assert duplicate_pairs(fit) == [(0, 1)]
