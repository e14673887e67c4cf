"""The topic view: one fitted model read side by side across sources, topic by topic."""

from __future__ import annotations

import ipywidgets as w
import traitlets

from .._deprecation import renamed_parameters
from .._validation import param_error
from ..models.quality import topic_badge, topic_quality
from ..options import default
from ..results import ModelResults
from ._cards import esc
from ._labels_panel import LabelsPanel
from ._reading_panel import DocumentsPanel, TermsPanel
from ._sources_panel import SourcesPanel
from ._time_panel import TimePanel


def _section(title: str, hint: str) -> w.HTML:
    return w.HTML(
        f'<h3 style="margin:14px 0 2px 0">{title}</h3>'
        f'<div style="color:#6b7078;font-size:12px;margin-bottom:4px">{hint}</div>'
    )


class TopicView(w.VBox):
    """Read one model: sources side by side, the selected topic's terms and documents, labels.

    One trait, ``topic``, is the selected topic; clicking a topic in any chart or table sets it,
    and every panel follows it. Set it from Python (``view.topic = 3``) to the same effect.
    Every number shown comes from :attr:`results` (a :class:`tm_compare.results.ModelResults`);
    the controls switch its settings (``view.sources_panel.results`` holds the ones on show).

    Parameters
    ----------
    fit : Fit
    prepared : PreparedCorpus
        The prepared corpus the fit was trained on.
    labels : LabelStore, optional
        Show the labelling form, writing to this store.
    method : "probability", "lift", "frex" or "relevance"
        The term ranking shown first (``ranking=`` is its old, deprecated name).
    poll_seconds : float or None
        How often the labelling form looks for colleagues' labels.
    **settings
        Settings of :class:`tm_compare.results.ModelResults`: ``weighting``, ``cluster``,
        ``n_boot``, ``random_state``, ``n_terms``, ``n_docs``, ... (defaults from
        :mod:`tm_compare.options`).
    """

    topic = traitlets.Int(0, help="The selected topic, shared by every panel.")

    @renamed_parameters(ranking="method")
    def __init__(
        self,
        fit,
        prepared,
        labels=None,
        *,
        method: str = default("method"),
        poll_seconds=3.0,
        **settings,
    ):
        self.results = ModelResults(fit, prepared, **settings)
        if len(self.results.sources) < 2:
            raise param_error(
                "TopicView",
                "prepared",
                f"a corpus with sources {self.results.sources}",
                "a prepared corpus with at least two sources to compare",
            )
        self.fit = fit
        self.sources_panel = SourcesPanel(self.results, self._pick)
        self.terms_panel = TermsPanel(self.sources_panel.results, self._pick, method=method)
        self.documents_panel = DocumentsPanel(self.results)
        self.time_panel = TimePanel(self.results, self._narrow)
        self.labels_panel = (
            None if labels is None else LabelsPanel(labels, fit, poll_seconds=poll_seconds)
        )
        self.sources_panel.observe(self._settings_changed, names="results")
        self.sources_panel.contrast.observe(self._settings_changed, names="value")
        self.reading_title = w.HTML()
        self.quality = topic_quality(fit)  # near-empty and near-duplicate flags per topic
        children = [
            w.HTML(
                f'<h2 style="margin:4px 0">Model with k = {int(fit.k)} topics '
                f"(seed {int(fit.random_state)})</h2>"
            ),
            _section("Sources side by side", "Click a topic (a dot or a row) to read it below."),
            self.sources_panel,
            self.reading_title,
            _section(
                "Over time",
                "The topic's share of each source, period by period. Pick dates to narrow "
                "every panel to the articles of those dates.",
            ),
            self.time_panel,
            _section(
                "Terms",
                "The topic's top terms, and the terms each source uses more when it writes on this topic.",
            ),
            self.terms_panel,
            _section("Documents", "Articles most devoted to the topic, per source."),
            self.documents_panel,
        ]
        if self.labels_panel is not None:
            children += [
                _section("Label", "Name the topic; colleagues' labels appear as they save them."),
                self.labels_panel,
            ]
        super().__init__(children, layout=w.Layout(width="100%"))
        self.add_class("tmc-topic-view")
        first = int(self.sources_panel._diff["topic"].iloc[0])
        if first == self.topic:
            self._update_panels(first)
        self.topic = first

    @traitlets.validate("topic")
    def _check_topic(self, proposal):
        value = proposal["value"]
        if not 0 <= value < self.results.k:
            raise param_error(
                "TopicView", "topic", value, f"a topic number from 0 to {self.results.k - 1}"
            )
        return value

    @traitlets.observe("topic")
    def _topic_changed(self, change):
        self._update_panels(change["new"])

    def _update_panels(self, topic: int) -> None:
        self.reading_title.value = (
            f'<div class="tmc-selected" style="font-size:15px;margin-top:10px">'
            f"Reading topic <b>{esc(self.results.captions[topic])}</b>{self._badge(topic)}</div>"
        )
        panels = [self.sources_panel, self.terms_panel, self.documents_panel, self.labels_panel]
        panels.append(self.time_panel)
        for panel in panels:
            if panel is not None:
                panel.show_topic(topic)

    def _badge(self, topic: int) -> str:
        flag = topic_badge(self.quality.iloc[topic])
        return (
            f' <span class="tmc-junk" style="font-size:12px;color:#8a4b00">(junk topic? {esc(flag)})</span>'
            if flag
            else ""
        )

    def _pick(self, topic: int) -> None:
        self.topic = int(topic)

    def _narrow(self, results) -> None:
        """Every panel reads ``results``: the same model on the dates picked over time."""
        self.results = results
        self.documents_panel.results = results
        panel = self.sources_panel
        panel._base = results
        panel._settings_changed({"owner": panel.weighting, "new": panel.weighting.value})
        self._update_panels(self.topic)

    def _settings_changed(self, change):
        self.time_panel.follow(self.sources_panel.results)
        # The wording follows the weighting and the pair of sources compared.
        if self.sources_panel.pair is None:
            return
        self.terms_panel.results = self.sources_panel.results
        self.terms_panel.pair = self.sources_panel.pair
        self.terms_panel.show_topic(self.topic)

    def close(self):
        if getattr(self, "labels_panel", None) is not None:
            self.labels_panel.close()
        super().close()
