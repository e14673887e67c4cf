"""The reading panels: the selected topic's terms and how each source words it, then its
representative documents, one column per source."""

from __future__ import annotations

import ipywidgets as w
import pandas as pd

from ..options import choices, default
from ..results import METHOD_WEIGHT
from . import charts
from ._cards import document_cards
from ._offline import chart_widget

_METHOD_NAMES = {
    "probability": "probability",
    "lift": "lift",
    "frex": "FREX",
    "relevance": "relevance",
}
_WEIGHT_NAMES = {"frex_weight": "FREX weight", "lam": "relevance weight (lambda)"}


def wording_frame(wording: pd.DataFrame, pair: tuple[str, str]) -> pd.DataFrame:
    """Terms ``pair[0]`` uses more (score = z > 0), then those ``pair[1]`` uses more (z < 0)."""
    first = wording[(wording["source"] == pair[0]) & (wording["other"] == pair[1])]
    second = wording[(wording["source"] == pair[1]) & (wording["other"] == pair[0])]
    return pd.concat(
        [
            pd.DataFrame({"term": first["term"], "score": first["z"]}),
            pd.DataFrame({"term": second["term"], "score": -second["z"]}),
        ],
        ignore_index=True,
    )


class TermsPanel(w.VBox):
    """Top terms of the selected topic under a chosen ranking, and the sources' wording of it.

    ``results`` (a :class:`tm_compare.results.ModelResults`) and ``pair`` may be replaced
    (the topic view does when the weighting or the sources compared change); the next
    :meth:`show_topic` reads them.
    """

    def __init__(self, results, on_pick, *, method: str = default("method")):
        self.results = results
        self._topic = 0
        self.method = w.Dropdown(
            options=[(_METHOD_NAMES[m], m) for m in choices("method")],
            value=method,
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
        self.pair = tuple(results.sources[:2])
        self._specs: dict = {}
        self.wording_chart = chart_widget(self._wording_chart())
        self.method.observe(self._method_changed, names="value")
        self.weight.observe(self._method_changed, names="value")
        super().__init__(
            [w.HBox([self.method, self.weight]), w.HBox([self.terms_chart, self.wording_chart])]
        )

    def _sync_weight_control(self):
        setting = METHOD_WEIGHT.get(self.method.value)
        self.weight.layout.display = "none" if setting is None else None
        if setting is not None:
            with self.weight.hold_trait_notifications():
                self.weight.description = _WEIGHT_NAMES[setting]
                self.weight.value = self.results.settings[setting]

    def _terms_chart(self):
        setting = METHOD_WEIGHT.get(self.method.value)
        results = self.results
        if setting is not None:
            results = results.with_settings(**{setting: float(self.weight.value)})
        frame = results.terms(self.method.value)[["topic", "term", "score", "rank"]]
        return charts.terms_chart(frame, focus=self._topic, title=_METHOD_NAMES[self.method.value])

    def _method_changed(self, change):
        if change["owner"] is self.method:
            self._sync_weight_control()
        self.terms_chart.chart = self._terms_chart()

    def show_topic(self, topic: int) -> None:
        self._topic = topic
        self.terms_chart.params.focus = topic
        # The wording chart has no parameters or selections, so its spec is swapped directly:
        # Altair's schema validation of every new chart would cost more than the rest of a switch
        # (the builder is validated once per view, and in the tests).
        self.wording_chart.spec = self._wording_spec(topic)

    def _wording_chart(self):
        frame = wording_frame(self.results.wording(self._topic, self.pair), self.pair)
        return charts.wording_chart(frame, sources=self.pair)

    def _wording_spec(self, topic) -> dict:
        key = (
            topic,
            self.pair,
            self.results.settings["weighting"],
            self.results.settings["n_terms"],
        )
        if key not in self._specs:
            frame = wording_frame(self.results.wording(topic, self.pair), self.pair)
            chart = charts.wording_chart(frame, sources=self.pair)
            self._specs[key] = chart.to_dict(validate=False)
        return self._specs[key]


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
