"""Window and document counts against gensim's own accumulators and hand-worked windows."""

from __future__ import annotations

import numpy as np
import pytest
from gensim.corpora import Dictionary
from gensim.topic_coherence.text_analysis import CorpusAccumulator, WordOccurrenceAccumulator
from hypothesis import given, settings
from hypothesis import strategies as st

from tm_compare.models import _cooccurrence as co

# Small alphabets make repeated words inside a window, and texts shorter than the
# window or empty, common.
texts_strategy = st.lists(st.lists(st.sampled_from("abcdefg"), max_size=14), min_size=1, max_size=6)


def _all_pairs(index, words):
    ids = np.array([index.vocab.get(w, -1) for w in words])
    keys = co.pair_keys_of([np.arange(len(words))], len(words))
    return ids, keys


def _matrix(counts, n):
    x, y = np.meshgrid(np.arange(n), np.arange(n), indexing="ij")
    return counts.joint(x.ravel(), y.ravel()).reshape(n, n)


@settings(max_examples=60, deadline=None, database=None)
@given(
    texts=texts_strategy,
    window=st.integers(1, 9),
    counted=st.sets(st.sampled_from("abcdefgz"), min_size=1),
)
def test_counts_equal_gensim_accumulators(texts, window, counted):
    # Reference: gensim 4 WordOccurrenceAccumulator (boolean sliding window, with its
    # incremental window update) and CorpusAccumulator (boolean document), the
    # estimators behind CoherenceModel. Words not counted still take positions;
    # "z" never occurs, so its counts must be zero.
    dictionary = Dictionary(texts + [list("abcdefgz")])
    words = sorted(counted)
    ids = {dictionary.token2id[w] for w in words}
    index = co.TokenIndex(texts)
    word_ids, keys = _all_pairs(index, words)
    for window_size in (window, None):
        mine = co.count(index, word_ids, keys, window_size)
        if window_size is None:
            ref = CorpusAccumulator(ids).accumulate([dictionary.doc2bow(t) for t in texts])
        else:
            ref = WordOccurrenceAccumulator(ids, dictionary).accumulate(texts, window_size)
        expected = np.array(
            [
                [
                    ref[dictionary.token2id[a]]
                    if a == b
                    else ref[dictionary.token2id[a], dictionary.token2id[b]]
                    for b in words
                ]
                for a in words
            ]
        )
        assert mine.num_windows == ref.num_docs
        np.testing.assert_array_equal(_matrix(mine, len(words)), expected)


def _boolean_brute_force(texts, words, window):
    """Textbook boolean sliding window: a word is in a window if any copy is inside."""
    n = len(words)
    occ, joint, total = np.zeros(n), np.zeros((n, n)), 0
    for text in texts:
        starts = range(max(1, len(text) - window + 1))
        for s in starts:
            inside = set(text[s : s + window])
            flags = np.array([w in inside for w in words], dtype=float)
            occ += flags
            joint += np.outer(flags, flags)
            total += 1
    return total, occ, joint


@settings(max_examples=40, deadline=None, database=None)
@given(texts=texts_strategy, window=st.integers(1, 9))
def test_boolean_scheme_equals_brute_force(texts, window):
    # Reference: the definition of the boolean sliding window (Röder, Both &
    # Hinneburg 2015, sec. 3.2), enumerated window by window.
    words = list("abcdefg")
    index = co.TokenIndex(texts)
    word_ids, keys = _all_pairs(index, words)
    mine = co.count(index, word_ids, keys, window, scheme="boolean")
    total, occ, joint = _boolean_brute_force(texts, words, window)
    assert mine.num_windows == total
    np.testing.assert_array_equal(mine.occurrences, occ)
    np.testing.assert_array_equal(_matrix(mine, len(words)), joint)


def test_gensim_window_forgets_a_word_whose_copy_leaves():
    # Hand-worked: text a x a x, window 3 -> windows [a x a] and [x a x].
    # Boolean: "a" is in both windows (2). gensim's update clears "a" when the copy at
    # position 0 leaves, although the copy at position 2 is still inside: 1 window.
    index = co.TokenIndex([["a", "x", "a", "x"]])
    word_ids, keys = _all_pairs(index, ["a", "x"])
    assert co.count(index, word_ids, keys, 3, scheme="gensim").occurrences.tolist() == [1.0, 2.0]
    assert co.count(index, word_ids, keys, 3, scheme="boolean").occurrences.tolist() == [2.0, 2.0]


def test_chunked_and_sparse_paths_equal_the_plain_one(monkeypatch):
    # Same counts whether documents are split into chunks, pairs into batches, or the
    # union is too large for a dense table (internal consistency; values checked
    # against gensim above).
    rng = np.random.default_rng(3)
    texts = [[f"w{i}" for i in rng.integers(0, 30, rng.integers(0, 40))] for _ in range(60)]
    words = [f"w{i}" for i in range(0, 30, 2)] + ["absent"]
    index = co.TokenIndex(texts)
    word_ids, keys = _all_pairs(index, words)
    plain = {w: co.count(index, word_ids, keys, w) for w in (5, None)}
    monkeypatch.setattr(co, "_TOKENS_PER_CHUNK", 37)
    monkeypatch.setattr(co, "_PAIRS_PER_BATCH", 11)
    monkeypatch.setattr(co, "DENSE_MAX_WORDS", 3)
    chunked_index = co.TokenIndex(texts)
    np.testing.assert_array_equal(chunked_index.tokens, index.tokens)
    for w, ref in plain.items():
        got = co.count(chunked_index, word_ids, keys, w)
        assert got.num_windows == ref.num_windows
        np.testing.assert_array_equal(got.occurrences, ref.occurrences)
        np.testing.assert_array_equal(got.pair_counts, ref.pair_counts)


def test_document_bitsets_equal_gensim_across_chunks(monkeypatch):
    # Whole-document counts are AND + popcount of per-word document bitsets, built in
    # chunks of 64-document multiples. Reference: gensim 4 CorpusAccumulator on 300
    # documents (several 64-bit words, a partial last word), with chunks of ~100 tokens,
    # and the sparse-product path used when bitsets would be too large.
    rng = np.random.default_rng(8)
    texts = [[f"w{i}" for i in rng.integers(0, 25, rng.integers(0, 12))] for _ in range(300)]
    words = [f"w{i}" for i in range(25)] + ["absent"]
    dictionary = Dictionary(texts + [words])
    ref = CorpusAccumulator({dictionary.token2id[w] for w in words}).accumulate(
        [dictionary.doc2bow(t) for t in texts]
    )
    expected = np.array(
        [
            [
                ref[dictionary.token2id[a]]
                if a == b
                else ref[dictionary.token2id[a], dictionary.token2id[b]]
                for b in words
            ]
            for a in words
        ]
    )
    monkeypatch.setattr(co, "_TOKENS_PER_CHUNK", 100)
    monkeypatch.setattr(co, "_BITSET_WORDS_PER_BATCH", 7)
    index = co.TokenIndex(texts)
    word_ids, keys = _all_pairs(index, words)
    for limit in (1 << 30, 0):  # bitsets, then the sparse product
        monkeypatch.setattr(co, "_BITSET_MAX_BYTES", limit)
        got = co.count(index, word_ids, keys, None)
        assert got.num_windows == 300
        np.testing.assert_array_equal(_matrix(got, len(words)), expected)


def test_token_index_layout():
    index = co.TokenIndex([["a", "b"], [], ["b", "c", "a"]])
    assert index.offsets.tolist() == [0, 2, 2, 5]
    assert index.tokens.tolist() == [0, 1, 1, 2, 0]
    assert index.tokens.dtype == np.int32
    assert index.vocab == {"a": 0, "b": 1, "c": 2}


def test_uncounted_pair_is_refused():
    index = co.TokenIndex([["a", "b", "c"]])
    word_ids = np.array([0, 1, 2])
    counts = co.count(index, word_ids, co.pair_keys_of([np.array([0, 1])], 3), 2)
    assert counts.joint(np.array([0]), np.array([1])).tolist() == [1.0]
    with pytest.raises(KeyError):
        counts.joint(np.array([0]), np.array([2]))
