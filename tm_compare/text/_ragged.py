"""Documents as flat arrays: token ids of every document one after another, with offsets.

A million documents held as a million small numpy arrays cost about 100 bytes of header
each on top of their ids; held flat they cost their ids and one offset. :class:`Ragged` is
built a chunk of documents at a time (:meth:`Ragged.extend`), and :class:`TokenTexts` shows
flat ids as the lists of strings a gensim user expects, one document at a time.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np


class Ragged(Sequence):
    """Rows of int32 ids of varying length: ``values[offsets[i]:offsets[i + 1]]`` is row ``i``."""

    def __init__(self, values=None, offsets=None):
        self._parts: list[np.ndarray] = []
        self._lengths: list[np.ndarray] = []
        self._values = np.empty(0, np.int32) if values is None else np.asarray(values, np.int32)
        self._offsets = (
            np.zeros(1, np.int64) if offsets is None else np.asarray(offsets, dtype=np.int64)
        )

    def extend(self, rows: list[np.ndarray]) -> None:
        """Append a chunk of rows (concatenated now, joined to the rest when next read)."""
        if rows:
            self._parts.append(np.concatenate(rows).astype(np.int32, copy=False))
            self._lengths.append(np.fromiter(map(len, rows), dtype=np.int64, count=len(rows)))

    def _settle(self) -> None:
        if self._parts:
            self._values = np.concatenate([self._values, *self._parts])
            ends = self._offsets[-1] + np.cumsum(np.concatenate(self._lengths))
            self._offsets = np.concatenate([self._offsets, ends])
            self._parts, self._lengths = [], []

    @property
    def values(self) -> np.ndarray:
        self._settle()
        return self._values

    @property
    def offsets(self) -> np.ndarray:
        self._settle()
        return self._offsets

    @property
    def lengths(self) -> np.ndarray:
        return np.diff(self.offsets)

    def row_of_value(self) -> np.ndarray:
        """The row number of every value."""
        return np.repeat(np.arange(len(self), dtype=np.int64), self.lengths)

    def __len__(self) -> int:
        return len(self.offsets) - 1

    def __getitem__(self, i):
        if isinstance(i, slice):
            return [self[j] for j in range(*i.indices(len(self)))]
        off = self.offsets
        return self._values[off[i] : off[i + 1]]

    def __iter__(self):
        off, values = self.offsets, self._values
        for a, b in zip(off[:-1].tolist(), off[1:].tolist(), strict=True):
            yield values[a:b]

    def chunks(self, size: int = 20_000):
        """``(values, lengths)`` of consecutive blocks of at most ``size`` rows."""
        off = self.offsets
        for lo in range(0, len(self), size):
            hi = min(len(self), lo + size)
            yield self._values[off[lo] : off[hi]], np.diff(off[lo : hi + 1])

    def take(self, rows: np.ndarray, chunk: int = 20_000) -> Ragged:
        """The rows numbered ``rows``, in that order."""
        rows = np.asarray(rows, dtype=np.int64)
        off, out = self.offsets, Ragged()
        for lo in range(0, len(rows), chunk):
            part = rows[lo : lo + chunk]
            out.extend([self._values[a:b] for a, b in zip(off[part], off[part + 1], strict=True)])
        return out

    def map_values(self, new_id: np.ndarray) -> Ragged:
        """Every value ``v`` replaced by ``new_id[v]``; values mapped to -1 are dropped."""
        out = Ragged()
        for values, lengths in self.chunks():
            mapped = new_id[values]
            keep = mapped >= 0
            rows = np.repeat(np.arange(len(lengths)), lengths)
            out._parts.append(mapped[keep].astype(np.int32, copy=False))
            out._lengths.append(np.bincount(rows[keep], minlength=len(lengths)).astype(np.int64))
        return out

    def doc_freq(self, size: int) -> np.ndarray:
        """How many rows hold each value ``0 .. size - 1``."""
        df = np.zeros(size, dtype=np.int64)
        for values, lengths in self.chunks():
            rows = np.repeat(np.arange(len(lengths), dtype=np.int64), lengths)
            df += np.bincount(distinct(rows * size + values) % size, minlength=size)
        return df


class ListLike(Sequence):
    """A read-only sequence equal to any sequence with equal items, as a list is."""

    def __eq__(self, other):
        if not isinstance(other, Sequence):
            return NotImplemented
        return len(self) == len(other) and all(a == b for a, b in zip(self, other, strict=True))

    __hash__ = None


class TokenTexts(ListLike):
    """Tokenised documents as lists of strings, stored as term ids into ``strings``.

    Reads like a list of lists of str (indexing, slicing, iteration, ``len``, equality with
    such a list) at the memory of one int32 per token.
    """

    def __init__(self, strings: np.ndarray, docs: Ragged):
        self.strings = np.asarray(strings, dtype=object)
        self.docs = docs

    @classmethod
    def from_lists(cls, texts: Sequence[Sequence[str]], vocab: Sequence[str]) -> TokenTexts:
        index = {t: i for i, t in enumerate(vocab)}
        docs = Ragged()
        docs.extend(
            [np.fromiter(map(index.__getitem__, t), dtype=np.int32, count=len(t)) for t in texts]
        )
        return cls(np.array(list(vocab), dtype=object), docs)

    def __len__(self) -> int:
        return len(self.docs)

    def __getitem__(self, i):
        if isinstance(i, slice):
            return [self[j] for j in range(*i.indices(len(self)))]
        n = len(self)
        if not -n <= i < n:
            raise IndexError(f"document {i} out of range for {n} texts")
        return self.strings[self.docs[i % n]].tolist()

    def __iter__(self):
        strings = self.strings
        for ids in self.docs:
            yield strings[ids].tolist()

    def __repr__(self) -> str:
        return f"<TokenTexts {len(self)} documents, {len(self.docs.values)} tokens>"


def distinct(keys: np.ndarray) -> np.ndarray:
    """Sorted distinct values of ``keys`` (``np.unique`` by sorting, which is faster here than
    its hash table for millions of integers)."""
    keys = np.sort(keys)
    return keys[np.r_[True, keys[1:] != keys[:-1]]] if len(keys) else keys


def distinct_counts(keys: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Sorted distinct values of ``keys`` and how often each occurs."""
    keys = np.sort(keys)
    starts = np.flatnonzero(np.r_[True, keys[1:] != keys[:-1]]) if len(keys) else keys[:0]
    return keys[starts], np.diff(np.r_[starts, len(keys)])
