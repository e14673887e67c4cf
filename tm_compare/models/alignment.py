"""Matching topics between fits, and their lineage across the k grid.

Topics are compared by their term distributions ``phi_k``:

- ``"jensen_shannon"``: similarity ``1 - JSD(p, q)``, where JSD is the Jensen-Shannon
  distance with base-2 logarithms (the square root of the divergence; Endres & Schindelin
  2003), as ``scipy.spatial.distance.jensenshannon(p, q, base=2)``; it lies in [0, 1].
- ``"cosine"``: cosine similarity of the two probability vectors.

Fits with different vocabularies are compared on the union of their terms.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
from scipy.optimize import linear_sum_assignment

from .._validation import check_choice, param_error
from ..errors import ComparisonError

_METRICS = ("jensen_shannon", "cosine")


def similarity_matrix(fit_a, fit_b, metric: str = "jensen_shannon") -> np.ndarray:
    """Similarity (k_a x k_b) of every topic of ``fit_a`` with every topic of ``fit_b``."""
    return _similarity("similarity_matrix", fit_a, fit_b, metric)


def _similarity(owner: str, fit_a, fit_b, metric: str) -> np.ndarray:
    check_choice(owner, "metric", metric, _METRICS)
    for name, fit in (("fit_a", fit_a), ("fit_b", fit_b)):
        if not all(hasattr(fit, a) for a in ("topic_term", "vocab", "random_state")):
            raise param_error(
                owner,
                name,
                fit,
                "a fitted model (a Fit)",
                "Pass fits, e.g. sweep.get_fit(k, seed) or load_fit(project, k, seed), "
                "not a number of topics.",
            )
    a, b = _common_vocab(fit_a, fit_b)
    if metric == "cosine":
        na = a / np.linalg.norm(a, axis=1, keepdims=True)
        nb = b / np.linalg.norm(b, axis=1, keepdims=True)
        return na @ nb.T
    out = np.empty((len(a), len(b)))
    for i, p in enumerate(a):  # one row at a time keeps memory at k_b x V
        m = (p + b) / 2
        with np.errstate(divide="ignore", invalid="ignore"):
            kl_p = np.where(p > 0, p * np.log2(p / m), 0.0).sum(axis=1)
            kl_q = np.where(b > 0, b * np.log2(b / m), 0.0).sum(axis=1)
        out[i] = 1 - np.sqrt(np.clip((kl_p + kl_q) / 2, 0, None))
    return out


def _common_vocab(fit_a, fit_b):
    a = _normalised(fit_a)
    b = _normalised(fit_b)
    if list(fit_a.vocab) == list(fit_b.vocab):
        return a, b
    union = {term: i for i, term in enumerate(dict.fromkeys([*fit_a.vocab, *fit_b.vocab]))}
    out = []
    for fit, phi in ((fit_a, a), (fit_b, b)):
        wide = np.zeros((phi.shape[0], len(union)))
        wide[:, [union[t] for t in fit.vocab]] = phi
        out.append(wide)
    return out[0], out[1]


def _normalised(fit):
    phi = np.asarray(fit.topic_term, dtype=float)
    if (
        phi.ndim != 2
        or phi.shape[1] != len(fit.vocab)
        or not np.isfinite(phi).all()
        or (phi < 0).any()
    ):
        msg = (
            f"A fit's topic_term has shape {phi.shape} for {len(fit.vocab)} vocabulary terms, or "
            "holds negative or non-finite values; topic alignment needs k x V probabilities. "
            "Use a complete fit."
        )
        raise ComparisonError(msg)
    return phi / phi.sum(axis=1, keepdims=True)


def align_topics(fit_a, fit_b, metric: str = "jensen_shannon") -> pd.DataFrame:
    """Pair the topics of ``fit_b`` with topics of ``fit_a``.

    With equal k the pairing is one-to-one and maximises the total similarity (Hungarian
    method, Kuhn 1955, via ``scipy.optimize.linear_sum_assignment``). With different k it is
    many-to-one: each topic of ``fit_b`` goes to its most similar topic of ``fit_a``.

    Returns
    -------
    DataFrame, one row per topic of ``fit_b`` in order: ``topic_a``, ``topic_b``,
    ``similarity``, ``metric``, ``matching`` ("one-to-one" or "many-to-one"),
    ``runner_up`` (similarity of ``topic_b``'s next most similar topic of ``fit_a``; a close
    runner-up means an uncertain match), ``k_a``, ``k_b``, ``seed_a``, ``seed_b`` (the fits'
    ``random_state``, their seed in a sweep).
    """
    sim = _similarity("align_topics", fit_a, fit_b, metric)
    k_a, k_b = sim.shape
    if k_a == k_b:
        rows, cols = linear_sum_assignment(sim, maximize=True)
        pick = np.empty(k_b, dtype=int)
        pick[cols] = rows
        matching = "one-to-one"
    else:
        pick = sim.argmax(axis=0)
        matching = "many-to-one"
    others = sim.copy()
    others[pick, np.arange(k_b)] = -np.inf
    runner_up = others.max(axis=0) if k_a > 1 else np.full(k_b, np.nan)
    return pd.DataFrame(
        {
            "topic_a": pick,
            "topic_b": np.arange(k_b),
            "similarity": sim[pick, np.arange(k_b)],
            "metric": metric,
            "matching": matching,
            "runner_up": runner_up,
            "k_a": k_a,
            "k_b": k_b,
            "seed_a": fit_a.random_state,
            "seed_b": fit_b.random_state,
        }
    )


def lineage(fits_by_k, metric: str = "jensen_shannon") -> pd.DataFrame:
    """Which topics continue, split or merge as k grows.

    For each pair of neighbouring k (k < k'), every topic at k' is linked to its most similar
    topic at k (its parent) and every topic at k to its most similar topic at k' (its
    child). A topic at k with several links is said to split; a topic at k' with several
    links is a merge of its linked topics.

    Parameters
    ----------
    fits_by_k : mapping k -> fit, or an iterable of fits (one per k).

    Returns
    -------
    DataFrame, one row per link: ``k_from``, ``topic_from``, ``k_to``, ``topic_to``,
    ``similarity``, ``metric``, ``relation`` ("continues", "splits", "merges" or
    "splits and merges"), ``n_links_from`` and ``n_links_to`` (links of each end).
    """
    check_choice("lineage", "metric", metric, _METRICS)
    listed = list(fits_by_k.values() if isinstance(fits_by_k, dict) else fits_by_k)
    for fit in listed:
        if not hasattr(fit, "k"):
            raise param_error(
                "lineage",
                "fits_by_k",
                fit,
                "fits (a mapping k -> Fit, or an iterable of Fit)",
                "Pass e.g. {k: sweep.get_fit(k, seed) for k in sweep_ks}.",
            )
    fits = dict(fits_by_k) if isinstance(fits_by_k, dict) else {int(f.k): f for f in listed}
    if len(fits) < 2:
        msg = (
            f"lineage needs fits for at least two values of k; got k = {sorted(fits)}. "
            "Pass e.g. {k: sweep.get_fit(k, seed) for k in sweep_ks}."
        )
        raise ComparisonError(msg)
    ks = sorted(fits)
    frames = []
    for small, large in zip(ks[:-1], ks[1:], strict=True):
        sim = _similarity("lineage", fits[small], fits[large], metric)
        links = {(int(p), j) for j, p in enumerate(sim.argmax(axis=0))}
        links |= {(i, int(c)) for i, c in enumerate(sim.argmax(axis=1))}
        frame = pd.DataFrame(sorted(links), columns=["topic_from", "topic_to"])
        frame["n_links_from"] = frame.groupby("topic_from")["topic_to"].transform("size")
        frame["n_links_to"] = frame.groupby("topic_to")["topic_from"].transform("size")
        split, merge = frame.n_links_from > 1, frame.n_links_to > 1
        frame["relation"] = np.select(
            [split & merge, split, merge], ["splits and merges", "splits", "merges"], "continues"
        )
        frame["similarity"] = sim[frame.topic_from, frame.topic_to]
        frames.append(frame.assign(k_from=small, k_to=large, metric=metric))
    cols = [
        "k_from",
        "topic_from",
        "k_to",
        "topic_to",
        "similarity",
        "metric",
        "relation",
        "n_links_from",
        "n_links_to",
    ]
    return pd.concat(frames, ignore_index=True)[cols]
