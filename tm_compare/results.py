"""The tables of one fitted model: the one place they are computed, with one set of defaults.

:class:`ModelResults` holds a fit, its prepared corpus and the settings of the comparison
(defaults and accepted values from :mod:`tm_compare.options`). Each method returns one table,
computed on first use by the plain functions of :mod:`tm_compare.compare` and cached per
setting. The command line, the views, the report and the exports all read these same objects,
so a number is the same wherever it is shown, and every table carries the settings that shaped
it as columns.

Switching the selected topic in a view must stay fast on large corpora: what does not depend on
the topic (comparison tables, term rankings, every topic's term counts per source) is computed
once per setting, and what does (how sources word it, its representative documents) once per
topic, the documents from each source's best few candidates only.
"""

from __future__ import annotations

import contextlib
import copy
import warnings

import numpy as np
import pandas as pd

from ._validation import check_limit, param_error
from .compare import documents, over_time, terms
from .compare import prevalence as comparison
from .errors import ComparisonError, SettingsError
from .models.fits import check_pair
from .options import check, choices, default

#: The settings of :class:`ModelResults` (defaults and accepted values: :mod:`tm_compare.options`).
SETTINGS = (
    "weighting",
    "cluster",
    "n_boot",
    "ci",
    "interval",
    "resampling",
    "fdr",
    "against",
    "random_state",
    "frex_weight",
    "lam",
    "n_terms",
    "n_docs",
    "freq",
    "min_period_docs",
)
_BOOT = ("weighting", "cluster", "n_boot", "ci", "interval", "resampling", "random_state")
#: The settings that shape each table: they key its cache and are written beside it as columns
#: (a term ranking's own weight is in its ``parameter`` column).
SHAPED_BY = {
    "prevalence": _BOOT,
    "differences": (*_BOOT, "against", "fdr"),
    "influence": ("weighting", "cluster"),
    "cap_effect": ("weighting", "cluster"),
    "terms": ("n_terms",),
    "wording": ("weighting", "n_terms"),
    "documents": ("n_docs",),
    "over_time": (*_BOOT, "freq", "min_period_docs"),
    "over_time_differences": (*_BOOT, "freq", "min_period_docs", "against", "fdr"),
}
_COLUMN_OF = {"ci": "ci_level"}  # the column name prevalence() gives a setting
#: The setting that weighs each term ranking that takes a weight.
METHOD_WEIGHT = {"frex": "frex_weight", "relevance": "lam"}
#: Candidates per document shown: representative documents are the highest shares, so only
#: each source's best ``CANDIDATES * n_docs`` documents of a topic can be among them.
CANDIDATES = 10


class ModelResults:
    """Every table of one fitted model on its prepared corpus, computed once per setting.

    Parameters
    ----------
    fit : Fit
    prepared : PreparedCorpus
        The prepared corpus the fit was trained on.
    corpus : Corpus, optional
        Adds the user's own metadata columns to :meth:`document_topics`.
    **settings
        Any of :data:`SETTINGS`: ``weighting``, ``cluster`` (``"group"``, a column of
        ``prepared.meta`` such as ``"outlet"``, or None for documents), ``n_boot``, ``ci``,
        ``interval``, ``resampling``, ``fdr``, ``against``, ``random_state`` (an integer),
        ``frex_weight``, ``lam``, ``n_terms``, ``n_docs``, ``freq``, ``min_period_docs``.
        Defaults: :mod:`tm_compare.options`.
        ``cluster="group"`` on a corpus without groups resamples documents instead
        (``settings["cluster"]`` is then None) and says so with a UserWarning.

    Attributes
    ----------
    settings : dict
        The settings in use; each table holds those that shaped it as columns.
    sources : list of str
        The sources with documents, sorted.

    Examples
    --------
    ::

        results = ModelResults(fit, prepared, n_boot=500)
        results.differences()  # computed once, then cached
        results.with_settings(weighting="unique").prevalence()  # shares the cache
        results.tables()  # every table by name, as the exports write them
    """

    def __init__(self, fit, prepared, *, corpus=None, **settings):
        check_pair("ModelResults", fit, prepared)
        self.fit, self.prepared, self.corpus = fit, prepared, corpus
        # Codes of the source column itself: no array of strings is made (sources sorted).
        codes, names = pd.factorize(
            prepared.meta["source"].astype(str), sort=True, use_na_sentinel=False
        )
        self.sources = [str(name) for name in names]
        self._source_rows = {s: np.flatnonzero(codes == i) for i, s in enumerate(self.sources)}
        self._grouped = bool(prepared.meta["group"].notna().any())
        self._cache: dict = {}  # shared with every with_settings() copy
        self.settings = self._resolve({name: default(name) for name in SETTINGS} | settings)

    def __repr__(self) -> str:
        shown = ", ".join(f"{k}={v!r}" for k, v in self.settings.items())
        return f"ModelResults(k={self.k}, seed={self.fit.random_state}, {shown})"

    @property
    def k(self) -> int:
        return int(self.fit.k)

    def with_settings(self, **changes) -> ModelResults:
        """The same model under other settings; tables already computed are shared, not redone."""
        other = copy.copy(self)
        other.settings = self._resolve({**self.settings, **changes})
        return other

    def _resolve(self, settings: dict) -> dict:
        owner = "ModelResults"
        unknown = sorted(set(settings) - set(SETTINGS))
        if unknown:
            msg = (
                f"{owner} has no setting {unknown[0]!r}. Its settings are: "
                f"{', '.join(SETTINGS)} (see tm_compare.options)."
            )
            raise SettingsError(msg)
        for name, value in settings.items():
            if name != "cluster":
                check(owner, name, value)
        check_limit(owner, "n_boot", settings["n_boot"], "n_boot")
        seed = settings["random_state"]
        if isinstance(seed, bool) or not isinstance(seed, int | np.integer) or seed < 0:
            accepted = (
                "an integer >= 0 (tables are cached, so a seed must give the same draws again)"
            )
            raise param_error(owner, "random_state", seed, accepted)
        cluster = settings["cluster"]
        columns = list(self.prepared.meta.columns)
        if cluster is not None and cluster != "group" and cluster not in columns:
            accepted = "None (documents), 'group' or a column of the prepared corpus: " + ", ".join(
                map(repr, columns)
            )
            raise param_error(owner, "cluster", cluster, accepted)
        if cluster == "group" and not self._grouped:
            warnings.warn(
                "The corpus has no group column, so the bootstrap cannot resample readers "
                "(cluster='group'): it resamples documents instead (cluster=None). Give the "
                "corpus a group column, or pass cluster=None.",
                UserWarning,
                stacklevel=3,
            )
            settings = {**settings, "cluster": None}
        return settings

    def cluster_choices(self) -> list[str]:
        """Columns the bootstrap can resample besides documents: ``group``, ``outlet`` if given."""
        meta = self.prepared.meta
        found = ["group"] if self._grouped else []
        if "outlet" in meta.columns and meta["outlet"].notna().any():
            found.append("outlet")
        return found

    # --- caching ------------------------------------------------------------------------------

    def _cached(self, key: tuple, make):
        if key not in self._cache:
            self._cache[key] = make()
        return self._cache[key]

    def _stamp(self, name: str, table: pd.DataFrame) -> pd.DataFrame:
        """``table`` with the settings that shaped it as columns (those it does not hold yet)."""
        add = {_COLUMN_OF.get(s, s): self.settings[s] for s in SHAPED_BY[name]}
        return table.assign(**{c: v for c, v in add.items() if c not in table.columns})

    def _table(self, name: str, make, *extra) -> pd.DataFrame:
        key = (name, *(self.settings[s] for s in SHAPED_BY[name]), *extra)
        return self._cached(key, lambda: self._stamp(name, make()))

    def _boot(self) -> dict:
        return {name: self.settings[name] for name in _BOOT}

    # --- comparison between sources -----------------------------------------------------------

    def _replicates(self) -> comparison.Replicates:
        # prevalence() and differences() draw the same replicates from the same seed: once here.
        key = ("replicates", *(self.settings[s] for s in _BOOT))
        return self._cached(
            key, lambda: comparison.replicates(self.fit, self.prepared, **self._boot())
        )

    def prevalence(self) -> pd.DataFrame:
        """Prevalence of every topic in every source, with bootstrap intervals
        (:func:`tm_compare.compare.prevalence.prevalence`)."""
        return self._table("prevalence", lambda: comparison.prevalence_table(self._replicates()))

    def differences(self) -> pd.DataFrame:
        """Differences in prevalence between sources, with intervals and adjusted p-values
        (:func:`tm_compare.compare.prevalence.differences`); the bootstrap replicates are
        those of :meth:`prevalence`, drawn once."""
        s = self.settings
        return self._table(
            "differences",
            lambda: comparison.differences_table(
                self._replicates(), against=s["against"], fdr=s["fdr"]
            ),
        )

    # --- change over time ---------------------------------------------------------------------

    def _over_time_pair(self):
        s = self.settings
        key = ("over_time tables", *(s[n] for n in SHAPED_BY["over_time_differences"]))
        return self._cached(
            key,
            lambda: over_time.over_time_tables(
                self.fit,
                self.prepared,
                freq=s["freq"],
                min_period_docs=s["min_period_docs"],
                against=s["against"],
                fdr=s["fdr"],
                **self._boot(),
            ),
        )

    def over_time(self) -> pd.DataFrame:
        """Prevalence of every topic per source and period, with bootstrap intervals
        (:func:`tm_compare.compare.over_time.prevalence_over_time`; settings ``freq`` and
        ``min_period_docs``)."""
        return self._table("over_time", lambda: self._over_time_pair()[0])

    def over_time_differences(self) -> pd.DataFrame:
        """Differences between sources in each period, BH-adjusted across topics x periods
        (:func:`tm_compare.compare.over_time.differences_over_time`)."""
        if len(self.sources) < 2:
            msg = f"over_time_differences needs two sources; the corpus has {self.sources}."
            raise ComparisonError(msg)
        return self._table("over_time_differences", lambda: self._over_time_pair()[1])

    def over_time_frame(self) -> pd.DataFrame:
        """The frame of :func:`tm_compare.views.charts.time_chart`: every topic over time."""
        table = self.over_time()
        return pd.DataFrame(
            {
                "topic": table["topic"].to_numpy(),
                "name": table["topic"].map(self.captions).to_numpy(),
                "source": table["source"].to_numpy(),
                "period": table["period"].to_numpy(),
                "period_start": table["period_start"].to_numpy(),
                "estimate": table["prevalence"].to_numpy(),
                "lower": table["ci_low"].to_numpy(),
                "upper": table["ci_high"].to_numpy(),
                "n_documents": table["n_documents"].to_numpy(),
                "few": table["few_documents"].to_numpy(bool),
            }
        )

    def date_span(self) -> tuple[pd.Timestamp, pd.Timestamp]:
        """The first and last document date (ComparisonError when the corpus has none)."""
        dates = over_time.document_dates(self.prepared, "ModelResults.date_span")
        return dates.min().normalize(), dates.max().normalize()

    def within(self, start=None, end=None) -> ModelResults:
        """The same model and settings on the documents dated from ``start`` to ``end``
        (inclusive days; None: open). Every table of the result covers those documents only;
        documents without a date are left out. Computed once per window.
        """
        if start is None and end is None:
            return self
        owner = "ModelResults.within"
        dates = over_time.document_dates(self.prepared, owner)
        first, last = self.date_span()
        try:
            lo = first if start is None else pd.Timestamp(start).normalize()
            hi = last if end is None else pd.Timestamp(end).normalize()
        except (TypeError, ValueError):
            raise param_error(
                owner, "start/end", (start, end), "dates, e.g. '2024-04-01'"
            ) from None
        inside = ((dates >= lo) & (dates < hi + pd.Timedelta(days=1))).to_numpy()
        rows = np.flatnonzero(inside)
        if not len(rows):
            msg = (
                f"No document is dated from {lo:%Y-%m-%d} to {hi:%Y-%m-%d} ({owner}); the "
                f"documents run from {first:%Y-%m-%d} to {last:%Y-%m-%d}. Widen the range."
            )
            raise ComparisonError(msg)
        window = self._cached(("window", lo, hi), lambda: self._window(rows))
        return window.with_settings(**self.settings)

    def _window(self, rows: np.ndarray) -> ModelResults:
        from .models.fits import Fit
        from .text.prepared import PreparedCorpus

        texts = self.prepared.texts
        meta = self.prepared.meta.iloc[rows].reset_index(drop=True)
        prepared = PreparedCorpus.from_texts(
            [texts[i] for i in rows.tolist()], meta, vocab=list(self.fit.vocab)
        )
        dirichlet = self.fit.doc_dirichlet
        fit = Fit.from_arrays(
            prepared,
            self.fit.topic_term,
            np.asarray(self.fit.doc_topic)[rows],
            doc_dirichlet=None if dirichlet is None else np.asarray(dirichlet)[rows],
            random_state=self.fit.random_state,
            engine=self.fit.engine,
        )
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")  # the fallback to documents was said once already
            return ModelResults(fit, prepared, corpus=self.corpus, **self.settings)

    def pairs(self) -> list[tuple[str, str]]:
        """The comparisons of :meth:`differences`, as (source, other), in its order."""
        diff = self.differences()
        return list(dict.fromkeys(zip(diff["source"], diff["other"], strict=True)))

    def influence(self) -> pd.DataFrame:
        """The heaviest clusters of each source, those above the threshold flagged.

        Needs a cluster column: with ``cluster=None`` there is none to check (SettingsError).
        """
        s = self.settings
        return self._table(
            "influence",
            lambda: comparison.influence(
                self.prepared, weighting=s["weighting"], cluster=s["cluster"], warn=False
            ),
        )

    def cap_effect(self) -> pd.DataFrame:
        """Prevalence before and after capping every cluster's share at the influence threshold."""
        s = self.settings
        cap = float(self.influence()["threshold"].iloc[0])
        return self._table(
            "cap_effect",
            lambda: comparison.cap_effect(
                self.fit,
                self.prepared,
                cap_group_share=cap,
                weighting=s["weighting"],
                cluster=s["cluster"],
            ),
        )

    def chart_frames(self, pair: tuple[str, str] | None = None):
        """Prevalence and difference frames of :func:`tm_compare.views.charts.source_chart`
        for ``pair`` (default: the first comparison), topics ordered by difference."""
        pair = tuple(pair or self.pairs()[0])
        captions = self.captions
        prev = self.prevalence().rename(
            columns={"prevalence": "estimate", "ci_low": "lower", "ci_high": "upper"}
        )
        prev = prev[["topic", "source", "estimate", "lower", "upper"]]
        prev = prev.assign(name=prev["topic"].map(captions))
        diff = self.differences()
        diff = diff[(diff["source"] == pair[0]) & (diff["other"] == pair[1])]
        diff = pd.DataFrame(
            {
                "topic": diff["topic"].to_numpy(),
                "name": diff["topic"].map(captions).to_numpy(),
                "estimate": diff["difference"].to_numpy(),
                "lower": diff["diff_ci_low"].to_numpy(),
                "upper": diff["diff_ci_high"].to_numpy(),
                "clear": diff["significant"].to_numpy(bool),
                "p_adjusted": diff["p_adjusted"].to_numpy(),
            }
        ).sort_values("estimate", ascending=False, kind="stable")
        return prev, diff.reset_index(drop=True)

    # --- terms and documents ------------------------------------------------------------------

    def terms(self, method: str | None = None) -> pd.DataFrame:
        """The top ``n_terms`` terms of every topic under ``method`` (None: every method)."""
        if method is None:
            s = self.settings
            return self._cached(
                ("all terms", s["n_terms"], s["frex_weight"], s["lam"]),
                lambda: pd.concat([self.terms(m) for m in choices("method")], ignore_index=True),
            )
        check("ModelResults.terms", "method", method)
        setting = METHOD_WEIGHT.get(method)
        weight = {} if setting is None else {setting: self.settings[setting]}
        return self._table(
            "terms",
            lambda: terms.term_rankings(
                self.fit, self.prepared, method, n_terms=self.settings["n_terms"], **weight
            ),
            method,
            *weight.values(),
        )

    def wording(self, topic: int, pair: tuple[str, str] | None = None) -> pd.DataFrame:
        """Terms each source uses more when it writes on ``topic``: the two sources of ``pair``
        both ways (``(source, "rest")``: that source against all others pooled), or (None)
        every comparison the setting ``against`` asks for."""
        topic = self._topic("wording", topic)
        if pair and pair[1] == "rest":  # the view's "source minus rest" under against="rest"
            against, sources = "rest", None
        else:
            against, sources = ("each", list(pair)) if pair else (self.settings["against"], None)
        weighting = self.settings["weighting"]
        counts = self._cached(
            ("topic_counts", weighting),
            lambda: terms.topic_term_counts(self.fit, self.prepared, weighting=weighting),
        )
        return self._table(
            "wording",
            lambda: terms.source_wording(
                self.fit,
                self.prepared,
                topic,
                against=against,
                sources=sources,
                weighting=weighting,
                n_terms=self.settings["n_terms"],
                topic_counts=counts,
            ),
            topic,
            against,
            tuple(sources or ()),
        )

    def documents(self, topic: int | None = None) -> pd.DataFrame:
        """The ``n_docs`` documents per source that show ``topic`` best (None: every topic).

        Each topic is computed once, from each source's ``CANDIDATES * n_docs`` highest shares
        only (near-duplicates are folded among those), so a topic switch stays fast.
        """
        if topic is None:
            return self._cached(
                ("all documents", self.settings["n_docs"]),
                lambda: pd.concat([self.documents(t) for t in range(self.k)], ignore_index=True),
            )
        topic = self._topic("documents", topic)
        n_docs = self.settings["n_docs"]
        return self._table(
            "documents",
            lambda: documents.representative_documents(
                self.fit,
                self.prepared,
                topic,
                n_docs=n_docs,
                rows=self._candidates(topic, CANDIDATES * n_docs),
            ),
            topic,
        )

    def _candidates(self, topic: int, n: int) -> np.ndarray:
        # One topic-major copy of the shares per model (D x k floats): reading a topic's column
        # from the document-major matrix cost more than the rest of a view's topic switch.
        by_topic = self._cached(
            ("shares by topic",), lambda: np.asarray(self.fit.doc_topic, dtype=float).T.copy()
        )
        shares = by_topic[topic]
        keep = []
        for idx in self._source_rows.values():
            if len(idx) > n:
                idx = idx[np.argpartition(-shares[idx], n)[:n]]
            keep.append(idx)
        return np.sort(np.concatenate(keep))

    def _topic(self, owner: str, topic) -> int:
        if not (isinstance(topic, int | np.integer) and 0 <= topic < self.k):
            raise param_error(owner, "topic", topic, f"a topic number from 0 to {self.k - 1}")
        return int(topic)

    def top_words(self, topic: int) -> list[str]:
        """The topic's most probable terms: those its documents' snippets are cut around."""
        words = self._cached(("top_words",), lambda: self.fit.top_words(documents.SNIPPET_TERMS))
        return words[self._topic("top_words", topic)]

    def document_topics(self) -> pd.DataFrame:
        """Each document's topic shares with its id and metadata, one row per document."""
        return self._cached(
            ("document_topics",),
            lambda: documents.document_topics(self.fit, self.prepared, self.corpus),
        )

    def prevalence_model(self, formula: str, *, n_draws=None, topics=None):
        """Prevalence regressed on covariates (:func:`tm_compare.compare.covariates.prevalence_model`)
        with this object's ``weighting``, ``cluster``, ``ci`` and ``random_state``; cached per
        formula and setting. ``n_draws`` defaults to the options table's."""
        from .compare.covariates import prevalence_model

        s = self.settings
        n_draws = default("n_draws") if n_draws is None else n_draws
        shaped = (s["weighting"], s["cluster"], s["ci"], s["random_state"])
        key = ("prevalence_model", formula, n_draws, tuple(topics or ()), *shaped)
        return self._cached(
            key,
            lambda: prevalence_model(
                self.fit,
                self.prepared,
                formula,
                topics=topics,
                weighting=s["weighting"],
                cluster=s["cluster"],
                n_draws=n_draws,
                ci=s["ci"],
                random_state=s["random_state"],
            ),
        )

    def prevalence_models(self) -> list:
        """The prevalence models computed so far (the report shows them), oldest first."""
        return [v for k, v in self._cache.items() if k[0] == "prevalence_model"]

    # --- labels -------------------------------------------------------------------------------

    def read_labels(self, store=None) -> dict[str, pd.DataFrame]:
        """Read the labels, consensus and agreement of this model from ``store`` (a LabelStore;
        None: no labels yet, empty tables). Each call reads the store again."""
        # The store's module imports SQLAlchemy: only here, so a view opens without it.
        from .labels.store import AGREEMENT_COLUMNS, AGREEMENT_FIELDS, CONSENSUS_COLUMNS
        from .labels.store import COLUMNS as LABEL_COLUMNS

        if store is None:
            read = {
                "labels": pd.DataFrame(columns=list(LABEL_COLUMNS)),
                "consensus": pd.DataFrame(columns=list(CONSENSUS_COLUMNS)),
                "agreement": pd.DataFrame(columns=list(AGREEMENT_COLUMNS)),
            }
        else:
            labels = store.current(self.fit)
            consensus = store.consensus(self.fit)
            consensus["sources"] = consensus["sources"].map("; ".join)
            fields = [f for f in AGREEMENT_FIELDS if labels[f].notna().any()]
            agreement = (
                store.agreement(self.fit, fields=fields)
                if fields and not store.in_blind_round(self.fit)
                else pd.DataFrame(columns=list(AGREEMENT_COLUMNS))
            )
            read = {"labels": labels, "consensus": consensus, "agreement": agreement}
        self._cache["labels"] = read
        return read

    @property
    def captions(self) -> dict[int, str]:
        """Topic -> short caption: its settled name once labels are read, else its top words."""
        names = {}
        if "labels" in self._cache:
            consensus = self._cache["labels"]["consensus"]
            names = dict(zip(consensus["topic"], consensus["name"], strict=True))
        return {
            t: f"{t} · {names.get(t) or ' '.join(self.top_words(t)[:3])}" for t in range(self.k)
        }

    # --- everything ---------------------------------------------------------------------------

    @property
    def has_dates(self) -> bool:
        """Whether any document of the prepared corpus has a date (over-time tables possible)."""
        try:
            over_time.document_dates(self.prepared, "ModelResults.has_dates")
        except ComparisonError:
            return False
        return True

    def tables(self, over_time: bool | None = None) -> dict[str, pd.DataFrame]:
        """Every table by name, as the exports write them.

        ``prevalence``; ``differences`` (two sources or more); ``influence`` when clusters are
        resampled, and ``cap_effect`` when a cluster is flagged; ``terms`` (every method);
        ``documents`` (every topic); ``document_topics``; ``over_time`` and
        ``over_time_differences`` (two sources or more) when ``over_time`` is True, or when it
        is None and documents have dates; ``model_coefficients-N``, ``model_prevalence-N`` and
        ``model_effects-N`` for each prevalence model computed so far (N counts from 1); and
        ``labels``, ``consensus``, ``agreement`` once :meth:`read_labels` was called.
        """
        out = {"prevalence": self.prevalence()}
        if len(self.sources) > 1:
            out["differences"] = self.differences()
        if self.settings["cluster"] is not None:
            out["influence"] = self.influence()
            if out["influence"]["flagged"].any():
                with contextlib.suppress(ComparisonError):
                    # No table when a source has too few clusters to cap each at the threshold.
                    out["cap_effect"] = self.cap_effect()
        out["terms"] = self.terms()
        out["documents"] = self.documents()
        out["document_topics"] = self.document_topics()
        if over_time or (over_time is None and self.has_dates):
            out["over_time"] = self.over_time()
            if len(self.sources) > 1:
                out["over_time_differences"] = self.over_time_differences()
        for number, model in enumerate(self.prevalence_models(), start=1):
            out.update({f"{name}-{number}": t for name, t in model.tables().items()})
        out.update(self._cache.get("labels", {}))
        return out
