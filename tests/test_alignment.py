"""Topic alignment and lineage (tm_compare.alignment)."""

import itertools

import numpy as np
import pytest
from _builders import topics_fit
from scipy.spatial import distance

from tm_compare.errors import ComparisonError, SettingsError
from tm_compare.models.alignment import align_topics, lineage, similarity_matrix

VOCAB = [f"t{i}" for i in range(30)]


def fit_of(phi, seed=0, vocab=VOCAB):
    phi = np.asarray(phi, dtype=float)
    return topics_fit(phi / phi.sum(axis=1, keepdims=True), vocab, random_state=seed)


def random_topics(k, seed):
    return np.random.default_rng(seed).dirichlet(np.full(len(VOCAB), 0.2), k)


def test_similarities_equal_scipy():
    a, b = fit_of(random_topics(3, 1)), fit_of(random_topics(4, 2))
    js = similarity_matrix(a, b, "jensen_shannon")
    cos = similarity_matrix(a, b, "cosine")
    for i, j in itertools.product(range(3), range(4)):
        p, q = a.topic_term[i], b.topic_term[j]
        # Reference: scipy.spatial.distance.jensenshannon (base 2) and cosine distance.
        assert js[i, j] == pytest.approx(1 - distance.jensenshannon(p, q, base=2), abs=1e-12)
        assert cos[i, j] == pytest.approx(1 - distance.cosine(p, q), abs=1e-12)
    assert similarity_matrix(a, a)[0, 0] == pytest.approx(1.0)


def test_one_to_one_matching_is_the_best_total_pairing():
    rng = np.random.default_rng(3)
    a = fit_of(random_topics(5, 3))
    perm = rng.permutation(5)
    b = fit_of(a.topic_term[perm] + rng.uniform(0, 0.02, (5, len(VOCAB))), seed=1)
    table = align_topics(a, b)
    assert table.topic_a.tolist() == perm.tolist() and (table.matching == "one-to-one").all()
    assert (table.similarity > table.runner_up).all() and table.seed_b.iloc[0] == 1
    # Reference: brute force over all 5! pairings gives the same maximal total similarity.
    sim = similarity_matrix(a, b)
    best = max(sum(sim[p[j], j] for j in range(5)) for p in itertools.permutations(range(5)))
    assert table.similarity.sum() == pytest.approx(best)


def test_many_to_one_for_different_k():
    a = random_topics(3, 4)
    half1, half2 = a[0].copy(), a[0].copy()
    half1[:15], half2[15:] = 0, 0  # topic 0 split into two halves
    b = fit_of(np.vstack([a[1], half1, a[2], half2]))
    table = align_topics(fit_of(a), b, metric="cosine")
    assert table.topic_a.tolist() == [1, 0, 2, 0] and (table.matching == "many-to-one").all()


def test_vocabularies_in_another_order_are_matched_by_term():
    a = fit_of(random_topics(4, 5))
    order = np.random.default_rng(6).permutation(len(VOCAB))
    b = fit_of(a.topic_term[:, order], vocab=[VOCAB[i] for i in order])
    table = align_topics(a, b)
    assert table.topic_a.tolist() == [0, 1, 2, 3]
    np.testing.assert_allclose(table.similarity, 1.0)


def test_lineage_finds_a_planted_split_and_merge():
    base = random_topics(4, 7)
    k2 = fit_of(np.vstack([base[0] + base[1], base[2] + base[3]]))  # A = 0+1, B = 2+3
    k3 = fit_of(np.vstack([base[0], base[1], base[2] + base[3]]))  # A splits, B continues
    k4 = fit_of(
        np.vstack([base[0] + base[1], base[2], base[3], base[2] + 3 * base[3]])
    )  # 0+1 merge
    table = lineage({2: k2, 3: k3, 4: k4})
    step = table[table.k_from == 2].set_index(["topic_from", "topic_to"])
    assert step.loc[(0, 0), "relation"] == "splits" and step.loc[(0, 1), "relation"] == "splits"
    assert step.loc[(1, 2), "relation"] == "continues"
    merged = table[(table.k_from == 3) & (table.topic_to == 0)]
    assert sorted(merged.topic_from) == [0, 1] and set(merged.relation) == {"merges"}
    assert set(lineage([k2, k3]).k_to) == {3}  # a list of fits works too


def test_bad_input():
    a = fit_of(random_topics(3, 1))
    with pytest.raises(SettingsError, match="'metric'"):
        align_topics(a, a, metric="euclid")
    with pytest.raises(ComparisonError, match="at least two values of k"):
        lineage({3: a})
    broken = topics_fit(a.topic_term, VOCAB[:5])  # 30 columns for 5 terms
    with pytest.raises(ComparisonError, match="shape"):
        align_topics(a, broken)
