"""Find topics by word: a search box over :func:`tm_compare.compare.terms.find_topics`."""

from __future__ import annotations

import ipywidgets as w

from .._html import esc
from ..compare.terms import find_topics
from ..errors import TmCompareError
from ._row_table import RowTable
from .charts import WARN

#: A word "ranks high" in a topic when it is among the topic's first FIND_TERMS terms.
FIND_TERMS = 30


class FindPanel(w.VBox):
    """A word in, the topics where it ranks among the first :data:`FIND_TERMS` terms out.

    The ranking is the terms panel's (``ranking()`` returns the method and its weights); a click
    on a row picks that topic.
    """

    def __init__(self, results, on_pick, ranking, downloads=None):
        self.results = results
        self._on_pick = on_pick
        self._ranking = ranking
        self.found = None
        self.query = w.Text(
            placeholder="a word, e.g. harbour",
            description="Find topics by word",
            style={"description_width": "initial"},
            continuous_update=False,
            layout=w.Layout(width="340px"),
        )
        self.query.add_class("tmc-find-input")
        self.button = w.Button(description="Find", layout=w.Layout(width="70px"))
        self.button.add_class("tmc-find-button")
        self.message = w.HTML()
        self.message.add_class("tmc-find-message")
        self.table = RowTable(caption="", layout=w.Layout(width="100%"))
        self.table.add_class("tmc-find-results")
        self.table.layout.display = "none"
        self.table.observe(self._row_clicked, names="selected")
        self.query.observe(lambda _c: self.search(), names="value")
        self.button.on_click(lambda _b: self.search())
        children = [w.HBox([self.query, self.button]), self.message, self.table]
        if downloads is not None:
            from ._downloads import Downloads

            folder, stem = downloads("find", lambda: [f"word-{self.query.value.strip()}"])
            self.downloads = Downloads(folder, stem, table=lambda: self.found, name="find")
            self.downloads.layout.display = "none"
            children.append(self.downloads)
        super().__init__(children)

    def search(self, word: str | None = None):
        """Look ``word`` up (default: the box's text); show and return the topics found."""
        word = self.query.value if word is None else word
        if not word.strip():
            self.message.value, self.found = "", None
            self.table.layout.display = "none"
            return None
        method, weights = self._ranking()
        try:
            found = find_topics(
                self.results.fit,
                word,
                self.results.prepared,
                method=method,
                n_terms=FIND_TERMS,
                **weights,
            )
        except TmCompareError as exc:
            self.message.value = f'<span style="color:{WARN};font-size:12px">{esc(exc)}</span>'
            self.table.layout.display = "none"
            self.found = None
            return None
        captions = self.results.captions
        self.found = found.assign(caption=found["topic"].map(captions))
        if found.empty:
            self.message.value = (
                f'<span style="font-size:12px">"{esc(word)}" is not among the first '
                f"{FIND_TERMS} terms of any topic.</span>"
            )
            self.table.layout.display = "none"
        else:
            self.message.value = (
                f'<span style="font-size:12px">"{esc(word)}" ranks among the first '
                f"{FIND_TERMS} terms of {len(found)} topic(s); click one to read it.</span>"
            )
            shown = self.found[["caption", "rank", "probability", "share_of_term"]].copy()
            shown["probability"] = shown["probability"].map("{:.1%}".format)
            shown["share_of_term"] = shown["share_of_term"].map("{:.0%}".format)
            shown.columns = ["topic", "rank of the word", "of the topic", "of the word's use"]
            self.table.selected = None
            self.table.show_frame(shown, [int(t) for t in found["topic"]])
            self.table.layout.display = None
        if getattr(self, "downloads", None) is not None:
            self.downloads.layout.display = None if self.found is not None else "none"
        return self.found

    def _row_clicked(self, change):
        if change["new"] is not None:
            self._on_pick(int(change["new"]))

    def show_topic(self, topic: int) -> None:
        # the found row of the topic on show is highlighted; none when it is not among them
        self.table.selected = topic if topic in self.table.row_keys else None
