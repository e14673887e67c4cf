"""Results that leave the notebook: tables as CSV and Parquet, charts as PNG and SVG.

:func:`collect` gathers every table of one model of a project's sweep in a
:class:`Results`: the sweep's tables, and the model's from one
:class:`tm_compare.results.ModelResults`, the same object views and the command
line read. :func:`write_tables`, :func:`write_charts` and the report
(:func:`tm_compare.report.html.write_report`) all read those same table objects,
so a number in the report is the number in the exported file.

:data:`COLUMNS` documents every column of every exported table;
:func:`write_data_dictionary` writes it as ``columns.md``.

Charts are converted with vl-convert, which runs offline.
"""

from __future__ import annotations

import os
import warnings
from pathlib import Path

import numpy as np
import pandas as pd

from .._atomic import atomic_path, atomic_write_bytes, atomic_write_text
from .._csv import to_csv
from .._deprecation import warn_renamed
from .._validation import check_choice, param_error
from ..errors import ProjectError
from ..options import METHOD_NAMES, default
from ..results import CANDIDATES, ModelResults

TABLE_FORMATS = ("csv", "parquet")
CHART_FORMATS = ("png", "svg")
EXPORT_FOLDER = "report"  # inside the project


class Results:
    """One model of a project's sweep with every table the report and the exports show.

    Attributes
    ----------
    project, sweep
        Where the model comes from.
    results : ModelResults
        The model's tables and settings; every model table below is one of its objects.
    recommendation
        ``sweep.recommend()``: the proposed k, its seed and the rule in words.
    tables : dict of DataFrame
        By name, the tables :data:`COLUMNS` describes: the sweep's, the model's
        (``results.tables()``), what preparation removed, and the labels.
    """

    def __init__(self, project, sweep, results: ModelResults):
        self.project, self.sweep, self.results = project, sweep, results
        self.recommendation = sweep.recommend()
        self.tables: dict[str, pd.DataFrame] = {}
        self.read_labels()

    def __repr__(self) -> str:
        return (
            f"Results(k={self.fit.k}, seed={self.fit.random_state}, tables={sorted(self.tables)})"
        )

    @property
    def fit(self):
        return self.results.fit

    @property
    def prepared(self):
        return self.results.prepared

    @property
    def corpus(self):
        return self.results.corpus

    @property
    def settings(self) -> dict:
        return self.results.settings

    @property
    def sources(self) -> list[str]:
        return self.results.sources

    @property
    def captions(self) -> dict[int, str]:
        """Topic -> caption: the settled label, else the top three words."""
        return self.results.captions

    def read_labels(self, store=None) -> None:
        """(Re)read labels, consensus and agreement from ``store`` (default: the project's)."""
        from ..labels.store import LabelStore

        path = Path(self.project.path) / "labels.sqlite"
        if store is None and path.exists():
            with LabelStore(path, read_only=True) as own:
                self.results.read_labels(own)
        else:
            self.results.read_labels(store)
        topics = self.sweep.topic_scores_
        mine = (topics["k"] == self.fit.k) & (topics["seed"] == self.fit.random_state)
        self.tables = {
            "scores": self.sweep.scores_.copy(),
            "topic_scores": topics[mine].reset_index(drop=True),
            "recommendation": self.recommendation.table.copy(),
            **self.results.tables(),
            "removals": self.prepared.report.to_frame(),
        }

    def chart_frames(self, pair=None):
        """Prevalence and difference frames of :func:`tm_compare.views.charts.source_chart`."""
        return self.results.chart_frames(pair)


def collect(
    project,
    k: int | None = None,
    seed: int | None = None,
    *,
    formulas=(),
    n_draws: int | None = None,
    **settings,
) -> Results:
    """Every table of one model of ``project``'s sweep (default: the recommended model).

    Parameters
    ----------
    project : Project or path
    k, seed : int, optional
        The model; ``k`` alone takes seed 0. Both None: the sweep's recommendation.
    formulas : sequence of str
        Prevalence models to fit (:meth:`ModelResults.prevalence_model`), e.g.
        ``"~ source * period"``; their tables join the others and the report shows them.
    n_draws : int, optional
        Draws of the topic shares for those models (default: the options table's).
    **settings
        Settings of :class:`tm_compare.results.ModelResults` (weighting, cluster, n_boot,
        random_state, ...); defaults from :mod:`tm_compare.options`.
    """
    from ..models.sweeps import load_sweep
    from ..project import Project
    from ..text.corpus import load_corpus
    from ..text.prepared import load_prepared

    project = project if isinstance(project, Project) else Project.open(project)
    result = load_sweep(project)
    if seed is not None and k is None:
        raise param_error("collect", "k", k, "an integer when seed is given", "Give --k too.")
    if k is None:
        pick = result.recommend()
        k, seed = pick.k, pick.seed
    fit = result.get_fit(int(k), int(seed or 0))
    prepared = load_prepared(project, fit.corpus_fingerprint)
    try:
        corpus = load_corpus(project)
    except ProjectError:
        corpus = None  # the prepared corpus alone has ids, sources and titles
    model = ModelResults(fit, prepared, corpus=corpus, **settings)
    for formula in formulas:
        model.prevalence_model(formula, n_draws=n_draws)
    return Results(project, result, model)


def write_tables(results: Results, folder, formats=TABLE_FORMATS) -> list[Path]:
    """Write every table of ``results`` to ``folder`` as ``NAME.csv`` / ``NAME.parquet``."""
    formats = _formats("write_tables", "formats", formats, TABLE_FORMATS)
    folder = Path(folder)
    written = []
    for name, table in results.tables.items():
        flat = _flat(table)
        for fmt in formats:
            target = folder / f"{name}.{fmt}"
            with atomic_path(target) as tmp:
                if fmt == "csv":  # text cells safe to open in a spreadsheet (see _csv)
                    to_csv(flat, tmp)
                else:
                    flat.to_parquet(tmp, index=False)
            written.append(target)
    written.append(write_data_dictionary(folder / "columns.md", list(results.tables)))
    return written


def _flat(table: pd.DataFrame) -> pd.DataFrame:
    """Lists in cells become space-separated text, so CSV and Parquet hold the same values."""
    out = table.copy()
    for column in out.columns:
        if out[column].map(lambda v: isinstance(v, list | tuple | np.ndarray)).any():
            out[column] = out[column].map(
                lambda v: " ".join(map(str, v)) if isinstance(v, list | tuple | np.ndarray) else v
            )
    return out


def charts(results: Results, measure: str = default("measure")) -> dict:
    """The charts of ``results`` by file stem: the sweep, the sources, each topic's terms."""
    from ..views import charts as ch

    pick = results.recommendation
    scores = results.tables["scores"]
    out = {}
    for column, title in ((measure, measure.upper()), ("stability", "stability")):
        if column in scores and scores[column].notna().any():  # one seed: no stability
            out[f"sweep-{column}"] = ch.sweep_chart(
                scores.assign(value=scores[column]),
                title=title,
                recommended_k=pick.k,
                rule=None,
                picked=(results.fit.k, results.fit.random_state),
            )
    if "differences" in results.tables:
        prev, diff = results.chart_frames()
        out["sources"] = ch.source_chart(prev, diff, contrast=_contrast(results))
    terms = results.tables["terms"]
    for topic in range(results.fit.k):
        out[f"terms-topic{topic}"] = ch.term_map(
            terms[terms["method"] == "frex"],
            focus=topic,
            ranking=METHOD_NAMES["frex"],
            context=terms[terms["method"] == "probability"],
        )
    return out


def _contrast(results: Results) -> str:
    diff = results.tables["differences"]
    return f"{diff['source'].iloc[0]} minus {diff['other'].iloc[0]}"


def chart_svg(chart) -> str:
    """An Altair chart as SVG text (offline, via vl-convert)."""
    import vl_convert

    return vl_convert.vegalite_to_svg(chart.to_dict())


def write_charts(results: Results, folder, formats=CHART_FORMATS) -> list[Path]:
    """Write every chart of :func:`charts` to ``folder`` as PNG (2x scale) and SVG."""
    import vl_convert

    formats = _formats("write_charts", "formats", formats, CHART_FORMATS)
    written = []
    for stem, chart in charts(results).items():
        spec = chart.to_dict()
        for fmt in formats:
            data = (
                vl_convert.vegalite_to_png(spec, scale=2)
                if fmt == "png"
                else vl_convert.vegalite_to_svg(spec).encode("utf-8")
            )
            written.append(atomic_write_bytes(Path(folder) / "charts" / f"{stem}.{fmt}", data))
    return written


def export(
    project,
    k: int | None = None,
    seed: int | None = None,
    *,
    charts=CHART_FORMATS,
    tables=TABLE_FORMATS,
    out: str | os.PathLike | None = None,
    results: Results | None = None,
    **settings,
) -> list[Path]:
    """Write tables, the data dictionary and charts of one model; return the paths written.

    ``out`` defaults to ``PROJECT/report``; pass ``results`` (from :func:`collect`) to reuse
    tables already computed, or settings of :class:`tm_compare.results.ModelResults` for
    :func:`collect`. Empty ``charts`` or ``tables`` skips them.
    """
    charts = _formats("export", "charts", charts or [], CHART_FORMATS)  # before any work
    tables = _formats("export", "tables", tables or [], TABLE_FORMATS)
    if out is not None and Path(out).exists() and not Path(out).is_dir():
        raise param_error("export", "out", str(out), "a folder (it is a file)", "Name a folder.")
    if results is None:
        results = collect(project, k, seed, **settings)
    folder = Path(out) if out is not None else results.project.folder(EXPORT_FOLDER)
    written = []
    if tables:
        written += write_tables(results, folder, tables)
    if charts:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", UserWarning)
            written += write_charts(results, folder, charts)
    return written


def _formats(owner, name, formats, accepted) -> list[str]:
    items = [formats] if isinstance(formats, str) else list(formats)
    for item in items:
        check_choice(owner, name, item, accepted)
    return items


def data_dictionary(tables=None, path=None) -> str:
    """The columns of each exported table (default: every table), as Markdown text.

    ``path`` is deprecated: use :func:`write_data_dictionary` to write the text to a file.
    """
    if isinstance(tables, str | os.PathLike):  # the old order data_dictionary(path, tables)
        tables, path = path, tables
    if path is not None:
        warn_renamed("data_dictionary(path, tables)", "write_data_dictionary(path, tables)")
        return write_data_dictionary(path, tables)
    lines = [
        "# Exported tables and their columns",
        "",
        "Each table is written as NAME.csv and NAME.parquet with the same values. "
        "Lists in cells (top words, ids) are space- or '; '-separated text. The settings "
        "that shaped a table (weighting, cluster, n_boot, random_state, ...) are columns of it.",
        "",
        "In the CSV files, a text cell that begins with `=`, `+`, `-`, `@`, a tab or a carriage "
        "return (which a spreadsheet could run as a formula) or with an apostrophe starts with "
        "one more apostrophe, as OWASP's guidance on CSV injection advises; numbers are never "
        "changed, and the Parquet files hold every value as it is.",
    ]
    for name in tables or COLUMNS:
        about, columns = documented(name)
        lines += ["", f"## {name}", "", about, "", "| column | meaning |", "|---|---|"]
        lines += [f"| `{c}` | {d} |" for c, d in columns.items()]
    return "\n".join(lines) + "\n"


def write_data_dictionary(path: str | os.PathLike, tables=None) -> Path:
    """Write :func:`data_dictionary` of ``tables`` to ``path`` (atomically); return the path."""
    return atomic_write_text(path, data_dictionary(tables))


def documented(name: str) -> tuple[str, dict[str, str]]:
    """The :data:`COLUMNS` entry of a table; ``model_effects-2`` is a ``model_effects`` table."""
    base, _, number = name.rpartition("-")
    return COLUMNS[base if number.isdigit() else name]


def undocumented(name: str, table: pd.DataFrame) -> list[str]:
    """Columns of ``table`` that :data:`COLUMNS` does not describe (``topic_N`` count as one)."""
    known = documented(name)[1]
    return [
        c
        for c in table.columns
        if c not in known and not (c.startswith("topic_") and name == "document_topics")
    ]


_SETTING_COLUMNS = {
    "weighting": "'exposure' (documents count with their weight) or 'unique' (each once)",
    "cluster": "column whose values were resampled as clusters, or 'document'",
    "interval": "bootstrap interval method ('percentile' or 'bca')",
    "ci_level": "interval level, e.g. 0.95",
    "n_boot": "bootstrap replicates",
    "resampling": "'multinomial' or 'poisson' bootstrap weights",
    "model_uncertainty": "whether each document's topic shares were also redrawn",
    "cap_group_share": "cap on a cluster's share of its source's weight, if any",
    "random_state": "seed of the bootstrap draws",
}

#: name -> (what the table is, {column: meaning}).
COLUMNS: dict[str, tuple[str, dict[str, str]]] = {
    "scores": (
        "One row per fitted model of the sweep.",
        {
            "k": "number of topics",
            "seed": "random seed of the fit",
            "engine": "LDA implementation ('gensim' or 'sklearn')",
            "fit_seconds": "seconds spent fitting",
            "passes": "passes made over the training documents",
            "converged": "whether the topics settled before the cap of passes (empty: not recorded)",
            "last_change": "how much the last pass moved the topics (mean total-variation distance)",
            "near_empty": "topics with prevalence below a tenth of 1/k",
            "rarely_dominant": "other topics that are the most probable topic of fewer than a fifth of 1/k of the documents",
            "near_duplicate": "pairs of topics with Jensen-Shannon divergence below 0.25",
            "npmi": "mean NPMI coherence of the topics' top words (window 10; higher is better)",
            "c_v": "mean C_V coherence (window 110)",
            "uci": "mean UCI coherence (PMI, window 10)",
            "umass": "mean UMass coherence (document co-occurrence)",
            "perplexity": "held-out per-word perplexity, natural log (lower is better)",
            "stability": "mean agreement of the topics' top words with the other seeds' fits at the same k (0-1)",
            "diversity": "share of distinct words among all topics' top 25 words (0-1)",
            "fingerprint": "content hash of the fitted model (labels refer to it)",
        },
    ),
    "topic_scores": (
        "One row per topic of the chosen model.",
        {
            "k": "number of topics",
            "seed": "random seed of the fit",
            "topic": "topic number (0-based)",
            "top_words": "the topic's most probable words, space-separated",
            "npmi": "NPMI coherence of the topic",
            "c_v": "C_V coherence of the topic",
            "uci": "UCI coherence of the topic",
            "umass": "UMass coherence of the topic",
            "stability": "how well the topic is found again by the other seeds (0-1)",
            "prevalence": "mean share of the topic over the documents",
            "near_empty": "prevalence below a tenth of 1/k",
            "dominant_share": "share of documents in which it is the most probable topic",
            "rarely_dominant": "not near-empty, but the most probable topic of fewer than a fifth of 1/k of the documents",
            "duplicate_of": "the topic this one nearly duplicates (-1: none)",
        },
    ),
    "recommendation": (
        "The per-k summary the recommended k was chosen from.",
        {
            "k": "number of topics",
            "fits": "fits (seeds) at this k",
            "npmi_mean": "mean NPMI over seeds",
            "stability_mean": "mean stability over seeds",
            "stability_se": "standard error of stability over seeds",
            "npmi_se": "standard error of NPMI over seeds",
            "perplexity_se": "standard error of held-out perplexity over seeds",
            "near_empty_mean": "near-empty topics per fit",
            "rarely_dominant_mean": "rarely dominant topics per fit",
            "junk_mean": "junk per fit: near-empty and rarely dominant topics plus near-duplicate pairs",
            "near_duplicate_mean": "near-duplicate topic pairs per fit",
            "clean_share": "share of fits with no junk topics",
            "converged_share": "share of fits that converged",
            "step": "last step of the rule the k passed (1 junk, 2 stability, 3 coherence, 4 chosen)",
            "runner_up": "the k that came closest",
            "c_v_mean": "mean C_V over seeds",
            "uci_mean": "mean UCI over seeds",
            "umass_mean": "mean UMass over seeds",
            "perplexity_mean": "mean held-out perplexity over seeds",
            "diversity_mean": "mean diversity over seeds",
            "candidate": "passed the junk, stability and coherence steps of the rule",
            "chosen": "the recommended k",
        },
    ),
    "prevalence": (
        "Share of each source that each topic takes, with bootstrap intervals.",
        {
            "source": "source",
            "topic": "topic number",
            "prevalence": "weighted mean share of the topic over the source's documents",
            "ci_low": "lower end of the interval",
            "ci_high": "upper end of the interval",
            "std_error": "standard deviation of the bootstrap replicates",
            "n_documents": "documents of the source",
            "n_units": "clusters (or documents) resampled",
            "total_weight": "sum of the weights counted",
            **_SETTING_COLUMNS,
        },
    ),
    "differences": (
        "Differences in prevalence between sources, most different first.",
        {
            "source": "first source",
            "other": "second source ('rest': all others pooled)",
            "topic": "topic number",
            "prevalence": "prevalence in the first source",
            "prevalence_other": "prevalence in the second source",
            "difference": "prevalence minus prevalence_other",
            "diff_ci_low": "lower end of the difference's interval",
            "diff_ci_high": "upper end of the difference's interval",
            "ratio": "prevalence / prevalence_other",
            "ratio_ci_low": "lower end of the ratio's interval",
            "ratio_ci_high": "upper end of the ratio's interval",
            "p_value": "two-sided bootstrap p-value of 'no difference'",
            "p_adjusted": "p-value adjusted across topics (Benjamini-Hochberg)",
            "significant": "p_adjusted <= fdr",
            "rank": "1 = most different in this comparison",
            "test": "the test in words",
            "fdr": "false discovery rate used",
            "against": "'each' (every pair of sources) or 'rest' (each against all others)",
            **_SETTING_COLUMNS,
        },
    ),
    "influence": (
        "The heaviest clusters (e.g. readers) of each source, and any above the threshold.",
        {
            "source": "source",
            "group": "cluster value (e.g. a reader id)",
            "rank": "1 = heaviest in the source",
            "n_documents": "documents of the cluster in the source",
            "weight": "summed weight of those documents",
            "share": "the cluster's share of the source's weight",
            "flagged": "share above the threshold",
            "threshold": "share above which a cluster is flagged",
            "weighting": "'exposure' or 'unique'",
            "cluster": "column holding the clusters",
        },
    ),
    "cap_effect": (
        "Prevalence before and after capping every cluster's share at the influence threshold.",
        {
            "source": "source",
            "topic": "topic number",
            "prevalence_before": "prevalence as reported",
            "prevalence_after": "prevalence with cluster shares capped",
            "change": "after minus before",
            "cap_group_share": "the cap",
            "weighting": "'exposure' or 'unique'",
            "cluster": "column holding the clusters",
        },
    ),
    "terms": (
        "The top n_terms terms of every topic under four rankings.",
        {
            "topic": "topic number",
            "rank": "1 = first",
            "term": "the term",
            "term_id": "its id in the prepared dictionary",
            "score": "the ranking's score",
            "probability": "p(term | topic): how much of the topic the term is",
            "share_of_term": "p(topic | term): how much of the term's use falls in the topic",
            "method": "'probability', 'frex', 'relevance' or 'lift'",
            "parameter": "FREX weight or relevance lambda (empty otherwise)",
            "n_terms": "terms kept per topic and method",
        },
    ),
    "documents": (
        "The documents that show each topic best, per source.",
        {
            "topic": "topic number",
            "source": "source",
            "rank": "1 = highest share",
            "id": "your document id",
            "title": "title",
            "outlet": "outlet, when the corpus has one",
            "date": "date",
            "exposure": "the document's weight",
            "topic_share": "the document's share of the topic",
            "snippet": "text around the densest run of the topic's top terms",
            "matched_terms": "top terms found in the snippet",
            "n_collapsed": "near-duplicates folded into this row (among the source's best "
            f"{CANDIDATES} * n_docs documents of the topic)",
            "collapsed_ids": "their ids, '; '-separated",
            "cross_source_duplicate": "a near-copy exists in another source",
            "n_docs": "documents kept per topic and source",
        },
    ),
    "document_topics": (
        "One row per modelled document: your id and metadata, then one column per topic.",
        {
            "id": "your document id",
            "source": "source",
            "weight": "exposure weight (1 when none was given)",
            "group": "group (e.g. reader), empty when none",
            "title": "title",
            "url": "URL",
            "date": "date",
            "outlet": "outlet (demo corpus; your own metadata columns appear likewise)",
            "merged_ids": "ids of copies merged into this document, '; '-separated",
            "heldout": "left out of training (used for held-out perplexity)",
            "topic_N": "the document's share of topic N (each row sums to 1)",
        },
    ),
    "removals": (
        "What intake and preparation removed, merged or flagged, and why.",
        {
            "stage": "'intake' or 'prepare'",
            "kind": "'removed', 'merged' or 'flagged'",
            "reason": "why",
            "source": "source",
            "count": "rows or documents",
            "example": "one id it happened to",
        },
    ),
    "labels": (
        "Each analyst's current label of each topic.",
        {
            "id": "row number of this version in the store's history",
            "uid": "unique id of this label version",
            "fit": "fingerprint of the model (fit)",
            "topic": "topic number",
            "analyst": "who labelled it",
            "version": "version of this analyst's label of the topic",
            "name": "the topic's name",
            "note": "free note",
            "verdict": "'usable', 'mixed', 'noise' or a verdict of the team's codebook",
            "category": "codebook category, if any",
            "confidence": "0-1, if given",
            "retracted": "withdrawn",
            "round": "id of the coding round the label was saved in",
            "created_at": "UTC time saved",
        },
    ),
    "consensus": (
        "The settled label of each topic.",
        {
            "fit": "fingerprint of the model (fit)",
            "topic": "topic number",
            "version": "version of the settled label",
            "name": "settled name",
            "note": "note",
            "verdict": "settled verdict",
            "category": "settled category",
            "settled_by": "who settled it",
            "sources": "uids of the labels it was settled from, '; '-separated",
            "uid": "unique id of this version",
            "created_at": "UTC time settled",
        },
    ),
    "agreement": (
        "Agreement between analysts (Krippendorff's alpha, nominal), per topic and overall.",
        {
            "field": "label field compared ('verdict' or 'category')",
            "scope": "'topic' or 'overall'",
            "topic": "topic number (empty on the overall row)",
            "alpha": "Krippendorff's alpha",
            "percent_agreement": "share of agreeing pairs of analysts",
            "n_coders": "analysts with a value",
            "n_units": "topics coded by at least two analysts",
        },
    ),
}


def _pick(name: str, drop=(), **more: str) -> dict[str, str]:
    """The column descriptions of table ``name`` without ``drop``, then ``more``."""
    return {**{c: d for c, d in COLUMNS[name][1].items() if c not in drop}, **more}


_PERIOD_COLUMNS = {
    "period": "the period, as pandas writes it (a week: '2024-03-04/2024-03-10')",
    "period_start": "first day of the period",
    "period_end": "last day of the period",
    "few_documents": "fewer than min_period_docs documents in the cell: no line or test there",
    "min_period_docs": "documents a (source, period) cell needs to be drawn and tested",
    "freq": "period length: pandas alias 'D', 'W', 'M', 'Q' or 'Y'",
}
_MODEL_SETTINGS = {
    "formula": "the model's formula (covariates are corpus columns)",
    "weighting": "'exposure' (weighted least squares) or 'unique'",
    "cluster": "column whose values are the clusters of the robust errors, or 'document'",
    "n_clusters": "clusters in the documents modelled",
    "n_docs": "documents modelled",
    "n_draws": "draws of each document's topic shares pooled (0: the fitted shares only)",
    "ci_level": "interval level, e.g. 0.95",
}
_ESTIMATE = {
    "std_error": "standard error (cluster-robust, pooled over the draws)",
    "ci_low": "lower end of the interval",
    "ci_high": "upper end of the interval",
}
COLUMNS.update(
    {
        "over_time": (
            "Share of each source that each topic takes in each period, with bootstrap "
            "intervals per (source, period) cell.",
            _pick("prevalence", **_PERIOD_COLUMNS),
        ),
        "over_time_differences": (
            "Differences in prevalence between sources in each period with enough documents; "
            "p-values adjusted across topics and periods together (Benjamini-Hochberg).",
            _pick(
                "differences",
                drop=("ratio", "ratio_ci_low", "ratio_ci_high", "rank"),
                **_PERIOD_COLUMNS,
            ),
        ),
        "model_coefficients": (
            "Coefficients of one prevalence regression (one per topic and formula term).",
            {
                "topic": "topic number",
                "term": "term of the formula's design matrix",
                "estimate": "coefficient",
                **_ESTIMATE,
                "z": "estimate / std_error",
                "p_value": "two-sided p-value of a zero coefficient",
                **_MODEL_SETTINGS,
            },
        ),
        "model_prevalence": (
            "Estimated prevalence of each topic at each value of each covariate (average "
            "predictions over the documents' other covariates).",
            {
                "topic": "topic number",
                "covariate": "covariate",
                "value": "its value (a numeric covariate: a quantile)",
                "estimate": "estimated prevalence",
                **_ESTIMATE,
                **_MODEL_SETTINGS,
            },
        ),
        "model_effects": (
            "Change in prevalence from each covariate's first value to each other value "
            "(numeric: one unit up); p-values adjusted across the table (Benjamini-Hochberg).",
            {
                "topic": "topic number",
                "covariate": "covariate",
                "value": "the value compared",
                "reference": "the value compared against",
                "estimate": "difference in prevalence",
                **_ESTIMATE,
                "z": "estimate / std_error",
                "p_value": "two-sided p-value of no difference",
                "p_adjusted": "p-value adjusted across the table (Benjamini-Hochberg)",
                **_MODEL_SETTINGS,
            },
        ),
    }
)
