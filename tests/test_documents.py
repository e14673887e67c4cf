"""Representative documents (tm_compare.documents)."""

import numpy as np
import pandas as pd
import pytest

from tm_compare.compare.documents import representative_documents, snippet_around
from tm_compare.errors import ComparisonError, SettingsError
from tm_compare.models.fits import Fit
from tm_compare.text.prepared import PreparedCorpus

FILLER = "The weather in Quillhaven stayed grey all week and the ferry ran late again. " * 4


def make_case():
    ids = ["a1", "a2", "a3", "a4", "a5", "b1", "b2"]
    shares = np.array(
        [[0.9, 0.1], [0.9, 0.1], [0.7, 0.3], [0.8, 0.2], [0.2, 0.8], [0.6, 0.4], [0.5, 0.5]]
    )
    meta = pd.DataFrame(
        {
            "id": ids,
            "source": ["web"] * 5 + ["print"] * 2,
            "weight": [1.0, 4.0, 2.0, 1.0, 1.0, 1.0, 1.0],
            "title": [
                "Harbour levy rises",
                "Bridge tolls debated",
                "bridge  TOLLS debated",
                "Council votes",
                None,
                "Harbour levy rises",
                "Market day",
            ],
            "date": pd.to_datetime([f"2026-01-0{i}" for i in range(1, 8)]),
            "text": [
                FILLER + "The harbour levy rose as the council voted on bridge tolls. " + FILLER,
                "Bridge tolls were debated by the council.",
                "Bridge tolls, again.",
                "The council voted.",
                "Nothing here.",
                "Harbour levy rises.",
                "Market <b>day</b>.",
            ],
            "duplicate_ids": [[], [], [], ["a5"], [], [], []],
            "cross_source_duplicate": [True, False, False, False, False, True, False],
        }
    )
    vocab = ["toll", "levy", "council", "market"]
    prepared = PreparedCorpus.from_texts([[] for _ in ids], meta, vocab=vocab)
    topic_term = [[0.4, 0.3, 0.2, 0.1], [0.1, 0.1, 0.1, 0.7]]
    return Fit.from_arrays(prepared, topic_term, shares), prepared


def test_order_ties_and_collapsed_titles():
    fit, prepared = make_case()
    table = representative_documents(fit, prepared, topic=0, n_docs=3)
    web = table[table.source == "web"]
    # a1 and a2 tie at 0.9: the one with more exposure (a2) first; a3's title equals a2's
    # up to case and spacing, so it folds into a2; a4 (0.8) is next; a5, a copy merged into a4
    # by preparation, folds into a4 even though it ranks below the cut.
    assert web.id.tolist() == ["a2", "a1", "a4"]
    assert web.set_index("id").loc["a2", "collapsed_ids"] == "a3"
    assert web.set_index("id").loc["a4", "n_collapsed"] == 1
    assert web["rank"].tolist() == [1, 2, 3]
    # Same title in another source stays in that source's list, flagged as a cross-source copy.
    print_rows = table[table.source == "print"]
    assert print_rows.id.tolist() == ["b1", "b2"] and print_rows.cross_source_duplicate.iloc[0]
    assert table.outlet.isna().all()  # no outlet column in this corpus


def test_merged_duplicates_fold_into_the_kept_document():
    fit, prepared = make_case()
    table = representative_documents(fit, prepared, topic=0, n_docs=5)
    web = table[table.source == "web"].set_index("id")
    assert "a5" not in web.index and web.loc["a4", "collapsed_ids"] == "a5"


def test_snippet_is_plain_text_around_the_top_terms():
    fit, prepared = make_case()
    table = representative_documents(fit, prepared, topic=0, n_docs=2, snippet_chars=120)
    row = table.set_index("id").loc["a1"]
    assert "harbour levy" in row.snippet.lower() and "bridge tolls" in row.snippet.lower()
    assert row.snippet.startswith("…") and row.snippet.endswith("…")
    assert len(row.snippet) <= 122
    assert set(row.matched_terms.split(", ")) >= {"levy", "tolls", "council"}
    market = representative_documents(fit, prepared, topic=1).set_index("id").loc["b2", "snippet"]
    assert market == "Market <b>day</b>."  # left as plain text; views escape it


def test_snippet_without_matches_is_the_opening():
    text = "word " * 100
    snippet, found = snippet_around(text, None, 40)
    assert snippet.startswith("word word") and snippet.endswith("…") and found == []


def test_bad_input():
    fit, prepared = make_case()
    with pytest.raises(SettingsError, match="'topic'"):
        representative_documents(fit, prepared, topic=2)
    with pytest.raises(ComparisonError, match="'radio'"):
        representative_documents(fit, prepared, sources=["radio"])
    fit.doc_topic = fit.doc_topic[:3]
    with pytest.raises(ComparisonError, match="3 documents"):
        representative_documents(fit, prepared)


def test_densest_window_equals_brute_force():
    import re

    from tm_compare.compare.documents import _densest_window

    pattern = re.compile(r"\b(?:levy|toll|tide|ferry)\w*", re.IGNORECASE)
    rng = np.random.default_rng(0)
    words = np.array(["levy", "tolls", "tide", "ferry", "the", "a", "harbour", "Levy", "of"])
    for _ in range(200):
        text = " ".join(rng.choice(words, rng.integers(1, 60)))
        hits = list(pattern.finditer(text))
        if not hits:
            continue
        width = int(rng.integers(5, 80))
        # Reference (by definition, common practice): for each match, the distinct words of
        # the matches wholly inside [start, start + width); the first best start wins.
        counts = [
            len(
                {
                    m.group(0).casefold()
                    for m in hits
                    if h.start() <= m.start() and m.end() <= h.start() + width
                }
            )
            for h in hits
        ]
        assert _densest_window(hits, width) == hits[int(np.argmax(counts))].start()


def test_rows_restrict_the_candidates_and_keep_the_full_answer_when_they_hold_it():
    fit, prepared = make_case()
    full = representative_documents(fit, prepared, topic=0, n_docs=2)
    # The rows of each source's best documents hold the answer: the same table comes back.
    best = representative_documents(fit, prepared, topic=0, n_docs=2, rows=[0, 1, 2, 3, 5, 6])
    pd.testing.assert_frame_equal(best, full)
    # Without a1 and a2, the next best of "web" come first; positions are the corpus's.
    rest = representative_documents(fit, prepared, topic=0, n_docs=2, rows=[6, 3, 2, 5])
    assert rest[rest.source == "web"].id.tolist() == ["a4", "a3"]
    with pytest.raises(SettingsError, match="'rows' parameter of representative_documents"):
        representative_documents(fit, prepared, topic=0, rows=[0, 7])
