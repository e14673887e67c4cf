"""Boilerplate lines: planted footers are found per outlet, with their counts; rare lines stay."""

from __future__ import annotations

import numpy as np
import pandas as pd

from tm_compare.text._boilerplate import BoilerplateStripper, find_boilerplate
from tm_compare.text.corpus import Corpus
from tm_compare.text.prepared import prepare

FOOTER = "Sign up for the Quillhaven Courier newsletter."
COOKIE = "We use cookies. Accept all | Manage settings"
QUOTE = '"The barrier will hold," the harbour engineer said.'


def _body(rng, n_lines=3):
    words = (
        "harbour barrier tide council vote budget school ferry market festival rent flood "
        "library quay storm gale dredging sluice ward election"
    ).split()
    return [" ".join(rng.choice(words, 12)) + "." for _ in range(n_lines)]


def planted():
    """40 Courier articles: FOOTER in 30, QUOTE in 3; 20 Gullcry articles: COOKIE in 2."""
    rng = np.random.default_rng(1)
    texts, outlets = [], []
    for i in range(40):
        lines = _body(rng)
        if i < 30:
            lines.append(f"  {FOOTER.upper()}  " if i == 0 else FOOTER)  # case/space-insensitive
        if i in (5, 17, 33):
            lines.insert(1, QUOTE)
        texts.append("\n".join(lines))
        outlets.append("Quillhaven Courier")
    for i in range(20):
        lines = _body(rng)
        if i < 2:
            lines.append(COOKIE)
        texts.append("\n".join(lines))
        outlets.append("The Gullcry")
    return texts, outlets


def test_planted_footer_found_rare_lines_kept():
    texts, outlets = planted()
    found = find_boilerplate(texts, outlets, min_share=0.05, min_docs=5)
    strip = BoilerplateStripper(found)
    cleaned = [strip(t, o) for t, o in zip(texts, outlets, strict=True)]
    assert all(FOOTER.lower() not in t.lower() for t in cleaned)
    # QUOTE is in 3 < min_docs=5 documents and COOKIE in 2 of 20: both stay.
    assert sum(QUOTE in t for t in cleaned) == 3
    assert sum(COOKIE in t for t in cleaned) == 2
    # The body lines are untouched.
    assert cleaned[31] == texts[31]
    table = strip.table({"Quillhaven Courier": 40, "The Gullcry": 20})
    assert table[["group", "documents"]].values.tolist() == [["Quillhaven Courier", 30]]
    assert table["share"].tolist() == [0.75]


def test_thresholds_are_both_required():
    texts, outlets = planted()
    # COOKIE: 2 of 20 Gullcry documents = 10 %. Both thresholds met -> removed.
    found = find_boilerplate(texts, outlets, min_share=0.10, min_docs=2)
    assert any(
        COOKIE not in BoilerplateStripper(found)(t, o)
        for t, o in zip(texts, outlets, strict=True)
        if COOKIE in t
    )
    # Share just above 10 % -> kept; document count above 2 -> kept.
    for share, docs in ((0.11, 2), (0.10, 3)):
        found = find_boilerplate(texts, outlets, min_share=share, min_docs=docs)
        strip = BoilerplateStripper(found)
        assert sum(COOKIE in strip(t, o) for t, o in zip(texts, outlets, strict=True)) == 2


def test_single_line_documents_are_never_stripped():
    texts = [FOOTER] * 10 + [f"{FOOTER}\nA ferry strike closed quay {i}." for i in range(10)]
    groups = ["Courier"] * 20
    strip = BoilerplateStripper(find_boilerplate(texts, groups, min_share=0.05, min_docs=5))
    assert strip(FOOTER, "Courier") == FOOTER
    assert strip(texts[-1], "Courier") == "A ferry strike closed quay 9."


def test_prepare_reports_and_removes_boilerplate_per_outlet():
    texts, outlets = planted()
    frame = pd.DataFrame({"text": texts, "outlet": outlets, "source": ["shared", "visited"] * 30})
    prepared = prepare(
        Corpus.from_frame(frame), min_doc_count=1, min_doc_tokens=1, near_duplicates=None
    )
    assert prepared.boilerplate["by"].unique().tolist() == ["outlet"]
    assert prepared.boilerplate["documents"].tolist() == [30]
    assert not prepared.meta["text"].str.contains("newsletter").any()
    # Grouped by source instead, the footer (30 of 60 per source... 15 each) is still found.
    by_source = prepare(
        Corpus.from_frame(frame),
        boilerplate_by="source",
        min_doc_count=1,
        min_doc_tokens=1,
        near_duplicates=None,
    )
    assert sorted(by_source.boilerplate["documents"].tolist()) == [15, 15]
