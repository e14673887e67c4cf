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

- a probe is the fit itself from that start's seed, stopped after its first
  ``PROBE_UPDATES`` online updates and the E-step of its next chunk (the same random draws in
  the same order as the fit, so the probe *is* the start of the fit);
- probes are ranked by the junk topics (near-empty or rarely dominant, see
  :mod:`tm_compare.models.quality`; near-duplicates are left out, as topics after three
  updates are still blurred) of that next chunk's documents, with the shares of that E-step,
  then by the per-word log-likelihood of those documents under those shares and the topics
  after the probe's updates (higher is better). These documents are new to the probe's
  topics; held-out documents are never read;
- the fit then continues from the winning probe (compiled engine): it makes that chunk's
  M-step and goes on, which equals a fresh fit from the winning seed (tests/test_starts.py,
  to 1e-8; in fact the same arithmetic), so the winner's probe costs nothing and no
  separate inference is made. The gensim engine probes the same way (same draws, so the
  same ranking) and fits the winner afresh. scikit-learn's engine, and any fit whose pass has
  no more than ``PROBE_UPDATES`` chunks, probe as before this design: a one-pass fit on the
  first ``PROBE_UPDATES`` chunks, ranked on a fresh inference of those documents, then a
  fresh fit. Start 0 is the fit's own ``random_state``, so ``starts=1`` is exactly the
  single fit of earlier versions; start j >= 1 uses a seed drawn from
  ``numpy.random.SeedSequence([random_state, j])``.

Measured (demo grid k = 6, 8, 9, 10, 12 x seeds 0-2; every start of every fit run to the end
to score what each rule picks; DEVELOPERS.md, "Several starts"):

- Ranking on the next chunk's E-step picked the same start as the former rule (an inference
  of the probe's three chunks after its updates) in 14 of 15 fits on the 20,000-document demo
  and 11 of 15 on the 3,000-document one; each differing pick had fewer or as many junk
  topics at the end (k = 9 seed 0 of 3,000: NMI 0.919 and no junk against 0.883 and one).
  At k = 9 the picks reach NMI 0.916 (20k) and 0.919-0.921 (3k) for every seed.
- Fewer updates or starts rank worse: k = 9 NMI, mean of three seeds, 3k / 20k, with
  (updates, starts) = (3, 8) 0.920 / 0.916; (2, 8) 0.903 / 0.916; (1, 8) 0.903 / 0.904;
  (3, 6) 0.882 / 0.916; (3, 4) 0.868 / 0.916; fits left with junk (of 15) 5 / 3 for (3, 8),
  more for every other. Hence 3 updates and 8 starts.
- The first updates are what a probe costs: every document of the first chunk runs the
  E-step's 50-iteration cap (topics are still the random start), then 36, 24 and 19
  iterations on average over the next chunks (7-10 after a pass). Probes of 1, 2 and 3
  updates cost 0.17, 0.21 and 0.23 s of CPU each (20k, mean over k, load ~5). So dropping
  starts early saves little: keeping the best 4 after two updates picked the same starts as
  all 8 to three updates (15 of 15 on both corpora) but saves 4 of 32 E-steps; not done.
  Fewer E-step iterations in probes would make the probe no longer the start of the fit;
  not done.
- Cost, 15 fits of that grid on the 20k demo in one process (CPU, load 3-7): probes plus fit
  43-51 s, of which probes 28-32 s, against 88-98 s (probes 59-66 s) with a separate
  inference per probe, a refit of the winner and the former E-step kernel; one start 24 s
  against 33 s.
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
