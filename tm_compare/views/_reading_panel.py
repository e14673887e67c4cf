"""The reading panels: the selected topic's terms and how each source words it, then its
representative documents, one column per source."""

from __future__ import annotations

import ipywidgets as w

from ..results import RANKINGS
from . import charts
from ._cards import document_cards
from ._offline import chart_widget

_RANKING_NAMES = {
    "probability": "probability",
    "lift": "lift",
    "frex": "FREX",
    "relevance": "relevance",
}


class TermsPanel(w.VBox):
    """Top terms of the selected topic under a chosen ranking, and the sources' wording of it."""

    def __init__(self, tables, on_pick, *, ranking="probability"):
        self.tables = tables
        self._topic = 0
        self.ranking = w.Dropdown(
            options=[(_RANKING_NAMES[r], r) for r in RANKINGS],
            value=ranking,
            description="Rank terms by",
            style={"description_width": "initial"},
        )
        self.weight = w.FloatSlider(
            min=0.0,
            max=1.0,
            step=0.05,
            continuous_update=False,
            style={"description_width": "initial"},
        )
        self._sync_weight_control()
        self.terms_chart = chart_widget(self._terms_chart())
        self.terms_chart.add_class("tmc-terms")
        self.terms_chart.selections.observe(
            lambda ch: ch["new"].value and on_pick(int(ch["new"].value[0]["topic"])),
            names=[charts.TOPIC_PICK],
        )
        self.pair = tuple(tables.sources[:2])
        self._specs: dict = {}
        self.wording_chart = chart_widget(self._wording_chart())
        self.ranking.observe(self._ranking_changed, names="value")
        self.weight.observe(self._ranking_changed, names="value")
        super().__init__(
            [w.HBox([self.ranking, self.weight]), w.HBox([self.terms_chart, self.wording_chart])]
        )

    def _sync_weight_control(self):
        spec = RANKINGS[self.ranking.value]
        self.weight.layout.display = "none" if spec is None else None
        if spec is not None:
            with self.weight.hold_trait_notifications():
                self.weight.description, self.weight.value = spec

    def _weight(self):
        return None if RANKINGS[self.ranking.value] is None else float(self.weight.value)

    def _terms_chart(self):
        frame = self.tables.terms(self.ranking.value, self._weight())
        return charts.terms_chart(
            frame, focus=self._topic, title=_RANKING_NAMES[self.ranking.value]
        )

    def _ranking_changed(self, change):
        if change["owner"] is self.ranking:
            self._sync_weight_control()
        self.terms_chart.chart = self._terms_chart()

    def show_topic(self, topic: int) -> None:
        self._topic = topic
        self.terms_chart.params.focus = topic
        # The wording chart has no parameters or selections, so its spec is swapped directly:
        # Altair's schema validation of every new chart would cost more than the rest of a switch
        # (the builder is validated once per view, and in the tests).
        self.wording_chart.spec = self._wording_spec(topic, self.pair)

    def _wording_chart(self):
        return charts.wording_chart(self.tables.wording(self._topic, self.pair), sources=self.pair)

    def _wording_spec(self, topic, pair) -> dict:
        key = (topic, pair)
        if key not in self._specs:
            chart = charts.wording_chart(self.tables.wording(topic, pair), sources=pair)
            self._specs[key] = chart.to_dict(validate=False)
        return self._specs[key]


class DocumentsPanel(w.HBox):
    """Representative documents of the selected topic, one column per source."""

    def __init__(self, tables):
        self.tables = tables
        self.columns = {
            s: w.HTML(layout=w.Layout(flex="1 1 0", min_width="220px", margin="0 8px 0 0"))
            for s in tables.sources
        }
        super().__init__(list(self.columns.values()), layout=w.Layout(width="100%"))

    def show_topic(self, topic: int) -> None:
        docs = self.tables.documents(topic)
        words = self.tables.emphasis_terms(topic)
        for source, box in self.columns.items():
            box.value = document_cards(docs[source], words, heading=f"{source}")
