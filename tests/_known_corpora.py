"""Corpora with a known answer, for tests that check topic recovery and the choice of k.

Each builder returns a :class:`~tm_compare.text.corpus.Corpus` (the user's entry point) and the
true topic-word matrix over the tokens it writes, so a test can run the whole user path
(Corpus -> prepare -> sweep) and compare what comes out with what went in.
"""

from __future__ import annotations

import string

import numpy as np
import pandas as pd
from scipy.optimize import linear_sum_assignment

from tm_compare.text.corpus import Corpus

# Tokens without digits (prepare drops tokens holding a digit) and longer than 2 characters.
_LETTERS = string.ascii_lowercase


def _token(i: int) -> str:
    return "w" + _LETTERS[i // 26] + _LETTERS[i % 26]


def bars_corpus(n_docs=2000, doc_length=100, alpha=1.0, side=5, random_state=0):
    """The bars data of Griffiths & Steyvers (2004, PNAS 101 suppl. 1, "Finding scientific
    topics", section "A graphical example"): a ``side x side`` image whose pixels are the
    words, 2 * side topics (each row and each column of pixels, uniform over its ``side``
    pixels), documents of ``doc_length`` words with topic shares drawn from a symmetric
    Dirichlet(``alpha``). Pixel (r, c) is the token ``px<r><c>`` with r, c as letters (prepare splits tokens
    at underscores and drops tokens holding digits).

    Returns (corpus, topics, vocab): topics is (2 * side, side * side) over vocab.
    """
    rng = np.random.default_rng(random_state)
    vocab = [f"px{_LETTERS[r]}{_LETTERS[c]}" for r in range(side) for c in range(side)]
    topics = np.zeros((2 * side, side * side))
    for i in range(side):
        topics[i, [i * side + c for c in range(side)]] = 1 / side  # row i
        topics[side + i, [r * side + i for r in range(side)]] = 1 / side  # column i
    return _corpus(rng, topics, vocab, n_docs, doc_length, np.full(2 * side, alpha)), topics, vocab


def lda_corpus(k=6, n_terms=300, n_docs=1500, mean_length=80, alpha=0.1, eta=0.05, random_state=0):
    """Documents drawn from LDA's generative process (Blei, Ng & Jordan 2003, section 3):
    k topics ~ Dirichlet(``eta``) over ``n_terms`` words, shares ~ Dirichlet(``alpha``),
    lengths ~ 1 + Poisson(``mean_length``). ``alpha`` may be a vector (unequal prevalences).

    Returns (corpus, topics, vocab).
    """
    rng = np.random.default_rng(random_state)
    vocab = [_token(i) for i in range(n_terms)]
    topics = rng.dirichlet(np.full(n_terms, eta), size=k)
    alpha = np.broadcast_to(np.asarray(alpha, dtype=float), (k,))
    lengths = 1 + rng.poisson(mean_length, size=n_docs)
    return _corpus(rng, topics, vocab, n_docs, lengths, alpha), topics, vocab


def _corpus(rng, topics, vocab, n_docs, lengths, alpha):
    lengths = np.broadcast_to(lengths, (n_docs,))
    shares = rng.dirichlet(alpha, size=n_docs)
    texts = []
    for theta, n in zip(shares, lengths, strict=True):
        z = rng.choice(len(topics), size=n, p=theta)
        counts = np.bincount(z, minlength=len(topics))
        tokens = np.concatenate(
            [rng.choice(len(vocab), size=c, p=topics[t]) for t, c in enumerate(counts) if c]
        )
        rng.shuffle(tokens)
        texts.append(" ".join(vocab[j] for j in tokens))
    frame = pd.DataFrame({"id": [f"doc{i}" for i in range(n_docs)], "text": texts, "source": "all"})
    return Corpus.from_frame(frame, id="id")


def best_match_cosine(found: np.ndarray, found_vocab, truth: np.ndarray, vocab) -> float:
    """Mean cosine between each true topic and the found topic matched to it one-to-one
    (Hungarian method), over the true vocabulary."""
    index = {w: i for i, w in enumerate(found_vocab)}
    aligned = np.zeros((len(found), len(vocab)))
    for j, w in enumerate(vocab):
        if w in index:
            aligned[:, j] = found[:, index[w]]
    a = truth / np.linalg.norm(truth, axis=1, keepdims=True)
    b = aligned / np.maximum(np.linalg.norm(aligned, axis=1, keepdims=True), 1e-300)
    cos = a @ b.T
    rows, cols = linear_sum_assignment(-cos)
    return float(cos[rows, cols].mean())
