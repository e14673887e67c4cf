"""The passes of :func:`~tm_compare.text.prepared.prepare`, a chunk of corpus rows at a time.

Texts are read from the corpus a chunk (:data:`CHUNK_ROWS` rows) at a time, so only one
chunk of Python strings exists at once; every pass after tokenizing reads the token ids,
held flat (:class:`._ragged.Ragged`, 4 bytes a token). What is kept between passes is what
the later passes need: line-hash counts (boilerplate), MinHash signatures (near-duplicates),
gensim's phrase counts, document frequencies; never the texts themselves. The cleaned text
of each kept document (``meta["text"]``, compact Arrow-backed strings) is made in a last pass,
boilerplate stripped again. Results do not depend on the chunk size.
"""

from __future__ import annotations

import json
from functools import partial

import numpy as np
import pandas as pd
from tqdm.auto import tqdm

from ..errors import CorpusError
from ._boilerplate import BoilerplateStripper, LineCounter
from ._dedupe import examples, labels, near_duplicates
from ._ragged import Ragged, TokenTexts
from ._settings import stop_set
from ._store import make_dictionary
from ._tokens import (
    BagOfWords,
    TokenIndex,
    all_segments,
    apply_phrases,
    join_phrases,
    phrase_parts,
    prune_vocabulary,
    tokenize,
)
from .languages import (
    REASON_FALLBACK,
    REASON_UNDETECTED,
    UNDETECTED,
    TokensByLanguage,
    detector,
    is_detected,
)
from .removals import RemovalLog

STAGE = "prepare"
REASON_MERGED = "near-duplicate merged into a copy in the same source"
REASON_SHORT = "too short after preparation"
#: Rows of the corpus read (and documents encoded) at a time.
CHUNK_ROWS = 20_000


def _chunks(n: int):
    for lo in range(0, n, CHUNK_ROWS):
        yield lo, min(n, lo + CHUNK_ROWS)


def _texts(frame: pd.DataFrame, lo: int, hi: int) -> list[str]:
    return frame["text"].iloc[lo:hi].tolist()


def build(corpus, s: dict, progress: bool) -> dict:
    """The parts of a :class:`~tm_compare.text.prepared.PreparedCorpus` of ``corpus``."""
    frame = corpus.frame
    n = len(frame)
    bar = partial(tqdm, disable=not progress, unit="doc", leave=False)
    sources = frame["source"].astype(str).to_numpy()
    by = s["boilerplate_by"] or ("outlet" if "outlet" in frame.columns else "source")
    bp_groups = labels(frame[by])

    strip = _boilerplate(frame, bp_groups, s, bar) if s["boilerplate"] else None
    index, docs, langs = _tokenize(frame, bp_groups, strip, s, bar)
    boilerplate = (
        strip.table(pd.Series(bp_groups).value_counts().to_dict())
        if strip is not None
        else BoilerplateStripper({}).table({})
    )
    boilerplate.insert(0, "by", by)

    report = RemovalLog.from_dict(corpus.report.to_dict())
    ids = frame["id"].astype(str).to_numpy()
    rep, cross, copies = near_duplicates(docs, frame, s, partial(bar, desc="near-duplicates"))
    merged = rep != np.arange(n)
    drop_undetected = s["undetected"] == "remove"
    undetected = (langs == UNDETECTED) & ~merged
    report.add_counts(
        STAGE,
        REASON_UNDETECTED if drop_undetected else REASON_FALLBACK,
        pd.Series(sources[undetected]).value_counts(sort=False),
        examples(ids, sources, undetected),
        kind="removed" if drop_undetected else "flagged",
    )
    report.add_counts(
        STAGE,
        REASON_MERGED,
        pd.Series(sources[merged]).value_counts(sort=False),
        examples(ids, sources, merged),
        kind="merged",
    )
    weights = np.bincount(rep, weights=frame["weight"].to_numpy(dtype=float), minlength=n)
    # Ids merged at intake come along: a document lists every id folded into it.
    intake_ids = frame["duplicate_ids"] if "duplicate_ids" in frame.columns else [None] * n
    dup_ids = [list(v) if isinstance(v, list | tuple | np.ndarray) else [] for v in intake_ids]
    for i in np.flatnonzero(merged).tolist():
        dup_ids[rep[i]].extend([ids[i], *dup_ids[i]])
    keep = np.flatnonzero(~merged & ~(undetected & drop_undetected))

    strings, docs, phrase_table = _phrase_passes(index, docs, keep, s, bar)
    kept_terms = prune_vocabulary(
        docs.doc_freq(len(strings)),
        len(docs),
        s["min_doc_count"],
        s["max_doc_fraction"],
        s["max_vocab"],
    )
    docs = docs.map_values(_new_ids(kept_terms, len(strings)))
    strings = strings[kept_terms]
    short = docs.lengths < s["min_doc_tokens"]
    short_all = np.zeros(n, dtype=bool)
    short_all[keep[short]] = True
    report.add_counts(
        STAGE,
        REASON_SHORT,
        pd.Series(sources[short_all]).value_counts(sort=False),
        examples(ids, sources, short_all),
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
    docs = docs.take(np.flatnonzero(~short))
    keep = keep[~short]
    present = np.flatnonzero(docs.doc_freq(len(strings)) > 0)
    docs = docs.map_values(_new_ids(present, len(strings)))
    strings = strings[present]

    clean = _clean_texts(frame, keep, bp_groups, strip)
    del bp_groups
    meta = _meta(frame, keep, clean, weights, dup_ids, cross, copies)
    if "language" in meta.columns:  # the corpus's own column keeps its values under a new name
        meta = meta.rename(columns={"language": "corpus_language"})
    prepared_in = np.where(langs == UNDETECTED, s["undetected"], langs).astype(object)
    meta["language"] = prepared_in[keep]
    report.kept[STAGE] = len(meta)
    dictionary, bow = dictionary_and_bow(docs, strings)
    return {
        "texts": TokenTexts(strings, docs),
        "dictionary": dictionary,
        "bow": bow,
        "meta": meta,
        "report": report,
        "boilerplate": boilerplate,
        "phrases": phrase_table,
        "settings": json.loads(json.dumps(s, default=list)),
    }


def _boilerplate(frame, groups, s, bar) -> BoilerplateStripper:
    """First pass: count lines per group, find the boilerplate ones."""
    counter = LineCounter()
    with bar(total=len(frame), desc="counting lines") as shown:
        for lo, hi in _chunks(len(frame)):
            counter.add(_texts(frame, lo, hi), groups[lo:hi])
            shown.update(hi - lo)
    found = counter.found(min_share=s["boilerplate_min_share"], min_docs=s["boilerplate_min_docs"])
    return BoilerplateStripper(found)


def _tokenize(frame, groups, strip, s, bar):
    """Second pass: boilerplate stripped, language told, raw tokens encoded per language.

    Returns the raw tokens (``TokensByLanguage``), each document's raw token ids (one id space
    for all languages) and each document's language ("und": undetected).
    """
    index, docs, langs = TokensByLanguage(), Ragged(), []
    detect = detector(s["language"]) if is_detected(s["language"]) else None
    drop_undetected = s["undetected"] == "remove"
    with bar(total=len(frame), desc="tokenizing") as shown:
        for lo, hi in _chunks(len(frame)):
            rows = []
            for text, group in zip(_texts(frame, lo, hi), groups[lo:hi], strict=True):
                text = strip(text, group) if strip is not None else text
                code = s["language"] if detect is None else detect(text)
                langs.append(code)
                if code == UNDETECTED and drop_undetected:
                    rows.append(np.empty(0, dtype=np.int32))  # counted out, pairs with nothing
                else:
                    lang = s["undetected"] if code == UNDETECTED else code
                    rows.append(index.encode(tokenize(text), lang))
            docs.extend(rows)
            shown.update(hi - lo)
    langs = np.array(langs, dtype=object)
    index.shift(docs, np.where(langs == UNDETECTED, s["undetected"], langs))
    return index, docs, langs


def _phrase_passes(index: TokensByLanguage, docs: Ragged, keep: np.ndarray, s: dict, bar):
    """Phrase passes (one per n-gram order) and the final encoding of the kept documents.

    Returns the final terms, the documents as ids into them, and the table of phrases joined.
    """
    from gensim.models.phrases import ENGLISH_CONNECTOR_WORDS, Phrases

    connectors = frozenset(ENGLISH_CONNECTOR_WORDS & stop_set(s, "en"))
    forms, kinds = index.classify(
        partial(stop_set, s),
        stem=s["stem"],
        connectors=connectors,
        drop_numbers=s["drop_numbers"],
        min_length=s["min_token_length"],
        max_length=s["max_token_length"],
    )
    rows = keep.tolist()
    models, phrases = [], {}
    for order in range(2, s["ngrams"] + 1):
        model = Phrases(
            min_count=s["phrase_min_count"],
            threshold=float(s["phrase_threshold"]),
            scoring=s["phrase_scoring"],
            connector_words=connectors,
        )
        shown = partial(bar, desc=f"{order}-grams", total=len(rows))
        segments = all_segments((docs[i] for i in rows), forms, kinds, shown)
        model.add_vocab(join_phrases(seg, models) for seg in segments)
        frozen = model.freeze()
        phrases.update(frozen.phrasegrams)
        models.append((frozen, phrase_parts(frozen.phrasegrams)))
    final, out = TokenIndex(), Ragged()
    with bar(total=len(rows), desc="joining phrases") as shown:
        for lo, hi in _chunks(len(rows)):
            out.extend(
                [
                    final.encode(apply_phrases(docs[i], forms, kinds, models, connectors))
                    for i in rows[lo:hi]
                ]
            )
            shown.update(hi - lo)
    table = pd.DataFrame(
        sorted(phrases.items(), key=lambda kv: (-kv[1], kv[0])), columns=["phrase", "score"]
    )
    return final.strings, out, table


def _new_ids(kept: np.ndarray, size: int) -> np.ndarray:
    new = np.full(size, -1, dtype=np.int32)
    new[kept] = np.arange(len(kept), dtype=np.int32)
    return new


def dictionary_and_bow(docs: Ragged, strings: np.ndarray):
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
    # The corpus's text column is left behind before rows are taken: the cleaned one replaces it.
    meta = frame[[c for c in cols if c != "text"]].iloc[keep].reset_index(drop=True)
    meta.insert(cols.index("text"), "text", clean)
    meta["id"] = meta["id"].astype(str)
    meta["weight"] = weights[keep]
    meta["duplicate_ids"] = [dup_ids[i] for i in keep.tolist()]
    meta["cross_source_duplicate"] = cross[keep]
    meta["copy_group"] = copies[keep]
    return meta


def _clean_texts(frame, keep: np.ndarray, groups, strip) -> pd.Series:
    """The texts of the rows ``keep`` (sorted), boilerplate stripped, as Arrow-backed strings."""
    parts = []
    for lo, hi in _chunks(len(frame)):
        rows = keep[(keep >= lo) & (keep < hi)]
        texts = _texts(frame, lo, hi)
        if strip is None:
            cleaned = [texts[i - lo] for i in rows.tolist()]
        else:
            cleaned = [strip(texts[i - lo], groups[i], tally=False) for i in rows.tolist()]
        parts.append(pd.Series(cleaned, dtype=frame["text"].dtype if not cleaned else None))
    return pd.concat(parts, ignore_index=True)
