"""Documents and labels as HTML: every corpus or label string is escaped before any markup.

Order matters for safety: raw text is split around term matches first, each piece is escaped
with :func:`html.escape` (quotes too), and only then is emphasis markup put around the escaped
matches. No string from a corpus or a label store reaches the page unescaped.
"""

from __future__ import annotations

import functools
import re
from collections.abc import Iterable

import pandas as pd

from .._html import esc

_BOX = (
    "border:1px solid #dfe2e6;border-radius:6px;padding:6px 8px;margin:0 0 6px 0;"
    "background:#fbfbfc;font-size:12px;line-height:1.4"
)
_MARK = "background:#fbe7c2;padding:0 1px;border-radius:2px"


def _term_pattern(terms: Iterable[str]) -> re.Pattern | None:
    return _pattern(tuple(sorted({t for t in terms if t}, key=len, reverse=True)))


@functools.lru_cache(maxsize=256)  # a topic's terms, met again on every card and revisit
def _pattern(terms: tuple[str, ...]) -> re.Pattern | None:
    # A term matches as a whole word or as a word's start (stemmed vocabularies keep stems);
    # a phrase token such as "city_council" also matches "city council" and "city-council".
    parts = []
    for term in terms:
        words = [re.escape(w) for w in re.split(r"[_\s]+", term) if w]
        if words:
            parts.append(r"[\s_-]+".join(words))
    if not parts:
        return None
    return re.compile(r"\b(?:" + "|".join(parts) + r")\w*", re.IGNORECASE)


def emphasise(text, terms: Iterable[str]) -> str:
    """HTML of ``text`` with the given terms wrapped in ``<mark>``; the text itself is escaped."""
    return _emphasise(text, _term_pattern(terms))


def _emphasise(text, pattern: re.Pattern | None) -> str:
    raw = "" if text is None else str(text)
    if pattern is None:
        return esc(raw)
    out, last = [], 0
    for match in pattern.finditer(raw):
        out.append(esc(raw[last : match.start()]))
        out.append(f'<mark style="{_MARK}">{esc(match.group(0))}</mark>')
        last = match.end()
    out.append(esc(raw[last:]))
    return "".join(out)


def document_cards(docs: Iterable[dict], terms: Iterable[str], *, heading: str) -> str:
    """One column of representative documents as HTML.

    ``docs``: one dict per document (a DataFrame's ``to_dict("records")``) with ``title``,
    ``outlet``, ``date``, ``exposure``, ``share`` and ``snippet`` (missing ones are left out of
    the card).
    """
    docs = list(docs)
    pattern = _term_pattern(terms)
    cards = [f'<div style="font-weight:600;margin:0 0 6px 0">{esc(heading)}</div>']
    if not docs:
        cards.append(
            '<div style="color:#6b7078">No document of this source leans on this topic.</div>'
        )
    for row in docs:
        facts = []
        if row.get("outlet") is not None:
            facts.append(esc(row.get("outlet")))
        date = row.get("date")
        if date is not None and not pd.isna(date):
            facts.append(esc(pd.Timestamp(date).date().isoformat()))
        if row.get("exposure") is not None:
            facts.append(f"exposure {float(row['exposure']):,.0f}")
        if row.get("share") is not None:
            facts.append(f"topic share {float(row['share']):.0%}")
        cards.append(
            f'<div class="tmc-doc" style="{_BOX}">'
            f'<div style="font-weight:600">{_emphasise(row.get("title") or "(no title)", pattern)}</div>'
            f'<div style="color:#5b6068;margin:1px 0 3px 0">{" · ".join(facts)}</div>'
            f'<div class="tmc-snippet">{_emphasise(row.get("snippet"), pattern)}</div></div>'
        )
    return "".join(cards)
