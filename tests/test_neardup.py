"""Near-duplicates: shingles, exact Jaccard, MinHash estimates, LSH banding, merging rules."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest

from tm_compare.text._neardup import exact_pairs, lsh_bands, minhash, minhash_pairs, shingles
from tm_compare.text.corpus import Corpus
from tm_compare.text.prepared import prepare


def brute_jaccard(a, b, k):
    """Jaccard similarity of word k-shingle sets, straight from the definition (Broder 1997)."""
    sa = {tuple(a[i : i + k]) for i in range(max(1, len(a) - k + 1))}
    sb = {tuple(b[i : i + k]) for i in range(max(1, len(b) - k + 1))}
    return len(sa & sb) / len(sa | sb)


def random_docs(n, rng, length=(80, 160), vocab=2000):
    return [rng.integers(0, vocab, int(rng.integers(*length))).astype(np.int32) for _ in range(n)]


def edited_copy(doc, rng, n_edits):
    """A copy with ``n_edits`` tokens replaced by new ones (a lightly edited syndicated copy)."""
    out = doc.copy()
    out[rng.choice(len(doc), n_edits, replace=False)] = 10_000 + rng.integers(0, 1000, n_edits)
    return out


def test_shingles_count_and_short_documents():
    doc = np.arange(10, dtype=np.int32)
    assert len(shingles(doc, 5)) == 6  # n - k + 1 distinct shingles (common practice)
    assert len(shingles(doc[:3], 5)) == 1  # shorter than k: one shingle
    assert len(shingles(doc[:0], 5)) == 0
    assert len(shingles(np.array([7, 7, 7, 7, 7, 7], dtype=np.int32), 2)) == 1


def test_exact_pairs_match_definition():
    rng = np.random.default_rng(0)
    docs = random_docs(40, rng, vocab=30)  # small vocabulary: many partial overlaps
    docs += [edited_copy(docs[i], rng, e) for i, e in ((0, 2), (1, 8), (2, 30))]
    pairs, sims = exact_pairs(docs, 3, 0.2)
    got = {tuple(p): s for p, s in zip(pairs.tolist(), sims.tolist(), strict=True)}
    for i in range(len(docs)):
        for j in range(i + 1, len(docs)):
            ref = brute_jaccard(docs[i].tolist(), docs[j].tolist(), 3)
            if ref >= 0.2:
                assert got[(i, j)] == pytest.approx(ref, abs=1e-12)
            else:
                assert (i, j) not in got


def test_minhash_estimates_jaccard_within_sampling_error():
    # Broder 1997: P(minhash(A) == minhash(B)) = J(A, B), so the share of equal entries of
    # num_perm independent hashes has standard error sqrt(J (1 - J) / num_perm).
    rng = np.random.default_rng(3)
    base = random_docs(30, rng, length=(150, 151), vocab=50_000)
    copies = [
        edited_copy(d, rng, int(e)) for d, e in zip(base, rng.integers(1, 40, 30), strict=True)
    ]
    num_perm = 256
    sig = minhash(base + copies, 5, num_perm, seed=1)
    errors = []
    for i in range(30):
        ref = brute_jaccard(base[i].tolist(), copies[i].tolist(), 5)
        est = (sig[i] == sig[30 + i]).mean()
        se = math.sqrt(max(ref * (1 - ref), 0.01) / num_perm)
        errors.append(abs(est - ref) / se)
    assert max(errors) < 4.5
    assert np.mean(errors) < 1.5  # the mean |z| of a normal is 0.8


@pytest.mark.parametrize("threshold", [0.5, 0.7, 0.8, 0.9])
def test_lsh_bands_put_the_s_curve_near_the_threshold(threshold):
    # Mining of Massive Datasets, section 3.4.2: the S-curve 1 - (1 - s^r)^b rises
    # steepest near s = (1 / b)^(1 / r).
    b, r = lsh_bands(128, threshold)
    assert b * r <= 128
    assert abs((1 / b) ** (1 / r) - threshold) < 0.1


def test_minhash_pairs_find_planted_copies_only():
    rng = np.random.default_rng(7)
    docs = random_docs(400, rng, vocab=5000)
    planted = {}
    for i in range(10):
        docs.append(edited_copy(docs[i], rng, 3))
        planted[(i, len(docs) - 1)] = brute_jaccard(docs[i].tolist(), docs[-1].tolist(), 5)
    assert min(planted.values()) > 0.6
    pairs, sims = minhash_pairs(docs, 5, 0.5, 128, 0)
    assert {tuple(p) for p in pairs.tolist()} == set(planted)
    exact, _ = exact_pairs(docs, 5, 0.5)
    assert {tuple(p) for p in exact.tolist()} == set(planted)


def _story(seed):
    rng = np.random.default_rng(seed)
    words = (
        "harbour barrier tide council vote budget school ferry market festival rent flood "
        "library quay storm gale dredging sluice ward election mayor levy pier"
    ).split()
    return " ".join(rng.choice(words, 120)) + "."


@pytest.mark.parametrize("method", ["exact", "minhash"])
def test_prepare_merges_within_source_and_flags_across(method):
    original = _story(1)
    edited = original.replace("harbour", "estuary", 1) + " Reporting by the wire desk."
    rows = [
        ("w1", original, "visited", 2.0, "reader_a"),  # shorter copy: merges into w2
        ("w2", edited, "visited", 3.0, "reader_a"),  # the fullest copy is kept
        ("w3", edited, "shared", 1.0, "reader_a"),  # other source: kept, flagged
        ("w4", edited, "visited", 1.0, "reader_b"),  # same source, other reader: kept apart
    ] + [
        (f"o{i}", _story(100 + i), ["visited", "shared"][i % 2], 1.0, "reader_c") for i in range(12)
    ]
    frame = pd.DataFrame(rows, columns=["id", "text", "source", "weight", "reader"])
    corpus = Corpus.from_frame(frame, id="id", weight="weight", group="reader")
    prepared = prepare(
        corpus,
        near_duplicates=method,
        min_doc_count=1,
        max_doc_fraction=1.0,
        stop_words=None,
        ngrams=1,
    )
    meta = prepared.meta.set_index("id")
    assert "w1" not in meta.index
    assert meta.loc["w2", "weight"] == 5.0  # weights add
    assert meta.loc["w2", "duplicate_ids"] == ["w1"]
    assert meta.loc["w2", "cross_source_duplicate"] and meta.loc["w3", "cross_source_duplicate"]
    assert "w4" in meta.index
    assert not meta.loc[[f"o{i}" for i in range(12)], "cross_source_duplicate"].any()
    copies = meta.loc[["w2", "w3", "w4"], "copy_group"]
    assert copies.nunique() == 1 and copies.iloc[0] >= 0
    assert (meta.loc[[f"o{i}" for i in range(12)], "copy_group"] == -1).all()
    # Every row is accounted for: kept + merged (+ removed) = corpus rows.
    assert len(prepared) + prepared.report.total("prepare") == len(corpus)
    assert prepared.report.total("prepare", "merged") == 1
