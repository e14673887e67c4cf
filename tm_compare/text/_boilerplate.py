"""Boilerplate lines: lines that repeat across many documents of one outlet or source.

A line (text between line breaks, compared after collapsing white space and
lower-casing) is boilerplate for a group (an outlet, or a source when there
is no outlet column) when it occurs in at least ``min_docs`` documents of
that group *and* in at least ``min_share`` of the group's documents. Cookie
notices, newsletter prompts and share buttons pass both tests; a quotation
repeated by a handful of articles does not. Counting is by document (a line
repeated within one document counts once).

Only documents with two or more non-empty lines take part: a document that
is a single line is never stripped to nothing here (whole repeated documents
are a matter for near-duplicate detection).
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np
import pandas as pd


def _key(line: str) -> str:
    return " ".join(line.split()).lower()


class LineCounter:
    """Counts, per group, the documents each line key occurs in, a chunk of documents at a time.

    Keeps one 64-bit hash and one group code per (document, distinct line), never the texts.
    Line keys are hashed with Python's ``hash`` (collisions are negligible at 64 bits); the
    hashes are valid only within this process, which is all the removal pass needs.
    """

    def __init__(self):
        self._codes: dict[str, int] = {}
        self._sizes: list[int] = []
        self._groups: list[np.ndarray] = []
        self._hashes: list[np.ndarray] = []

    def add(self, texts: Sequence[str], groups: Sequence[str], progress=None) -> None:
        doc_group, line_hash = [], []
        pairs = zip(texts, groups, strict=True)
        for text, group in pairs if progress is None else progress(pairs, total=len(texts)):
            code = self._codes.setdefault(group, len(self._codes))
            if code == len(self._sizes):
                self._sizes.append(0)
            self._sizes[code] += 1
            if "\n" not in text:
                continue
            hashes = {hash(key) for key in map(_key, text.split("\n")) if key}
            if len(hashes) > 1:
                line_hash.extend(hashes)
                doc_group.extend([code] * len(hashes))
        self._hashes.append(np.array(line_hash, dtype=np.int64))
        self._groups.append(np.array(doc_group, dtype=np.int64))

    def found(self, *, min_share: float, min_docs: int) -> dict[str, set[int]]:
        """Hashes of the boilerplate line keys of each group."""
        h = np.concatenate([np.empty(0, np.int64), *self._hashes])
        g = np.concatenate([np.empty(0, np.int64), *self._groups])
        if not len(h):
            return {}
        order = np.lexsort((h, g))
        h, g = h[order], g[order]
        first = np.r_[True, (h[1:] != h[:-1]) | (g[1:] != g[:-1])]
        starts = np.flatnonzero(first)
        counts = np.diff(np.r_[starts, len(h)])
        g, h = g[starts], h[starts]
        need = np.maximum(min_docs, np.ceil(min_share * np.array(self._sizes)[g] - 1e-9))
        hit = counts >= need
        names = list(self._codes)
        found: dict[str, set[int]] = {}
        for code, value in zip(g[hit].tolist(), h[hit].tolist(), strict=True):
            found.setdefault(names[code], set()).add(value)
        return found


def find_boilerplate(
    texts: Sequence[str], groups: Sequence[str], *, min_share: float, min_docs: int, progress=None
) -> dict[str, set[int]]:
    """Hashes of boilerplate line keys, per group (all documents counted at once)."""
    counter = LineCounter()
    counter.add(texts, groups, progress)
    return counter.found(min_share=min_share, min_docs=min_docs)


class BoilerplateStripper:
    """Removes the boilerplate lines found by :func:`find_boilerplate` and tallies them."""

    def __init__(self, found: dict[str, set[int]]):
        self.found = found
        self._tally: dict[tuple[str, int], list] = {}

    def __call__(self, text: str, group: str, tally: bool = True) -> str:
        """``text`` without the boilerplate lines of ``group``; ``tally`` counts them in
        :meth:`table`."""
        hashes = self.found.get(group)
        if not hashes or "\n" not in text:
            return text
        lines = text.split("\n")
        keys = [_key(line) for line in lines]
        if sum(map(bool, keys)) < 2:
            return text
        kept, seen = [], set()
        for line, key in zip(lines, keys, strict=True):
            h = hash(key) if key else None
            if h in hashes:
                if h not in seen:
                    seen.add(h)
                    if not tally:
                        continue
                    entry = self._tally.setdefault((group, h), [line.strip(), 0])
                    entry[1] += 1
            else:
                kept.append(line)
        return "\n".join(kept).strip() if seen else text

    def table(self, group_sizes: dict[str, int]) -> pd.DataFrame:
        """One row per removed line: group, line, documents it was removed from, share."""
        rows = [
            {
                "group": group,
                "line": line,
                "documents": n,
                "share": n / group_sizes[group] if group_sizes.get(group) else math.nan,
            }
            for (group, _), (line, n) in self._tally.items()
        ]
        cols = ["group", "line", "documents", "share"]
        if not rows:
            return pd.DataFrame(columns=cols)
        return (
            pd.DataFrame(rows, columns=cols)
            .sort_values(["group", "documents", "line"], ascending=[True, False, True])
            .reset_index(drop=True)
        )
