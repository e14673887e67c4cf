"""Every choice a user makes, with its one name, its one default and what it accepts.

The Python API, the command line and the views read this table; none keeps a copy. A function
signature takes its default from here (``n_boot=default("n_boot")``), a CLI flag takes its
default, choices and help text from here (:func:`cli_help`), and a view offers the choices
listed here. Change a default in this file and every surface follows.

Names for "how many to show" are one per kind: ``n_terms`` (terms of a topic), ``n_docs``
(documents per topic and source), ``n_groups`` (readers or outlets listed), ``n_topics``
(topics listed). Randomness is always ``random_state`` (``holdout_random_state`` for the draw of
held-out documents, kept apart so that every fit of a sweep is judged on the same documents); a
fitted model is always ``fit``. CLI flags are these names with dashes, except ``--jobs``
(``n_jobs``), whose default on the command line is all cores (-1).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from ._validation import check_choice

__all__ = [
    "METHOD_NAMES",
    "OPTIONS",
    "VERDICT_WORDS",
    "Option",
    "check",
    "choices",
    "cli_help",
    "default",
    "verdict_rule",
    "verdict_word",
]


@dataclass(frozen=True)
class Option:
    """One user choice: its name, default, accepted values (None: any of its type) and help."""

    name: str
    default: Any
    choices: tuple | None
    help: str


_TABLE = (
    # -- comparison between sources
    Option(
        "weighting",
        "exposure",
        ("exposure", "unique"),
        "count documents by exposure (their weight) or each article once",
    ),
    Option(
        "cluster",
        "group",
        ("group", "outlet", None),
        "what the bootstrap resamples: readers ('group'), outlets ('outlet') or documents "
        "(None in Python, 'document' on the command line); 'group' falls back to documents "
        "when the corpus has no group column, and says so",
    ),
    Option("n_boot", 1000, None, "bootstrap replicates"),
    Option("ci", 0.95, None, "coverage of the intervals"),
    Option("interval", "percentile", ("percentile", "bca"), "bootstrap interval method"),
    Option(
        "resampling",
        "multinomial",
        ("multinomial", "poisson"),
        "how replicates draw units (Poisson: independent Poisson(1) counts; as fast)",
    ),
    Option("fdr", 0.05, None, "false discovery rate of the Benjamini-Hochberg adjustment"),
    Option(
        "against",
        "each",
        ("each", "rest"),
        "compare every pair of sources, or each source with all others pooled",
    ),
    Option(
        "model_uncertainty",
        False,
        None,
        "also redraw each document's topic shares from its Dirichlet (slower)",
    ),
    Option("n_model_draws", 100, None, "batches of replicates sharing one redraw of the shares"),
    Option(
        "n_draws",
        25,
        None,
        "prevalence model: draws of every document's shares from its Dirichlet, each refitted "
        "and pooled (0: the posterior mean only)",
    ),
    Option(
        "cap_group_share",
        None,
        None,
        "cap every cluster's share of its source's weight (0-1), or none",
    ),
    Option(
        "freq",
        None,
        None,
        "length of a period over time: 'D', 'W', 'M', 'Q' or 'Y' (pandas period aliases); "
        "none: the finest giving at most 26 periods over the date span",
    ),
    Option(
        "min_period_docs",
        10,
        None,
        "a source's period with fewer documents is marked sparse: no line or difference",
    ),
    Option("random_state", 0, None, "seed of every random draw (bootstrap, fits)"),
    # -- terms and documents
    Option(
        "method",
        "probability",
        ("probability", "lift", "frex", "relevance"),
        "term ranking: p(term|topic), lift (Taddy 2012), FREX (Bischof & Airoldi 2012), "
        "relevance (Sievert & Shirley 2014)",
    ),
    Option("frex_weight", 0.5, None, "FREX: weight of exclusivity against frequency (0-1)"),
    Option("lam", 0.6, None, "relevance: weight of p(term|topic) against lift (0-1)"),
    Option("n_terms", 10, None, "terms per topic: shown, and scored for coherence and stability"),
    Option("n_docs", 5, None, "representative documents shown per topic and source"),
    Option("n_groups", 5, None, "heaviest readers or outlets listed per source"),
    Option("n_topics", 5, None, "most different topics listed per comparison"),
    # -- preparation
    Option(
        "language",
        "en",
        None,
        "language of the corpus: an ISO 639-1 code (de, fr, it, ...; see "
        "tm_compare.SUPPORTED_LANGUAGES), 'auto' to detect each document's, or several codes "
        "(a list; commas on the command line) to detect among those",
    ),
    Option(
        "undetected",
        "remove",
        None,
        "documents whose language cannot be detected: 'remove' counts them out in the report, "
        "a language code prepares them in that language and flags them",
    ),
    # -- the sweep and its fits
    Option("k", tuple(range(5, 41, 5)), None, "numbers of topics to fit"),
    Option("seeds", 3, None, "fits per k: a count (3 means 0, 1, 2) or a list of seeds"),
    Option("engine", "gensim", ("gensim", "sklearn"), "LDA implementation"),
    Option("measure", "npmi", ("npmi", "c_v", "uci", "umass"), "coherence measure"),
    Option("holdout", 0.1, None, "share of documents held out for perplexity"),
    Option(
        "holdout_random_state",
        0,
        None,
        "seed of the draw of held-out documents (one draw for every fit of a sweep)",
    ),
    Option(
        "n_jobs",
        None,
        None,
        "worker processes on this machine (joblib convention: None is 1, -1 all cores)",
    ),
    Option(
        "passes",
        20,
        None,
        "most passes over the corpus per fit; a fit stops earlier once its topics settle (tol)",
    ),
    Option(
        "tol",
        0.01,
        None,
        "a fit has converged when a pass moves its topics less than this (mean total-variation "
        "distance) twice in a row; 0 runs every pass",
    ),
    Option("iterations", 50, None, "inference iterations per document"),
    Option(
        "starts",
        8,
        None,
        "random starts probed per fit (three online updates each); the best is fitted in full",
    ),
    Option(
        "chunksize",
        "auto",
        None,
        "documents per online update; 'auto' makes ten updates per pass (at most 2000 each)",
    ),
    Option("alpha", "symmetric", None, "document-topic prior"),
    Option("eta", "symmetric", None, "topic-word prior"),
    # gensim's names and defaults; scikit-learn gets the same values under its own names.
    Option("decay", 0.5, None, "learning-rate decay kappa of online LDA, in [0.5, 1]"),
    Option("offset", 1.0, None, "learning-rate offset tau0 of online LDA, > 0"),
    Option("gamma_threshold", 0.001, None, "convergence tolerance of each document's E-step"),
)

OPTIONS: dict[str, Option] = {o.name: o for o in _TABLE}


def default(name: str) -> Any:
    """The default of option ``name``."""
    return OPTIONS[name].default


def choices(name: str) -> tuple:
    """The accepted values of option ``name`` (only for options with a fixed list)."""
    return OPTIONS[name].choices


def check(owner: str, name: str, value: Any) -> Any:
    """``value`` if option ``name`` accepts it, else the one message template of
    :func:`tm_compare._validation.check_choice` (naming ``owner``, the value and the choices)."""
    allowed = OPTIONS[name].choices
    return value if allowed is None else check_choice(owner, name, value, allowed)


def cli_help(name: str) -> str:
    """Help text for the CLI flag of option ``name``: the help, then the default in brackets."""
    option = OPTIONS[name]
    shown = "none" if option.default is None else option.default
    return f"{option.help} [{shown}]"


# -- words shown for values: one word per meaning on every surface (views, report, command line)

#: A difference between sources whose Benjamini-Hochberg adjusted p-value is at most ``fdr``
#: "holds up"; any other "could be chance". Tables keep the boolean column ``significant``.
VERDICT_WORDS = {True: "holds up", False: "could be chance"}
#: The term rankings of option ``method`` as the views and the report name them.
METHOD_NAMES = {
    "probability": "frequent",
    "frex": "distinctive (FREX)",
    "lift": "lift",
    "relevance": "weighted (Sievert & Shirley 2014)",
}


def verdict_word(holds) -> str:
    """The word for a difference between sources: ``"holds up"`` or ``"could be chance"``."""
    return VERDICT_WORDS[bool(holds)]


def verdict_rule(fdr) -> str:
    """What "holds up" means, in one sentence (shown beside the charts and tables)."""
    return (
        f"A difference {VERDICT_WORDS[True]} when its adjusted p-value is at most {fdr} "
        f"(Benjamini-Hochberg across topics); otherwise it {VERDICT_WORDS[False]}."
    )
