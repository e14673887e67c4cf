"""tm_compare: compare the topics of news sources with LDA, in Jupyter.

The data flow, one module per stage: corpus intake (:mod:`.corpus`) ->
prepared corpus (:mod:`.prepared`) -> sweep of fits (:mod:`.sweeps`,
:mod:`.fits`) -> scores (:mod:`.scores`) -> comparison between sources
(:mod:`.comparison`, :mod:`.terms`, :mod:`.documents`, :mod:`.alignment`)
-> labels (:mod:`.labels`) -> views, report and exports (:mod:`.charts`,
:mod:`.widgets`, :mod:`.report`, :mod:`.exports`).

Public names are imported lazily so that ``import tm_compare`` stays fast.
"""

from __future__ import annotations

import importlib

__version__ = "0.1.0"

# public name -> module that defines it
_EXPORTS = {
    "Corpus": "corpus",
    "canonical_url": "corpus",
    "prepare": "prepared",
    "PreparedCorpus": "prepared",
    "Project": "project",
    "RemovalLog": "removals",
    "Fit": "fits",
    "fit_lda": "fits",
    "sweep": "sweeps",
    "Sweep": "sweeps",
    "coherence": "scores",
    "CoherenceScorer": "scores",
    "stability": "scores",
    "diversity": "scores",
    "recommend": "scores",
    "Recommendation": "scores",
    "average_jaccard": "scores",
    "match_topics": "scores",
    "prevalence": "comparison",
    "differences": "comparison",
    "influence": "comparison",
    "cap_effect": "comparison",
    "term_rankings": "terms",
    "source_wording": "terms",
    "representative_documents": "documents",
    "align_topics": "alignment",
    "lineage": "alignment",
    "similarity_matrix": "alignment",
    "LabelStore": "labels",
    "krippendorff_alpha": "agreement",
    "percent_agreement": "agreement",
    "agreement_table": "agreement",
    "SweepView": "widgets",
    "TopicView": "widgets",
    "write_report": "report",
    "collect": "exports",
    "export": "exports",
    "document_topics": "exports",
    "Results": "exports",
    "run_demo": "pipeline",
}

__all__ = sorted(_EXPORTS) + ["errors", "demo", "__version__", "load_ipython_extension"]


def __getattr__(name: str):
    if name in _EXPORTS:
        module = importlib.import_module(f".{_EXPORTS[name]}", __name__)
        return getattr(module, name)
    if name in ("errors", "demo"):
        return importlib.import_module(f".{name}", __name__)
    raise AttributeError(f"module 'tm_compare' has no attribute {name!r}")


def load_ipython_extension(ipython):
    """Called by ``%load_ext tm_compare``."""
    from ._ipython import load

    load(ipython)
