"""The report's sections as plain values (text, tables as escaped HTML, chart images).

Every number comes from a table of :class:`tm_compare.report.exports.Results`, the same objects
the exports write; this module only chooses rows and formats them. Tables are laid out and
escaped by :func:`tm_compare._html.table`; every other value is escaped by the template (Jinja2
autoescape).
"""

from __future__ import annotations

import base64
import datetime as _dt
import math

import pandas as pd

from .. import _html
from ..labels.agreement import explain_agreement
from ..models.quality import topic_badge
from ..models.sweep_summary import health
from ..options import VERDICT_WORDS, verdict_word
from ..text.languages import is_only_english, language_mix
from .exports import chart_svg, charts

WORDS = 8  # top terms shown per topic
DOCS = 3  # representative documents shown per topic and source


def num(value, digits: int = 3, sign: bool = False) -> str:
    """A number as the report shows it; empty for missing values."""
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "–"
    return f"{value:+.{digits}f}" if sign else f"{value:.{digits}f}"


def pval(value) -> str:
    """p-values: three significant digits, '< 0.001' below that."""
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "–"
    return "< 0.001" if value < 0.001 else f"{value:.3g}"


def interval(low, high) -> str:
    """An interval of differences, e.g. '-0.040 to +0.137'."""
    return f"{num(low, sign=True)} to {num(high, sign=True)}"


def table(frame: pd.DataFrame, columns, *, key: str, caption: str = "") -> str:
    """A table as escaped HTML: ``columns`` is a list of (column, header, format or None).

    A column is numeric (right-aligned) when it has a format or holds only numbers.
    """
    records = frame.to_dict("records")
    headers, numeric, cells = [], set(), []
    for column, header, fmt in columns:
        values = [r[column] if isinstance(column, str) else column(r) for r in records]
        headers.append(header)
        if fmt is not None or all(map(_is_number, values)):
            numeric.add(header)
        cells.append([fmt(v) if fmt else _text(v) for v in values])
    shown = pd.DataFrame(list(zip(*cells, strict=True)), columns=headers)
    attrs = {"id": f"table-{key}", "class": "data"}
    return _html.table(shown, attrs=attrs, numeric=numeric, caption=caption)


def _is_number(value) -> bool:
    return isinstance(value, int | float) and not isinstance(value, bool)


def _text(value) -> str:
    if value is None or (isinstance(value, float) and math.isnan(value)) or value is pd.NaT:
        return "–"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, pd.Timestamp | _dt.date):
        return f"{value:%Y-%m-%d}"
    return str(value)


def image(chart, alt: str) -> dict:
    """A chart as an SVG data URL: no script runs and nothing is fetched when it is shown."""
    svg = chart_svg(chart).encode("utf-8")
    return {"src": "data:image/svg+xml;base64," + base64.b64encode(svg).decode("ascii"), "alt": alt}


def corpus_section(results) -> dict:
    prepared, corpus = results.prepared, results.corpus
    modelled = pd.Series(prepared.sources).value_counts().rename("modelled")
    if corpus is not None:
        per_source = corpus.summary().join(modelled).reset_index()
        columns = [
            ("source", "source", None),
            ("rows_read", "rows read", _int),
            ("removed", "removed at intake", _int),
            ("merged", "merged at intake", _int),
            ("documents", "documents", _int),
            ("modelled", "modelled", _int),
            ("exposure", "exposure", _int),
            ("groups", "groups", _int),
            ("first_date", "from", None),
            ("last_date", "to", None),
        ]
    else:
        meta = prepared.meta
        per_source = (
            meta.groupby("source")
            .agg(modelled=("id", "size"), exposure=("weight", "sum"))
            .reset_index()
        )
        columns = [
            ("source", "source", None),
            ("modelled", "modelled", _int),
            ("exposure", "exposure", _int),
        ]
    removals = results.tables["removals"]
    boiler = prepared.boilerplate
    mix = None if is_only_english(prepared) else language_mix(prepared)
    return {
        "languages": None
        if mix is None
        else table(
            mix,
            [
                ("source", "source", None),
                ("language", "code", None),
                ("name", "language", None),
                ("documents", "documents", _int),
                ("share", "share", _pct),
            ],
            key="languages",
        ),
        "sources": table(per_source, columns, key="sources"),
        "n_documents": len(prepared),
        "n_terms": len(prepared.dictionary),
        "input_rows": prepared.report.input_rows,
        "removals": table(
            removals,
            [
                ("stage", "stage", None),
                ("kind", "what", None),
                ("reason", "why", None),
                ("source", "source", None),
                ("count", "count", _int),
                ("example", "example id", None),
            ],
            key="removals",
        ),
        "boilerplate": None
        if boiler.empty
        else table(
            boiler.sort_values("documents", ascending=False).head(8),
            [
                ("group", "outlet or source", None),
                ("line", "line removed", None),
                ("documents", "documents", _int),
                ("share", "share", _pct),
            ],
            key="boilerplate",
        ),
    }


def _int(value) -> str:
    return "–" if value is None or value != value else f"{int(round(value)):,}"


def _pct(value) -> str:
    return f"{value:.0%}"


def sweep_section(results, made: dict) -> dict:
    rec = results.tables["recommendation"]
    cols = [
        ("k", "k", None),
        ("fits", "fits", _int),
        ("npmi_mean", "NPMI (mean)", num),
        ("stability_mean", "stability (mean)", num),
        ("stability_se", "stability (s.e.)", num),
        ("perplexity_mean", "held-out perplexity", lambda v: num(v, 1)),
        ("diversity_mean", "diversity", num),
        ("near_empty_mean", "near-empty topics per fit", num),
        ("rarely_dominant_mean", "rarely dominant topics per fit", num),
        ("near_duplicate_mean", "near-duplicate pairs per fit", num),
        ("converged_share", "fits converged", lambda v: "" if pd.isna(v) else f"{v:.0%}"),
        (lambda r: "recommended" if r["chosen"] else "", "", None),
    ]
    scores = results.tables["scores"]
    return {
        "charts": [
            image(made[name], f"{label} of every fit against the number of topics")
            for name, label in (("sweep-npmi", "NPMI"), ("sweep-stability", "Stability"))
            if name in made
        ],
        "rule": results.recommendation.rule,
        "details": results.recommendation.details,
        "health": health(scores),
        "table": table(
            rec, [c for c in cols if not isinstance(c[0], str) or c[0] in rec], key="sweep"
        ),
        "n_fits": len(scores),
        "ks": ", ".join(map(str, sorted(scores["k"].unique()))),
        "seeds": ", ".join(map(str, sorted(scores["seed"].unique()))),
        "engine": ", ".join(sorted(scores["engine"].unique())),
    }


def topics_section(results) -> dict:
    t = results.tables
    terms = t["terms"]
    words = {
        m: terms[(terms["method"] == m) & (terms["rank"] <= WORDS)]
        .groupby("topic")["term"]
        .agg(" ".join)
        for m in ("probability", "frex")
    }
    consensus = t["consensus"].set_index("topic") if len(t["consensus"]) else None
    rows = t["topic_scores"].copy()
    rows["label"] = [_consensus(consensus, i, "name") for i in rows["topic"]]
    rows["verdict"] = [_consensus(consensus, i, "verdict") for i in rows["topic"]]
    rows["words"] = rows["topic"].map(words["probability"])
    rows["frex"] = rows["topic"].map(words["frex"])
    if {"near_empty", "duplicate_of"} <= set(rows.columns):
        rows["junk"] = [topic_badge(r) for _, r in rows.iterrows()]
    return {
        "table": table(
            rows,
            [
                ("topic", "topic", None),
                ("label", "settled label", None),
                ("verdict", "verdict", None),
                ("words", "most probable terms", None),
                ("frex", "most distinctive terms (FREX)", None),
                ("npmi", "NPMI", num),
                ("stability", "stability", num),
                *([("junk", "junk topic?", None)] if "junk" in rows else []),
            ],
            key="topics",
        )
    }


def _consensus(consensus, topic, field):
    if consensus is None or topic not in consensus.index:
        return "not labelled yet" if field == "name" else ""
    return consensus.at[topic, field] or ""


def comparison_section(results, made: dict) -> dict | None:
    t = results.tables
    if "differences" not in t:
        return None
    s = results.settings
    diff = t["differences"]
    first = diff.iloc[0]
    diff = diff.assign(caption=diff["topic"].map(results.captions))
    prev = t["prevalence"].assign(caption=t["prevalence"]["topic"].map(results.captions))
    heavy = t.get("influence")
    out = {
        "weighting": s["weighting"],
        "cluster": s["cluster"],
        "n_boot": int(first["n_boot"]),
        "ci": f"{first['ci_level']:.0%}",
        "interval": first["interval"],
        "fdr": first["fdr"],
        "holds": VERDICT_WORDS[True],
        "chance": VERDICT_WORDS[False],
        "chart": image(made["sources"], "Prevalence of each topic per source, and the difference")
        if "sources" in made
        else None,
        "differences": table(
            diff,
            [
                ("caption", "topic", None),
                (lambda r: f"{r['source']} vs {r['other']}", "comparison", None),
                ("prevalence", "prevalence", num),
                ("prevalence_other", "in the other", num),
                ("difference", "difference", lambda v: num(v, sign=True)),
                (lambda r: interval(r["diff_ci_low"], r["diff_ci_high"]), "interval", None),
                ("ratio", "ratio", lambda v: num(v, 2)),
                ("p_adjusted", "adjusted p", pval),
                ("significant", "verdict", verdict_word),
            ],
            key="differences",
        ),
        "prevalence": table(
            prev,
            [
                ("caption", "topic", None),
                ("source", "source", None),
                ("prevalence", "prevalence", num),
                (lambda r: f"{num(r['ci_low'])} to {num(r['ci_high'])}", "interval", None),
                ("n_documents", "documents", _int),
                ("n_units", "clusters resampled", _int),
            ],
            key="prevalence",
        ),
        "influence": None
        if heavy is None
        else table(
            heavy,
            [
                ("source", "source", None),
                ("group", "cluster", None),
                ("rank", "rank", None),
                ("n_documents", "documents", _int),
                ("weight", "weight", _int),
                ("share", "share of the source", _pct),
                ("flagged", "above threshold", None),
            ],
            key="influence",
        ),
        "flagged": []
        if heavy is None
        else [
            {
                "group": r.group,
                "source": r.source,
                "share": f"{r.share:.0%}",
                "threshold": f"{r.threshold:.0%}",
            }
            for r in heavy[heavy["flagged"]].itertuples(index=False)
        ],
        "cap": None,
    }
    if "cap_effect" in t:
        cap = t["cap_effect"].assign(caption=t["cap_effect"]["topic"].map(results.captions))
        cap = cap.reindex(cap["change"].abs().sort_values(ascending=False).index).head(6)
        out["cap"] = table(
            cap,
            [
                ("caption", "topic", None),
                ("source", "source", None),
                ("prevalence_before", "prevalence as reported", num),
                ("prevalence_after", "with cluster shares capped", num),
                ("change", "change", lambda v: num(v, sign=True)),
            ],
            key="cap_effect",
        )
        out["cap_share"] = f"{float(t['cap_effect']['cap_group_share'].iloc[0]):.0%}"
    return out


def documents_section(results) -> list[dict]:
    docs = results.tables["documents"]
    docs = docs[docs["rank"] <= DOCS]
    out = []
    for topic, rows in docs.groupby("topic", sort=True):
        out.append(
            {
                "caption": results.captions[topic],
                "sources": [
                    {
                        "source": source,
                        "docs": [
                            {
                                "title": _text(r["title"]),
                                "meta": " · ".join(
                                    x
                                    for x in (
                                        _text(r["outlet"]) if r["outlet"] is not None else "",
                                        _text(r["date"]),
                                        f"id {r['id']}",
                                        f"share {r['topic_share']:.2f}",
                                        f"exposure {_int(r['exposure'])}",
                                        f"{r['n_collapsed']} near-copies folded in"
                                        if r["n_collapsed"]
                                        else "",
                                    )
                                    if x and x != "–"
                                ),
                                "snippet": r["snippet"],
                            }
                            for r in part.to_dict("records")
                        ],
                    }
                    for source, part in rows.groupby("source", sort=True)
                ],
            }
        )
    return out


def labels_section(results) -> dict:
    t = results.tables
    labels, agree = t["labels"], t["agreement"]
    if labels.empty:
        return {"empty": True}
    side = labels.pivot(index="topic", columns="analyst", values=["name", "verdict"])
    analysts = sorted(labels["analyst"].unique())
    rows = pd.DataFrame({"topic": side.index})
    columns = [("topic", "topic", None)]
    for who in analysts:
        rows[f"{who}_name"] = side[("name", who)].to_numpy()
        rows[f"{who}_verdict"] = side[("verdict", who)].to_numpy()
        columns += [
            (f"{who}_name", f"{who}: name", None),
            (f"{who}_verdict", f"{who}: verdict", None),
        ]
    overall = agree[agree["scope"] == "overall"]
    return {
        "empty": False,
        "analysts": analysts,
        "overall": [
            {
                "field": r.field,
                "alpha": num(r.alpha, 2),
                "percent": f"{r.percent_agreement:.0%}",
                "units": int(r.n_units),
                "sentence": explain_agreement(r._asdict()),  # or what alpha still needs
            }
            for r in overall.itertuples(index=False)
        ],
        "side": table(rows, columns, key="labels"),
        "agreement": table(
            agree[agree["scope"] == "topic"],
            [
                ("field", "field", None),
                ("topic", "topic", None),
                ("percent_agreement", "pairs agreeing", _pct),
                ("n_coders", "analysts", _int),
            ],
            key="agreement",
        ),
    }


OVER_TIME_TOPICS = 3  # topics charted over time: those whose prevalence moves most


def over_time_section(results) -> dict:
    """Prevalence per source and period; the topics that move most, charted; or why not."""
    from ..errors import ComparisonError
    from ..views.charts import time_chart

    model = results.results
    try:
        prev = model.over_time()
    except ComparisonError as exc:
        return {"missing": str(exc)}
    row = prev.iloc[0]
    kept = prev[~prev["few_documents"]].sort_values("period_start", kind="stable")
    ends = kept.groupby(["topic", "source"])["prevalence"].agg(["first", "last"])
    ends["change"] = ends["last"] - ends["first"]
    ends = ends.reset_index()
    moving = ends.groupby("topic")["change"].apply(lambda c: c.abs().max())
    topics = moving.sort_values(ascending=False, kind="stable").index[:OVER_TIME_TOPICS]
    frame = model.over_time_frame()
    periods = kept.groupby("topic")["period"]
    ends = ends.assign(
        caption=ends["topic"].map(results.captions),
        first_period=ends["topic"].map(periods.first()),
        last_period=ends["topic"].map(periods.last()),
    )
    out = {
        "missing": None,
        "freq": str(row["freq"]),
        "n_periods": int(prev["period"].nunique()),
        "min_period_docs": int(row["min_period_docs"]),
        "n_few": int(prev.drop_duplicates(["source", "period"])["few_documents"].sum()),
        "charts": [
            image(
                time_chart(frame, focus=int(t), min_period_docs=int(row["min_period_docs"])),
                f"Topic {results.captions[int(t)]} over time, per source",
            )
            for t in topics
        ],
        "changes": table(
            ends.loc[ends["topic"].isin(topics)],
            [
                ("caption", "topic", None),
                ("source", "source", None),
                ("first_period", "first period", None),
                ("first", "prevalence then", num),
                ("last_period", "last period", None),
                ("last", "prevalence at the end", num),
                ("change", "change", lambda v: num(v, sign=True)),
            ],
            key="over-time",
        ),
        "stands": None,
    }
    if len(results.sources) > 1:
        diff = model.over_time_differences()
        tested = diff.groupby(["source", "other"]).agg(
            tested=("significant", "size"), stands=("significant", "sum")
        )
        out["stands"] = table(
            tested.reset_index(),
            [
                (lambda r: f"{r['source']} vs {r['other']}", "comparison", None),
                ("tested", "topic-periods tested", _int),
                ("stands", "differences that stand", _int),
            ],
            key="over-time-differences",
        )
    return out


def prevalence_model_section(results) -> list[dict]:
    """One entry per prevalence model computed on ``results.results`` (none: no section)."""
    from ..views.charts import covariate_chart

    out = []
    for model in results.results.prevalence_models():
        ms = model.settings
        effects = model.effects.assign(caption=model.effects["topic"].map(results.captions))
        effects = effects.sort_values("p_value", kind="stable").head(15)
        covariates = list(dict.fromkeys(model.prevalence["covariate"]))
        out.append(
            {
                "formula": model.formula,
                "weighting": ms["weighting"],
                "cluster": ms["cluster"],
                "n_clusters": ms["n_clusters"],
                "n_docs": ms["n_docs"],
                "n_draws": ms["n_draws"],
                "ci": f"{ms['ci_level']:.0%}",
                "charts": [
                    image(
                        covariate_chart(model.prevalence, covariate=c, captions=results.captions),
                        f"Estimated prevalence of each topic by {c}",
                    )
                    for c in covariates[:3]
                ],
                "effects": table(
                    effects,
                    [
                        ("caption", "topic", None),
                        ("covariate", "covariate", None),
                        (lambda r: f"{r['value']} vs {r['reference']}", "change", None),
                        ("estimate", "effect", lambda v: num(v, sign=True)),
                        (lambda r: interval(r["ci_low"], r["ci_high"]), "interval", None),
                        ("p_adjusted", "adj. p", pval),
                    ],
                    key=f"model-{len(out)}",
                ),
            }
        )
    return out


def reproduce_section(results) -> dict:
    from ..project import package_versions

    fit, prepared, s = results.fit, results.prepared, results.settings
    corpus = results.corpus
    rows = [
        ("corpus fingerprint", "–" if corpus is None else corpus.fingerprint),
        ("prepared corpus", prepared.fingerprint),
        ("model", f"k = {fit.k}, seed {fit.random_state}, {fit.engine} {fit.engine_version}"),
        ("model fingerprint", fit.fingerprint),
        ("sweep", ", ".join(f"{k}={v}" for k, v in sorted(results.sweep.settings_.items()))),
        ("comparison", ", ".join(f"{k}={v}" for k, v in s.items())),
        ("preparation", ", ".join(f"{k}={v}" for k, v in sorted(prepared.settings.items()))),
    ]
    versions = package_versions()
    return {
        "settings": table(
            pd.DataFrame(rows, columns=["what", "value"]),
            [("what", "setting", None), ("value", "value", None)],
            key="settings",
        ),
        "versions": table(
            pd.DataFrame(sorted(versions.items()), columns=["package", "version"]),
            [("package", "package", None), ("version", "version", None)],
            key="versions",
        ),
        "command": f"tm-compare report {results.project.path} --k {fit.k} --seed {fit.random_state} "
        + " ".join(
            f"--{k.replace('_', '-')} {_flag(v)}"
            for k, v in s.items()
            if v is not None or k == "cluster"  # freq=None is the flag left out
        ),
    }


def _flag(value) -> str:
    return "document" if value is None else str(value)  # --cluster document: cluster=None


def context(results) -> dict:
    """Everything the template shows, in the order it shows it."""
    made = charts(results)
    fit = results.fit
    return {
        "title": f"Topics by source: {results.project.path.resolve().name}",
        "generated": _dt.datetime.now(_dt.UTC).strftime("%d %B %Y, %H:%M UTC"),
        "k": fit.k,
        "seed": fit.random_state,
        "sources": results.sources,
        "corpus": corpus_section(results),
        "sweep": sweep_section(results, made),
        "topics": topics_section(results),
        "comparison": comparison_section(results, made),
        "over_time": over_time_section(results),
        "prevalence_models": prevalence_model_section(results),
        "documents": documents_section(results),
        "labels": labels_section(results),
        "reproduce": reproduce_section(results),
    }
