"""The built-in English stop-word list used by :func:`tm_compare.prepare`.

Starting set: scikit-learn's ``ENGLISH_STOP_WORDS`` (imported, not copied).
That list was made for general text and removes words that carry topics in
news ("fire", "bill", "interest", "system", "un" as in the United Nations
once lower-cased), so those are taken back out. Added: reporting verbs and
attribution words that appear in nearly every news article ("said", "told",
"according"), honorifics, and contractions (the tokenizer keeps inner
apostrophes, so "don't" arrives as one token; a trailing "'s" is already cut
off by the tokenizer, see :mod:`tm_compare._tokens`).
"""

from __future__ import annotations

from sklearn.feature_extraction.text import ENGLISH_STOP_WORDS

# Content words in news that the general-purpose starting list would remove.
_TAKEN_BACK = frozenset(
    """
    bill fire interest system computer found call thick thin move find show side mill detail
    describe cry amount bottom top front full part name fill empty serious sincere un con
    """.split()
)

# Words of news reporting rather than of the story: attribution, honorifics, time fillers.
_NEWS = frozenset(
    """
    said says say saying told tells tell according reported reports reportedly stated statement
    added adding asked noted explained claimed announced spokesperson spokesman spokeswoman
    mr mrs ms dr prof sir madam
    also just like really yes yeah oh ok okay
    today yesterday tomorrow monday tuesday wednesday thursday friday saturday sunday
    """.split()
)

# Contractions kept whole by the tokenizer.
_CONTRACTIONS = frozenset(
    """
    don't doesn't didn't can't couldn't won't wouldn't shouldn't isn't aren't wasn't weren't
    hasn't haven't hadn't mustn't needn't shan't ain't
    i'm i've i'll i'd you're you've you'll you'd we're we've we'll we'd they're they've they'll
    they'd he'll he'd she'll she'd it'll there'll that'll who'll who'd who've what'll
    y'all ma'am o'clock
    """.split()
)

ENGLISH = frozenset((ENGLISH_STOP_WORDS - _TAKEN_BACK) | _NEWS | _CONTRACTIONS)


def read_stop_words(path) -> list[str]:
    """Stop words from a text file, one per line (UTF-8); a binary or non-UTF-8 file is refused
    with the line at fault."""
    from ..errors import InputError

    fix = "Give a plain-text file saved as UTF-8 with one stop word per line."
    with open(path, "rb") as fh:
        raw = fh.read()
    if b"\0" in raw:
        msg = f"The stop-word file {str(path)!r} is binary (it holds NUL bytes), not text. {fix}"
        raise InputError(msg)
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = raw[: exc.start].count(b"\n") + 1
        msg = (
            f"The stop-word file {str(path)!r} is not UTF-8 text: byte {raw[exc.start]:#04x} on "
            f"line {line} cannot be decoded. {fix}"
        )
        raise InputError(msg) from None
    return [w.strip() for w in text.splitlines() if w.strip()]
