"""IPython extension: ``%load_ext tm_compare``.

- ``%tm_compare PROJECT [--k K --seed S] [--analyst NAME]`` opens the sweep view of a project
  (and the picked model's topic view under it).
- A sweep or a fit left at the end of a cell shows a short HTML summary.
"""

from __future__ import annotations

import argparse
import math
import shlex

import pandas as pd

from .._html import esc, table

_TABLE = "border-collapse:collapse;font-size:12px"
_CELL = "padding:2px 8px;border-top:1px solid #e3e6ea;text-align:left"


def load(ipython) -> None:
    """Register the ``%tm_compare`` magic and the HTML summaries of ``Sweep`` and ``Fit``."""
    ipython.register_magic_function(tm_compare_magic, magic_kind="line", magic_name="tm_compare")
    html = ipython.display_formatter.formatters["text/html"]
    html.for_type_by_name("tm_compare.models.sweeps", "Sweep", sweep_html)
    html.for_type_by_name("tm_compare.models.fits", "Fit", fit_html)


def _parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="%tm_compare",
        exit_on_error=False,
        description="Open the views of a tm_compare project.",
    )
    parser.add_argument("project", help="project folder with a saved sweep")
    parser.add_argument("--k", type=int, help="open the model with this k")
    parser.add_argument("--seed", type=int, help="seed of that model")
    parser.add_argument("--analyst", help="label as this analyst")
    return parser


def tm_compare_magic(line: str):
    """Open a project's views: ``%tm_compare PROJECT [--k K --seed S] [--analyst NAME]``."""
    from ..errors import SettingsError
    from ..labels.store import LabelStore
    from ..models.sweeps import Sweep
    from ..project import Project
    from ..text.prepared import load_prepared
    from . import SweepView

    try:
        args = _parser().parse_args(shlex.split(line))
    except (argparse.ArgumentError, SystemExit) as exc:
        msg = (
            f"%tm_compare could not read {line!r}: {exc}. "
            "Usage: %tm_compare PROJECT [--k K --seed S] [--analyst NAME]."
        )
        raise SettingsError(msg) from None
    project = Project.open(args.project)
    sweep = Sweep.load(project)
    store = LabelStore(project, analyst=args.analyst)
    view = SweepView(
        sweep, prepared=load_prepared(project, sweep.corpus_fingerprint_), labels=store
    )
    if args.k is not None:
        view.k, view.seed = args.k, args.seed if args.seed is not None else view.seed
        view.show_fit()
    return view


def _table(frame: pd.DataFrame) -> str:
    return table(frame, attrs={"style": _TABLE}, cell_style=_CELL)


def sweep_html(sweep) -> str | None:
    """HTML summary of a fitted sweep: grid, suggestion with its rule, mean scores by k."""
    scores = getattr(sweep, "scores_", None)
    if scores is None:
        return None
    from .sweep_view import MEASURES

    measures = [m for m in MEASURES if m in scores.columns]
    by_k = scores.groupby("k")[measures].mean().round(4).reset_index()
    try:
        s = sweep.recommend()
        advice = f"<p><b>Suggested k = {int(s.k)}</b> (seed {int(s.seed)}): {esc(s.rule)}</p>"
    except Exception as exc:  # a summary must never fail the cell
        advice = f"<p>No suggestion: {esc(exc)}</p>"
    seeds = sorted(scores["seed"].unique().tolist())
    return (
        f"<div><b>Sweep</b>: {len(scores)} fits, k = {esc(sorted(scores['k'].unique().tolist()))}, "
        f"seeds {esc(seeds)}, engine {esc(sweep.engine)}.{advice}"
        f"<div style='font-size:12px;color:#6b7078'>Mean over seeds:</div>{_table(by_k)}"
        "<div style='font-size:12px;color:#6b7078'>Open it with <code>tm_compare.SweepView(sweep)</code>.</div></div>"
    )


def fit_html(fit) -> str:
    """HTML summary of a fit: settings, held-out perplexity and each topic's top words."""
    words = fit.top_words(8)  # a short summary: fewer than the n_terms shown elsewhere
    topics = pd.DataFrame({"topic": range(len(words)), "top words": [" ".join(w) for w in words]})
    # nan when nothing was held out (holdout=0, or a fit made with Fit.from_arrays)
    finite = math.isfinite(fit.perplexity)
    shown = f", held-out perplexity {fit.perplexity:,.1f}" if finite else ""
    return (
        f"<div><b>LDA fit</b>: k = {int(fit.k)}, seed {int(fit.random_state)}, "
        f"engine {esc(fit.engine)} "
        f"{esc(fit.engine_version)}, {len(fit.doc_ids):,} documents, {len(fit.vocab):,} terms, "
        f"{fit.fit_seconds:.1f} s{shown}.{_table(topics)}"
        "<div style='font-size:12px;color:#6b7078'>Read it with "
        "<code>tm_compare.TopicView(fit, prepared)</code>.</div></div>"
    )
