"""prepare() reads a corpus a chunk of rows at a time; the chunk size never changes the result.

Each corpus is prepared with chunks of 7 rows (many chunk boundaries, documents of one
near-duplicate set in different chunks) and with one chunk holding every row, and the two
results must be equal in every part. The bags of words are also checked against gensim's own
``Dictionary.doc2bow`` of the prepared texts.
"""

from __future__ import annotations

import os

import gensim
import pandas as pd
import pytest
from gensim.corpora import Dictionary

from tm_compare.demo import quillhaven
from tm_compare.text import _stream
from tm_compare.text.corpus import Corpus
from tm_compare.text.prepared import prepare

# Lee, Pincombe & Welsh 2005: 300 news articles, shipped with gensim's test data.
LEE = os.path.join(os.path.dirname(gensim.__file__), "test", "test_data", "lee_background.cor")


def _lee() -> Corpus:
    with open(LEE, encoding="utf-8") as fh:
        texts = [t for t in fh.read().splitlines() if t.strip()]
    sources = ["wire", "archive"] * (len(texts) // 2)
    return Corpus.from_frame(pd.DataFrame({"text": texts, "source": sources}))


CASES = {
    "lee": (_lee, {}),
    "lee, trigrams and MinHash": (_lee, {"ngrams": 3, "near_duplicates": "minhash"}),
    "demo": (lambda: quillhaven.make_corpus(400), {}),
    "demo in German and English, detected": (
        lambda: quillhaven.make_corpus(300, 0, "de+en"),
        {"language": ["de", "en"], "undetected": "en"},
    ),
}


@pytest.mark.filterwarnings("ignore:The prepared corpus mixes")
@pytest.mark.parametrize("case", list(CASES))
def test_chunk_size_does_not_change_the_result(case, monkeypatch):
    make, settings = CASES[case]
    corpus = make()
    monkeypatch.setattr(_stream, "CHUNK_ROWS", len(corpus))
    whole = prepare(corpus, **settings)
    monkeypatch.setattr(_stream, "CHUNK_ROWS", 7)
    chunked = prepare(corpus, **settings)
    assert chunked.report.to_dict() == whole.report.to_dict()
    assert chunked.report.total("prepare", "merged") > 0 or case.startswith("lee")
    assert chunked.dictionary.token2id == whole.dictionary.token2id
    assert chunked.dictionary.dfs == whole.dictionary.dfs
    assert chunked.dictionary.cfs == whole.dictionary.cfs
    assert chunked.texts == whole.texts
    assert chunked.bow == whole.bow
    pd.testing.assert_frame_equal(chunked.meta, whole.meta)
    pd.testing.assert_frame_equal(chunked.boilerplate, whole.boilerplate)
    pd.testing.assert_frame_equal(chunked.phrases, whole.phrases)
    assert chunked.fingerprint == whole.fingerprint
    # Reference: gensim's Dictionary counts the prepared texts to the same bags and frequencies.
    reference = Dictionary(chunked.texts)
    ids = chunked.dictionary.token2id
    assert chunked.bow == [
        sorted((ids[reference[i]], n) for i, n in reference.doc2bow(text)) for text in chunked.texts
    ]
    assert {
        ids[t]: reference.dfs[i] for t, i in reference.token2id.items()
    } == chunked.dictionary.dfs
