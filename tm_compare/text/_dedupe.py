"""Near-duplicate merging of :func:`~tm_compare.text.prepared.prepare`: which document stands
for each set of copies (:mod:`._neardup` finds the pairs)."""

from __future__ import annotations

import numpy as np
import pandas as pd

from ._neardup import exact_pairs, minhash_pairs

# Corpora up to this size get exact Jaccard similarities with near_duplicates="auto".
EXACT_LIMIT = 2000


def near_duplicates(docs, frame, s, progress=None) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Per document: its representative (itself unless merged), cross-source flag, copy group.

    The copy group numbers the sets of near-copies (connected through
    pairs) that still hold two or more documents after merging; -1 elsewhere.
    """
    n = len(docs)
    rep, cross, copies = np.arange(n), np.zeros(n, dtype=bool), np.full(n, -1)
    method = s["near_duplicates"]
    if method is None or n < 2:
        return rep, cross, copies
    if method == "auto":
        method = "exact" if n <= EXACT_LIMIT else "minhash"
    if method == "exact":
        pairs, _ = exact_pairs(docs, s["shingle_size"], s["near_duplicate_threshold"])
    else:
        pairs, _ = minhash_pairs(
            docs,
            s["shingle_size"],
            s["near_duplicate_threshold"],
            s["num_perm"],
            s["random_state"],
            progress=progress,
        )
    if not len(pairs):
        return rep, cross, copies
    # Merge only within one source and group: a merged document keeps a single group.
    unit = np.array(
        [
            f"{s}\x1f{g}"
            for s, g in zip(labels(frame["source"]), labels(frame["group"]), strict=True)
        ]
    )
    label = components(n, pairs[unit[pairs[:, 0]] == unit[pairs[:, 1]]])
    length = docs.lengths
    order = np.lexsort((np.arange(n), -length, label))  # fullest copy first, then corpus order
    first = np.r_[True, label[order][1:] != label[order][:-1]]
    rep[order] = order[first][np.cumsum(first) - 1]
    source = frame["source"].astype(str).to_numpy()
    cross[rep[pairs[source[pairs[:, 0]] != source[pairs[:, 1]]].ravel()]] = True
    group = components(n, rep[pairs])
    heads = np.flatnonzero(rep == np.arange(n))
    shared = np.bincount(group[heads], minlength=n) > 1
    copies[heads[shared[group[heads]]]] = np.unique(
        group[heads][shared[group[heads]]], return_inverse=True
    )[1]
    return rep, cross, copies


def components(n: int, pairs: np.ndarray) -> np.ndarray:
    from scipy.sparse import coo_matrix
    from scipy.sparse.csgraph import connected_components

    graph = coo_matrix((np.ones(len(pairs)), (pairs[:, 0], pairs[:, 1])), shape=(n, n))
    return connected_components(graph, directed=False)[1]


def labels(column: pd.Series) -> list[str]:
    """Values as text, missing ones as the empty string (pandas' str dtype keeps NaN)."""
    return ["" if pd.isna(v) else str(v) for v in column.tolist()]


def examples(ids, sources, mask) -> dict[str, str]:
    out: dict[str, str] = {}
    for i in np.flatnonzero(mask).tolist():
        out.setdefault(sources[i], f"id {ids[i]}")
    return out
