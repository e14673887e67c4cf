"""The demo job end to end, as plain functions the CLI and notebooks share.

:func:`run_demo` runs the steps in :data:`STEPS` in order: intake, preparation,
a sweep of k and seeds, the choice of a model, the comparison of sources,
labels from two invented analysts with their agreement, and the report and
exports. Each step takes the :class:`DemoRun` so far, stores what it made on
it, and returns a printable report.
"""

from __future__ import annotations

import os
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from .._atomic import atomic_path, atomic_write_json
from .._deprecation import renamed_parameters
from ..options import default, verdict_word
from ..project import Project
from . import quillhaven as demo

DEFAULT_PROJECT = "quillhaven-demo"
DEMO_FOLDER = "demo"  # inside the project: the input file and what was planted in it
#: The demo's sweep: around the nine planted themes, three seeds (stability needs three), fits
#: that stop once their topics settle; a few minutes on two cores.
GRID = {"k": (6, 9, 12), "seeds": 3, "passes": default("passes")}
N_BOOT = default("n_boot")
ANALYSTS = ("analyst_a", "analyst_b")  # invented, pseudonymous team members


@dataclass
class DemoRun:
    """What a demo run made so far; steps fill the fields after ``random_state``."""

    project: Project
    n_docs: int
    random_state: int
    grid: dict = field(default_factory=lambda: dict(GRID))
    n_boot: int = N_BOOT
    progress: bool = True
    frame: Any = None
    truth: demo.DemoTruth | None = None
    corpus: Any = None
    prepared: Any = None
    sweep: Any = None
    results: Any = None
    report_path: Path | None = None
    exported: list = field(default_factory=list)
    language: str = "en"
    views_path: Path | None = None


def build_corpus(run: DemoRun) -> str:
    """Generate the invented articles, keep them as a CSV file, and take them in as a corpus."""
    from ..text.corpus import Corpus, save_corpus

    run.frame, run.truth = demo.scenario(run.n_docs, run.random_state, run.language)
    folder = run.project.folder(DEMO_FOLDER)
    with atomic_path(folder / "quillhaven.csv") as tmp:
        run.frame.to_csv(tmp, index=False)
    atomic_write_json(folder / "truth.json", run.truth.to_dict())
    with atomic_path(folder / "truth_docs.csv") as tmp:
        run.truth.docs.to_csv(tmp, index=False)
    run.corpus = Corpus.from_frame(run.frame, **demo.CORPUS_COLUMNS)
    save_corpus(run.corpus, run.project)
    run.project.update_manifest(
        settings={
            "demo": {"n_docs": run.n_docs, "random_state": run.random_state}
            | ({} if run.language == "en" else {"language": run.language})
        }
    )
    f = run.frame
    return "\n".join(
        [
            f"{len(f):,} invented articles from {f['outlet'].nunique()} outlets, "
            f"{f['reader'].nunique():,} panel readers, {f['date'].min():%d %b %Y} to "
            f"{f['date'].max():%d %b %Y}; input file {DEMO_FOLDER}/quillhaven.csv",
            "Planted for later stages to find:",
            run.truth.describe(),
            "",
            run.corpus.summary().to_string(),
            "",
            str(run.corpus.report),
        ]
    )


def prepare_corpus(run: DemoRun) -> str:
    """Prepare the corpus for LDA (cached in the project) and say what was removed."""
    from ..text.languages import describe_mix
    from ..text.prepared import prepare

    codes = run.language.split("+")  # a mixed demo detects each article's language
    run.prepared = prepare(
        run.corpus, project=run.project, language=codes[0] if len(codes) == 1 else codes
    )
    meta = run.prepared.meta
    merged = meta[meta["duplicate_ids"].map(len) > 0]
    lines = [
        repr(run.prepared) + (" (from the project's cache)" if run.prepared.from_cache else ""),
        "",
        "Boilerplate lines removed:",
        run.prepared.boilerplate[["group", "documents", "share", "line"]].to_string(
            index=False, formatters={"share": "{:.0%}".format}
        ),
        "",
        f"{len(merged)} documents absorb near-copies or URL variants; "
        f"{int(meta['cross_source_duplicate'].sum())} have a near-copy in the other source.",
        "",
        str(run.prepared.report),
    ]
    if "+" in run.language:
        lines += ["", "Languages detected per source:", describe_mix(run.prepared)]
    return "\n".join(lines)


def sweep_grid(run: DemoRun) -> str:
    """Fit LDA over the demo's grid of k and seeds (in parallel; finished fits are kept)."""
    from ..models.sweeps import sweep

    g = run.grid
    run.sweep = sweep(
        run.prepared,
        k=g["k"],
        seeds=g["seeds"],
        passes=g["passes"],
        project=run.project,
        n_jobs=-1,
        progress=run.progress,
    )
    from ..models.sweep_summary import summary as sweep_summary

    return sweep_summary(run.sweep)


def compare_sources(run: DemoRun) -> str:
    """Pick the recommended model and compare the sources under it."""
    from ..report.exports import collect

    run.results = collect(run.project, n_boot=run.n_boot)
    return "\n".join(
        [
            f"Chosen: k = {run.results.fit.k}, seed {run.results.fit.random_state}. "
            f"Rule: {run.results.recommendation.rule}",
            "",
            "Top words of each topic:",
            *(f"  {t:>2}  {' '.join(w)}" for t, w in enumerate(run.results.fit.top_words(8))),
            "",
            _differences_summary(run.results),
            "",
            _influence_summary(run.results),
        ]
    )


def _differences_summary(results, n_topics: int = 4) -> str:
    diff = results.tables.get("differences")
    if diff is None:
        return "One source only: nothing to compare."
    s = results.settings
    head = diff[diff["rank"] <= n_topics]
    resampled = "documents" if s["cluster"] is None else f"clusters of {s['cluster']!r}"
    lines = [
        f"Topics that differ most ({s['weighting']} weighting, {s['ci']:.0%} intervals "
        f"resampling {resampled}, p adjusted by Benjamini-Hochberg):"
    ]
    for r in head.itertuples(index=False):
        lines.append(
            f"  {results.captions[r.topic]}: {r.source} {r.prevalence:.3f} vs {r.other} "
            f"{r.prevalence_other:.3f}, difference {r.difference:+.3f} "
            f"[{r.diff_ci_low:+.3f}, {r.diff_ci_high:+.3f}], p adj. {r.p_adjusted:.3g}: "
            f"{verdict_word(r.significant)}"
        )
    return "\n".join(lines)


def _influence_summary(results) -> str:
    heavy = results.tables.get("influence")
    if heavy is None or not heavy["flagged"].any():
        return "Influence check: no cluster carries more than the threshold share of a source."
    lines = ["Influence check: WARNING"]
    effect = results.tables.get("cap_effect")
    for r in heavy[heavy["flagged"]].itertuples(index=False):
        line = (
            f"  {r.group} carries {r.share:.0%} of the {r.weighting}-weighted {r.source!r} "
            f"source ({r.n_documents} documents, above the {r.threshold:.0%} threshold)"
        )
        if effect is not None:
            worst = effect[effect["source"] == r.source].sort_values(
                "change", key=abs, ascending=False
            )
            w = worst.iloc[0]
            line += (
                f"; capping it moves {results.captions[int(w.topic)]} from "
                f"{w.prevalence_before:.3f} to {w.prevalence_after:.3f}"
            )
        lines.append(line)
    return "\n".join(lines)


def demo_labels(fit, topic_scores) -> dict[str, list[dict]]:
    """Labels two invented analysts give each topic, named from its top words.

    Both name every topic from its top words, in their own way, and both call the least
    coherent topic (NPMI) "mixed"; ``analyst_b`` also calls the least stable of the other
    topics "noise": they agree on most verdicts, not all.
    """
    words = fit.top_words(4)
    worst = int(topic_scores.sort_values("npmi", kind="stable")["topic"].iloc[0])
    others = topic_scores[topic_scores["topic"] != worst]
    unstable = int(others.sort_values(["stability", "npmi"], kind="stable")["topic"].iloc[0])
    verdicts = {
        "analyst_a": {worst: "mixed"},
        "analyst_b": {worst: "mixed", unstable: "noise"},
    }
    names = {
        "analyst_a": lambda w: " / ".join(w[:3]),
        "analyst_b": lambda w: (
            f"{w[0].replace('_', ' ')} and {w[1].replace('_', ' ')}".capitalize()
        ),
    }
    return {
        who: [
            {
                "topic": t,
                "name": names[who](words[t]),
                "verdict": verdicts[who].get(t, "usable"),
                "note": "" if verdicts[who].get(t) is None else "top words point two ways",
            }
            for t in range(fit.k)
        ]
        for who in ANALYSTS
    }


def attach_labels(run: DemoRun) -> str:
    """A blind round of labels by two invented analysts, its agreement, and a consensus."""
    from ..labels.store import LabelStore

    fit = run.results.fit
    stores = {who: LabelStore(run.project, analyst=who) for who in ANALYSTS}
    lead = stores[ANALYSTS[0]]
    try:
        if lead.consensus(fit).empty:  # a rerun keeps the labels already settled
            if lead.in_blind_round(fit):
                lead.close_round(fit)
            lead.open_round(fit, name="demo round 1", blind=True)
            for who, labels in demo_labels(fit, run.results.tables["topic_scores"]).items():
                for label in labels:
                    mine = stores[who].label(fit, label["topic"])
                    stores[who].save(fit, based_on=None if mine is None else mine.version, **label)
            lead.close_round(fit)
            _settle(lead, fit)
        run.results.read_labels(lead)
    finally:
        for store in stores.values():
            store.close()
    t = run.results.tables
    overall = t["agreement"].query("scope == 'overall'")
    disagree = sorted(set(t["labels"]["topic"]) - set(_agreeing(t["labels"])))
    return "\n".join(
        [
            f"{len(t['labels'])} labels by {', '.join(ANALYSTS)} (invented analysts) in a blind "
            f"round, now closed; labels in {run.project.path / 'labels.sqlite'}",
            *(
                f"Agreement on {r.field}: Krippendorff's alpha {r.alpha:.2f}, "
                f"{r.percent_agreement:.0%} of pairs agree, {r.n_units} topics"
                for r in overall.itertuples(index=False)
            ),
            f"Verdicts differ on topic(s) {', '.join(map(str, disagree)) or 'none'}; "
            "the consensus keeps the more cautious verdict.",
        ]
    )


def _agreeing(labels):
    verdicts = labels.groupby("topic")["verdict"].nunique()
    return verdicts[verdicts == 1].index


_CAUTION = {"usable": 0, "mixed": 1, "noise": 2}


def _settle(store, fit) -> None:
    """Settle each topic: the first analyst's name, the more cautious verdict."""
    current = store.current(fit)
    for topic, rows in current.groupby("topic"):
        verdict = max(rows["verdict"], key=_CAUTION.get)
        name = rows.sort_values("analyst")["name"].iloc[0]
        store.settle(fit, int(topic), name=name, verdict=verdict)


def write_outputs(run: DemoRun) -> str:
    """Write the report and the exports into the project's report folder."""
    from ..report.exports import export
    from ..report.html import write_report

    run.report_path = write_report(run.project, results=run.results)
    run.exported = export(run.project, results=run.results)
    run.views_path = write_views_notebook(run)
    folder = run.report_path.parent
    return "\n".join(
        [
            f"Report: {run.report_path}",
            f"Views: {run.views_path} (a notebook that opens the views of this project)",
            f"Exports ({len(run.exported)} files) in {folder}: tables as CSV and Parquet, "
            "charts as PNG and SVG (charts/), column meanings in columns.md, topic shares per "
            "document in document_topics.csv",
        ]
    )


VIEWS_NOTEBOOK = "views.ipynb"


def write_views_notebook(run: DemoRun) -> Path:
    """Write ``PROJECT/views.ipynb``: one cell that opens the project's views on the
    recommended model (``jupyter lab views.ipynb`` from the project folder)."""
    rec = run.results.recommendation
    line = f"%tm_compare . --k {int(rec.k)} --seed {int(rec.seed)} --analyst analyst_c"
    intro = (
        "# Quillhaven demo: the views\n\n"
        "Run the cell below (Shift+Enter). It opens the sweep of the demo project and, under it, "
        f"the recommended model (k = {int(rec.k)}, seed {int(rec.seed)}). Put your own name "
        "after `--analyst` before you label topics; the demo's invented analysts are "
        f"{' and '.join(ANALYSTS)}."
    )
    cells = [
        {"cell_type": "markdown", "metadata": {}, "source": intro},
        {
            "cell_type": "code",
            "metadata": {},
            "execution_count": None,
            "outputs": [],
            "source": f"%load_ext tm_compare\n{line}",
        },
    ]
    kernel = {"name": "python3", "display_name": "Python 3 (ipykernel)", "language": "python"}
    notebook = {
        "cells": cells,
        "metadata": {"kernelspec": kernel, "language_info": {"name": "python"}},
        "nbformat": 4,
        "nbformat_minor": 5,
    }
    for i, cell in enumerate(cells):
        cell["id"] = f"views-{i}"
    path = run.project.path / VIEWS_NOTEBOOK
    atomic_write_json(path, notebook)
    return path


def summary(run: DemoRun) -> str:
    """The short summary printed at the end of ``tm-compare demo``."""
    r = run.results
    return "\n".join(
        [
            f"Recommended k = {r.recommendation.k} (seed {r.recommendation.seed}): "
            f"{r.recommendation.rule}",
            "",
            _differences_summary(r, n_topics=3),
            "",
            _influence_summary(r),
        ]
    )


#: (title, step) in the order they run.
STEPS: tuple[tuple[str, Callable[[DemoRun], str]], ...] = (
    ("Corpus intake", build_corpus),
    ("Preparation", prepare_corpus),
    ("Sweep of k and seeds", sweep_grid),
    ("Comparison of sources", compare_sources),
    ("Labels", attach_labels),
    ("Report and exports", write_outputs),
)


@renamed_parameters(seed="random_state")
def run_demo(
    project: str | os.PathLike = DEFAULT_PROJECT,
    *,
    n_docs: int = 3000,
    random_state: int = 0,
    echo: Callable[[str, str], None] | None = None,
    k=GRID["k"],
    seeds=GRID["seeds"],
    passes: int = GRID["passes"],
    n_boot: int = N_BOOT,
    progress: bool = True,
    language: str = "en",
) -> DemoRun:
    """Build the Quillhaven demo project and run every step of the job on it.

    Parameters
    ----------
    project : path
        Project folder, created if missing (an existing project is reused; finished fits
        and settled labels are kept).
    n_docs, random_state : int
        Size and seed of the invented corpus (see :func:`tm_compare.demo.scenario`).
    echo : callable, optional
        Called with ``(title, report)`` after each step.
    k, seeds, passes : grid of the sweep (see :func:`tm_compare.sweeps.sweep`).
    n_boot : int
        Bootstrap replicates of the comparison.
    progress : bool
        Show progress bars.
    language : "en", "de" or "de+en"
        Language of the invented articles; "de+en" mixes both, prepares each article in the
        language detected for it and reports the mix (see ``tm_compare.demo.DEMO_LANGUAGES``).
    """
    demo._check("run_demo", n_docs, random_state, language)  # before any folder is made
    # The grid, fit settings and bootstrap too: a bad one must not fail after minutes of work.
    from ..compare.prevalence import Bootstrap
    from ..models.sweeps import Sweep

    Sweep(k, seeds, passes=passes)._checked_options()
    Bootstrap.of("run_demo", {"n_boot": n_boot})
    grid = {"k": tuple(k), "seeds": seeds, "passes": passes}
    run = DemoRun(Project.create(project), int(n_docs), int(random_state), grid, n_boot, progress)
    run.language = language
    for title, step in STEPS:
        report = step(run)
        if echo is not None:
            echo(title, report)
    return run
