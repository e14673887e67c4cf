"""Representative documents of a topic, per source.

For each topic and source the documents with the highest share of the topic
come first; equal shares are ordered by exposure (``weight``), then by corpus
order. Near-duplicates are collapsed into the first of them shown: documents
the preparation already merged (``duplicate_ids``) and documents with the same
title (case and spacing ignored). Copies in *other* sources stay in their own
source's list and carry ``cross_source_duplicate``.

Snippets are plain text cut from ``meta["text"]`` around the densest run of
the topic's top terms; views that show them as HTML must escape them.
"""

from __future__ import annotations

import re
from collections import Counter

import numpy as np
import pandas as pd

from .._validation import param_error
from ..errors import ComparisonError

_SPACE = re.compile(r"\s+")


def representative_documents(
    fit,
    prepared,
    topic: int | None = None,
    *,
    per_source: int = 5,
    sources=None,
    snippet_terms: int = 10,
    snippet_chars: int = 240,
) -> pd.DataFrame:
    """The documents that show a topic best, per source.

    Parameters
    ----------
    fit : object with ``doc_topic`` (D x k), ``topic_term`` (k x V), ``vocab``.
    prepared : PreparedCorpus with ``sources``, ``weights`` and ``meta`` (``id``, ``title``,
        ``date``, ``text``; ``outlet``, ``duplicate_ids``, ``cross_source_duplicate`` if present).
    topic : one topic, or None for every topic.
    per_source : documents kept per topic and source, after collapsing near-duplicates.
    sources : sources to include (default: all, sorted).
    snippet_terms, snippet_chars : how many top terms the snippet looks for, and its length.

    Returns
    -------
    DataFrame: ``topic``, ``source``, ``rank``, ``id``, ``title``, ``outlet``, ``date``,
    ``exposure`` (the document's weight), ``topic_share``, ``snippet``, ``matched_terms``
    (top terms found in the snippet, comma-separated), ``n_collapsed`` and ``collapsed_ids``
    (near-duplicates folded into this row, ``"; "``-separated), ``cross_source_duplicate``.
    """
    owner = "representative_documents"
    shares = np.asarray(fit.doc_topic, dtype=float)
    k = shares.shape[1]
    meta = prepared.meta.reset_index(drop=True)
    if shares.shape[0] != len(meta):
        msg = (
            f"The model has {shares.shape[0]} documents but the prepared corpus has {len(meta)} "
            f"({owner}). Use the fit trained on this prepared corpus."
        )
        raise ComparisonError(msg)
    topics = range(k) if topic is None else [topic]
    if topic is not None and not (isinstance(topic, int | np.integer) and 0 <= topic < k):
        raise param_error(owner, "topic", topic, f"None or a topic number from 0 to {k - 1}")
    if not (isinstance(per_source, int | np.integer) and per_source >= 1):
        raise param_error(owner, "per_source", per_source, "an integer >= 1")
    doc_sources = np.asarray(prepared.sources).astype(str)
    present = np.unique(doc_sources).tolist()  # doc_sources is already str
    names = present if sources is None else [str(s) for s in sources]
    if missing := [s for s in names if s not in present]:
        msg = f"The source(s) {missing} have no documents ({owner}). Sources with documents: {present}."
        raise ComparisonError(msg)
    weights = np.asarray(prepared.weights, dtype=float)
    top_terms = np.argsort(-np.asarray(fit.topic_term, dtype=float), axis=1, kind="stable")[
        :, :snippet_terms
    ]
    keys = _collapse_keys(meta)
    rows = []
    for t in topics:
        pattern = _term_pattern([fit.vocab[j] for j in top_terms[t]])
        for source in names:
            idx = np.flatnonzero(doc_sources == source)
            order = idx[np.lexsort((idx, -weights[idx], -shares[idx, t]))]
            for rank, (i, collapsed) in enumerate(_collapse(keys, order, per_source), start=1):
                snippet, found = snippet_around(_text(meta, i), pattern, snippet_chars)
                rows.append(
                    {
                        "topic": t,
                        "source": source,
                        "rank": rank,
                        "id": meta.at[i, "id"],
                        "title": _get(meta, i, "title"),
                        "outlet": _get(meta, i, "outlet"),
                        "date": _get(meta, i, "date"),
                        "exposure": weights[i],
                        "topic_share": shares[i, t],
                        "snippet": snippet,
                        "matched_terms": ", ".join(found),
                        "n_collapsed": len(collapsed),
                        "collapsed_ids": "; ".join(collapsed),
                        "cross_source_duplicate": bool(
                            _get(meta, i, "cross_source_duplicate") or False
                        ),
                    }
                )
    return pd.DataFrame(
        rows,
        columns=[
            "topic",
            "source",
            "rank",
            "id",
            "title",
            "outlet",
            "date",
            "exposure",
            "topic_share",
            "snippet",
            "matched_terms",
            "n_collapsed",
            "collapsed_ids",
            "cross_source_duplicate",
        ],
    )


def _get(meta, i, column):
    if column not in meta.columns:
        return None
    value = meta.at[i, column]
    return None if _missing(value) else value


def _missing(value) -> bool:
    return value is None or (np.ndim(value) == 0 and bool(pd.isna(value)))


def _text(meta, i) -> str:
    value = _get(meta, i, "text")
    return "" if value is None else str(value)


def _collapse_keys(meta) -> tuple[np.ndarray, np.ndarray, np.ndarray | None]:
    """Per document: id, normalised title (None when missing) and merged ids, as arrays.

    Built once per call so the walk below touches numpy arrays, not DataFrame cells
    (it visits every document of a source, 200,000 in a large corpus).
    """
    ids = meta["id"].astype(str).to_numpy()
    if "title" in meta.columns:
        titles = meta["title"].astype("string").str.replace(_SPACE, " ", regex=True)
        titles = titles.str.strip().str.casefold()
        titles = titles.where(titles.notna() & (titles != ""), None).to_numpy(dtype=object)
    else:
        titles = np.full(len(meta), None, dtype=object)
    merged = meta["duplicate_ids"].to_numpy() if "duplicate_ids" in meta.columns else None
    return ids, titles, merged


def _collapse(keys, order, wanted):
    """Walk documents best first; yield (row, ids folded into it) for the first ``wanted``."""
    ids, titles, merged = keys
    kept: list[tuple[int, list[str]]] = []
    owner_of: dict[str, int] = {}  # a title key or document id -> position in ``kept``
    for i in order:
        doc_id = ids[i]
        doc_keys = [doc_id]
        if merged is not None and not _missing(merged[i]):
            doc_keys.extend(str(x) for x in merged[i])
        if titles[i] is not None:
            doc_keys.append("title:" + titles[i])
        hit = next((owner_of[key] for key in doc_keys if key in owner_of), None)
        if hit is not None:
            kept[hit][1].append(doc_id)
        elif len(kept) < wanted:
            hit = len(kept)
            kept.append((int(i), []))
        else:
            # Later documents can only be folded into rows already shown.
            continue
        for key in doc_keys:
            owner_of.setdefault(key, hit)
    return kept


def _term_pattern(terms: list[str]) -> re.Pattern | None:
    # Terms may be stems or joined n-grams ("city_council"): match words that start with them.
    parts = [r"[\s_-]+".join(map(re.escape, re.split(r"[_\s]+", t))) for t in terms if t.strip()]
    if not parts:
        return None
    return re.compile(
        r"\b(?:" + "|".join(sorted(parts, key=len, reverse=True)) + r")\w*", re.IGNORECASE
    )


def snippet_around(
    text: str, pattern: re.Pattern | None, width: int = 240
) -> tuple[str, list[str]]:
    """Plain-text window of about ``width`` characters with the most distinct term matches.

    Returns the snippet (with "…" where text was cut) and the matched words in it.
    """
    text = _SPACE.sub(" ", text).strip()
    hits = list(pattern.finditer(text)) if pattern is not None else []
    if len(text) <= width:
        start = 0
    elif not hits:
        start = 0
    else:
        start = _densest_window(hits, width)
        # Give the first match a little left context, at a word boundary.
        start = max(0, start - width // 6)
        start = text.rfind(" ", 0, start) + 1 if start > 0 else 0
        start = max(0, min(start, len(text) - width))
    stop = min(len(text), start + width)
    if stop < len(text) and (space := text.rfind(" ", start, stop)) > start:
        stop = space
    snippet = (
        ("…" if start > 0 else "") + text[start:stop].strip() + ("…" if stop < len(text) else "")
    )
    found = []
    for m in hits:
        if start <= m.start() and m.end() <= stop and m.group(0).casefold() not in found:
            found.append(m.group(0).casefold())
    return snippet, found


def _densest_window(hits: list[re.Match], width: int) -> int:
    """Start of the first window of ``width`` characters, opening at a match, that holds the
    most distinct matched words (two pointers over the matches, in text order)."""
    words = [m.group(0).casefold() for m in hits]
    inside: Counter = Counter()
    best, start, j = -1, 0, 0
    for i, h in enumerate(hits):
        j = max(j, i)
        while j < len(hits) and hits[j].end() <= h.start() + width:
            inside[words[j]] += 1
            j += 1
        if len(inside) > best:
            best, start = len(inside), h.start()
        if i < j:  # hit i leaves the window before the next one opens
            inside[words[i]] -= 1
            if not inside[words[i]]:
                del inside[words[i]]
    return start
