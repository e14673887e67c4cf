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


def find_boilerplate(
    texts: Sequence[str], groups: Sequence[str], *, min_share: float, min_docs: int, progress=None
) -> dict[str, set[int]]:
    """Hashes of boilerplate line keys, per group.

    Line keys are hashed with Python's ``hash`` (collisions are negligible at
    64 bits); the hashes are valid only within this process, which is all the
    removal pass needs.
    """
    codes, uniques = pd.factorize(pd.Series(groups, dtype=object))
    group_size = np.bincount(codes, minlength=len(uniques))
    doc_group, line_hash = [], []
    pairs = zip(texts, codes.tolist(), strict=True)
    for text, code in pairs if progress is None else progress(pairs, total=len(texts)):
        if "\n" not in text:
            continue
        hashes = {hash(key) for key in map(_key, text.split("\n")) if key}
        if len(hashes) > 1:
            line_hash.extend(hashes)
            doc_group.extend([code] * len(hashes))
    if not line_hash:
        return {}
    counts = pd.DataFrame({"g": doc_group, "h": line_hash}).value_counts()
    g = counts.index.get_level_values("g").to_numpy()
    need = np.maximum(min_docs, np.ceil(min_share * group_size[g] - 1e-9))
    hit = counts.to_numpy() >= need
    found: dict[str, set[int]] = {}
    for code, h in zip(
        g[hit].tolist(), counts.index.get_level_values("h")[hit].tolist(), strict=True
    ):
        found.setdefault(uniques[code], set()).add(h)
    return found


class BoilerplateStripper:
    """Removes the boilerplate lines found by :func:`find_boilerplate` and tallies them."""

    def __init__(self, found: dict[str, set[int]]):
        self.found = found
        self._tally: dict[tuple[str, int], list] = {}

    def __call__(self, text: str, group: str) -> str:
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
