"""Reading a topic through its terms: term rankings and how each source words a topic.

Term rankings (``phi_kw = p(w | k)``, ``p_w`` the corpus share of term w):

- ``"probability"``: ``phi_kw``.
- ``"lift"``: ``phi_kw / p_w`` (Taddy 2012, "On estimation and selection for topic models").
- ``"frex"``: the weighted harmonic mean of a term's frequency and exclusivity ranks within
  the topic, ``1 / (w / ECDF(excl_kw) + (1 - w) / ECDF(phi_kw))`` with exclusivity
  ``excl_kw = phi_kw / sum_j phi_jw`` (Bischof & Airoldi 2012; ranks with ties averaged).
- ``"relevance"``: ``lam * log phi_kw + (1 - lam) * log(phi_kw / p_w)`` (Sievert & Shirley
  2014, who found lam near 0.6 best for reading topics).

``p_w`` is the empirical share of term w in the prepared corpus when ``prepared`` is given,
otherwise the model's marginal ``sum_k pi_k phi_kw`` with ``pi`` the mean topic share.

Every ranking's score grows with its order (rank 1 has the highest score); relevance scores are
logs, hence negative, so charts draw ranks, never raw scores, as lengths.

Beside each ranked term: ``probability`` (``phi_kw``, how much of the topic the term is) and
``share_of_term`` (``p(k | w) = pi_k phi_kw / sum_j pi_j phi_jw``, how much of the term's use falls
in the topic, with ``pi`` the topics' share of the corpus's tokens; Bayes' rule). The term map of
the topic view plots one against the other. :func:`find_topics` lists the topics where a word
ranks high.
"""

from __future__ import annotations

import functools
import weakref
from dataclasses import dataclass

import numpy as np
import pandas as pd
import scipy.sparse as sp
from scipy.stats import rankdata

from .._deprecation import renamed_parameters, warn_renamed
from .._validation import check_choice, param_error
from ..errors import ComparisonError
from ..models.fits import check_pair
from ..options import choices, default

_METHODS = choices("method")


def _method_second(func):
    # The old order term_rankings(fit, "frex", prepared=p) still works for one release.
    @functools.wraps(func)
    def wrapper(fit, *args, **kwargs):
        if args and isinstance(args[0], str):
            warn_renamed(
                "term_rankings(fit, method, prepared=...)",
                "term_rankings(fit, prepared, method=...)",
            )
            kwargs["method"], args = args[0], args[1:]
        return func(fit, *args, **kwargs)

    return wrapper


@_method_second
@renamed_parameters(topn="n_terms")
def term_rankings(
    fit,
    prepared=None,
    method: str = default("method"),
    *,
    n_terms: int = default("n_terms"),
    lam: float = default("lam"),
    frex_weight: float = default("frex_weight"),
) -> pd.DataFrame:
    """Rank the terms of every topic.

    Parameters
    ----------
    fit : Fit (``topic_term`` k x V, ``vocab``; ``doc_topic`` when ``prepared`` is not given
        and the method needs ``p_w``).
    prepared : PreparedCorpus whose ``bow`` gives the empirical ``p_w``, optional.
    method : "probability", "lift", "frex" or "relevance" (see the module notes).
    n_terms : terms per topic.
    lam : relevance weight of ``log phi`` (1 gives probability order, 0 lift order).
    frex_weight : FREX weight of exclusivity (0.5 weighs both equally).

    Returns
    -------
    DataFrame, ``n_terms`` rows per topic: ``topic``, ``rank`` (1 = first), ``term``,
    ``term_id``, ``score``, ``probability`` (``phi_kw``), ``share_of_term`` (``p(k | w)``),
    ``method``, ``parameter`` (``lam`` for relevance, ``frex_weight`` for FREX, NaN otherwise).
    Ties keep term-id order.
    """
    owner = "term_rankings"
    check_choice(owner, "method", method, _METHODS)
    if not (isinstance(n_terms, int | np.integer) and n_terms >= 1):
        raise param_error(owner, "n_terms", n_terms, "an integer >= 1")
    for name, value in (("lam", lam), ("frex_weight", frex_weight)):
        if not (isinstance(value, float | int) and 0 <= value <= 1):
            raise param_error(owner, name, value, "a number in [0, 1]")
    check_pair(owner, fit, prepared)
    phi = _topic_term(fit, owner)
    score = ranking_scores(phi, method, lam, frex_weight, lambda: _term_share(fit, prepared, phi))
    order = np.argsort(-np.nan_to_num(score, nan=-np.inf), axis=1, kind="stable")[:, :n_terms]
    share = topic_given_term(fit, prepared, phi)
    k, n = order.shape
    rows = np.repeat(np.arange(k), n)
    vocab = np.asarray(fit.vocab, dtype=object)
    parameter = {"relevance": lam, "frex": frex_weight}.get(method, np.nan)
    return pd.DataFrame(
        {
            "topic": rows,
            "rank": np.tile(np.arange(1, n + 1), k),
            "term": vocab[order.ravel()],
            "term_id": order.ravel(),
            "score": score[rows, order.ravel()],
            "probability": phi[rows, order.ravel()],
            "share_of_term": share[rows, order.ravel()],
            "method": method,
            "parameter": parameter,
        }
    )


def ranking_scores(
    phi,
    method: str,
    lam: float = default("lam"),
    frex_weight: float = default("frex_weight"),
    term_share=None,
) -> np.ndarray:
    """Scores (k x V) of one ranking method; ``term_share()`` returns ``p_w`` when needed."""
    if method == "probability":
        return phi
    if method == "frex":
        n_terms = phi.shape[1]
        with np.errstate(divide="ignore", invalid="ignore"):
            exclusivity = phi / phi.sum(axis=0, keepdims=True)
        freq = rankdata(phi, axis=1) / n_terms
        excl = rankdata(np.nan_to_num(exclusivity), axis=1) / n_terms
        return 1 / (frex_weight / excl + (1 - frex_weight) / freq)
    share = term_share()
    with np.errstate(divide="ignore", invalid="ignore"):
        # A term absent from the corpus has no lift: NaN, ranked last.
        log_lift = np.log(phi) - np.log(np.where(share > 0, share, np.nan))
        if method == "lift":
            return np.exp(log_lift)
        return lam * np.log(phi) + (1 - lam) * log_lift


def topic_given_term(fit, prepared=None, phi=None) -> np.ndarray:
    """``p(k | w)`` (k x V): the share of each term's use that falls in each topic.

    Bayes' rule on the model, ``pi_k phi_kw / sum_j pi_j phi_jw``, with ``pi_k`` the topic's
    share of the tokens (documents weighted by their length in ``prepared``; without it, the mean
    topic share). A term no topic uses gives NaN.
    """
    phi = _topic_term(fit, "topic_given_term") if phi is None else phi
    theta = np.asarray(fit.doc_topic, dtype=float)
    if prepared is not None:
        lengths = np.asarray(count_matrix(prepared, phi.shape[1]).sum(axis=1)).ravel()
        if len(lengths) == len(theta) and lengths.sum() > 0:
            pi = lengths @ theta / lengths.sum()
        else:
            pi = theta.mean(axis=0)
    else:
        pi = theta.mean(axis=0)
    joint = pi[:, None] * phi
    with np.errstate(divide="ignore", invalid="ignore"):
        total = joint.sum(axis=0, keepdims=True)
        return joint / np.where(total > 0, total, np.nan)


def find_topics(
    fit,
    word: str,
    prepared=None,
    *,
    method: str = default("method"),
    n_terms: int = 30,
    lam: float = default("lam"),
    frex_weight: float = default("frex_weight"),
) -> pd.DataFrame:
    """The topics where ``word`` ranks among the top ``n_terms`` terms, best rank first.

    ``word`` matches a vocabulary term whatever its case; a phrase term such as
    ``city_council`` is also found as "city council" or "city-council". A word absent from the
    vocabulary raises SettingsError naming the closest terms.

    Returns
    -------
    DataFrame, one row per topic where the word ranks high (empty when it ranks high nowhere),
    best rank first, then the topic the word is more of:
    ``topic``, ``term``, ``rank`` (1 = first under ``method``), ``score``, ``probability``
    (``p(w | k)``), ``share_of_term`` (``p(k | w)``), ``method``, ``n_terms``.
    """
    import difflib
    import re

    owner = "find_topics"
    check_choice(owner, "method", method, _METHODS)
    if not (isinstance(n_terms, int | np.integer) and n_terms >= 1):
        raise param_error(owner, "n_terms", n_terms, "an integer >= 1")
    if not isinstance(word, str) or not word.strip():
        raise param_error(owner, "word", word, "a word of the model's vocabulary")
    wanted = "_".join(w for w in re.split(r"[\s_-]+", word.strip().lower()) if w)
    vocab = [str(v) for v in fit.vocab]
    hits = [i for i, v in enumerate(vocab) if v.lower() == wanted]
    if not hits:
        close = difflib.get_close_matches(wanted, vocab, n=5, cutoff=0.6)
        fix = (
            f"Closest terms: {', '.join(close)}."
            if close
            else "Check the spelling, or look at fit.vocab."
        )
        accepted = f"a term of the model's vocabulary ({len(vocab):,} terms)"
        raise param_error(owner, "word", word, accepted, fix)
    table = term_rankings(
        fit,
        prepared,
        method,
        n_terms=min(int(n_terms), len(vocab)),
        lam=lam,
        frex_weight=frex_weight,
    )
    found = table[table["term_id"].isin(hits)].sort_values(
        ["rank", "probability", "topic"], ascending=[True, False, True], kind="stable"
    )
    columns = ["topic", "term", "rank", "score", "probability", "share_of_term", "method"]
    return found[columns].reset_index(drop=True).assign(n_terms=int(n_terms))


def _topic_term(fit, owner):
    phi = np.asarray(fit.topic_term, dtype=float)
    if phi.ndim != 2 or phi.shape != (int(fit.k), len(fit.vocab)):
        msg = (
            f"The model's topic_term has shape {phi.shape}, but it has k={fit.k} topics and "
            f"{len(fit.vocab)} vocabulary terms ({owner}). Use a complete fit."
        )
        raise ComparisonError(msg)
    return phi


def _term_share(fit, prepared, phi) -> np.ndarray:
    if prepared is None:
        return np.asarray(fit.doc_topic, dtype=float).mean(axis=0) @ phi
    counts = np.asarray(count_matrix(prepared, phi.shape[1]).sum(axis=0)).ravel()
    return counts / counts.sum()


# Counts are rebuilt from ``bow`` at most once per prepared corpus (views ask per topic).
_COUNTS: weakref.WeakKeyDictionary = weakref.WeakKeyDictionary()


def count_matrix(prepared, n_terms: int) -> sp.csr_matrix:
    """Document-term counts (D x V) from ``prepared.bow``, cached per prepared corpus."""
    cached = _COUNTS.get(prepared)
    if cached is not None and cached.shape[1] == n_terms:
        return cached
    ids = prepared.bow.ids
    if len(ids) and ids.max() >= n_terms:
        msg = (
            f"The prepared corpus uses term id {int(ids.max())}, but the model has "
            f"{n_terms} terms: the fit was trained on another dictionary. Use the fit of this "
            "prepared corpus."
        )
        raise ComparisonError(msg)
    # Float counts: every use multiplies them by topic shares.
    matrix = prepared.bow.to_csr(n_terms).astype(float)
    _COUNTS[prepared] = matrix
    return matrix


@dataclass(frozen=True)
class TopicCounts:
    """Topic-weighted term counts of every topic, per source: ``by_source[s]`` is V x k."""

    weighting: str
    by_source: dict


def topic_term_counts(fit, prepared, *, weighting: str = default("weighting")) -> TopicCounts:
    """Topic-weighted term counts of all topics in every source, as :func:`source_wording`
    uses them: document d adds ``c_dw * theta_dk`` (times its weight under "exposure").

    One sparse product for all k topics costs about as much as a few single-topic ones.
    """
    check_choice("topic_term_counts", "weighting", weighting, choices("weighting"))
    check_pair("topic_term_counts", fit, prepared)
    theta = np.asarray(fit.doc_topic, dtype=float)
    weights = np.asarray(prepared.weights, dtype=float) if weighting == "exposure" else None
    counts = count_matrix(prepared, _topic_term(fit, "topic_term_counts").shape[1])
    # Source codes from the column itself (no array of strings), sources in sorted order.
    codes, names = pd.factorize(
        prepared.meta["source"].astype(str), sort=True, use_na_sentinel=False
    )
    by_source = {}
    for code, name in enumerate(names):
        rows = np.flatnonzero(codes == code)
        part = theta[rows]  # a copy: weighted in place, the same products as the whole at once
        if weights is not None:
            part *= weights[rows, None]
        by_source[str(name)] = np.asarray(counts[rows].T @ part)
    return TopicCounts(weighting, by_source)


@renamed_parameters(topn="n_terms")
def source_wording(
    fit,
    prepared,
    topic: int,
    *,
    against: str = default("against"),
    sources=None,
    weighting: str = default("weighting"),
    prior_strength: float | None = None,
    n_terms: int = default("n_terms"),
    topic_counts: TopicCounts | None = None,
) -> pd.DataFrame:
    """Which terms each source uses more than the others when writing about ``topic``.

    Counts are topic-weighted: document d adds ``c_dw * theta_dk`` (times its weight under
    ``weighting="exposure"``) to its source's count of term w. Sources are compared by the
    log-odds ratio with an informative Dirichlet prior (Monroe, Colaresi & Quinn 2008,
    "Fightin' Words", eqs. 16-22)::

        delta_w = log((y_iw + a_w) / (n_i + a_0 - y_iw - a_w))
                - log((y_jw + a_w) / (n_j + a_0 - y_jw - a_w))
        var_w   = 1 / (y_iw + a_w) + 1 / (y_jw + a_w),     z_w = delta_w / sqrt(var_w)

    with prior ``a_w = a_0 * y_w / n`` from the topic-weighted counts of all compared
    sources together, and ``a_0 = prior_strength`` (default: ``n``, i.e. ``a_w = y_w``).

    ``topic_counts`` (from :func:`topic_term_counts`, same ``weighting``) holds these counts
    for every topic at once; views that show topic after topic compute it once per model.

    Returns
    -------
    DataFrame with the ``n_terms`` terms of highest z for each (source, other) comparison:
    ``topic``, ``source``, ``other`` (a source or "rest"), ``rank``, ``term``, ``term_id``,
    ``log_odds`` (delta), ``std_error``, ``z``, ``count_source``, ``count_other``
    (topic-weighted counts), ``weighting``, ``prior_strength``.
    """
    owner = "source_wording"
    check_choice(owner, "against", against, choices("against"))
    check_choice(owner, "weighting", weighting, choices("weighting"))
    phi = _topic_term(fit, owner)
    if not (isinstance(topic, int | np.integer) and 0 <= topic < phi.shape[0]):
        raise param_error(owner, "topic", topic, f"a topic number from 0 to {phi.shape[0] - 1}")
    if not (isinstance(n_terms, int | np.integer) and n_terms >= 1):
        raise param_error(owner, "n_terms", n_terms, "an integer >= 1")
    if prior_strength is not None and not (
        isinstance(prior_strength, float | int) and prior_strength > 0
    ):
        raise param_error(owner, "prior_strength", prior_strength, "None or a number > 0")
    if topic_counts is not None and topic_counts.weighting != weighting:
        accepted = f"counts computed with weighting={weighting!r}"
        raise param_error(owner, "topic_counts", topic_counts.weighting, accepted)
    if topic_counts is None:
        shares = np.asarray(fit.doc_topic, dtype=float)[:, topic]
        doc_sources = np.asarray(prepared.sources).astype(str)
        if len(shares) != len(doc_sources):
            msg = f"The model has {len(shares)} documents, the prepared corpus {len(doc_sources)} ({owner}). Use the fit of this prepared corpus."
            raise ComparisonError(msg)
        present = np.unique(doc_sources).tolist()  # doc_sources is already str
    else:
        # The counts were made from this corpus once: a view's topic switch reads a column.
        present = sorted(topic_counts.by_source)
    names = present if sources is None else [str(s) for s in sources]
    absent = [s for s in names if s not in present]
    if absent or len(names) < 2:
        msg = (
            f"source_wording compares at least two sources with documents; got {names} "
            f"(without documents: {absent}). Sources with documents: {present}."
        )
        raise ComparisonError(msg)
    if topic_counts is None:
        weight = shares * (
            np.asarray(prepared.weights, dtype=float) if weighting == "exposure" else 1.0
        )
        counts = count_matrix(prepared, phi.shape[1])
        by_source = {s: counts.T @ np.where(doc_sources == s, weight, 0.0) for s in names}
    else:
        by_source = {s: topic_counts.by_source[s][:, topic] for s in names}
    background = sum(by_source.values())
    total = background.sum()
    prior = (total if prior_strength is None else float(prior_strength)) * background / total
    pairs = (
        [(a, b) for a in names for b in names if a != b]
        if against == "each"
        else [(a, "rest") for a in names]
    )
    frames = []
    for a, b in pairs:
        y_i = by_source[a]
        y_j = background - y_i if b == "rest" else by_source[b]
        delta, se = log_odds_with_prior(y_i, y_j, prior)
        z = delta / se
        order = np.argsort(-np.nan_to_num(z, nan=-np.inf), kind="stable")[:n_terms]
        frames.append(
            pd.DataFrame(
                {
                    "topic": topic,
                    "source": a,
                    "other": b,
                    "rank": np.arange(1, len(order) + 1),
                    "term": np.asarray(fit.vocab, dtype=object)[order],
                    "term_id": order,
                    "log_odds": delta[order],
                    "std_error": se[order],
                    "z": z[order],
                    "count_source": y_i[order],
                    "count_other": y_j[order],
                }
            )
        )
    out = pd.concat(frames, ignore_index=True)
    return out.assign(weighting=weighting, prior_strength=float(prior.sum()))


def log_odds_with_prior(y_i, y_j, prior):
    """Log-odds ratio of each term between two count vectors, and its standard error.

    Monroe, Colaresi & Quinn (2008), eqs. 16-22; terms with ``prior == 0`` give NaN.
    """
    a0 = prior.sum()
    n_i, n_j = y_i.sum(), y_j.sum()
    with np.errstate(divide="ignore", invalid="ignore"):
        delta = np.log((y_i + prior) / (n_i + a0 - y_i - prior)) - np.log(
            (y_j + prior) / (n_j + a0 - y_j - prior)
        )
        se = np.sqrt(1 / (y_i + prior) + 1 / (y_j + prior))
    return delta, se
