"""Near-duplicate documents: word shingles, Jaccard similarity, MinHash with LSH banding.

Each document becomes the set of its word ``k``-shingles (runs of ``k``
consecutive tokens; Broder 1997, "On the resemblance and containment of
documents"). Two documents are near-duplicates when the Jaccard similarity
of their shingle sets is at least a threshold. Small corpora get the exact
Jaccard of every pair that shares a shingle (a sparse product); large ones
get MinHash signatures (Broder 1997: the chance that two sets share their
minimum under a random hash equals their Jaccard similarity) whose bands
are bucketed (locality-sensitive hashing; Leskovec, Rajaraman & Ullman,
"Mining of Massive Datasets", ch. 3), and candidate pairs are kept when the
share of equal signature entries reaches the threshold.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import scipy.sparse as sp

from ._ragged import distinct

# Odd 64-bit multipliers (from the splitmix64 generator) to mix token ids into shingle hashes.
_MIX = np.array(
    [
        0x9E3779B97F4A7C15,
        0xBF58476D1CE4E5B9,
        0x94D049BB133111EB,
        0xD6E8FEB86659FD93,
        0xA0761D6478BD642F,
        0xE7037ED1A0B428DB,
        0x8EBC6AF09C88C6E3,
        0x589965CC75374CC3,
    ],
    dtype=np.uint64,
)
MAX_SHINGLE = len(_MIX)
# Buckets larger than this are linked to their first member only, not pair by pair.
_BUCKET_PAIRS = 50


def shingles(ids: np.ndarray, k: int) -> np.ndarray:
    """Sorted distinct 64-bit hashes of the ``k``-token shingles of one document.

    A document shorter than ``k`` tokens is one shingle; an empty one has none.
    """
    n = len(ids)
    if n == 0:
        return np.empty(0, dtype=np.uint64)
    k = min(k, n)
    x = ids.astype(np.uint64) + np.uint64(1)
    h = np.zeros(n - k + 1, dtype=np.uint64)
    for j in range(k):
        h = (h ^ x[j : n - k + 1 + j]) * _MIX[j]  # wraps modulo 2**64 by design
    h ^= h >> np.uint64(31)
    return distinct(h)


def minhash(
    docs: Sequence[np.ndarray],
    k: int,
    num_perm: int,
    seed: int,
    batch: int = 20_000,
    progress=None,
) -> np.ndarray:
    """MinHash signatures of the ``k``-shingle sets of ``docs``, one uint32 row per document.

    Hash family: multiply-add-shift on 32-bit keys, ``((a * x + b) mod 2**64) >> 32``
    with random 64-bit ``a`` (odd) and ``b`` (Dietzfelbinger 1996), vectorised
    over about ``batch`` shingles of many documents at once, so shingle sets
    are never all held at the same time. Rows of empty documents are all
    ``2**32 - 1``.
    """
    rng = np.random.default_rng(seed)
    a = rng.integers(0, 2**63, size=num_perm, dtype=np.uint64) * np.uint64(2) + np.uint64(1)
    b = rng.integers(0, 2**63, size=num_perm, dtype=np.uint64)
    out = np.full((len(docs), num_perm), np.iinfo(np.uint32).max, dtype=np.uint32)
    rows, parts, size = [], [], 0
    for i, ids in enumerate(docs if progress is None else progress(docs)):
        s = shingles(ids, k)
        if len(s):
            rows.append(i)
            parts.append(s)
            size += len(s)
        if size >= batch or (i == len(docs) - 1 and rows):
            x = np.concatenate(parts) & np.uint64(0xFFFFFFFF)
            offsets = np.concatenate([[0], np.cumsum([len(p) for p in parts])[:-1]])
            for p in range(0, num_perm, 16):
                hv = (a[p : p + 16, None] * x[None, :] + b[p : p + 16, None]) >> np.uint64(32)
                out[rows, p : p + 16] = np.minimum.reduceat(hv, offsets, axis=1).T
            rows, parts, size = [], [], 0
    return out


def lsh_bands(num_perm: int, threshold: float) -> tuple[int, int]:
    """Bands ``b`` and rows ``r`` (``b * r <= num_perm``) for a similarity threshold.

    Chooses the pair minimising the sum of the areas of false positives
    (below the threshold) and false negatives (above it) under the S-curve
    ``1 - (1 - s**r)**b`` (Mining of Massive Datasets, section 3.4).
    """
    s = np.linspace(0.0, 1.0, 1001)
    best, best_err = (num_perm, 1), np.inf
    for r in range(1, num_perm + 1):
        b = num_perm // r
        p = 1.0 - (1.0 - s**r) ** b
        err = np.trapezoid(np.where(s < threshold, p, 1.0 - p), s)
        if err < best_err:
            best, best_err = (b, r), err
    return best


def _bucket_pairs(keys: np.ndarray, members: np.ndarray) -> np.ndarray:
    order = np.argsort(keys, kind="stable")
    k, m = keys[order], members[order]
    starts = np.r_[0, np.flatnonzero(np.diff(k)) + 1]
    sizes = np.diff(np.r_[starts, len(k)])
    out = []
    for start, size in zip(starts[sizes > 1].tolist(), sizes[sizes > 1].tolist(), strict=True):
        group = m[start : start + size]
        if size <= _BUCKET_PAIRS:
            i, j = np.triu_indices(size, 1)
            out.append(np.stack([group[i], group[j]], axis=1))
        else:
            out.append(np.stack([np.full(size - 1, group[0]), group[1:]], axis=1))
    return np.concatenate(out) if out else np.empty((0, 2), dtype=np.int64)


def minhash_pairs(
    docs: Sequence[np.ndarray], k: int, threshold: float, num_perm: int, seed: int, progress=None
) -> tuple[np.ndarray, np.ndarray]:
    """Pairs ``(i, j)``, ``i < j``, whose estimated Jaccard similarity is >= ``threshold``."""
    sig = minhash(docs, k, num_perm, seed, progress=progress)
    live = np.flatnonzero([len(d) > 0 for d in docs])
    bands, rows = lsh_bands(num_perm, threshold)
    cand = []
    for band in range(bands):
        part = sig[live, band * rows : (band + 1) * rows].astype(np.uint64)
        key = np.zeros(len(live), dtype=np.uint64)
        for j in range(rows):
            key = (key ^ part[:, j]) * _MIX[j % MAX_SHINGLE]
        cand.append(_bucket_pairs(key, live))
    pairs = np.unique(np.sort(np.concatenate(cand), axis=1), axis=0)
    if not len(pairs):
        return pairs, np.empty(0)
    sim = np.concatenate(
        [
            (sig[pairs[c : c + 50_000, 0]] == sig[pairs[c : c + 50_000, 1]]).mean(axis=1)
            for c in range(0, len(pairs), 50_000)
        ]
    )
    keep = sim >= threshold
    return pairs[keep], sim[keep]


def exact_pairs(
    docs: Sequence[np.ndarray], k: int, threshold: float
) -> tuple[np.ndarray, np.ndarray]:
    """Pairs ``(i, j)``, ``i < j``, whose exact Jaccard similarity is >= ``threshold``."""
    sets = [shingles(ids, k) for ids in docs]
    sizes = np.array([len(s) for s in sets], dtype=np.int64)
    if sizes.sum() == 0:
        return np.empty((0, 2), dtype=np.int64), np.empty(0)
    _, cols = np.unique(np.concatenate(sets), return_inverse=True)
    rows = np.repeat(np.arange(len(sets)), sizes)
    x = sp.csr_matrix(
        (np.ones(len(cols), dtype=np.int32), (rows, cols)), shape=(len(sets), int(cols.max()) + 1)
    )
    inter = sp.triu(x @ x.T, k=1).tocoo()
    union = sizes[inter.row] + sizes[inter.col] - inter.data
    sim = inter.data / union
    keep = sim >= threshold
    pairs = np.stack([inter.row[keep], inter.col[keep]], axis=1).astype(np.int64)
    order = np.lexsort((pairs[:, 1], pairs[:, 0]))
    return pairs[order], sim[keep][order]
