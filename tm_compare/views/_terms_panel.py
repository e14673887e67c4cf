"""The terms panel: the selected topic's term map, its ranked terms, and how each source words it.

The term map places each of the topic's leading terms by how much of the topic it is
(p(term | topic), up) and how much of the term's use falls in this topic (p(topic | term),
across). The ranking, chosen from :data:`tm_compare.options.METHOD_NAMES`, decides which terms are
named and numbered; the terms it passes over stay on the map as faint dots, so a reader sees
what each ranking trades. A ranking's weight is a plain number under "more options".
"""

from __future__ import annotations

import ipywidgets as w
import numpy as np
import pandas as pd

from .._html import esc
from ..options import METHOD_NAMES, choices, default
from ..results import METHOD_WEIGHT
from . import charts
from ._downloads import Downloads, with_params
from ._offline import chart_widget

#: What the weight of each weighted ranking does, as the number field says it.
WEIGHT_HELP = {
    "frex_weight": "weight of exclusivity against frequency (0 to 1)",
    "lam": "weight of p(term | topic) against lift (0 to 1)",
}
#: Terms per topic drawn faint behind the ranked ones (the most frequent).
CONTEXT_TERMS = 20


def wording_frame(wording: pd.DataFrame, pair: tuple[str, str]) -> pd.DataFrame:
    """Terms ``pair[0]`` uses more (score = z > 0), then those ``pair[1]`` uses more (z < 0)."""
    # Plain arrays: boolean indexing of a small frame costs more than the rest of a topic switch.
    source, other = wording["source"].to_numpy(), wording["other"].to_numpy()
    first = (source == pair[0]) & (other == pair[1])
    second = (source == pair[1]) & (other == pair[0])
    term, z = wording["term"].to_numpy(), wording["z"].to_numpy(float)
    return pd.DataFrame(
        {
            "term": np.concatenate([term[first], term[second]]),
            "score": np.concatenate([z[first], -z[second]]),
        }
    )


class TermsPanel(w.VBox):
    """The term map and ranked terms of the selected topic, and the sources' wording of it.

    ``results`` (a :class:`tm_compare.results.ModelResults`) and ``pair`` may be replaced (the
    topic view does when the weighting or the sources compared change); the next
    :meth:`show_topic` reads them.

    Parameters
    ----------
    results : ModelResults
    on_pick : callable(int)
        Called with a topic clicked on the map.
    method : str
        The ranking shown first (one of option ``method``).
    topic : int
        The topic drawn first.
    downloads : callable(str, **parts) -> (folder(), stem()) pair maker, optional
        Given by the topic view: where files go and how they are named.
    """

    def __init__(self, results, on_pick, *, method=default("method"), topic=0, downloads=None):
        self.results = results
        self.pair = tuple(results.sources[:2])
        self._topic = int(topic)
        self._syncing = False
        # topic -> (term list HTML, wording rows) under the settings of ``_prepared_for``
        self._prepared: dict[int, tuple[str, list[dict]]] = {}
        self._prepared_for: tuple = ()
        self.method = w.Dropdown(
            options=[(METHOD_NAMES[m], m) for m in choices("method")],
            value=method,
            description="Rank terms",
            style={"description_width": "initial"},
            layout=w.Layout(width="330px"),
        )
        self.more = w.ToggleButton(
            value=False,
            description="more options",
            tooltip="Show the ranking's weight",
            layout=w.Layout(width="120px"),
        )
        self.weight = w.BoundedFloatText(
            min=0.0,
            max=1.0,
            step=0.05,
            description="weight",
            layout=w.Layout(width="150px"),
        )
        self.method.add_class("tmc-ranking")
        self.more.add_class("tmc-more-options")
        self.weight.add_class("tmc-weight")
        self.weight_help = w.HTML()
        self.options_box = w.HBox([self.weight, self.weight_help])
        self._sync_weight_control()
        self.map_chart = chart_widget(self._map_chart())
        self.map_chart.add_class("tmc-terms")
        self.map_chart.selections.observe(
            lambda ch: ch["new"].value and on_pick(int(ch["new"].value[0]["topic"])),
            names=[charts.TOPIC_PICK],
        )
        self.term_list = w.HTML(layout=w.Layout(width="250px", margin="28px 0 0 12px"))
        self.term_list.add_class("tmc-term-list")
        self._wording_pair = self.pair
        self.wording_chart = chart_widget(self._wording_chart(self._topic))
        self.wording_chart.add_class("tmc-wording")
        self.method.observe(self._method_changed, names="value")
        self.weight.observe(self._method_changed, names="value")
        self.more.observe(self._sync_weight_control, names="value")
        children = [
            w.HBox([self.method, self.more]),
            self.options_box,
            w.HBox(
                [w.VBox([self.map_chart]), self.term_list],
                layout=w.Layout(flex_flow="row wrap"),
            ),
        ]
        if downloads is not None:
            folder, stem = downloads("term-map", self._settings_parts)
            self.map_downloads = Downloads(
                folder, stem, table=self.ranked_terms, chart=self._map_spec, name="term-map"
            )
            folder, stem = downloads("wording", self._wording_parts)
            self.wording_downloads = Downloads(
                folder,
                stem,
                table=self._wording_table,
                chart=self._wording_spec_now,
                name="wording",
            )
            children.insert(3, self.map_downloads)
            children += [self.wording_chart, self.wording_downloads]
        else:
            children.append(self.wording_chart)
        super().__init__(children)
        self.add_class("tmc-terms-panel")
        self._show_list()

    # --- the ranking ------------------------------------------------------------------------

    def _setting(self) -> str | None:
        return METHOD_WEIGHT.get(self.method.value)

    def _sync_weight_control(self, change=None):
        setting = self._setting()
        self.more.layout.display = None if setting else "none"
        self.options_box.layout.display = None if (setting and self.more.value) else "none"
        if setting is not None and (change is None or change["owner"] is self.method):
            self._syncing = True
            try:
                self.weight.value = float(self.results.settings[setting])
            finally:
                self._syncing = False
            self.weight_help.value = (
                f'<span style="font-size:12px;color:#6b7078">{WEIGHT_HELP[setting]}</span>'
            )

    def _ranked_results(self):
        setting = self._setting()
        if setting is None:
            return self.results
        return self.results.with_settings(**{setting: float(self.weight.value)})

    def _terms(self) -> pd.DataFrame:
        return self._ranked_results().terms(self.method.value)

    def _map_chart(self):
        context = self.results.with_settings(n_terms=CONTEXT_TERMS).terms("probability")
        return charts.term_map(
            self._terms(),
            focus=self._topic,
            ranking=METHOD_NAMES[self.method.value],
            context=context,
        )

    def _method_changed(self, change):
        if self._syncing:
            return
        if change["owner"] is self.method:
            self._sync_weight_control(change)
        self.map_chart.chart = self._map_chart()
        self.map_chart.hold_param(charts.FOCUS, self._topic)
        self._show_list()

    # --- the topic ---------------------------------------------------------------------------

    def prepare(self, topic: int) -> tuple[str, list[dict]]:
        """The term list (HTML) and wording rows of ``topic`` under the settings on show, made
        once per topic and settings (kept for :meth:`show_topic`)."""
        settings = (self.results, self.pair, self.method.value, self.weight.value)
        if settings != self._prepared_for:
            self._prepared, self._prepared_for = {}, settings
        if topic not in self._prepared:
            rows = charts.wording_rows(self._wording_frame(topic), self.pair).to_dict("records")
            self._prepared[topic] = (self._list_html(topic), rows)
        return self._prepared[topic]

    def show_topic(self, topic: int) -> None:
        self._topic = int(topic)
        self.map_chart.hold_param(charts.FOCUS, self._topic)
        html, rows = self.prepare(self._topic)
        self.term_list.value = html
        if self.pair != self._wording_pair:  # other sources: other colours and axis title
            self._wording_pair = self.pair
            self.wording_chart.chart = self._wording_chart(self._topic)
        else:
            # Same design, new rows: the browser redraws the bars without rebuilding the chart.
            self.wording_chart.show_rows(rows)

    def ranked_terms(self, topic: int | None = None) -> pd.DataFrame:
        """The ranked terms of ``topic`` (default: the selected one), as the list beside the map
        shows them."""
        topic = self._topic if topic is None else topic
        table = self._terms()
        table = table[table["topic"] == topic]
        return table[
            [
                "topic",
                "rank",
                "term",
                "score",
                "probability",
                "share_of_term",
                "method",
                "parameter",
            ]
        ].reset_index(drop=True)

    def _show_list(self) -> None:
        self.term_list.value = self.prepare(self._topic)[0]

    def _list_html(self, topic: int) -> str:
        rows = "".join(
            f'<tr><td style="text-align:right;color:#6b7078;padding-right:6px">{r.rank}</td>'
            f'<td class="tmc-term">{esc(r.term)}</td>'
            f'<td style="text-align:right;padding-left:8px">{r.probability:.1%}</td>'
            f'<td style="text-align:right;padding-left:8px">{r.share_of_term:.0%}</td></tr>'
            for r in self.ranked_terms(topic).itertuples(index=False)
        )
        return (
            f'<div style="font-size:12px"><div style="font-weight:600;margin-bottom:2px">'
            f"Topic {topic}, ranked {esc(METHOD_NAMES[self.method.value])}</div>"
            '<table style="border-collapse:collapse"><tr style="color:#6b7078">'
            '<th></th><th style="text-align:left">term</th>'
            '<th style="padding-left:8px">of topic</th>'
            '<th style="padding-left:8px">of term\'s use</th></tr>'
            f"{rows}</table></div>"
        )

    def _settings_parts(self) -> list[str]:
        setting = self._setting()
        weight = "" if setting is None else f"w{float(self.weight.value):g}"
        return [f"topic{self._topic}", f"{self.method.value}{weight}"]

    def _map_spec(self) -> dict:
        return with_params(self.map_chart.spec, {charts.FOCUS: self._topic})

    # --- the sources' wording ----------------------------------------------------------------

    def _wording_parts(self) -> list[str]:
        return [f"topic{self._topic}", f"{self.pair[0]}-vs-{self.pair[1]}"]

    def _wording_table(self) -> pd.DataFrame:
        return self.results.wording(self._topic, self.pair)

    def _wording_spec_now(self) -> dict:
        return self._wording_chart(self._topic).to_dict()

    def _wording_frame(self, topic) -> pd.DataFrame:
        return wording_frame(self.results.wording(topic, self.pair), self.pair)

    def _wording_chart(self, topic):
        return charts.wording_chart(self._wording_frame(topic), sources=self.pair)
