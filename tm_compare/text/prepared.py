"""Prepared corpus: the modelling text of a :class:`~tm_compare.corpus.Corpus`.

:func:`prepare` runs, in this order:

1. boilerplate lines removed per outlet (or source) (:mod:`._boilerplate`);
2. tokenizing (:mod:`._tokens`: NFKC, lower case, inner apostrophes and
   hyphens kept, English possessive ``'s`` and French/Italian elisions cut),
   each document in its language (:mod:`.languages`: given, or detected with
   ``language="auto"``; undetected documents counted out or flagged);
3. near-duplicates found on word shingles (:mod:`._neardup`); copies within
   one source (and group) merge into the fullest copy, their weights added;
   copies in different sources both stay, flagged ``cross_source_duplicate``;
4. stop words (of each document's language), numbers and too short/long
   tokens dropped, optional Snowball stemming or lemmas (of that language),
   then n-gram phrases joined with gensim's ``Phrases`` (Mikolov et al. 2013,
   eq. 6); phrases never span punctuation or a dropped word, except
   the connector words gensim allows inside a phrase ("cost_of_living");
5. vocabulary pruned by the rules of gensim's ``Dictionary.filter_extremes``;
6. documents shorter than ``min_doc_tokens`` counted out in the report.

Every document of the corpus is accounted for: kept, merged into another, or
counted out (``len(prepared) + prepared.report.total("prepare") == len(corpus)``).
"""

from __future__ import annotations

import json
import os
from functools import partial
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd
from tqdm.auto import tqdm

from .._hashing import fingerprint as _fingerprint
from .._validation import check_choice, param_error
from ..errors import CorpusError, ProjectError
from ..options import default
from ..project import Project
from ._boilerplate import BoilerplateStripper, find_boilerplate
from ._intake import frame_fingerprint
from ._neardup import MAX_SHINGLE, exact_pairs, minhash_pairs
from ._store import (
    FORMAT_VERSION,
    _cache_folder,
    _load,
    _load_if_valid,
    _save,
    make_dictionary,
)
from ._tokens import (
    BagOfWords,
    TokenIndex,
    all_segments,
    apply_phrases,
    join_phrases,
    normalise,
    phrase_parts,
    prune_vocabulary,
    tokenize,
)
from .languages import (
    REASON_FALLBACK,
    REASON_UNDETECTED,
    UNDETECTED,
    TokensByLanguage,
    candidates,
    check_language,
    detector,
    is_detected,
    language_mix,
    split_by_language,
    warn_if_mixed,
)
from .removals import RemovalLog

if TYPE_CHECKING:
    from gensim.corpora import Dictionary

__all__ = ["prepare", "PreparedCorpus", "load_prepared"]

STAGE = "prepare"
REASON_MERGED = "near-duplicate merged into a copy in the same source"
REASON_SHORT = "too short after preparation"
# Corpora up to this size get exact Jaccard similarities with near_duplicates="auto".
EXACT_LIMIT = 2000
# Corpora of at least this size show progress bars with progress=None.
PROGRESS_FROM = 10_000

DEFAULTS: dict[str, Any] = {
    "drop_numbers": True,
    "min_token_length": 2,
    "max_token_length": 40,
    "language": default("language"),
    "undetected": default("undetected"),
    "stop_words": "builtin",
    "extra_stop_words": (),
    "stem": None,
    "boilerplate": True,
    "boilerplate_by": None,
    "boilerplate_min_share": 0.05,
    "boilerplate_min_docs": 5,
    "near_duplicates": "auto",
    "near_duplicate_threshold": 0.5,
    "shingle_size": 5,
    "num_perm": 128,
    "random_state": 0,
    "ngrams": 2,
    "phrase_min_count": 5,
    "phrase_threshold": 10.0,
    "phrase_scoring": "default",
    "min_doc_count": 5,
    "max_doc_fraction": 0.5,
    "max_vocab": 100_000,
    "min_doc_tokens": 10,
}


def prepare(
    corpus, *, project=None, cache_dir=None, progress: bool | None = None, **settings
) -> PreparedCorpus:
    """Turn a corpus into tokens, a dictionary and bags of words for LDA.

    Parameters
    ----------
    corpus : Corpus
    project : Project or path, optional
        Cache the result under ``project.folder("prepared")/<fingerprint>``.
    cache_dir : path, optional
        Cache folder to use instead of a project's.
    progress : bool, optional
        Show progress bars; by default only for corpora of 10,000 documents or more.
    drop_numbers : bool, default True
        Drop tokens that contain a digit.
    min_token_length, max_token_length : int, default 2 and 40
    language : str or list of str, default "en"
        ISO 639-1 code of the corpus's language (``tm_compare.SUPPORTED_LANGUAGES``);
        "auto" detects each document's language among the supported ones, a list of codes
        among those only; each document is then prepared in its own language
        (``meta["language"]``, :meth:`PreparedCorpus.language_mix`).
    undetected : "remove" or str, default "remove"
        What happens to documents whose language cannot be detected: counted out in the
        report, or prepared in the language given here and flagged in the report.
    stop_words : "builtin", "english", None or list of str, default "builtin"
        The built-in list of each document's language, the English list, none, or your own
        list instead.
    extra_stop_words : list of str
        Added to ``stop_words``.
    stem : None, "snowball" or "lemma"
        Snowball stemming of kept words, by the stemmer of each document's language
        (Porter2 for English), or their dictionary forms (simplemma; ``tm_compare[lemmas]``).
    boilerplate : bool, default True
    boilerplate_by : str, optional
        Column grouping documents for boilerplate lines; default "outlet" if
        present, else "source".
    boilerplate_min_share, boilerplate_min_docs : float and int, default 0.05 and 5
        A line is boilerplate when it occurs in at least this share and at
        least this number of the documents of one group.
    near_duplicates : "auto", "exact", "minhash" or None
        "auto" uses exact Jaccard up to 2,000 documents, MinHash above.
    near_duplicate_threshold : float, default 0.5
        Jaccard similarity of word shingle sets at or above which two
        documents are copies.
    shingle_size, num_perm, random_state : int, default 5, 128, 0
    ngrams : 1, 2 or 3, default 2
        1: no phrases; 2: bigrams; 3: bigrams then trigrams.
    phrase_min_count, phrase_threshold, phrase_scoring : default 5, 10.0, "default"
        Passed to gensim's ``Phrases`` ("default" is Mikolov et al. 2013,
        "npmi" is Bouma 2009, whose threshold lies in [-1, 1]).
    min_doc_count, max_doc_fraction, max_vocab : default 5, 0.5, 100000
        gensim's ``filter_extremes`` ``no_below``, ``no_above``, ``keep_n``.
    min_doc_tokens : int, default 10
        Documents with fewer tokens after preparation are counted out.
    """
    from .corpus import Corpus

    if not isinstance(corpus, Corpus):
        accepted = "a Corpus (from Corpus.read or Corpus.from_frame)"
        raise param_error("prepare", "corpus", type(corpus).__name__, accepted)
    s = _check_settings(corpus, settings)
    key = _key(corpus, s)
    project, folder = _cache_folder(project, cache_dir, key)
    if folder is not None:
        cached = _load_if_valid(folder, PreparedCorpus)
        if cached is not None:
            warn_if_mixed(cached)
            return cached
    if progress is None:
        progress = len(corpus) >= PROGRESS_FROM
    result = PreparedCorpus(**_build(corpus, s, progress), fingerprint=key)
    if folder is not None:
        result.save(folder)
    warn_if_mixed(result)
    if project is not None:
        # So a collaborator reopening the project sees which prepared corpora it holds.
        project.update_manifest(
            prepared={
                key: {
                    "folder": f"prepared/{key}",
                    "corpus_fingerprint": corpus.fingerprint,
                    "documents": len(result),
                    "terms": len(result.dictionary),
                    "settings": result.settings,
                }
            }
        )
    return result


class PreparedCorpus:
    """Tokens, dictionary and bags of words of a prepared corpus, aligned with ``meta``.

    Attributes
    ----------
    texts : list of list of str
        The modelling text (only dictionary words, in document order).
    dictionary : gensim.corpora.Dictionary
    bow : BagOfWords
        ``dictionary.doc2bow(text)`` of each text; reads as a list of lists of
        ``(term_id, count)``, stored compactly (``bow.to_csr(n_terms)`` gives the matrix).
    meta : DataFrame
        One row per document (see DEVELOPERS.md, "PreparedCorpus"); besides the
        columns listed there, ``copy_group`` numbers sets of near-copies still
        present (-1 for none), and the corpus's other metadata columns follow.
    report : RemovalLog
        Intake and preparation removals and merges.
    boilerplate : DataFrame
        The lines removed as boilerplate: group, line, documents, share.
    phrases : DataFrame
        The phrases joined: phrase and its gensim score.
    settings : dict
    fingerprint : str
        Key of the corpus content and the settings.
    from_cache : bool
        True when loaded from the cache instead of computed.
    """

    def __init__(
        self,
        texts,
        dictionary,
        bow,
        meta,
        report,
        boilerplate,
        phrases,
        settings,
        fingerprint,
        from_cache=False,
    ):
        self.texts = texts
        self.dictionary = dictionary
        self.bow = bow
        self.meta = meta
        self.report = report
        self.boilerplate = boilerplate
        self.phrases = phrases
        self.settings = settings
        self.fingerprint = fingerprint
        self.from_cache = from_cache

    @property
    def doc_ids(self) -> list[str]:
        return self.meta["id"].tolist()

    @property
    def sources(self) -> np.ndarray:
        return self.meta["source"].to_numpy(dtype=str)

    @property
    def weights(self) -> np.ndarray:
        return self.meta["weight"].to_numpy(dtype=float)

    @property
    def groups(self) -> np.ndarray:
        values = self.meta["group"].to_numpy(dtype=object, copy=True)
        values[pd.isna(values)] = None  # one vectorised pass: a loop took 0.4 s at 200k documents
        return values

    def __len__(self) -> int:
        return len(self.texts)

    def language_mix(self) -> pd.DataFrame:
        """Documents per source and language, with those whose language was undetected
        (see :func:`tm_compare.text.languages.language_mix`)."""
        return language_mix(self)

    def split_by_language(self, *, project=None, min_docs: int = 1) -> dict[str, PreparedCorpus]:
        """One prepared corpus per language, to fit and compare each language on its own
        (see :func:`tm_compare.text.languages.split_by_language`)."""
        return split_by_language(self, project=project, min_docs=min_docs)

    def __repr__(self) -> str:
        return (
            f"<PreparedCorpus {len(self)} documents, {len(self.dictionary)} terms, "
            f"{self.dictionary.num_pos} tokens, sources {', '.join(sorted(set(self.sources.tolist())))}>"
        )

    def save(self, folder: str | os.PathLike) -> Path:
        """Write to ``folder`` (atomic files; the manifest, written last, marks it complete)."""
        return _save(self, folder)

    @classmethod
    def load(cls, folder: str | os.PathLike) -> PreparedCorpus:
        """Read a saved prepared corpus; raises CorruptArtifactError if it fails its checks."""
        return cls(**_load(folder), from_cache=True)

    @classmethod
    def from_texts(cls, texts, meta: pd.DataFrame, *, vocab=None) -> PreparedCorpus:
        """A prepared corpus of documents tokenised elsewhere; nothing is removed or merged.

        For tokens from another tool, and for tests and benchmarks that plant their documents.

        Parameters
        ----------
        texts : list of list of str
            The modelling tokens of each document, one list per row of ``meta``.
        meta : DataFrame
            One row per document with at least ``id`` and ``source``; the other columns of
            :attr:`meta` are filled in when absent (``weight`` 1, no group, no copies,
            ``text`` the tokens joined by spaces).
        vocab : list of str, optional
            Every term in term-id order (e.g. a model's vocabulary; a term may occur in no
            text); by default the order of first appearance.
        """
        texts = [list(t) for t in texts]
        if "id" not in meta.columns or "source" not in meta.columns or len(meta) != len(texts):
            msg = (
                "PreparedCorpus.from_texts needs one row of meta per text, with columns 'id' and "
                f"'source'; got {len(texts)} texts and {len(meta)} rows with columns "
                f"{list(meta.columns)}."
            )
            raise CorpusError(msg)
        if vocab is None:
            vocab = list(dict.fromkeys(t for text in texts for t in text))
        index = {t: i for i, t in enumerate(vocab)}
        unknown = sorted({t for text in texts for t in text} - index.keys())
        if unknown:
            msg = (
                f"The texts hold {len(unknown)} token(s) missing from vocab (first: "
                f"{unknown[0]!r}). Add them to vocab, or leave vocab=None."
            )
            raise CorpusError(msg)
        docs = [np.array([index[t] for t in text], dtype=np.int32) for text in texts]
        strings = np.array(vocab, dtype=object)
        dictionary, bow = _dictionary(docs, strings)
        defaults = {
            "weight": 1.0,
            "group": None,
            "url": None,
            "title": None,
            "date": pd.NaT,
            "text": [" ".join(t) for t in texts],
            "duplicate_ids": [[] for _ in texts],
            "cross_source_duplicate": False,
            "copy_group": -1,
        }
        meta = meta.reset_index(drop=True).assign(id=meta["id"].astype(str).to_numpy())
        meta = meta.assign(**{c: v for c, v in defaults.items() if c not in meta.columns})
        n = len(texts)
        key = _fingerprint(
            "from_texts",
            strings,
            np.array([len(d) for d in docs]),
            np.concatenate([np.empty(0, np.int32), *docs]),
            frame_fingerprint(meta),
        )
        return cls(
            texts=texts,
            dictionary=dictionary,
            bow=bow,
            meta=meta,
            report=RemovalLog(input_rows=n, kept={STAGE: n}),
            boilerplate=pd.DataFrame(columns=["by", "group", "line", "documents", "share"]),
            phrases=pd.DataFrame(columns=["phrase", "score"]),
            settings={"tokens": "given"},
            fingerprint=key,
        )


def _check_settings(corpus, settings: dict) -> dict:
    unknown = sorted(set(settings) - set(DEFAULTS))
    if unknown:
        raise param_error(
            "prepare",
            unknown[0],
            settings[unknown[0]],
            "one of the settings " + ", ".join(DEFAULTS),
            "Check the spelling.",
        )
    s = {**DEFAULTS, **settings}

    def need(name, ok, accepted):
        if not ok:
            raise param_error("prepare", name, s[name], accepted)

    for name in ("drop_numbers", "boilerplate"):
        need(name, isinstance(s[name], bool), "True or False")
    for name, low in (
        ("min_token_length", 1),
        ("max_token_length", 1),
        ("boilerplate_min_docs", 2),
        ("num_perm", 16),
        ("random_state", 0),
        ("phrase_min_count", 1),
        ("min_doc_count", 1),
        ("min_doc_tokens", 0),
    ):
        need(name, _is_int(s[name]) and s[name] >= low, f"an integer >= {low}")
    need(
        "max_token_length",
        s["max_token_length"] >= s["min_token_length"],
        f"an integer >= min_token_length ({s['min_token_length']})",
    )
    need(
        "shingle_size",
        _is_int(s["shingle_size"]) and 1 <= s["shingle_size"] <= MAX_SHINGLE,
        f"an integer from 1 to {MAX_SHINGLE}",
    )
    need(
        "max_vocab",
        s["max_vocab"] is None or (_is_int(s["max_vocab"]) and s["max_vocab"] >= 1),
        "None or an integer >= 1",
    )
    for name in ("boilerplate_min_share", "near_duplicate_threshold", "max_doc_fraction"):
        need(name, _is_real(s[name]) and 0 < s[name] <= 1, "a number in (0, 1]")
    need(
        "phrase_threshold",
        _is_real(s["phrase_threshold"])
        and np.isfinite(s["phrase_threshold"])
        and (s["phrase_scoring"] == "npmi" or s["phrase_threshold"] > 0),
        "a finite number, > 0 with the default phrase scoring",
    )
    check_choice("prepare", "stem", s["stem"], [None, "snowball", "lemma"])
    s["language"] = check_language("prepare", s["language"])
    if s["undetected"] != "remove":
        s["undetected"] = check_language("prepare", s["undetected"])
        need(
            "undetected",
            isinstance(s["undetected"], str) and s["undetected"] != "auto",
            '"remove" or one language code',
        )
    check_choice(
        "prepare", "near_duplicates", s["near_duplicates"], ["auto", "exact", "minhash", None]
    )
    check_choice("prepare", "ngrams", s["ngrams"], [1, 2, 3])
    check_choice("prepare", "phrase_scoring", s["phrase_scoring"], ["default", "npmi"])
    if s["phrase_scoring"] == "npmi":
        need(
            "phrase_threshold",
            -1 <= s["phrase_threshold"] <= 1,
            "a number in [-1, 1] with phrase_scoring='npmi'",
        )
    for name in ("stop_words", "extra_stop_words"):
        value = s[name]
        if name == "stop_words" and value in ("builtin", "english", None):
            continue
        need(
            name,
            isinstance(value, list | tuple | set | frozenset)
            and all(isinstance(w, str) for w in value),
            "a list of strings"
            + (' or "builtin", "english" or None' if name == "stop_words" else ""),
        )
        s[name] = sorted({normalise(w).strip() for w in value})
    by = s["boilerplate_by"]
    columns = [c for c in corpus.frame.columns if c != "text"]
    need(
        "boilerplate_by",
        by is None or by in columns,
        "None or a column of the corpus: " + ", ".join(map(str, columns)),
    )
    return s


def _is_int(v) -> bool:
    return isinstance(v, int | np.integer) and not isinstance(v, bool)


def _is_real(v) -> bool:
    return isinstance(v, int | float | np.integer | np.floating) and not isinstance(v, bool)


def _stop_set(s: dict, code: str = "en") -> frozenset[str]:
    from . import languages

    if s["stop_words"] == "builtin":
        base = languages.stop_words(code)
    elif s["stop_words"] == "english":
        base = languages.stop_words("en")
    else:
        base = frozenset(s["stop_words"] or ())
    return frozenset(base | set(s["extra_stop_words"]))


def _key(corpus, s: dict) -> str:
    from .. import __version__
    from .languages import versions

    # The corpus fingerprint covers every column, so metadata edits also miss the cache.
    stops = [sorted(_stop_set(s, code)) for code in candidates(s["language"])]
    return _fingerprint(corpus.fingerprint, s, stops, versions(), FORMAT_VERSION, __version__)


def _build(corpus, s: dict, progress: bool) -> dict:
    frame = corpus.frame
    n = len(frame)
    bar = partial(tqdm, disable=not progress, unit="doc", leave=False)
    texts = frame["text"].tolist()
    sources = frame["source"].astype(str).to_numpy()
    by = s["boilerplate_by"] or ("outlet" if "outlet" in frame.columns else "source")
    bp_groups = _labels(frame[by])

    strip = None
    if s["boilerplate"]:
        found = find_boilerplate(
            texts,
            bp_groups,
            min_share=s["boilerplate_min_share"],
            min_docs=s["boilerplate_min_docs"],
            progress=partial(bar, desc="counting lines"),
        )
        strip = BoilerplateStripper(found)
    index, docs, clean, langs = TokensByLanguage(), [], [], []
    detect = detector(s["language"]) if is_detected(s["language"]) else None
    drop_undetected = s["undetected"] == "remove"
    for text, group in bar(zip(texts, bp_groups, strict=True), total=n, desc="tokenizing"):
        text = strip(text, group) if strip is not None else text
        clean.append(text)
        code = s["language"] if detect is None else detect(text)
        langs.append(code)
        if code == UNDETECTED and drop_undetected:
            docs.append(np.empty(0, dtype=np.int32))  # counted out below, pairs with nothing
        else:
            docs.append(
                index.encode(tokenize(text), s["undetected"] if code == UNDETECTED else code)
            )
    docs = index.merge(docs, [s["undetected"] if c == UNDETECTED else c for c in langs])
    del texts
    boilerplate = (
        strip.table(pd.Series(bp_groups).value_counts().to_dict())
        if strip is not None
        else BoilerplateStripper({}).table({})
    )
    boilerplate.insert(0, "by", by)

    report = RemovalLog.from_dict(corpus.report.to_dict())
    ids = frame["id"].astype(str).to_numpy()
    rep, cross, copies = _near_duplicates(docs, frame, s, partial(bar, desc="near-duplicates"))
    merged = rep != np.arange(n)
    undetected = np.array([c == UNDETECTED for c in langs], dtype=bool) & ~merged
    report.add_counts(
        STAGE,
        REASON_UNDETECTED if drop_undetected else REASON_FALLBACK,
        pd.Series(sources[undetected]).value_counts(sort=False),
        _examples(ids, sources, undetected),
        kind="removed" if drop_undetected else "flagged",
    )
    report.add_counts(
        STAGE,
        REASON_MERGED,
        pd.Series(sources[merged]).value_counts(sort=False),
        _examples(ids, sources, merged),
        kind="merged",
    )
    weights = np.bincount(rep, weights=frame["weight"].to_numpy(dtype=float), minlength=n)
    # Ids merged at intake come along: a document lists every id folded into it.
    intake_ids = frame["duplicate_ids"] if "duplicate_ids" in frame.columns else [None] * n
    dup_ids = [list(v) if isinstance(v, list | tuple | np.ndarray) else [] for v in intake_ids]
    for i in np.flatnonzero(merged).tolist():
        dup_ids[rep[i]].extend([ids[i], *dup_ids[i]])
    keep = np.flatnonzero(~merged & ~(undetected & drop_undetected))

    from gensim.models.phrases import ENGLISH_CONNECTOR_WORDS, Phrases

    connectors = frozenset(ENGLISH_CONNECTOR_WORDS & _stop_set(s, "en"))
    forms, kinds = index.classify(
        partial(_stop_set, s),
        stem=s["stem"],
        connectors=connectors,
        drop_numbers=s["drop_numbers"],
        min_length=s["min_token_length"],
        max_length=s["max_token_length"],
    )
    docs = [docs[i] for i in keep.tolist()]
    models, phrases = [], {}
    for order in range(2, s["ngrams"] + 1):
        model = Phrases(
            min_count=s["phrase_min_count"],
            threshold=float(s["phrase_threshold"]),
            scoring=s["phrase_scoring"],
            connector_words=connectors,
        )
        model.add_vocab(_phrased(docs, forms, kinds, models, partial(bar, desc=f"{order}-grams")))
        frozen = model.freeze()
        phrases.update(frozen.phrasegrams)
        models.append((frozen, phrase_parts(frozen.phrasegrams)))
    final = TokenIndex()
    docs = [
        final.encode(apply_phrases(d, forms, kinds, models, connectors))
        for d in bar(docs, desc="joining phrases")
    ]
    phrase_table = pd.DataFrame(
        sorted(phrases.items(), key=lambda kv: (-kv[1], kv[0])), columns=["phrase", "score"]
    )

    strings = final.strings
    kept_terms = prune_vocabulary(
        _doc_freq(docs, len(strings)),
        len(docs),
        s["min_doc_count"],
        s["max_doc_fraction"],
        s["max_vocab"],
    )
    docs = _remap(docs, kept_terms, len(strings))
    strings = strings[kept_terms]
    short = np.array([len(d) < s["min_doc_tokens"] for d in docs], dtype=bool)
    short_all = np.zeros(n, dtype=bool)
    short_all[keep[short]] = True
    report.add_counts(
        STAGE,
        REASON_SHORT,
        pd.Series(sources[short_all]).value_counts(sort=False),
        _examples(ids, sources, short_all),
        kind="removed",
    )
    if short.all():
        msg = (
            f"No documents are left after preparation: all {len(short)} were shorter than "
            f"min_doc_tokens={s['min_doc_tokens']} tokens once stop words were removed and the "
            f"vocabulary pruned (min_doc_count={s['min_doc_count']}, "
            f"max_doc_fraction={s['max_doc_fraction']}). Lower these settings for a small or "
            f"repetitive corpus.\n{report}"
        )
        raise CorpusError(msg)
    docs = [d for d, out in zip(docs, short.tolist(), strict=True) if not out]
    keep = keep[~short]
    present = np.flatnonzero(_doc_freq(docs, len(strings)) > 0)
    docs = _remap(docs, present, len(strings))
    strings = strings[present]

    meta = _meta(frame, keep, clean, weights, dup_ids, cross, copies)
    if "language" in meta.columns:  # the corpus's own column keeps its values under a new name
        meta = meta.rename(columns={"language": "corpus_language"})
    prepared_in = np.array([s["undetected"] if c == UNDETECTED else c for c in langs], dtype=object)
    meta["language"] = prepared_in[keep]
    report.kept[STAGE] = len(meta)
    dictionary, bow = _dictionary(docs, strings)
    texts = [strings[d].tolist() for d in docs]
    return {
        "texts": texts,
        "dictionary": dictionary,
        "bow": bow,
        "meta": meta,
        "report": report,
        "boilerplate": boilerplate,
        "phrases": phrase_table,
        "settings": _jsonable(s),
    }


def _phrased(docs, forms, kinds, models, progress):
    """Segments for training the next phrase model, after the earlier models joined theirs."""
    for seg in all_segments(docs, forms, kinds, progress):
        yield join_phrases(seg, models)


def _near_duplicates(docs, frame, s, progress=None) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Per document: its representative (itself unless merged), cross-source flag, copy group.

    The copy group numbers the sets of near-copies (connected through
    pairs) that still hold two or more documents after merging; -1 elsewhere.
    """
    n = len(docs)
    rep, cross, copies = np.arange(n), np.zeros(n, dtype=bool), np.full(n, -1)
    method = s["near_duplicates"]
    if method is None or n < 2:
        return rep, cross, copies
    if method == "auto":
        method = "exact" if n <= EXACT_LIMIT else "minhash"
    if method == "exact":
        pairs, _ = exact_pairs(docs, s["shingle_size"], s["near_duplicate_threshold"])
    else:
        pairs, _ = minhash_pairs(
            docs,
            s["shingle_size"],
            s["near_duplicate_threshold"],
            s["num_perm"],
            s["random_state"],
            progress=progress,
        )
    if not len(pairs):
        return rep, cross, copies
    # Merge only within one source and group: a merged document keeps a single group.
    unit = np.array(
        [
            f"{s}\x1f{g}"
            for s, g in zip(_labels(frame["source"]), _labels(frame["group"]), strict=True)
        ]
    )
    label = _components(n, pairs[unit[pairs[:, 0]] == unit[pairs[:, 1]]])
    length = np.array([len(d) for d in docs])
    order = np.lexsort((np.arange(n), -length, label))  # fullest copy first, then corpus order
    first = np.r_[True, label[order][1:] != label[order][:-1]]
    rep[order] = order[first][np.cumsum(first) - 1]
    source = frame["source"].astype(str).to_numpy()
    cross[rep[pairs[source[pairs[:, 0]] != source[pairs[:, 1]]].ravel()]] = True
    group = _components(n, rep[pairs])
    heads = np.flatnonzero(rep == np.arange(n))
    shared = np.bincount(group[heads], minlength=n) > 1
    copies[heads[shared[group[heads]]]] = np.unique(
        group[heads][shared[group[heads]]], return_inverse=True
    )[1]
    return rep, cross, copies


def _components(n: int, pairs: np.ndarray) -> np.ndarray:
    from scipy.sparse import coo_matrix
    from scipy.sparse.csgraph import connected_components

    graph = coo_matrix((np.ones(len(pairs)), (pairs[:, 0], pairs[:, 1])), shape=(n, n))
    return connected_components(graph, directed=False)[1]


def _labels(column: pd.Series) -> list[str]:
    """Values as text, missing ones as the empty string (pandas' str dtype keeps NaN)."""
    return ["" if pd.isna(v) else str(v) for v in column.tolist()]


def _examples(ids, sources, mask) -> dict[str, str]:
    out: dict[str, str] = {}
    for i in np.flatnonzero(mask).tolist():
        out.setdefault(sources[i], f"id {ids[i]}")
    return out


def _doc_freq(docs, size: int) -> np.ndarray:
    df = np.zeros(size, dtype=np.int64)
    for d in docs:
        df[np.unique(d)] += 1
    return df


def _remap(docs, kept: np.ndarray, size: int) -> list[np.ndarray]:
    new = np.full(size, -1, dtype=np.int32)
    new[kept] = np.arange(len(kept), dtype=np.int32)
    out = []
    for d in docs:
        m = new[d]
        out.append(m[m >= 0])
    return out


def _dictionary(docs, strings) -> tuple[Dictionary, BagOfWords]:
    """A gensim Dictionary and bags of words equal to ``Dictionary(texts)``'s counts."""
    bow = BagOfWords.from_token_ids(docs)
    size = len(strings)
    dfs = np.bincount(bow.ids, minlength=size)
    cfs = np.bincount(bow.ids, weights=bow.counts, minlength=size).astype(np.int64)
    dictionary = make_dictionary(
        strings.tolist(), dfs.tolist(), cfs.tolist(), len(docs), len(bow.ids)
    )
    return dictionary, bow


def _meta(frame, keep, clean, weights, dup_ids, cross, copies) -> pd.DataFrame:
    first = ["id", "source", "weight", "group", "url", "title", "date", "text", "outlet"]
    cols = [c for c in first if c in frame.columns]
    cols += [c for c in frame.columns if c not in cols]
    meta = frame.iloc[keep][cols].reset_index(drop=True)
    meta["id"] = meta["id"].astype(str)
    meta["weight"] = weights[keep]
    meta["text"] = [clean[i] for i in keep.tolist()]
    meta["duplicate_ids"] = [dup_ids[i] for i in keep.tolist()]
    meta["cross_source_duplicate"] = cross[keep]
    meta["copy_group"] = copies[keep]
    return meta


def _jsonable(s: dict) -> dict:
    return json.loads(json.dumps(s, default=list))


def load_prepared(project: Project, key: str | None = None) -> PreparedCorpus:
    """A prepared corpus saved in ``project``.

    ``key`` is its folder name under ``prepared/`` (a fit's ``corpus_fingerprint``,
    a sweep's ``corpus_fingerprint_``); by default the most recently written one.
    """
    project = project if isinstance(project, Project) else Project.open(project)
    root = project.path / "prepared"
    have = sorted(p.name for p in root.iterdir() if p.is_dir()) if root.is_dir() else []
    if key is None and have:
        key = max(have, key=lambda name: (root / name).stat().st_mtime)
    if key is None or key not in have:
        wanted = "any prepared corpus" if key is None else f"the prepared corpus {key!r}"
        msg = (
            f"The project {str(project.path)!r} holds no {wanted} (present under prepared/: "
            f"{', '.join(have) or 'none'}). Run `tm-compare prepare CORPUS_FILE --project "
            "DIR ...` (or prepare(corpus, project=...)) with the settings you want first."
        )
        raise ProjectError(msg)
    return PreparedCorpus.load(root / key)
