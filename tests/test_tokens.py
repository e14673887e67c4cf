"""Tokenizer rules, token classes, phrase scores and vocabulary pruning."""

from __future__ import annotations

import os
from collections import Counter

import gensim
import numpy as np
import pytest
import snowballstemmer
from gensim.corpora import Dictionary
from gensim.models.phrases import original_scorer
from gensim.utils import simple_preprocess

from tm_compare.text._stopwords import ENGLISH
from tm_compare.text._tokens import (
    BREAK,
    CONNECTOR,
    KEEP,
    TokenIndex,
    classify,
    normalise,
    prune_vocabulary,
    segments,
    tokenize,
)
from tm_compare.text.corpus import Corpus
from tm_compare.text.prepared import prepare

LEE = os.path.join(os.path.dirname(gensim.__file__), "test", "test_data", "lee_background.cor")


def lee_texts() -> list[str]:
    with open(LEE, encoding="utf-8") as fh:
        return [line for line in fh.read().splitlines() if line.strip()]


def test_tokenizer_keeps_inner_apostrophes_and_hyphens():
    # Our documented rule (tm_compare._tokens): inner ' and - join a token; other marks stand alone.
    text = "The Council\u2019s cost-of-living plan: O'Brien said \u201cdon't\u201d, twice."
    assert tokenize(text) == [
        "the", "council's", "cost-of-living", "plan", ":", "o'brien", "said",
        "\u201c", "don't", "\u201d", ",", "twice", ".",
    ]  # fmt: skip


def test_normalise_is_nfkc_and_lower_case():
    # Unicode TR15: NFKC folds the "fi" ligature U+FB01 and full-width letters to ASCII.
    assert normalise("\ufb01nance \uff31\uff55\uff49\uff4c\uff4c") == "finance quill"
    # Underscore is the phrase delimiter, so it never survives inside a token.
    assert tokenize("snake_case") == ["snake", "case"]


def test_classify_possessive_stop_words_numbers_length():
    raw = ["council's", "the", "of", "said", "2024", "covid-19", "x", "harbour", ".", "readers"]
    forms, kinds = classify(
        raw,
        stop_words=ENGLISH,
        connectors=frozenset({"of", "the"}),
        drop_numbers=True,
        min_length=2,
        max_length=40,
    )
    got = dict(zip(raw, zip(forms.tolist(), kinds.tolist(), strict=True), strict=True))
    assert got["council's"] == ("council", KEEP)  # possessive 's cut (our documented rule)
    assert got["the"][1] == CONNECTOR and got["of"][1] == CONNECTOR
    assert got["said"][1] == BREAK  # news attribution verb, in our stop list
    assert got["2024"][1] == BREAK and got["covid-19"][1] == BREAK  # any digit: dropped
    assert got["x"][1] == BREAK and got["."][1] == BREAK
    assert got["harbour"] == ("harbour", KEEP)
    forms, kinds = classify(
        ["2024"],
        stop_words=ENGLISH,
        connectors=frozenset(),
        drop_numbers=False,
        min_length=2,
        max_length=40,
    )
    assert kinds.tolist() == [KEEP]


def test_stemming_matches_snowball():
    # Reference: the snowballstemmer package's English (Porter2) algorithm.
    words = ["councils", "running", "flooded", "harbours", "generously"]
    forms, _ = classify(
        words,
        stop_words=frozenset(),
        connectors=frozenset(),
        drop_numbers=True,
        min_length=2,
        max_length=40,
        stem=snowballstemmer.stemmer("english").stemWord,
    )
    assert forms.tolist() == snowballstemmer.stemmer("english").stemWords(words)


def test_segments_split_at_breaks():
    index = TokenIndex()
    ids = index.encode(tokenize("City council. Cost of living, said the mayor"))
    forms, kinds = classify(
        index.strings,
        stop_words=ENGLISH,
        connectors=frozenset({"of", "the"}),
        drop_numbers=True,
        min_length=2,
        max_length=40,
    )
    assert list(segments(ids, forms, kinds)) == [
        ["city", "council"],
        ["cost", "of", "living"],
        ["the", "mayor"],
    ]


def _lee_segments():
    """Phrase segments of the Lee corpus with no stop words (so no connector words)."""
    index = TokenIndex()
    docs = [index.encode(tokenize(t)) for t in lee_texts()]
    forms, kinds = classify(
        index.strings,
        stop_words=frozenset(),
        connectors=frozenset(),
        drop_numbers=True,
        min_length=2,
        max_length=40,
    )
    return [seg for d in docs for seg in segments(d, forms, kinds)]


def test_phrase_scores_follow_mikolov_formula():
    # Mikolov et al. 2013, "Distributed Representations of Words and Phrases and their
    # Compositionality", eq. 6: score(a, b) = (count(ab) - delta) / (count(a) * count(b)),
    # which gensim (models/phrases.py, original_scorer) multiplies by the number of distinct
    # unigrams and bigrams counted. Counts here are made independently of gensim.
    min_count, threshold = 3, 5.0
    unigrams, bigrams = Counter(), Counter()
    for seg in _lee_segments():
        unigrams.update(seg)
        bigrams.update(f"{a}_{b}" for a, b in zip(seg, seg[1:], strict=False))
    len_vocab = len(unigrams) + len(bigrams)
    expected = {}
    for phrase, c_ab in bigrams.items():
        a, b = phrase.split("_")
        score = (c_ab - min_count) / (unigrams[a] * unigrams[b]) * len_vocab
        assert score == pytest.approx(
            original_scorer(unigrams[a], unigrams[b], c_ab, len_vocab, min_count, 0)
        )
        if score > threshold:  # gensim keeps a phrase when score > threshold
            expected[phrase] = score

    corpus = Corpus.from_frame(_lee_frame())
    prepared = prepare(
        corpus,
        stop_words=None,
        ngrams=2,
        phrase_min_count=min_count,
        phrase_threshold=threshold,
        near_duplicates=None,
        boilerplate=False,
    )
    got = dict(zip(prepared.phrases["phrase"], prepared.phrases["score"], strict=True))
    assert len(expected) > 50
    assert set(got) == set(expected)
    for phrase, score in expected.items():
        assert got[phrase] == pytest.approx(score, rel=1e-12)


def _lee_frame():
    import pandas as pd

    texts = lee_texts()
    return pd.DataFrame({"text": texts, "source": ["archive"] * len(texts)})


@pytest.mark.parametrize(
    "no_below, no_above, keep_n", [(5, 0.5, 100_000), (2, 0.3, 500), (1, 1.0, 50), (3, 0.1, None)]
)
def test_prune_vocabulary_matches_gensim_filter_extremes(no_below, no_above, keep_n):
    # Reference: gensim.corpora.Dictionary.filter_extremes on the Lee corpus (Lee et al. 2005).
    docs = [simple_preprocess(t) for t in lee_texts()]
    gensim_dict = Dictionary(docs)
    df = np.array([gensim_dict.dfs[i] for i in range(len(gensim_dict))])
    kept = prune_vocabulary(df, gensim_dict.num_docs, no_below, no_above, keep_n)
    ours = {gensim_dict[i] for i in kept.tolist()}
    gensim_dict.filter_extremes(no_below=no_below, no_above=no_above, keep_n=keep_n)
    assert ours == set(gensim_dict.token2id)


def test_bag_of_words_reads_like_gensim_lists():
    # Reference: gensim's Dictionary.doc2bow lists and matutils.corpus2csc matrix.
    from gensim.matutils import corpus2csc

    from tm_compare.text._tokens import BagOfWords

    docs = [simple_preprocess(t) for t in lee_texts()[:50]]
    dictionary = Dictionary(docs)
    ref = [dictionary.doc2bow(d) for d in docs]
    ids = [np.array([dictionary.token2id[w] for w in d], dtype=np.int32) for d in docs]
    bow = BagOfWords.from_token_ids(ids)
    assert len(bow) == 50 and bow == ref and list(bow) == ref
    assert bow[-1] == ref[-1] and bow[3:7] == ref[3:7]
    with pytest.raises(IndexError):
        bow[50]
    dense = corpus2csc(ref, num_terms=len(dictionary)).T.toarray()
    assert (bow.to_csr(len(dictionary)).toarray() == dense).all()


def test_phrase_shortcut_gives_gensims_output():
    # Reference: gensim's FrozenPhrases.analyze_sentence applied to every segment, bigrams then
    # trigrams; our shortcut skips segments that share no token with any phrase.
    from gensim.models.phrases import Phrases

    from tm_compare.text._tokens import join_phrases, phrase_parts

    segs = _lee_segments()
    bigram = Phrases(segs, min_count=2, threshold=2.0).freeze()
    joined = [[t for t, _ in bigram.analyze_sentence(s)] for s in segs]
    trigram = Phrases(joined, min_count=2, threshold=2.0).freeze()
    assert any(p.count("_") >= 2 for p in trigram.phrasegrams)
    models = [
        (bigram, phrase_parts(bigram.phrasegrams)),
        (trigram, phrase_parts(trigram.phrasegrams)),
    ]
    for seg, mid in zip(segs, joined, strict=True):
        assert join_phrases(seg, models) == [t for t, _ in trigram.analyze_sentence(mid)]


def test_classify_cuts_elisions_and_possessives_only_when_asked():
    # French elision (common practice): "l'" before a vowel is the article, "qu'" the conjunction.
    raw = ["l'école", "qu'il", "council's", "aujourd'hui"]
    rules = dict(stop_words=frozenset({"il"}), connectors=frozenset(), drop_numbers=True)
    forms, kinds = classify(
        raw, **rules, min_length=2, max_length=40, elisions=frozenset({"l", "qu"}), possessive=False
    )
    assert forms.tolist() == ["école", "il", "council's", "aujourd'hui"]
    assert kinds.tolist() == [KEEP, BREAK, KEEP, KEEP]
    forms, _ = classify(raw, **rules, min_length=2, max_length=40)
    assert forms.tolist() == ["l'école", "qu'il", "council", "aujourd'hui"]


def test_tokenizer_handles_accented_greek_and_cyrillic_words():
    # Unicode word characters (Python's re with str patterns): letters of every script are \w.
    assert tokenize("Straßenbahn-Gleise, ÉCOLE; Λιμάνι Гавань") == [
        "straßenbahn-gleise", ",", "école", ";", "λιμάνι", "гавань",
    ]  # fmt: skip
