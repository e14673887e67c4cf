"""Languages of preparation: stop words, stemmers, elisions, detection and the language mix.

:func:`tm_compare.prepare` takes ``language="de"`` (an ISO 639-1 code), ``language="auto"``
(detect each document's language among every supported one) or a list of codes (detect among
those only). Each document is then prepared in its own language:

- **stop words**: English keeps the package's own list (:mod:`._stopwords`); every other
  language takes the list of the ``stop-words`` package (BSD-3-Clause, its lists ship inside
  the wheel) unchanged, plus the few news words listed in :data:`ADDITIONS`;
- **stemming** (``stem="snowball"``): the Snowball stemmer of that language, from
  ``snowballstemmer`` (pure Python, BSD-3-Clause); or **lemmas** (``stem="lemma"``): the
  dictionary form from ``simplemma`` (MIT; its dictionaries ship inside the wheel; the optional
  extra ``tm_compare[lemmas]``), lower-cased ("Häfen" -> "hafen", "gestiegen" -> "steigen");
- **elisions**: French, Italian and Catalan articles and prepositions written with an apostrophe
  are cut off a word ("l'école" -> "école", "dell'anno" -> "anno"); only English cuts a trailing
  possessive "'s". Compounds (German "Sturmflutwarnung") stay whole: tokens split only at spaces
  and punctuation other than inner apostrophes and hyphens;
- **detection** (``language="auto"``): ``py3langid`` (BSD-3-Clause; its naive Bayes model of
  byte n-grams ships inside the wheel; no randomness, so the same text always gets the same
  answer). A document whose best guess has a probability below :data:`MIN_CONFIDENCE` (too
  short, only numbers, or a language outside the candidates) is *undetected*: counted out in the
  report under :data:`REASON_UNDETECTED`, or prepared in ``undetected="xx"`` and flagged.

Supported languages (:data:`SUPPORTED`) are those written in Latin, Greek or Cyrillic script for
which all three libraries have an entry: their letters are all word characters of Python's
``re``, so the one tokenizer serves them. Scripts whose words carry combining marks (Devanagari,
Arabic vowel signs) or are written without spaces (Chinese, Japanese) are not offered.
"""

from __future__ import annotations

import functools
import warnings
from dataclasses import dataclass
from importlib import metadata

import numpy as np
import pandas as pd

from .._hashing import fingerprint as _fingerprint
from .._validation import param_error

__all__ = [
    "ADDITIONS",
    "AUTO",
    "LANGUAGES",
    "MIN_CONFIDENCE",
    "SUPPORTED",
    "SUPPORTED_LANGUAGES",
    "UNDETECTED",
    "detect_languages",
    "language_mix",
    "split_by_language",
    "stop_words",
]

AUTO = "auto"
#: Label of documents whose language could not be told (ISO 639-2 "undetermined").
UNDETECTED = "und"
#: Least normalised probability of the detector's best guess that counts as detected.
MIN_CONFIDENCE = 0.5
#: Characters of a document read by the detector (the rest adds time, not accuracy).
DETECT_CHARS = 600
REASON_UNDETECTED = "language not detected"
REASON_FALLBACK = "language not detected: prepared in the fallback language"


@dataclass(frozen=True)
class Language:
    """One supported language: its ISO 639-1 code, English name and the libraries' names."""

    code: str
    name: str
    snowball: str  # snowballstemmer / PyStemmer algorithm
    stop_list: str  # code in the stop-words package
    detector: str  # code in py3langid's model
    elisions: frozenset = frozenset()
    possessive: bool = False
    lemmas: str = ""  # code in simplemma


def _lang(code, name, stop=None, detector=None, elisions="", possessive=False):
    return Language(
        code,
        name,
        name,
        stop or code,
        detector or code,
        frozenset(elisions.split()),
        possessive,
        stop or code,
    )


LANGUAGES: dict[str, Language] = {
    lang.code: lang
    for lang in (
        _lang("ca", "catalan", elisions="l d s n m t"),
        _lang("cs", "czech"),
        _lang("da", "danish"),
        _lang("de", "german"),
        _lang("el", "greek"),
        _lang("en", "english", possessive=True),
        _lang("es", "spanish"),
        _lang("fi", "finnish"),
        _lang(
            "fr",
            "french",
            elisions="l d j m n s t c qu jusqu lorsqu puisqu quoiqu presqu quelqu",
        ),
        _lang("hu", "hungarian"),
        _lang("id", "indonesian"),
        _lang(
            "it",
            "italian",
            elisions="l d c s m t v un dell all dall nell sull coll pell quest quell "
            "bell sant anch dov com tutt nessun buon",
        ),
        _lang("nl", "dutch"),
        _lang("no", "norwegian", stop="nb"),
        _lang("pl", "polish"),
        _lang("pt", "portuguese"),
        _lang("ro", "romanian"),
        _lang("ru", "russian"),
        _lang("sv", "swedish"),
        _lang("tr", "turkish"),
    )
}
SUPPORTED: tuple[str, ...] = tuple(sorted(LANGUAGES))
SUPPORTED_LANGUAGES = SUPPORTED  # the name on the package's face

#: Words added to a library's list: reporting verbs, attribution and weekdays, which appear in
#: nearly every news article (the English list makes the same additions, see ``_stopwords``).
ADDITIONS: dict[str, frozenset] = {
    "de": frozenset(
        """
        sagte sagten sagt sagen gesagt laut erklärte erklärt betonte berichtete teilte
        hieß heißt worden sei seien bereits sowie
        montag dienstag mittwoch donnerstag freitag samstag sonntag
        """.split()
    ),
    # The six entries of stop-words' Polish list stored in a broken encoding, as intended.
    "pl": frozenset("dużo ją jeśli jeżeli już każdy".split()),
}


def _supported_text() -> str:
    return ", ".join(f"{c} ({LANGUAGES[c].name})" for c in SUPPORTED)


def check_language(owner: str, value):
    """``value`` as a language code, ``"auto"`` or a sorted tuple of codes; else SettingsError."""
    accepted = f'an ISO 639-1 code, "auto" or a list of codes; supported: {_supported_text()}'
    if isinstance(value, str):
        code = value.strip().lower()
        if code == AUTO or code in LANGUAGES:
            return code
        raise param_error(owner, "language", value, accepted)
    if isinstance(value, list | tuple | set | frozenset) and value:
        codes = []
        for v in value:
            if not isinstance(v, str) or v.strip().lower() not in LANGUAGES:
                raise param_error(owner, "language", v, accepted)
            codes.append(v.strip().lower())
        codes = tuple(sorted(set(codes)))
        return codes[0] if len(codes) == 1 else codes
    raise param_error(owner, "language", value, accepted)


def candidates(language) -> tuple[str, ...]:
    """The languages a checked ``language`` setting may give a document."""
    if language == AUTO:
        return SUPPORTED
    return tuple(language) if isinstance(language, tuple | list) else (language,)


def is_detected(language) -> bool:
    """True when documents get their language from the detector."""
    return language == AUTO or isinstance(language, tuple | list)


def library_stop_words(code: str) -> list[str]:
    """The stop-word list the libraries give for ``code``, unchanged."""
    if code == "en":
        from ._stopwords import ENGLISH  # imports scikit-learn: only when preparing

        return sorted(ENGLISH)
    from stop_words import get_stop_words

    return list(get_stop_words(LANGUAGES[code].stop_list, cache=False))


@functools.cache
def stop_words(code: str) -> frozenset[str]:
    """The built-in stop words of ``code``: the library's list, normalised as tokens are
    (NFKC, lower case, typographic apostrophes unified), plus :data:`ADDITIONS`.

    A few entries of stop-words' lists cannot match a token (its Polish list holds some words
    in a broken encoding, such as "duå¼o" for "dużo"); they are kept as the library gives them."""
    from ._tokens import normalise

    words = {normalise(w).strip() for w in library_stop_words(code)}
    return frozenset(words | ADDITIONS.get(code, frozenset()))


def stemmer(code: str, method: str = "snowball"):
    """The Snowball stemmer of ``code`` (or, with ``method="lemma"``, simplemma's lemmatiser,
    lower-cased), as a function of one word."""
    if method == "lemma":
        from .._validation import require
        from ._tokens import normalise

        simplemma = require("simplemma", "lemmas")
        lang = LANGUAGES[code].lemmas

        def lemma(word: str) -> str:
            # Tokens are lower-cased, but German nouns are capitalised in the dictionaries.
            found = simplemma.lemmatize(word, lang=lang)
            if found == word:
                found = simplemma.lemmatize(word.capitalize(), lang=lang)
            return normalise(found)

        return lemma
    import snowballstemmer

    return snowballstemmer.stemmer(LANGUAGES[code].snowball).stemWord


def versions() -> dict[str, str]:
    """Versions of the libraries whose lists, stemmers and model shape a prepared corpus."""
    out = {}
    for dist in ("stop-words", "snowballstemmer", "py3langid", "simplemma"):
        try:
            out[dist] = metadata.version(dist)
        except metadata.PackageNotFoundError:
            out[dist] = "absent"
    return out


@functools.cache
def _identifier(codes: tuple[str, ...]):
    from py3langid.langid import MODEL_FILE, LanguageIdentifier

    ident = LanguageIdentifier.from_model_file(MODEL_FILE, norm_probs=True)
    ident.set_languages([LANGUAGES[c].detector for c in codes])
    return ident


def detect_languages(texts, language=AUTO) -> tuple[np.ndarray, np.ndarray]:
    """The language code of each text (``"und"`` when undetected) and the detector's probability.

    ``language`` is ``"auto"`` (every supported language) or a list of candidate codes.
    Deterministic: the same text always gets the same answer.
    """
    codes = candidates(check_language("detect_languages", language))
    ident = _identifier(codes)
    back = {LANGUAGES[c].detector: c for c in codes}
    found, probs = [], []
    for text in texts:
        text = str(text)[:DETECT_CHARS]
        if not any(ch.isalpha() for ch in text):
            found.append(UNDETECTED)
            probs.append(0.0)
            continue
        code, prob = ident.classify(text)
        found.append(back[code] if prob >= MIN_CONFIDENCE else UNDETECTED)
        probs.append(prob)
    return np.array(found, dtype=object), np.array(probs, dtype=float)


def language_mix(prepared) -> pd.DataFrame:
    """Documents per source and language: kept ones, and those whose language was undetected.

    Columns ``source``, ``language`` (ISO code, or ``"und"``), ``name``, ``documents`` (kept
    after preparation, or counted out as undetected) and ``share`` (of the source's rows in
    this table). A corpus prepared in one language shows one language per source.
    """
    meta = prepared.meta
    if "language" in meta.columns:
        langs = meta["language"].astype(str)
    else:
        given = prepared.settings.get("language", "en")
        langs = pd.Series([given if isinstance(given, str) else UNDETECTED] * len(meta))
    rows = (
        pd.DataFrame({"source": meta["source"].astype(str).to_numpy(), "language": langs.values})
        .groupby(["source", "language"], sort=True)
        .size()
        .rename("documents")
        .reset_index()
    )
    log = prepared.report.to_frame()
    lost = log[log["reason"] == REASON_UNDETECTED]
    if len(lost):
        extra = lost.groupby("source")["count"].sum().rename("documents").reset_index()
        extra["language"] = UNDETECTED
        rows = pd.concat([rows, extra[rows.columns]], ignore_index=True)
    rows = rows.sort_values(["source", "documents"], ascending=[True, False], kind="stable")
    rows["share"] = rows["documents"] / rows.groupby("source")["documents"].transform("sum")
    rows.insert(
        2,
        "name",
        [LANGUAGES[c].name if c in LANGUAGES else "undetected" for c in rows["language"]],
    )
    return rows.reset_index(drop=True)


def is_only_english(prepared) -> bool:
    """True when every document was prepared in English (nothing to say about languages)."""
    mix = language_mix(prepared)
    return set(mix["language"]) <= {"en"}


def describe_mix(prepared) -> str:
    """The language mix in one line per source ("shared: de 61%, en 39%")."""
    mix = language_mix(prepared)
    lines = []
    for source, part in mix.groupby("source", sort=True):
        shares = ", ".join(
            f"{lang} {share:.0%}"
            for lang, share in zip(part["language"], part["share"], strict=True)
        )
        lines.append(f"{source}: {shares}")
    return "\n".join(lines)


def warn_if_mixed(prepared) -> None:
    """A warning when documents of more than one language share the corpus: one LDA over
    several languages mostly finds topics that split by language (common practice: topic
    models see words, and languages share few of them)."""
    if "language" not in prepared.meta.columns:
        return
    counts = prepared.meta["language"].value_counts()
    if len(counts) < 2:
        return
    mix = ", ".join(f"{c} {n / counts.sum():.0%}" for c, n in counts.items())
    warnings.warn(
        f"The prepared corpus mixes {len(counts)} languages ({mix}). One topic model over "
        "several languages mostly finds topics that split by language; fit each language on "
        "its own with prepared.split_by_language() and compare the sweeps side by side.",
        UserWarning,
        stacklevel=3,
    )


def split_by_language(prepared, *, project=None, min_docs: int = 1) -> dict:
    """One prepared corpus per language of ``prepared`` (documents in corpus order).

    Each part has its own dictionary (the terms its documents use), the parent's report,
    boilerplate and phrase tables, ``settings["language"]`` set to its code and a fingerprint
    of the parent's and the code. With a ``project`` each part is saved under
    ``prepared/<fingerprint>``, so fits on it find their corpus with ``load_prepared``.
    Languages with fewer than ``min_docs`` documents are left out.
    """
    if "language" not in prepared.meta.columns:
        return {prepared.settings.get("language", "en"): prepared}
    langs = prepared.meta["language"].astype(str).to_numpy()
    order = {
        t: i for i, t in enumerate(prepared.dictionary[i] for i in range(len(prepared.dictionary)))
    }
    out = {}
    for code in sorted(set(langs.tolist())):
        rows = np.flatnonzero(langs == code)
        if len(rows) < min_docs:
            continue
        texts = [prepared.texts[i] for i in rows.tolist()]
        used = {t for text in texts for t in text}
        vocab = sorted(used, key=order.__getitem__)
        part = type(prepared).from_texts(texts, prepared.meta.iloc[rows], vocab=vocab)
        part.report = prepared.report
        part.boilerplate = prepared.boilerplate
        part.phrases = prepared.phrases
        part.settings = {**prepared.settings, "language": code, "split_from": prepared.fingerprint}
        part.fingerprint = _fingerprint(prepared.fingerprint, "language", code)
        if project is not None:
            from ..project import Project

            project = project if isinstance(project, Project) else Project.open(project)
            part.save(project.folder("prepared") / part.fingerprint)
        out[code] = part
    return out


def detector(language):
    """A function text -> language code (``"und"`` when undetected) for a detected setting."""
    codes = candidates(language)
    ident = _identifier(tuple(codes))
    back = {LANGUAGES[c].detector: c for c in codes}

    def detect(text: str) -> str:
        text = text[:DETECT_CHARS]
        if not any(ch.isalpha() for ch in text):
            return UNDETECTED
        code, prob = ident.classify(text)
        return back[code] if prob >= MIN_CONFIDENCE else UNDETECTED

    return detect


class TokensByLanguage:
    """Raw tokens of each language in their own index, so that one string can be a stop word in
    one language and a term in another ("die", "fine", "also"); ids are offset per language
    once every document is read, giving one id space for the later stages."""

    def __init__(self):
        from ._tokens import TokenIndex

        self._new = TokenIndex
        self.indexes: dict = {}

    def encode(self, tokens: list[str], code: str) -> np.ndarray:
        index = self.indexes.get(code)
        if index is None:
            index = self.indexes[code] = self._new()
        return index.encode(tokens)

    def offsets(self) -> dict[str, int]:
        out, at = {}, 0
        for code, index in self.indexes.items():
            out[code] = at
            at += len(index.ids)
        return out

    def shift(self, docs, langs) -> None:
        """Move each document's ids (a ``Ragged``, in place) into the shared id space."""
        if len(self.indexes) <= 1:
            return
        off = self.offsets()
        per_doc = np.array([off.get(code, 0) for code in langs], dtype=np.int32)
        values = docs.values
        values += np.repeat(per_doc, docs.lengths)

    def classify(self, stop_set, *, stem: str | None, connectors: frozenset, **rules):
        """Forms and kinds of every raw token, each classified by the rules of its language."""
        from ._tokens import classify

        forms, kinds = [np.empty(0, dtype=object)], [np.empty(0, dtype=np.int8)]
        for code, index in self.indexes.items():
            lang = LANGUAGES.get(code)
            stop = stop_set(code)
            f, k = classify(
                index.strings,
                stop_words=stop,
                connectors=frozenset(connectors & stop) if code == "en" else frozenset(),
                stem=stemmer(code, stem) if stem and lang is not None else None,
                elisions=lang.elisions if lang is not None else frozenset(),
                possessive=lang.possessive if lang is not None else False,
                **rules,
            )
            forms.append(f)
            kinds.append(k)
        return np.concatenate(forms), np.concatenate(kinds)
