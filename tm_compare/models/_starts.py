"""Several starts per fit: the start whose first updates look best is the one fitted.

Online LDA settles in the basin its first few updates find, and that basin depends on the
random start. On the 3,000-document demo (nine planted themes, one dominant theme per
article) only 2 of 10 starts at k = 9 found all nine themes (planted-theme NMI 0.92); the
others merged two themes and spent the spare topics thinly (NMI 0.82-0.89). Which basin a
start reaches is already visible after one pass (NMI and held-out perplexity after pass 1
ranked the 10 starts as the finished fits did), and settings did not change the odds
(measured: 4-5 times more E-step iterations, batch updates, a larger learning-rate offset,
smaller or larger priors, chunks of 50; DEVELOPERS.md, "Several starts"). Running several
random starts and keeping the best is the common remedy for local optima (e.g. k-means'
``n_init``; Roberts, Stewart & Tingley 2016 on topic models, from memory).

Each fit with ``starts = n`` therefore *probes* n starts cheaply and fits the best in full:

- a probe is the engine run for ``PROBE_UPDATES`` online updates, on the first
  ``PROBE_UPDATES`` chunks of the training documents (the chunks the fit itself begins
  with), from that start's seed;
- probes are ranked by their junk topics (near-empty or rarely dominant, see
  :mod:`tm_compare.models.quality`; near-duplicates are left out, as topics after three
  updates are still blurred), then by the per-word log-likelihood of those documents under
  the probe's topics and shares (higher is better). Held-out documents are never read;
- the fit then runs from the winning start as any fit does. Start 0 is the fit's own
  ``random_state``, so ``starts=1`` is exactly the single fit of earlier versions; start j
  >= 1 uses a seed drawn from ``numpy.random.SeedSequence([random_state, j])``.

On the demo, three updates' probes ranked the 18 starts measured so that the best-ranked
start of every group of four but one finished without junk topics; each probe costs about a
tenth of a fit.
"""

from __future__ import annotations

import numpy as np

from . import _engines
from .quality import junk_of_shares

PROBE_UPDATES = 3  # online updates a probe makes


def start_seed(random_state: int, start: int) -> int:
    """The engine seed of start ``start`` of a fit with ``random_state`` (start 0: itself)."""
    if start == 0:
        return int(random_state)
    return int(np.random.SeedSequence([int(random_state), int(start)]).generate_state(1)[0])


def best_start(data, k: int, random_state: int, engine: str, settings: dict):
    """(engine seed, probe state or None) of the best of ``settings["starts"]`` starts (see
    module notes); the state goes to ``_engines.run(..., start=state)``."""
    starts = int(settings.get("starts", 1))
    if starts <= 1:
        return int(random_state), None
    n_train = int((~data.heldout).sum())
    if _engines.can_probe(engine, settings, n_train, PROBE_UPDATES):
        return _best_continued(data, k, random_state, engine, settings, starts)
    return _best_refitted(data, k, random_state, engine, settings, starts), None


def _best_continued(data, k, random_state, engine, settings, starts):
    best = None
    for start in range(starts):
        seed = start_seed(random_state, start)
        state, rows, gamma, lam = _engines.probe(
            engine, data.matrix, data.heldout, k, seed, settings, data.vocab, PROBE_UPDATES
        )
        shares = gamma / gamma.sum(axis=1, keepdims=True)
        topics = lam / lam.sum(axis=1, keepdims=True)
        rank = (junk_of_shares(shares), -word_likelihood(data.matrix[rows], shares, topics), start)
        if best is None or rank < best[0]:
            best = (rank, seed, state)  # only the best state so far is kept
    return best[1], best[2]


def _best_refitted(data, k, random_state, engine, settings, starts):
    train = np.flatnonzero(~data.heldout)
    size = _engines.resolve_chunksize(settings["chunksize"], len(train))
    rows = train[: size * PROBE_UPDATES]
    matrix = data.matrix[rows]
    probe = {
        **{n: v for n, v in settings.items() if n != "starts"},
        "passes": 1,
        "tol": 0,
        "chunksize": size,
    }
    ranked = []
    for start in range(starts):
        seed = start_seed(random_state, start)
        result = _engines.run(
            engine, matrix, np.zeros(len(rows), dtype=bool), k, seed, probe, data.vocab
        )
        shares = result.gamma / result.gamma.sum(axis=1, keepdims=True)
        ranked.append(
            (
                junk_of_shares(shares),
                -word_likelihood(matrix, shares, result.topic_term),
                start,
                seed,
            )
        )
    return min(ranked)[3]


def word_likelihood(matrix, shares: np.ndarray, topic_term: np.ndarray) -> float:
    """Per-word log-likelihood of the documents of ``matrix`` (counts) given each document's
    topic shares and the topics: sum over words of count * log(shares_d . topic_term[:, w]),
    divided by the number of words."""
    coo = matrix.tocoo()
    p = np.einsum("ij,ji->i", shares[coo.row], topic_term[:, coo.col])
    return float((coo.data * np.log(np.maximum(p, 1e-300))).sum() / max(coo.data.sum(), 1))
