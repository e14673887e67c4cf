"""Vectorised word occurrence and co-occurrence counts for topic coherence.

The texts are turned once into a :class:`TokenIndex` (one flat ``int32`` array of
token ids plus document offsets: 4 bytes per token, so 200,000 documents of 300
tokens take about 240 MB). :func:`count` then counts, for a set of words (the
union of the top words of every model of a sweep), how many windows contain each
word and each needed pair of words, in one pass over the index.

Counting model
--------------
A window of size ``w`` slides one token at a time over each text; a text of
``n`` tokens gives ``max(1, n - w + 1)`` windows (a text no longer than the window,
even an empty one, is one window), as in gensim's ``p_boolean_sliding_window``.
Every token takes a position, including tokens that are not counted. With
``window=None`` each document is one window (gensim's ``p_boolean_document``).

gensim updates a window's word set incrementally: when the window slides, the word
that leaves on the left is cleared even if another copy of it is still inside.
In closed form, an occurrence at position ``p`` marks its word present in the
windows ``[max(0, p - w + 1), f(p) + 1)``, where ``f(p)`` is the first occurrence
of the same word at or after ``p - w + 1``. ``scheme="gensim"`` reproduces this so
that scores equal gensim's; ``scheme="boolean"`` counts the textbook boolean
window (a word is present wherever any copy is inside: ``[p - w + 1, p + 1)``).

Each word's windows are a union of such intervals; co-occurrence counts are the
summed overlaps of two words' merged intervals. Intervals are enumerated in
position order, so only overlapping pairs are visited. Whole documents are
counted by a sparse product of the document-word incidence matrix instead. Counts of a pair do not
depend on which other words are counted, so counting a union once is exact for
every model.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from itertools import chain

import numpy as np
import pandas as pd
import scipy.sparse as sp

# Union sizes up to this count accumulate pairs in a dense R x R array (fast);
# beyond it, only the needed pairs are kept (memory stays bounded).
DENSE_MAX_WORDS = 4096
_TOKENS_PER_CHUNK = 1 << 22
_PAIRS_PER_BATCH = 1 << 22
# Whole-document counts keep one bit per (word, document) up to this many bytes.
_BITSET_MAX_BYTES = 1 << 30
_BITSET_WORDS_PER_BATCH = 1 << 22  # 64-bit words AND-ed per batch of pairs


class TokenIndex:
    """Token texts as one flat array of integer ids.

    Parameters
    ----------
    texts : sequence of sequences of str
        Tokenised documents. Empty documents are kept (they count as one window).

    Attributes
    ----------
    vocab : dict
        Token -> id, in order of first appearance.
    tokens : numpy.ndarray of int32
        All token ids, documents one after another.
    offsets : numpy.ndarray of int64
        ``offsets[d]:offsets[d + 1]`` are the tokens of document ``d``.
    """

    def __init__(self, texts: Iterable[Sequence[str]]):
        texts = texts if isinstance(texts, Sequence) else list(texts)
        lengths = np.fromiter((len(t) for t in texts), dtype=np.int64, count=len(texts))
        self.offsets = np.concatenate(([0], np.cumsum(lengths)))
        # pandas hashes strings in C; a document chunk at a time keeps the
        # temporary object arrays small.
        vocab: dict[str, int] = {}
        parts = []
        for lo, hi in _doc_chunks(self.offsets):
            codes, uniques = pd.factorize(
                np.fromiter(chain.from_iterable(texts[lo:hi]), dtype=object)
            )
            ids = np.fromiter(
                (vocab.setdefault(w, len(vocab)) for w in uniques), np.int32, len(uniques)
            )
            parts.append(ids[codes])
        self.tokens = np.concatenate(parts) if parts else np.zeros(0, np.int32)
        self.vocab = vocab

    @property
    def n_docs(self) -> int:
        return len(self.offsets) - 1

    @property
    def lengths(self) -> np.ndarray:
        return np.diff(self.offsets)


@dataclass(frozen=True)
class Counts:
    """Window counts of a set of words.

    Attributes
    ----------
    num_windows : int
        Number of windows (documents when counting whole documents).
    occurrences : numpy.ndarray
        Windows containing each word, shape (R,).
    pair_keys : numpy.ndarray of int64
        Sorted keys ``lo * R + hi`` (``lo < hi``) of the counted word pairs.
    pair_counts : numpy.ndarray
        Windows containing both words of each pair, aligned with ``pair_keys``.
    """

    num_windows: int
    occurrences: np.ndarray
    pair_keys: np.ndarray
    pair_counts: np.ndarray

    def joint(self, x: np.ndarray, y: np.ndarray) -> np.ndarray:
        """Windows containing both words ``x`` and ``y`` (elementwise); ``x == y`` gives occurrences.

        Raises KeyError for a pair of different words that was not counted.
        """
        r = len(self.occurrences)
        x, y = np.broadcast_arrays(x, y)
        keys = np.minimum(x, y).astype(np.int64) * r + np.maximum(x, y)
        pos = np.minimum(np.searchsorted(self.pair_keys, keys), len(self.pair_keys) - 1)
        found = pos >= 0
        found[found] = self.pair_keys[pos[found]] == keys[found]
        if not np.all(found | (x == y)):
            raise KeyError("word pairs that were not counted")
        joint = self.occurrences[x].copy()
        joint[found] = self.pair_counts[pos[found]]
        return joint


def pair_keys_of(topics: Iterable[np.ndarray], n_words: int) -> np.ndarray:
    """Sorted unique keys ``lo * R + hi`` of all word pairs inside each topic (word positions)."""
    keys = [
        (
            np.minimum(t[:, None], t[None, :]).astype(np.int64) * n_words
            + np.maximum(t[:, None], t[None, :])
        )[t[:, None] < t[None, :]]
        for t in topics
    ]
    return np.unique(np.concatenate(keys)) if keys else np.zeros(0, np.int64)


def count(
    index: TokenIndex,
    word_ids: np.ndarray,
    pair_keys: np.ndarray,
    window: int | None,
    scheme: str = "gensim",
) -> Counts:
    """Count windows containing each word and each needed pair of words.

    Parameters
    ----------
    index : TokenIndex
    word_ids : numpy.ndarray of int
        Index vocabulary id of each of the R counted words, ``-1`` for a word that
        never occurs in the texts (its counts are zero).
    pair_keys : numpy.ndarray of int64
        Pairs to count, as from :func:`pair_keys_of`.
    window : int or None
        Sliding window size; ``None`` counts whole documents.
    scheme : {"gensim", "boolean"}
        How a sliding window decides presence (see the module notes).
    """
    n_words = len(word_ids)
    lengths = index.lengths
    n_windows = np.ones_like(lengths) if window is None else np.maximum(1, lengths - window + 1)
    window_offsets = np.concatenate(([0], np.cumsum(n_windows)))
    relevant = np.full(len(index.vocab), -1, dtype=np.int32)
    present = word_ids >= 0
    relevant[word_ids[present]] = np.flatnonzero(present)

    if window is None and n_words * (index.n_docs // 8 + 8) <= _BITSET_MAX_BYTES:
        return _document_counts(index, relevant, n_words, pair_keys)
    dense = n_words <= DENSE_MAX_WORDS
    pair_total = np.zeros(n_words * n_words if dense else len(pair_keys))
    occurrences = np.zeros(n_words)
    for lo_doc, hi_doc in _doc_chunks(index.offsets):
        starts, ends, words = _merged_intervals(
            index, relevant, lo_doc, hi_doc, window, n_windows, window_offsets, scheme
        )
        occurrences += np.bincount(words, weights=ends - starts, minlength=n_words)
        if window is None:
            pairs = [_document_pairs(starts, words, hi_doc - lo_doc, n_words)]
        else:
            pairs = _overlapping_pairs(starts, ends, words, n_words)
        for keys, overlap in pairs:
            if dense:
                pair_total += np.bincount(keys, weights=overlap, minlength=len(pair_total))
            elif len(pair_keys):
                slot = np.searchsorted(pair_keys, keys)
                slot = np.minimum(slot, len(pair_keys) - 1)
                hit = pair_keys[slot] == keys
                pair_total += np.bincount(slot[hit], weights=overlap[hit], minlength=len(pair_keys))
    pair_counts = pair_total[pair_keys] if dense else pair_total
    return Counts(int(window_offsets[-1]), occurrences, pair_keys, pair_counts)


def _document_counts(index, relevant, n_words, pair_keys) -> Counts:
    """Whole-document counts from one bit per (word, document): pairs are AND + popcount.

    Only the needed pairs are counted, at ``n_docs / 64`` machine words each.
    """
    n_docs = index.n_docs
    parts = []
    for lo_doc, hi_doc in _doc_chunks(index.offsets, align=64):
        word = relevant[index.tokens[index.offsets[lo_doc] : index.offsets[hi_doc]]]
        pos = np.flatnonzero(word >= 0)
        doc = np.searchsorted(
            index.offsets[lo_doc + 1 : hi_doc + 1], pos + index.offsets[lo_doc], side="right"
        )
        present = np.zeros((n_words, -(-(hi_doc - lo_doc) // 64) * 64), dtype=bool)
        present[word[pos], doc] = True
        parts.append(np.packbits(present, axis=1, bitorder="little"))
    bits = (
        np.ascontiguousarray(np.concatenate(parts, axis=1)).view(np.uint64)
        if parts
        else np.zeros((n_words, 0), np.uint64)
    )
    occurrences = np.bitwise_count(bits).sum(axis=1, dtype=np.int64).astype(np.float64)
    a, b = np.divmod(pair_keys, n_words)
    pair_counts = np.zeros(len(pair_keys))
    step = max(1, _BITSET_WORDS_PER_BATCH // max(bits.shape[1], 1))
    for i in range(0, len(pair_keys), step):
        both = bits[a[i : i + step]] & bits[b[i : i + step]]
        pair_counts[i : i + step] = np.bitwise_count(both).sum(axis=1, dtype=np.int64)
    return Counts(n_docs, occurrences, pair_keys, pair_counts)


def _doc_chunks(offsets: np.ndarray, align: int = 1):
    """Ranges of documents holding about ``_TOKENS_PER_CHUNK`` tokens each."""
    n_docs = len(offsets) - 1
    lo = 0
    while lo < n_docs:
        hi = int(np.searchsorted(offsets, offsets[lo] + _TOKENS_PER_CHUNK, side="right")) - 1
        hi = min(max(hi, lo + 1), n_docs)
        if hi < n_docs and align > 1:  # whole multiples of ``align`` documents, but the last
            hi = max(lo + align, lo + (hi - lo) // align * align)
            hi = min(hi, n_docs)
        yield lo, hi
        lo = hi


def _merged_intervals(index, relevant, lo_doc, hi_doc, window, n_windows, window_offsets, scheme):
    """Window intervals ``[start, end)`` (global window numbers) where each counted word is present.

    Intervals of one word are merged, so they are disjoint and the overlap of two
    words' intervals counts each shared window once.
    """
    doc_start = index.offsets[lo_doc : hi_doc + 1] - index.offsets[lo_doc]
    word = relevant[index.tokens[index.offsets[lo_doc] : index.offsets[hi_doc]]]
    pos = np.flatnonzero(word >= 0)
    word = word[pos]
    order = np.argsort(word, kind="stable")  # by word, then position
    word, pos = word[order], pos[order]
    doc = np.searchsorted(doc_start, pos, side="right") - 1
    q = pos - doc_start[doc]  # position inside the document
    doc += lo_doc
    if window is None:
        first, last = np.zeros_like(q), np.ones_like(q)
    else:
        first = np.maximum(0, q - window + 1)
        if scheme == "gensim":
            # f(p): first occurrence of the same word at or after first; the word
            # is cleared when that copy leaves the window.
            stride = np.int64(doc_start[-1] + 1)
            key = word.astype(np.int64) * stride + pos
            f = q[np.searchsorted(key, key - q + first)]
        else:
            f = q
        last = np.minimum(f + 1, n_windows[doc])
    # Window numbers relative to the chunk's first window fit in int32.
    offset = window_offsets[doc] - window_offsets[lo_doc]
    start, end = (offset + first).astype(np.int32), (offset + last).astype(np.int32)
    # Within a word, start and end never decrease, so a new merged interval
    # begins where a start is at or beyond the previous end (touching intervals
    # stay apart: whole documents then give one interval per document and word).
    new = np.ones(len(word), dtype=bool)
    new[1:] = (word[1:] != word[:-1]) | (start[1:] >= end[:-1])
    heads = np.flatnonzero(new)
    tails = np.append(heads[1:], len(word))[: len(heads)] - 1
    return start[heads], end[tails], word[heads]


def _overlapping_pairs(starts, ends, words, n_words):
    """Yield (pair keys, overlap lengths) for every pair of overlapping intervals, in batches."""
    order = np.argsort(starts, kind="stable")
    starts, ends, words = starts[order], ends[order], words[order].astype(np.int64)
    n = len(starts)
    # Intervals after i that start before i ends overlap it.
    n_after = np.searchsorted(starts, ends, side="left") - np.arange(1, n + 1)
    cum = np.concatenate(([0], np.cumsum(n_after)))
    i = 0
    while i < n:
        j = int(np.searchsorted(cum, cum[i] + _PAIRS_PER_BATCH, side="right")) - 1
        j = min(max(j, i + 1), n)
        counts = n_after[i:j]
        total = int(cum[j] - cum[i])
        if total:
            left = np.repeat(np.arange(i, j, dtype=np.int32), counts)
            first_right = (np.arange(i + 1, j + 1) - (cum[i:j] - cum[i])).astype(np.int32)
            right = np.arange(total, dtype=np.int32) + np.repeat(first_right, counts)
            overlap = np.minimum(ends[left], ends[right]) - starts[right]
            a, b = words[left], words[right]
            yield np.minimum(a, b) * n_words + np.maximum(a, b), overlap
        i = j


def _document_pairs(docs, words, n_docs, n_words):
    """(pair keys, documents containing both) from one (document, word) entry per word present.

    A sparse product beats enumerating intervals here: every pair of words in a
    document overlaps.
    """
    x = sp.csr_matrix((np.ones(len(words)), (docs, words)), shape=(n_docs, n_words))
    joint = (x.T @ x).tocoo()
    upper = joint.row < joint.col
    return joint.row[upper].astype(np.int64) * n_words + joint.col[upper], joint.data[upper]
