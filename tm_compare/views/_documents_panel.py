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
        self._cards: dict[int, dict[str, str]] = {}  # topic -> source -> HTML, for revisits
        super().__init__(list(self.columns.values()), layout=w.Layout(width="100%"))

    def show_topic(self, topic: int) -> None:
        if topic not in self._cards:
            docs = self.results.documents(topic).rename(columns={"topic_share": "share"})
            words = self.results.top_words(topic)
            self._cards[topic] = {
                s: document_cards(docs[docs["source"] == s], words, heading=s) for s in self.columns
            }
        for source, box in self.columns.items():
            box.value = self._cards[topic][source]
