"""Hostile input for tests: the quickstart with an article whose title and text carry markup.

Corpus text is untrusted, so the views must show markup as plain text and never run it. The
tutorial itself opens on benign articles; tests that check escaping in a real browser run a copy
of it with the hostile article added by :func:`quickstart_with_hostile_article`.
"""

from __future__ import annotations

from pathlib import Path

import nbformat

REPO = Path(__file__).resolve().parent.parent
HOSTILE_TITLE = (
    "Rents <script>alert('title')</script> rise <img src=x onerror=alert('title')> again"
)
HOSTILE_ID = "qh-hostile"

# Added just before the corpus is built from the frame. The article is made of several housing
# articles so that it is one of the most typical documents of its topic and shows in the
# documents panel.
_ADD_ARTICLE = f'''housing = truth.docs.query("theme == 'housing' and second_theme.isna()")["id"]
body = " ".join(frame.set_index("id").loc[housing[:6], "text"])
frame.loc[len(frame)] = {{
    "id": "{HOSTILE_ID}", "source": "shared", "outlet": "Quillhaven Courier", "reader": "reader_001",
    "weight": 3, "date": frame["date"].max(), "url": "https://quillhavencourier.example/hostile",
    "title": "{HOSTILE_TITLE}",
    "text": body + " <img src=x onerror=alert('text')> <script>alert('text')</script>",
}}'''
# Added after the view is shown: select the hostile article's topic, so its card is on show.
_SHOW_ARTICLE = f'''import numpy as np

view.topic = int(np.argmax(fit.doc_topic[prepared.doc_ids.index("{HOSTILE_ID}")]))'''
_BEFORE = "corpus = tm_compare.Corpus.from_frame("
_AFTER = "view = TopicView("


def _index(nb, marker: str, how) -> int:
    found = [i for i, c in enumerate(nb.cells) if c.cell_type == "code" and how(c.source, marker)]
    if len(found) != 1:
        msg = f"notebooks/quickstart.ipynb needs exactly one code cell with {marker!r} for the hostile-article probe; found {len(found)}."
        raise AssertionError(msg)
    return found[0]


def quickstart_with_hostile_article(dest: Path) -> Path:
    """Write to ``dest`` a copy of the quickstart that adds a hostile article and opens on it."""
    nb = nbformat.read(REPO / "notebooks" / "quickstart.ipynb", as_version=4)
    at = _index(nb, _BEFORE, lambda source, m: source.startswith(m))
    nb.cells.insert(at, nbformat.v4.new_code_cell(_ADD_ARTICLE, id="probe-add-article"))
    at = _index(nb, _AFTER, lambda source, m: m in source)
    nb.cells.insert(at + 1, nbformat.v4.new_code_cell(_SHOW_ARTICLE, id="probe-show-article"))
    nbformat.write(nb, dest)
    return dest
