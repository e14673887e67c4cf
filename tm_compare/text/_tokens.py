"""Tokenizer, token classes, phrase joining, vocabulary pruning and compact bags of words.

Tokens are kept as small integer arrays (one per document) indexing a
vocabulary of distinct strings, so the corpus is held once, compactly, and
every rule (stop word, number, length, stem) is applied once per distinct
string rather than once per occurrence.

Tokenizer rules
---------------
- Text is NFKC-normalised (Unicode TR15), typographic apostrophes become
  ``'``, Unicode hyphens become ``-``, underscores (the phrase delimiter)
  become spaces, and everything is lower-cased.
- A token is a run of letters and digits; runs joined by an inner apostrophe
  or hyphen stay one token: ``o'brien``, ``cost-of-living``, ``don't``.
- A trailing ``'s`` is cut in English (``possessive=True``): ``council's`` ->
  ``council``. Possessives count as the noun itself; the contraction of "is"
  (``it's`` -> ``it``) leaves a stop word either way.
- In French, Italian and Catalan an elided article or preposition is cut off
  (``elisions``): ``l'école`` -> ``école``, ``dell'anno`` -> ``anno``.
- Letters are Unicode word characters, so accented, Greek and Cyrillic words
  are tokens like any other; compounds (``sturmflutwarnung``) stay whole.
- Every other punctuation mark becomes a marker token that never reaches the
  output; it only stops a phrase from spanning it ("... the council. Mayor
  ..." never yields ``council_mayor``).
"""

from __future__ import annotations

import re
import unicodedata
from collections import defaultdict
from collections.abc import Iterable, Iterator

import numpy as np

from ._ragged import ListLike

KEEP, CONNECTOR, BREAK = 0, 1, 2

_TRANSLATE = str.maketrans(
    {"\u2019": "'", "\u02bc": "'", "\u2032": "'", "\u2010": "-", "\u2011": "-", "_": " "}
)
TOKEN_RE = re.compile(r"\w+(?:['-]\w+)*|[^\w\s]")


def normalise(text: str) -> str:
    """NFKC-normalise, unify apostrophes and hyphens, lower-case."""
    return unicodedata.normalize("NFKC", text).translate(_TRANSLATE).lower()


def tokenize(text: str) -> list[str]:
    """Raw tokens of ``text`` (words and punctuation markers), before any filtering."""
    return TOKEN_RE.findall(normalise(text))


class TokenIndex:
    """Assigns each distinct token string an integer id, in order of first sight."""

    def __init__(self):
        self.ids: defaultdict[str, int] = defaultdict()
        # A missing key gets the next free id: the mapping's size before insertion.
        self.ids.default_factory = self.ids.__len__

    def encode(self, tokens: list[str]) -> np.ndarray:
        return np.fromiter(map(self.ids.__getitem__, tokens), dtype=np.int32, count=len(tokens))

    @property
    def strings(self) -> np.ndarray:
        return np.array(list(self.ids), dtype=object)


def classify(
    strings: Iterable[str],
    *,
    stop_words: frozenset[str],
    connectors: frozenset[str],
    drop_numbers: bool,
    min_length: int,
    max_length: int,
    stem=None,
    elisions: frozenset[str] = frozenset(),
    possessive: bool = True,
) -> tuple[np.ndarray, np.ndarray]:
    """Output form and class (KEEP, CONNECTOR or BREAK) of each distinct raw token.

    BREAK tokens (punctuation, stop words, numbers, too short or too long)
    are dropped and split the text into phrase segments. CONNECTOR tokens are
    stop words that may sit inside a phrase ("cost of living") and are
    dropped after phrase detection. ``elisions`` are the words cut off before an
    apostrophe at the start of a token; ``possessive`` cuts a trailing ``'s``.
    """
    forms, kinds = [], []
    for raw in strings:
        word = raw[:-2] if possessive and raw.endswith("'s") else raw
        if elisions:
            head, mark, tail = word.partition("'")
            if mark and tail and head in elisions:
                word = tail
        if not word[:1].isalnum():
            kind = BREAK
        elif word in stop_words:
            kind = CONNECTOR if word in connectors else BREAK
        elif drop_numbers and any(ch.isdigit() for ch in word):
            kind = BREAK
        elif not min_length <= len(word) <= max_length:
            kind = BREAK
        else:
            kind = KEEP
            if stem is not None:
                word = stem(word)
        forms.append(word)
        kinds.append(kind)
    return np.array(forms, dtype=object), np.array(kinds, dtype=np.int8)


def segments(ids: np.ndarray, forms: np.ndarray, kinds: np.ndarray) -> Iterator[list[str]]:
    """Runs of kept and connector tokens of one document, split at BREAK tokens."""
    tokens = forms[ids].tolist()
    start = 0
    for cut in np.flatnonzero(kinds[ids] == BREAK).tolist():
        if cut > start:
            yield tokens[start:cut]
        start = cut + 1
    if start < len(tokens):
        yield tokens[start:]


def all_segments(docs, forms, kinds, progress=None) -> Iterator[list[str]]:
    """Phrase segments of every document, in order (for ``Phrases.add_vocab``)."""
    for ids in docs if progress is None else progress(docs):
        yield from segments(ids, forms, kinds)


def phrase_parts(phrasegrams: Iterable[str], delimiter: str = "_") -> frozenset[str]:
    """Every run of consecutive parts of every phrase ("a_b_c" gives a, b, c, a_b, b_c, a_b_c).

    A token that could start a phrase is such a run, so a segment sharing no
    token with this set passes through the phrase model unchanged (a cheap test
    that skips gensim's per-token loop for most segments).
    """
    out = set()
    for phrase in phrasegrams:
        parts = phrase.split(delimiter)
        for i in range(len(parts)):
            for j in range(i + 1, len(parts) + 1):
                out.add(delimiter.join(parts[i:j]))
    return frozenset(out)


def join_phrases(seg: list[str], models) -> list[str]:
    """``seg`` after each ``(FrozenPhrases, phrase_parts)`` model joined its phrases."""
    for model, parts in models:
        if len(seg) > 1 and not parts.isdisjoint(seg):
            seg = [t for t, _ in model.analyze_sentence(seg)]
    return seg


def apply_phrases(ids, forms, kinds, models, drop: frozenset[str]) -> list[str]:
    """Tokens of one document after phrase joining, without connector unigrams."""
    out: list[str] = []
    for seg in segments(ids, forms, kinds):
        out.extend(t for t in join_phrases(seg, models) if t not in drop)
    return out


def prune_vocabulary(
    df: np.ndarray,
    num_docs: int,
    min_doc_count: int,
    max_doc_fraction: float,
    max_vocab: int | None,
) -> np.ndarray:
    """Ids kept by the rules of gensim's ``Dictionary.filter_extremes``.

    Keep terms in at least ``min_doc_count`` documents and in at most
    ``int(max_doc_fraction * num_docs)`` documents; of those keep the
    ``max_vocab`` with the highest document count (ties: lower id first, as
    gensim's stable sort does). Returns the kept ids in increasing order.
    """
    ok = (df >= min_doc_count) & (df <= int(max_doc_fraction * num_docs))
    kept = np.flatnonzero(ok)
    if max_vocab is not None and len(kept) > max_vocab:
        order = np.argsort(-df[kept], kind="stable")[:max_vocab]
        kept = np.sort(kept[order])
    return kept


class BagOfWords(ListLike):
    """Bags of words held as three flat arrays (compressed sparse rows).

    Reads like gensim's list of lists of ``(term_id, count)`` (indexing,
    iteration, ``len``, equality with such a list), at about a tenth of the
    memory of Python tuples. :meth:`to_csr` gives the D x V count matrix.
    """

    def __init__(self, indptr: np.ndarray, ids: np.ndarray, counts: np.ndarray):
        self.indptr = np.asarray(indptr, dtype=np.int64)
        self.ids = np.asarray(ids, dtype=np.int32)
        self.counts = np.asarray(counts, dtype=np.int32)

    @classmethod
    def from_token_ids(cls, docs) -> BagOfWords:
        """Bags of the documents given as arrays of term ids (ids sorted within each bag).

        ``docs`` is a list of arrays or a :class:`~tm_compare.text._ragged.Ragged`; the bags
        are counted a block of documents at a time.
        """
        from ._ragged import Ragged, distinct_counts

        if not isinstance(docs, Ragged):
            rows, docs = list(docs), Ragged()
            docs.extend(rows)
        ids, counts, sizes = [np.empty(0, np.int32)], [np.empty(0, np.int32)], [np.zeros(1)]
        for values, lengths in docs.chunks():
            size = int(values.max()) + 1 if len(values) else 1
            rows = np.repeat(np.arange(len(lengths), dtype=np.int64), lengths)
            keys, n = distinct_counts(rows * size + values)
            row, term = np.divmod(keys, size)
            ids.append(term.astype(np.int32))
            counts.append(n.astype(np.int32))
            sizes.append(np.bincount(row, minlength=len(lengths)))
        indptr = np.cumsum(np.concatenate(sizes)).astype(np.int64)
        return cls(indptr, np.concatenate(ids), np.concatenate(counts))

    def __len__(self) -> int:
        return len(self.indptr) - 1

    def __getitem__(self, i):
        if isinstance(i, slice):
            return [self[j] for j in range(*i.indices(len(self)))]
        n = len(self)
        if not -n <= i < n:
            raise IndexError(f"document {i} out of range for {n} bags of words")
        a, b = self.indptr[i % n], self.indptr[i % n + 1]
        return list(zip(self.ids[a:b].tolist(), self.counts[a:b].tolist(), strict=True))

    def __iter__(self):
        for i in range(len(self)):
            yield self[i]

    def __repr__(self) -> str:
        return f"<BagOfWords {len(self)} documents, {len(self.ids)} (term, count) pairs>"

    def to_csr(self, n_terms: int):
        """The D x ``n_terms`` document-term count matrix (scipy CSR, int32 counts)."""
        from scipy.sparse import csr_matrix

        return csr_matrix((self.counts, self.ids, self.indptr), shape=(len(self), n_terms))
