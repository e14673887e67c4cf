"""tm_compare: compare the topics of news sources with LDA, in Jupyter.

The data flow, one folder per stage, each named after what it produces (imports run downstream
only, in this order):

- :mod:`.text`: corpus intake and the prepared corpus;
- :mod:`.models`: LDA fits, the sweep over k and seeds, scores, alignment;
- :mod:`.compare`: prevalence by source, differences, term rankings, documents;
- :mod:`.labels`: the team's label store and agreement;
- :mod:`.results`: the one place where one model's tables are computed;
- :mod:`.views`, :mod:`.report`: notebook views; the HTML report and exports;
- :mod:`.demo`, :mod:`.cli`: the invented scenario and its whole-job runner; the command line.

Below every stage sit :mod:`.project` (a folder, its manifest, atomic writes), :mod:`.errors`
and :mod:`.options` (every choice and default, in one table).

Public names are imported lazily so that ``import tm_compare`` stays fast.
"""

from __future__ import annotations

import importlib

__version__ = "0.1.0"

# public name -> module that defines it
_EXPORTS = {
    "Corpus": "text.corpus",
    "save_corpus": "text.corpus",
    "load_corpus": "text.corpus",
    "canonical_url": "text.corpus",
    "prepare": "text.prepared",
    "PreparedCorpus": "text.prepared",
    "load_prepared": "text.prepared",
    "RemovalLog": "text.removals",
    "SUPPORTED_LANGUAGES": "text.languages",
    "detect_languages": "text.languages",
    "Project": "project",
    "Fit": "models.fits",
    "fit_lda": "models.fits",
    "sweep": "models.sweeps",
    "Sweep": "models.sweeps",
    "load_sweep": "models.sweeps",
    "load_fit": "models.sweeps",
    "coherence": "models.scores",
    "CoherenceScorer": "models.scores",
    "stability": "models.scores",
    "diversity": "models.scores",
    "recommend": "models.choice",
    "Recommendation": "models.choice",
    "topic_quality": "models.quality",
    "fit_quality": "models.quality",
    "average_jaccard": "models.scores",
    "match_topics": "models.scores",
    "align_topics": "models.alignment",
    "lineage": "models.alignment",
    "similarity_matrix": "models.alignment",
    "infer": "models.inference",
    "NewDocuments": "models.inference",
    "with_new_documents": "models.inference",
    "prevalence": "compare.prevalence",
    "differences": "compare.prevalence",
    "influence": "compare.prevalence",
    "cap_effect": "compare.prevalence",
    "prevalence_over_time": "compare.over_time",
    "differences_over_time": "compare.over_time",
    "term_rankings": "compare.terms",
    "source_wording": "compare.terms",
    "find_topics": "compare.terms",
    "representative_documents": "compare.documents",
    "document_topics": "compare.documents",
    "prevalence_model": "compare.covariates",
    "PrevalenceModel": "compare.covariates",
    "LabelStore": "labels.store",
    "krippendorff_alpha": "labels.agreement",
    "percent_agreement": "labels.agreement",
    "agreement_table": "labels.agreement",
    "explain_agreement": "labels.agreement",
    "ModelResults": "results",
    "SweepView": "views",
    "TopicView": "views",
    "write_report": "report.html",
    "collect": "report.exports",
    "export": "report.exports",
    "write_data_dictionary": "report.exports",
    "Results": "report.exports",
    "run_demo": "demo.run",
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
    from .views.ipython import load

    load(ipython)
