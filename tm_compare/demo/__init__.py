"""The invented Quillhaven scenario (:mod:`.quillhaven`) and the whole job run on it (:mod:`.run`).

``tm_compare.demo.make_corpus()`` and friends are re-exported here; the runner is imported
only when asked for, since it reaches every stage.
"""

from .quillhaven import (
    DEMO_LANGUAGES,
    SOURCES,
    DemoTruth,
    make_corpus,
    make_frame,
    sample_csv,
    scenario,
    truth,
)

__all__ = [
    "DEMO_LANGUAGES",
    "SOURCES",
    "DemoTruth",
    "make_corpus",
    "make_frame",
    "sample_csv",
    "scenario",
    "truth",
]
