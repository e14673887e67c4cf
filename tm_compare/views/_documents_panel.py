"""The documents panel: the selected topic's representative documents, one column per source."""

from __future__ import annotations

import ipywidgets as w

from ._cards import document_cards


class DocumentsPanel(w.HBox):
    """Representative documents of the selected topic, one column per source."""

    def __init__(self, results):
        self.results = results
        self.columns = {
            s: w.HTML(layout=w.Layout(flex="1 1 0", min_width="220px", margin="0 8px 0 0"))
            for s in results.sources
        }
        # (results, topic) -> source -> HTML, for revisits (narrowed dates are other results)
        self._cards: dict[tuple, dict[str, str]] = {}
        super().__init__(list(self.columns.values()), layout=w.Layout(width="100%"))

    def prepare(self, topic: int) -> dict[str, str]:
        """The cards of ``topic`` per source, built once (kept for :meth:`show_topic`)."""
        key = (self.results, topic)
        if key not in self._cards:
            docs = self.results.documents(topic).rename(columns={"topic_share": "share"})
            words = self.results.top_words(topic)
            by_source: dict[str, list[dict]] = {s: [] for s in self.columns}
            for row in docs.to_dict("records"):  # one pass: small frames cost more than rows
                by_source.get(row["source"], []).append(row)
            self._cards[key] = {
                s: document_cards(rows, words, heading=s) for s, rows in by_source.items()
            }
        return self._cards[key]

    def show_topic(self, topic: int) -> None:
        cards = self.prepare(topic)
        for source, box in self.columns.items():
            box.value = cards[source]
