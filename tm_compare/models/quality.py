"""Junk topics of one fit: near-empty topics, rarely dominant topics and near-duplicate pairs.

A fit with more topics than its corpus supports, or stuck in a poor local optimum, shows it
in three ways, all counted here per fit and flagged per topic:

- **Near-empty topics**: topics that almost no text uses. A topic's *prevalence* is its
  mean share over the fit's documents (rows of ``fit.doc_topic``); with k topics the fair
  share is 1/k. A topic is near-empty when its prevalence is below ``EMPTY_SHARE / k``
  (a tenth of its fair share). A topic that online LDA leaves unused keeps only the prior's
  crumbs in each document, about ``alpha / (1 + n_tokens)`` (~0.001 for 100-token documents
  at k = 10, a hundredth of 1/k); a real theme at a tenth of the fair share is rare but not
  absurd, so the flag asks the reader to look rather than dropping the topic.
- **Rarely dominant topics**: topics that are used, but thinly: the most probable topic of
  fewer than ``DOMINANT_SHARE / k`` of the documents (a fifth of the fair share), and not
  already near-empty. A topic's *dominant share* is the share of documents in which it is
  the most probable topic (a document whose top share is tied counts in equal parts for each
  tied topic). A fit that merged two themes into one topic must spend a spare topic somewhere:
  on the 3,000-document demo (nine planted themes, each article with one dominant theme) the
  k = 9 fits that merged two themes left one or two topics spread over many articles at
  0.15-0.27 of the fair share of text, yet dominant in 0.00-0.14 of the fair share of
  articles (measured, 5 seeds); prevalence alone did not flag them. The themes those fits did
  find were dominant in 0.34 or more of the fair share (0.80 or more in the fit that found all
  nine), and the rarest topic of an LDA corpus with unequal priors (prevalence about 0.3 of the
  fair share, tests/test_known_answers.py) stays above the line.
- **Near-duplicate pairs**: two topics of one fit whose word distributions are nearly the
  same: Jensen-Shannon divergence (base 2, so 0 = identical and 1 = disjoint; Lin 1991)
  below ``DUPLICATE_JSD``. Two copies of one topic give 0. Measured on the 3,000-document
  demo: the closest pair of distinct topics lies at 0.5-0.73 for k = 6 to 10, while the
  extra topics of k = 12 sit at 0.0-0.23 from another topic.

:func:`topic_quality` gives one row per topic; :func:`fit_quality` the counts of one fit;
:func:`describe` the counts in words ("k = 12: 2 topics near-empty, 1 pair near-duplicate").
"""

from __future__ import annotations

import numpy as np
import pandas as pd
from scipy.spatial.distance import jensenshannon

EMPTY_SHARE = 0.1  # near-empty: prevalence below EMPTY_SHARE / k
DOMINANT_SHARE = 0.2  # rarely dominant: most probable topic of fewer than DOMINANT_SHARE / k
DUPLICATE_JSD = 0.25  # near-duplicate: Jensen-Shannon divergence (base 2) below this


def prevalence(fit) -> np.ndarray:
    """Each topic's mean share over the fit's documents (sums to 1)."""
    shares = np.asarray(fit.doc_topic, dtype=float)
    return shares.mean(axis=0)


def dominant_share(fit) -> np.ndarray:
    """Each topic's share of the fit's documents in which it is the most probable topic (sums
    to 1; a tie at the top counts in equal parts for each tied topic)."""
    return _dominant(np.asarray(fit.doc_topic, dtype=float))


def _dominant(shares: np.ndarray) -> np.ndarray:
    top = shares >= shares.max(axis=1, keepdims=True)
    return (top / top.sum(axis=1, keepdims=True)).mean(axis=0)


def _flags(shares: np.ndarray):
    """(prevalence, dominant share, near-empty mask, rarely-dominant mask) of a D x k matrix
    of topic shares."""
    k = shares.shape[1]
    share, dominant = shares.mean(axis=0), _dominant(shares)
    empty = share < EMPTY_SHARE / k
    return share, dominant, empty, ~empty & (dominant < DOMINANT_SHARE / k)


def junk_of_shares(shares) -> int:
    """Near-empty plus rarely dominant topics of a D x k matrix of topic shares."""
    _, _, empty, thin = _flags(np.asarray(shares, dtype=float))
    return int(empty.sum() + thin.sum())


def divergences(topic_term) -> np.ndarray:
    """k x k Jensen-Shannon divergences (base 2) between the topics' word distributions."""
    topics = np.asarray(topic_term, dtype=float)
    topics = topics / topics.sum(axis=1, keepdims=True)
    k = len(topics)
    out = np.zeros((k, k))
    for i in range(k):
        # scipy returns the distance (square root of the divergence).
        out[i] = jensenshannon(topics[i][None, :], topics, axis=1, base=2) ** 2
    np.fill_diagonal(out, 0.0)
    return np.clip((out + out.T) / 2, 0.0, 1.0)


def topic_quality(fit) -> pd.DataFrame:
    """One row per topic: ``topic``, ``prevalence``, ``near_empty``, ``dominant_share``,
    ``rarely_dominant``, ``nearest`` (the most similar other topic), ``divergence`` (to it)
    and ``duplicate_of`` (``nearest`` when the pair is near-duplicate, else -1)."""
    k = fit.k
    share, dominant, empty, thin = _flags(np.asarray(fit.doc_topic, dtype=float))
    jsd = divergences(fit.topic_term)
    np.fill_diagonal(jsd, np.inf)
    nearest = jsd.argmin(axis=1) if k > 1 else np.zeros(k, dtype=int)
    closest = jsd[np.arange(k), nearest] if k > 1 else np.full(k, np.nan)
    return pd.DataFrame(
        {
            "topic": np.arange(k),
            "prevalence": share,
            "near_empty": empty,
            "dominant_share": dominant,
            "rarely_dominant": thin,
            "nearest": nearest,
            "divergence": closest,
            "duplicate_of": np.where(closest < DUPLICATE_JSD, nearest, -1),
        }
    )


def duplicate_pairs(fit) -> list[tuple[int, int]]:
    """Pairs (i, j), i < j, of near-duplicate topics."""
    jsd = divergences(fit.topic_term)
    i, j = np.triu_indices(fit.k, 1)
    keep = jsd[i, j] < DUPLICATE_JSD
    return [(int(a), int(b)) for a, b in zip(i[keep], j[keep], strict=True)]


def fit_quality(fit) -> dict:
    """``near_empty`` and ``rarely_dominant`` (topics; no topic is both) and
    ``near_duplicate`` (pairs) of one fit."""
    _, _, empty, thin = _flags(np.asarray(fit.doc_topic, dtype=float))
    return {
        "near_empty": int(empty.sum()),
        "rarely_dominant": int(thin.sum()),
        "near_duplicate": len(duplicate_pairs(fit)),
    }


def describe(k: int, near_empty: int, near_duplicate: int, rarely_dominant: int = 0) -> str:
    """The counts in words: "k = 12: 2 topics near-empty, 1 topic rarely dominant, 1 pair
    near-duplicate"."""
    parts = []
    if near_empty:
        parts.append(f"{near_empty} topic{'s' if near_empty != 1 else ''} near-empty")
    if rarely_dominant:
        parts.append(
            f"{rarely_dominant} topic{'s' if rarely_dominant != 1 else ''} rarely dominant"
        )
    if near_duplicate:
        parts.append(f"{near_duplicate} pair{'s' if near_duplicate != 1 else ''} near-duplicate")
    return f"k = {k}: " + (", ".join(parts) if parts else "no junk topics")


def topic_badge(row) -> str:
    """A short flag for one topic's row of :func:`topic_quality` ('' when it is fine)."""
    flags = []
    if row["near_empty"]:
        flags.append(f"near-empty ({row['prevalence']:.1%} of the text)")
    if row.get("rarely_dominant", False):
        flags.append(
            f"rarely dominant (the main topic of {row['dominant_share']:.1%} of the documents)"
        )
    if row["duplicate_of"] >= 0:
        flags.append(f"near-duplicate of topic {int(row['duplicate_of'])}")
    return "; ".join(flags)
