"""Per-model tables behind a topic view: computed once per setting, per topic on first use.

Switching the selected topic must stay fast on large corpora, so everything that does not depend
on the topic (comparison tables, term rankings of all topics) is computed once per setting, and
what does (how sources word it, its representative documents) is cached per topic. Every number
comes from the plain functions of :mod:`tm_compare.comparison`, :mod:`tm_compare.terms` and
:mod:`tm_compare.documents`; this module only reshapes their output for the charts.
"""

from __future__ import annotations

import warnings
from types import SimpleNamespace

import numpy as np
import pandas as pd

from .compare import documents, terms
from .compare import prevalence as comparison

#: Term rankings offered, with the weight each one takes (None: no weight).
RANKINGS = {
    "probability": None,
    "lift": None,
    "frex": ("FREX weight", 0.5),
    "relevance": ("relevance weight (lambda)", 0.6),
}


class ModelTables:
    """Tables of one fitted model on its prepared corpus, cached for interaction.

    Parameters
    ----------
    fit : Fit
    prepared : PreparedCorpus
    n_boot : int
        Bootstrap replicates for prevalence and differences.
    n_terms, n_docs : int
        Terms per topic and documents per topic and source shown.
    random_state : int
    """

    def __init__(self, fit, prepared, *, n_boot=1000, n_terms=12, n_docs=4, random_state=0):
        self.fit = fit
        self.prepared = prepared
        self.n_boot = n_boot
        self.n_terms = n_terms
        self.n_docs = n_docs
        self.random_state = random_state
        self._doc_sources = np.asarray(prepared.sources).astype(str)
        self.sources = sorted(set(self._doc_sources))
        self._source_rows = {s: np.flatnonzero(self._doc_sources == s) for s in self.sources}
        self._n_candidates = 10 * n_docs
        self._comparisons: dict = {}
        self._terms: dict = {}
        self._wording: dict = {}
        self._documents: dict = {}
        self._wording_counts = None
        # the same 10 top terms the snippets of representative_documents are cut around
        self._top_words = fit.top_words(10)
        self.captions = {t: f"{t} · {' '.join(w[:3])}" for t, w in enumerate(self._top_words)}

    @property
    def k(self) -> int:
        return int(self.fit.k)

    def cluster_choices(self) -> list[str]:
        """Columns the bootstrap can resample by: ``group`` when given, and ``outlet``."""
        choices = []
        groups = np.asarray(self.prepared.groups, dtype=object)
        if any(g is not None and g == g for g in groups):
            choices.append("group")
        meta = self.prepared.meta
        if "outlet" in meta.columns and meta["outlet"].notna().any():
            choices.append("outlet")
        return choices

    def comparison(self, weighting: str, cluster: str | None) -> dict:
        """Prevalence, differences and the influence check for one weighting and cluster column."""
        key = (weighting, cluster)
        if key not in self._comparisons:
            common = dict(
                weighting=weighting,
                cluster=cluster,
                n_boot=self.n_boot,
                random_state=self.random_state,
            )
            prev = comparison.prevalence(self.fit, self.prepared, **common)
            diff = comparison.differences(self.fit, self.prepared, **common)
            heavy = None
            if cluster is not None:
                with warnings.catch_warnings():
                    warnings.simplefilter("ignore", UserWarning)
                    heavy = comparison.influence(
                        self.prepared, weighting=weighting, cluster=cluster, warn=False
                    )
            self._comparisons[key] = {"prevalence": prev, "differences": diff, "influence": heavy}
        return self._comparisons[key]

    def pairs(self, weighting: str, cluster: str | None) -> list[tuple[str, str]]:
        diff = self.comparison(weighting, cluster)["differences"]
        return list(dict.fromkeys(zip(diff["source"], diff["other"], strict=True)))

    def chart_frames(self, weighting, cluster, pair) -> tuple[pd.DataFrame, pd.DataFrame]:
        """Frames for :func:`tm_compare.charts.source_chart`, topics ordered by difference."""
        tables = self.comparison(weighting, cluster)
        prev = tables["prevalence"].rename(
            columns={"prevalence": "estimate", "ci_low": "lower", "ci_high": "upper"}
        )
        prev = prev[["topic", "source", "estimate", "lower", "upper"]].assign(
            name=lambda f: f["topic"].map(self.captions)
        )
        diff = tables["differences"]
        diff = diff[(diff["source"] == pair[0]) & (diff["other"] == pair[1])]
        diff = pd.DataFrame(
            {
                "topic": diff["topic"].to_numpy(),
                "name": diff["topic"].map(self.captions).to_numpy(),
                "estimate": diff["difference"].to_numpy(),
                "lower": diff["diff_ci_low"].to_numpy(),
                "upper": diff["diff_ci_high"].to_numpy(),
                "clear": diff["significant"].to_numpy(bool),
                "p_adjusted": diff["p_adjusted"].to_numpy(),
            }
        ).sort_values("estimate", ascending=False, kind="stable")
        return prev, diff.reset_index(drop=True)

    def terms(self, ranking: str, weight: float | None) -> pd.DataFrame:
        """Top terms of every topic under one ranking (``topic``, ``term``, ``score``, ``rank``)."""
        key = (ranking, weight)
        if key not in self._terms:
            options = {"relevance": {"lam": weight}, "frex": {"frex_weight": weight}}.get(
                ranking, {}
            )
            table = terms.term_rankings(
                self.fit, ranking, topn=self.n_terms, prepared=self.prepared, **options
            )
            self._terms[key] = table[["topic", "term", "score", "rank"]]
        return self._terms[key]

    def wording(self, topic: int, pair: tuple[str, str], per_side: int = 8) -> pd.DataFrame:
        """Terms the topic's documents use more in ``pair[0]`` (z > 0) or ``pair[1]`` (z < 0)."""
        key = (topic, pair)
        if key not in self._wording:
            table = terms.source_wording(
                self.fit,
                self.prepared,
                int(topic),
                against="each",
                sources=list(pair),
                topn=per_side,
                topic_counts=self._topic_counts(),
            )
            first = table[(table["source"] == pair[0]) & (table["other"] == pair[1])]
            second = table[(table["source"] == pair[1]) & (table["other"] == pair[0])]
            self._wording[key] = pd.concat(
                [
                    pd.DataFrame({"term": first["term"], "score": first["z"]}),
                    pd.DataFrame({"term": second["term"], "score": -second["z"]}),
                ],
                ignore_index=True,
            )
        return self._wording[key]

    def _topic_counts(self):
        # Every topic's counts per source in one sparse product, once per model: a topic
        # switch then only reads a column.
        if self._wording_counts is None:
            self._wording_counts = terms.topic_term_counts(self.fit, self.prepared)
        return self._wording_counts

    def documents(self, topic: int) -> dict[str, pd.DataFrame]:
        """Representative documents of ``topic``, one frame per source, ready for the cards."""
        if topic not in self._documents:
            fit, prepared = self._candidates(int(topic))
            table = documents.representative_documents(fit, prepared, 0, per_source=self.n_docs)
            table["topic"] = topic
            table = table.rename(columns={"topic_share": "share"})
            self._documents[topic] = {s: table[table["source"] == s] for s in self.sources}
        return self._documents[topic]

    def _candidates(self, topic: int):
        """The fit and corpus cut to each source's top documents of ``topic`` (one topic column).

        Representative documents are the highest shares, so only the best few hundred per
        source can be among them (ten times as many as shown are kept); handing :func:`representative_documents` those alone keeps a
        switch fast on corpora of hundreds of thousands of documents. Near-duplicates are then
        folded among these candidates only.
        """
        shares = np.asarray(self.fit.doc_topic[:, topic], dtype=float)
        keep = []
        for idx in self._source_rows.values():
            if len(idx) > self._n_candidates:
                idx = idx[np.argpartition(-shares[idx], self._n_candidates)[: self._n_candidates]]
            keep.append(np.sort(idx))
        keep = np.concatenate(keep)
        fit = SimpleNamespace(
            doc_topic=shares[keep, None],
            topic_term=self.fit.topic_term[[topic]],
            vocab=self.fit.vocab,
        )
        prepared = SimpleNamespace(
            meta=self.prepared.meta.iloc[keep].reset_index(drop=True),
            sources=self._doc_sources[keep],
            weights=np.asarray(self.prepared.weights, dtype=float)[keep],
        )
        return fit, prepared

    def emphasis_terms(self, topic: int) -> list[str]:
        """The words emphasised in the topic's documents: its top terms by probability."""
        return self._top_words[topic]
