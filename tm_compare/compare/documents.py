"""Documents of a topic: the representative ones per source, and every document's shares.

For each topic and source the documents with the highest share of the topic
come first; equal shares are ordered by exposure (``weight``), then by corpus
order. Near-duplicates are collapsed into the first of them shown: documents
the preparation already merged (``duplicate_ids``) and documents with the same
title (case and spacing ignored). Copies in *other* sources stay in their own
source's list and carry ``cross_source_duplicate``.

Snippets are plain text cut from ``meta["text"]`` around the densest run of
the topic's top terms; views that show them as HTML must escape them.

:func:`document_topics` joins each document's topic shares back to the user's
own document ids and metadata, one row per document, ready for a regression in
another package.
"""

from __future__ import annotations

import re
from collections import Counter

import numpy as np
import pandas as pd

from .._deprecation import renamed_parameters
from .._validation import param_error
from ..errors import ComparisonError, ProjectError
from ..models.fits import check_pair
from ..options import default

_SPACE = re.compile(r"\s+")
#: Top terms of a topic a snippet is cut around (views emphasise the same terms).
SNIPPET_TERMS = 10
_COLUMNS = [
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
]


@renamed_parameters(per_source="n_docs")
def representative_documents(
    fit,
    prepared,
    topic: int | None = None,
    *,
    n_docs: int = default("n_docs"),
    sources=None,
    rows=None,
    snippet_terms: int = SNIPPET_TERMS,
    snippet_chars: int = 240,
) -> pd.DataFrame:
    """The documents that show a topic best, per source.

    Parameters
    ----------
    fit : Fit (``doc_topic`` D x k, ``topic_term`` k x V, ``vocab``).
    prepared : PreparedCorpus; its ``meta`` gives ``id``, ``source``, ``weight``, ``title``,
        ``date``, ``text``, ``duplicate_ids``, ``cross_source_duplicate`` (and ``outlet`` if
        the corpus has one).
    topic : one topic, or None for every topic.
    n_docs : documents kept per topic and source, after collapsing near-duplicates.
    sources : sources to include (default: all, sorted).
    rows : positions of the only documents to consider, optional. Views pass each source's
        best few hundred documents of the topic, so that a topic switch on a large corpus
        stays fast; near-duplicates are then folded among those rows only.
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
    n_rows, k = shares.shape
    if n_rows != len(prepared.meta):
        msg = (
            f"The model has {n_rows} documents but the prepared corpus has {len(prepared.meta)} "
            f"({owner}). Use the fit trained on this prepared corpus."
        )
        raise ComparisonError(msg)
    topics = range(k) if topic is None else [topic]
    if topic is not None and not (isinstance(topic, int | np.integer) and 0 <= topic < k):
        raise param_error(owner, "topic", topic, f"None or a topic number from 0 to {k - 1}")
    if not (isinstance(n_docs, int | np.integer) and n_docs >= 1):
        raise param_error(owner, "n_docs", n_docs, "an integer >= 1")
    if rows is None:
        meta = prepared.meta.reset_index(drop=True)
    else:
        # Work on the chosen rows alone: a large corpus's meta is never copied whole.
        rows = _rows(owner, rows, n_rows)
        meta = prepared.meta.iloc[rows].reset_index(drop=True)
        shares = shares[rows]
    doc_sources = meta["source"].to_numpy(dtype=str)
    weights = meta["weight"].to_numpy(dtype=float)
    present = np.unique(doc_sources).tolist()
    names = present if sources is None else [str(s) for s in sources]
    if missing := [s for s in names if s not in present]:
        msg = f"The source(s) {missing} have no documents ({owner}). Sources with documents: {present}."
        raise ComparisonError(msg)
    phi = np.asarray(fit.topic_term, dtype=float)[list(topics)]
    top_terms = dict(
        zip(topics, np.argsort(-phi, axis=1, kind="stable")[:, :snippet_terms], strict=True)
    )
    keys = _collapse_keys(meta)
    found_rows = []
    for t in topics:
        pattern = _term_pattern([fit.vocab[j] for j in top_terms[t]])
        for source in names:
            idx = np.flatnonzero(doc_sources == source)
            order = idx[np.lexsort((idx, -weights[idx], -shares[idx, t]))]
            for rank, (i, collapsed) in enumerate(_collapse(keys, order, n_docs), start=1):
                snippet, found = snippet_around(_text(meta, i), pattern, snippet_chars)
                found_rows.append(
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
    return pd.DataFrame(found_rows, columns=_COLUMNS)


def _rows(owner, rows, n_rows) -> np.ndarray:
    given = np.asarray(rows)
    rows = np.sort(given.astype(np.int64) if given.size == 0 else given)
    if rows.ndim != 1 or not np.issubdtype(rows.dtype, np.integer):
        raise param_error(owner, "rows", rows, "None or a list of document positions")
    if len(rows) and (rows[0] < 0 or rows[-1] >= n_rows):
        raise param_error(owner, "rows", rows, f"positions from 0 to {n_rows - 1}")
    return rows


def document_topics(fit, prepared, corpus=None) -> pd.DataFrame:
    """Each document's topic shares with its own id and metadata, one row per document.

    Parameters
    ----------
    fit : Fit with ``doc_topic``, ``doc_ids`` and ``heldout``.
    prepared : PreparedCorpus the fit was trained on.
    corpus : Corpus, optional
        Adds the user's own metadata columns (those beyond the canonical ones) from
        ``corpus.frame``, matched on ``id``.

    Returns
    -------
    DataFrame: ``id``, ``source``, ``weight``, ``group``, ``title``, ``url``, ``date``,
    any metadata columns, ``merged_ids`` (ids of copies merged into this document, ``"; "``
    separated), ``heldout`` (left out of training), then ``topic_0`` ... ``topic_{k-1}``
    (the document's share of each topic; each row sums to 1).
    """
    check_pair("document_topics", fit, prepared)
    if fit.doc_ids != prepared.doc_ids:
        msg = (
            "The model's doc_ids do not match the prepared corpus's documents (document_topics). "
            "Use the prepared corpus the model was fitted on (load_prepared(project, "
            "fit.corpus_fingerprint))."
        )
        raise ProjectError(msg)
    meta = prepared.meta.reset_index(drop=True)
    keep = ["id", "source", "weight", "group", "title", "url", "date"]
    out = meta[keep].copy()
    extra = [c for c in meta.columns if c not in keep and c not in _PREPARED_ONLY]
    if corpus is not None:
        from ..text.corpus import CANONICAL

        frame = corpus.frame
        extra = [c for c in frame.columns if c not in CANONICAL and c not in out]
        out = out.merge(frame[["id", *extra]], on="id", how="left", validate="one_to_one")
    else:
        for column in extra:
            out[column] = meta[column]
    out["merged_ids"] = meta["duplicate_ids"].map(lambda v: "; ".join(map(str, v)))
    out["heldout"] = np.asarray(fit.heldout, dtype=bool)
    shares = pd.DataFrame(
        np.asarray(fit.doc_topic, dtype=float), columns=[f"topic_{t}" for t in range(fit.k)]
    )
    return pd.concat([out, shares], axis=1)


_PREPARED_ONLY = ("text", "canonical_url", "duplicate_ids", "cross_source_duplicate")


def _get(meta, i, column):
    """The cell, or None when missing (or when the corpus has no such column: ``outlet``)."""
    if column not in meta.columns:
        return None
    value = meta.at[i, column]
    return None if _missing(value) else value


def _missing(value) -> bool:
    return value is None or (np.ndim(value) == 0 and bool(pd.isna(value)))


def _text(meta, i) -> str:
    value = _get(meta, i, "text")
    return "" if value is None else str(value)


def _collapse_keys(meta) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Per document: id, normalised title (None when missing) and merged ids, as arrays.

    Built once per call so the walk below touches numpy arrays, not DataFrame cells
    (it visits every document of a source, 200,000 in a large corpus).
    """
    ids = meta["id"].astype(str).to_numpy()
    titles = meta["title"].astype("string").str.replace(_SPACE, " ", regex=True)
    titles = titles.str.strip().str.casefold()
    titles = titles.where(titles.notna() & (titles != ""), None).to_numpy(dtype=object)
    return ids, titles, meta["duplicate_ids"].to_numpy()


def _collapse(keys, order, wanted):
    """Walk documents best first; yield (row, ids folded into it) for the first ``wanted``."""
    ids, titles, merged = keys
    kept: list[tuple[int, list[str]]] = []
    owner_of: dict[str, int] = {}  # a title key or document id -> position in ``kept``
    for i in order:
        doc_id = ids[i]
        doc_keys = [doc_id]
        if not _missing(merged[i]):
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
