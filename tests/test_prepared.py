"""prepare(): the Lee news corpus, accounting of every document, cache, storage, CLI."""

from __future__ import annotations

import os
import re

import gensim
import numpy as np
import pandas as pd
import pytest
from gensim.corpora import Dictionary

from tm_compare.cli import main
from tm_compare.errors import CorpusError, CorruptArtifactError, SettingsError
from tm_compare.project import Project
from tm_compare.text import prepared as prepared_module
from tm_compare.text._stopwords import ENGLISH
from tm_compare.text._store import MANIFEST
from tm_compare.text.corpus import Corpus
from tm_compare.text.prepared import PreparedCorpus, prepare

LEE = os.path.join(os.path.dirname(gensim.__file__), "test", "test_data", "lee_background.cor")
META_COLUMNS = ["id", "source", "weight", "group", "url", "title", "date", "text",
                "duplicate_ids", "cross_source_duplicate"]  # fmt: skip


@pytest.fixture(scope="module")
def lee_corpus() -> Corpus:
    # Lee, Pincombe & Welsh 2005: 300 news articles, shipped with gensim's test data.
    with open(LEE, encoding="utf-8") as fh:
        texts = [t for t in fh.read().splitlines() if t.strip()]
    sources = ["wire", "archive"] * (len(texts) // 2)
    return Corpus.from_frame(pd.DataFrame({"text": texts, "source": sources}))


@pytest.fixture(scope="module")
def lee(lee_corpus) -> PreparedCorpus:
    return prepare(lee_corpus)


def test_lee_vocabulary_is_sane(lee):
    vocab = set(lee.dictionary.token2id)
    # Plausible size for 300 short articles with gensim's default pruning (no_below=5,
    # no_above=0.5): a thousand or two terms (common practice; measured 1,254 here).
    assert 600 <= len(vocab) <= 3000
    assert not vocab & ENGLISH
    assert not {"the", "and", "said", "is", "was", "it", "he"} & vocab
    assert not [t for t in vocab if re.search(r"\d", t)]
    assert all(len(t) >= 2 for t in vocab)
    # Words any reader of these articles meets again and again (Lee et al. 2005 corpus).
    assert {"government", "police", "australia", "people", "minister", "security"} <= vocab
    assert any("_" in t for t in vocab)  # phrases such as "united_states"
    assert "united_states" in vocab


def test_dictionary_and_bow_equal_gensim(lee):
    # Reference: gensim's own Dictionary built from our texts.
    ref = Dictionary(lee.texts)
    assert len(ref) == len(lee.dictionary)
    assert ref.num_docs == lee.dictionary.num_docs == len(lee)
    assert ref.num_pos == lee.dictionary.num_pos
    assert ref.num_nnz == lee.dictionary.num_nnz
    for token, i in lee.dictionary.token2id.items():
        j = ref.token2id[token]
        assert (lee.dictionary.dfs[i], lee.dictionary.cfs[i]) == (ref.dfs[j], ref.cfs[j])
    assert lee.bow == [lee.dictionary.doc2bow(t) for t in lee.texts]
    assert all(t for t in lee.texts)


def test_contract_attributes(lee, lee_corpus):
    assert list(lee.meta.columns[:8]) == META_COLUMNS[:8]
    assert set(META_COLUMNS) <= set(lee.meta.columns)
    assert lee.doc_ids == lee.meta["id"].tolist()
    assert lee.sources.dtype.kind == "U" and set(lee.sources) == {"wire", "archive"}
    # Each article has weight 1; merged copies add theirs, so the total is kept.
    assert lee.weights.dtype == float and lee.weights.sum() == len(lee_corpus)
    assert lee.groups.dtype == object and all(g is None for g in lee.groups)
    assert lee.settings["ngrams"] == 2 and lee.fingerprint
    assert lee.report.input_rows == len(lee_corpus)


def test_lee_repeated_articles_are_found(lee, lee_corpus):
    # The Lee corpus repeats 7 articles word for word (found here by plain string equality).
    frame = lee_corpus.frame
    by_text = frame.groupby(frame["text"].str.split().str.join(" "))["id"].agg(list)
    repeats = [ids for ids in by_text if len(ids) > 1]
    assert len(repeats) == 7
    meta = lee.meta.set_index("id")
    for a, b in repeats:
        if a in meta.index and b in meta.index:  # different sources: both kept, flagged
            assert meta.loc[a, "cross_source_duplicate"] and meta.loc[b, "cross_source_duplicate"]
            assert meta.loc[a, "copy_group"] == meta.loc[b, "copy_group"] >= 0
        else:  # same source: merged into one
            kept, gone = (a, b) if a in meta.index else (b, a)
            assert gone in meta.loc[kept, "duplicate_ids"]


def test_trigrams_join_three_words(lee_corpus):
    # "New South Wales" is the most frequent three-word name in the Lee corpus.
    tri = prepare(lee_corpus, ngrams=3)
    assert "new_south_wales" in tri.dictionary.token2id
    uni = prepare(lee_corpus, ngrams=1)
    assert not any("_" in t for t in uni.dictionary.token2id)


def test_every_document_is_accounted_for():
    rng = np.random.default_rng(0)
    words = (
        "harbour barrier tide council vote budget school ferry market festival rent flood "
        "library quay storm gale dredging sluice ward election mayor levy pier"
    ).split()
    rows = [(" ".join(rng.choice(words, 60)), ["shared", "visited"][i % 2]) for i in range(40)]
    rows += [("The ferry.", "shared"), ("Rent.", "visited"), ("Rent, flood.", "visited")]
    rows += [(rows[0][0], "shared")]  # an exact copy in the same source
    corpus = Corpus.from_frame(pd.DataFrame(rows, columns=["text", "source"]))
    out = prepare(corpus, min_doc_count=1, max_doc_fraction=1.0)
    log = out.report.to_frame()
    short = log[log["reason"] == prepared_module.REASON_SHORT].set_index("source")["count"]
    assert short.to_dict() == {"shared": 1, "visited": 2}
    assert out.report.total("prepare", "merged") == 1
    # kept + counted out + merged == documents of the corpus == input rows minus intake removals
    assert len(out) + out.report.total("prepare") == len(corpus)
    assert out.report.accounted_rows("prepare") == len(corpus)
    assert out.report.kept["prepare"] == len(out) == 40


def test_cache_hit_does_not_recompute(tmp_path, lee_corpus, monkeypatch):
    first = prepare(lee_corpus, project=tmp_path / "study", min_doc_tokens=5)
    assert not first.from_cache
    entry = Project.open(tmp_path / "study").manifest["prepared"][first.fingerprint]
    assert entry["documents"] == len(first) and entry["settings"]["min_doc_tokens"] == 5

    def fail(*args, **kwargs):
        raise AssertionError("prepare recomputed although the cache holds this result")

    monkeypatch.setattr(prepared_module, "build", fail)
    second = prepare(lee_corpus, project=tmp_path / "study", min_doc_tokens=5)
    assert second.from_cache
    assert second.fingerprint == first.fingerprint
    assert second.texts == first.texts and second.bow == first.bow
    assert second.dictionary.token2id == first.dictionary.token2id
    assert second.dictionary.dfs == first.dictionary.dfs
    pd.testing.assert_frame_equal(second.meta, first.meta, check_dtype=False)
    assert str(second.report) == str(first.report)
    # Other settings are another cache entry, so they recompute.
    with pytest.raises(AssertionError, match="recomputed"):
        prepare(lee_corpus, project=tmp_path / "study", min_doc_tokens=6)


def test_corrupt_cache_is_rebuilt_not_loaded(tmp_path, lee_corpus):
    first = prepare(lee_corpus, cache_dir=tmp_path, ngrams=1)
    folder = tmp_path / first.fingerprint
    tokens = folder / "tokens.npz"
    tokens.write_bytes(tokens.read_bytes()[:-100])  # truncated, as by a crash or full disk
    with pytest.raises(CorruptArtifactError, match="tokens.npz"):
        PreparedCorpus.load(folder)
    with pytest.warns(RuntimeWarning, match="Rebuilding"):
        again = prepare(lee_corpus, cache_dir=tmp_path, ngrams=1)
    assert not again.from_cache and again.texts == first.texts
    assert PreparedCorpus.load(folder).texts == first.texts
    (folder / MANIFEST).unlink()  # an interrupted save: never loaded
    assert not prepare(lee_corpus, cache_dir=tmp_path, ngrams=1).from_cache


def test_settings_errors_name_parameter_and_value(lee_corpus):
    with pytest.raises(
        SettingsError,
        match=r"'ngrams' parameter of prepare must be one of 1, 2, 3"
        r"\. Got 4 instead",
    ):
        prepare(lee_corpus, ngrams=4)
    with pytest.raises(SettingsError, match=r"'min_doc_count' .* Got 0 instead"):
        prepare(lee_corpus, min_doc_count=0)
    with pytest.raises(
        SettingsError, match=r"'stopwords' parameter of prepare .* Check the spelling"
    ):
        prepare(lee_corpus, stopwords=["harbour"])
    with pytest.raises(SettingsError, match=r"'boilerplate_by' .* column of the corpus: .*source"):
        prepare(lee_corpus, boilerplate_by="outlet")
    with pytest.raises(SettingsError, match=r"'extra_stop_words' .* a list of strings"):
        prepare(lee_corpus, extra_stop_words="police")
    with pytest.raises(CorpusError, match="No documents are left .* min_doc_tokens=10000"):
        prepare(lee_corpus, min_doc_tokens=10_000)


def test_user_stop_words_and_stemming(lee_corpus):
    out = prepare(lee_corpus, extra_stop_words=["Police", "government"], ngrams=1)
    assert not {"police", "government"} & set(out.dictionary.token2id)
    stemmed = prepare(lee_corpus, stem="snowball", ngrams=1)
    assert "govern" in stemmed.dictionary.token2id  # Snowball English: government -> govern
    assert "government" not in stemmed.dictionary.token2id


def test_cli_prepare_reads_saves_and_caches(tmp_path, capsys):
    rng = np.random.default_rng(5)
    words = (
        "harbour barrier tide council vote budget school ferry market festival rent flood "
        "library quay storm gale dredging sluice ward election mayor levy pier tram beach "
        "museum bridge lighthouse ferryman regatta"
    ).split()
    rows = []
    for i in range(80):
        body = " ".join(rng.choice(words, 50)) + ".\n" + " ".join(rng.choice(words, 40)) + "."
        rows.append(
            {
                "doc": f"q{i}",
                "channel": ["shared", "visited"][i % 2],
                "visits": 1 + i % 3,
                "body": body + "\nShare this story with your Quillhaven neighbours.",
            }
        )
    path = tmp_path / "articles.csv"
    pd.DataFrame(rows).to_csv(path, index=False)
    args = ["prepare", str(path), "--text", "body", "--source", "channel", "--id", "doc",
            "--weight", "visits", "--project", str(tmp_path / "study"), "--min-doc-count", "2",
            "--max-doc-fraction", "1.0"]  # fmt: skip
    assert main(args) == 0
    out = capsys.readouterr().out
    assert re.search(r"computed in [\d.]+ s, [\d,]+ documents/s, and cached", out)
    assert "80 input rows" in out
    assert "Share this story with your Quillhaven neighbours." in out
    assert main(args) == 0
    assert "read from the project cache" in capsys.readouterr().out
    assert main(args + ["--near-duplicate-threshold", "2"]) == 1
    err = capsys.readouterr().err
    assert "Error: The 'near_duplicate_threshold' parameter of prepare" in err and "Got 2.0" in err
    assert main([*args[:2], "--text", "nope", *args[4:]]) == 1
    assert "nope" in capsys.readouterr().err


def test_from_texts_counts_as_gensim_and_round_trips(tmp_path):
    texts = [["harbour", "levy", "harbour"], ["tram", "levy"], []]
    meta = pd.DataFrame({"id": [1, 2, 3], "source": ["web", "print", "web"]})
    prepared = PreparedCorpus.from_texts(texts, meta)
    # Reference: gensim's Dictionary and doc2bow on the same token lists, compared by word.
    ref = Dictionary(texts)
    ours = prepared.dictionary
    for bag, ref_bag in zip(prepared.bow, (ref.doc2bow(t) for t in texts), strict=True):
        assert {ours[i]: c for i, c in bag} == {ref[i]: c for i, c in ref_bag}
    assert {ours[i]: n for i, n in ours.dfs.items()} == {ref[i]: n for i, n in ref.dfs.items()}
    assert (ours.num_docs, ours.num_pos, ours.num_nnz) == (ref.num_docs, ref.num_pos, ref.num_nnz)
    assert prepared.doc_ids == ["1", "2", "3"] and prepared.weights.tolist() == [1.0, 1.0, 1.0]
    assert prepared.groups.tolist() == [None, None, None] and prepared.texts == texts
    loaded = PreparedCorpus.load(prepared.save(tmp_path / "given"))
    assert loaded.fingerprint == prepared.fingerprint and loaded.bow == prepared.bow
    with pytest.raises(CorpusError, match="missing from vocab.*'tram'"):
        PreparedCorpus.from_texts(texts, meta, vocab=["harbour", "levy"])
    with pytest.raises(CorpusError, match="2 texts and 3 rows"):
        PreparedCorpus.from_texts(texts[:2], meta)
