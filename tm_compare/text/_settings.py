"""Settings of :func:`~tm_compare.text.prepared.prepare`: defaults, checks and the cache key."""

from __future__ import annotations

from typing import Any

import numpy as np

from .._hashing import fingerprint as _fingerprint
from .._validation import check_choice, param_error
from ..options import default
from ._neardup import MAX_SHINGLE
from ._store import FORMAT_VERSION
from ._tokens import normalise
from .languages import candidates, check_language

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


def check_settings(corpus, settings: dict) -> dict:
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


def stop_set(s: dict, code: str = "en") -> frozenset[str]:
    from . import languages

    if s["stop_words"] == "builtin":
        base = languages.stop_words(code)
    elif s["stop_words"] == "english":
        base = languages.stop_words("en")
    else:
        base = frozenset(s["stop_words"] or ())
    return frozenset(base | set(s["extra_stop_words"]))


def cache_key(corpus, s: dict) -> str:
    from .. import __version__
    from .languages import versions

    # The corpus fingerprint covers every column, so metadata edits also miss the cache.
    stops = [sorted(stop_set(s, code)) for code in candidates(s["language"])]
    return _fingerprint(corpus.fingerprint, s, stops, versions(), FORMAT_VERSION, __version__)
