"""The sources-side-by-side panel: prevalence per source, the difference, the influence check."""

from __future__ import annotations

import ipywidgets as w

from . import charts
from ._cards import esc
from ._offline import chart_widget
from ._row_table import RowTable

_NO_CLUSTER = "each document"


class SourcesPanel(w.VBox):
    """Prevalence of every topic per source and their difference; clicks pick a topic.

    Parameters
    ----------
    tables : ModelTables
    on_pick : callable(int)
        Called with the topic clicked in the chart or the topic list.
    weighting : "exposure" or "unique"
    cluster : column resampled by the bootstrap, or None for documents
    """

    def __init__(self, tables, on_pick, *, weighting="exposure", cluster="group"):
        self.tables = tables
        self._on_pick = on_pick
        self._topic = 0
        clusters = tables.cluster_choices()
        if cluster not in clusters:
            cluster = clusters[0] if clusters else None
        self.weighting = w.ToggleButtons(
            options=[("by exposure", "exposure"), ("each article once", "unique")],
            value=weighting,
            description="Count",
            tooltips=[
                "documents weighted by how often readers met them",
                "every article counts once",
            ],
            style={"button_width": "160px"},
        )
        self.cluster = w.Dropdown(
            options=[(_NO_CLUSTER, None)] + [(c, c) for c in clusters],
            value=cluster,
            description="Resample by",
            style={"description_width": "initial"},
        )
        self.contrast = w.Dropdown(description="Compare", layout=w.Layout(width="300px"))
        self.warning = w.HTML()
        self.note = w.HTML()
        self.chart = chart_widget(self._build_chart(*self._frames_for_default()))
        self.chart.selections.observe(self._clicked, names=[charts.TOPIC_PICK])
        self.chart.add_class("tmc-sources")
        self.topic_list = RowTable(
            caption="Topics (click a row to read it)", layout=w.Layout(width="100%")
        )
        self.topic_list.observe(self._row_clicked, names="selected")
        for control in (self.weighting, self.cluster, self.contrast):
            control.observe(self._settings_changed, names="value")
        super().__init__(
            [
                w.HBox([self.weighting, self.cluster, self.contrast]),
                self.warning,
                self.chart,
                self.note,
                self.topic_list,
            ]
        )
        self._refresh_list()

    def _frames_for_default(self):
        self._pairs = self.tables.pairs(self.weighting.value, self.cluster.value)
        kept = self.pair if self.pair in self._pairs else self._pairs[0]
        # Options are indexes into the pairs: a Dropdown compares tuple values badly.
        self.contrast.options = [(f"{a} minus {b}", i) for i, (a, b) in enumerate(self._pairs)]
        self.contrast.value = self._pairs.index(kept)
        return self._frames()

    @property
    def pair(self) -> tuple[str, str] | None:
        """The two sources compared, (source, other)."""
        pairs = getattr(self, "_pairs", [])
        return pairs[self.contrast.value] if pairs and self.contrast.value is not None else None

    def _frames(self):
        return self.tables.chart_frames(self.weighting.value, self.cluster.value, self.pair)

    def _build_chart(self, prev, diff):
        self._diff = diff
        a, b = self.pair
        tables = self.tables.comparison(self.weighting.value, self.cluster.value)
        row = tables["differences"].iloc[0]
        resample = (
            "documents" if self.cluster.value is None else f"clusters of '{self.cluster.value}'"
        )
        note = (
            f"Counting {'by exposure' if self.weighting.value == 'exposure' else 'each article once'}; "
            f"{row['ci_level']:.0%} {row['interval']} intervals from {row['n_boot']} bootstrap "
            f"replicates resampling {resample}. Red: adjusted p <= {row['fdr']} "
            "(Benjamini-Hochberg across topics). Topics ordered by difference."
        )
        self._update_warning(tables["influence"])
        return charts.source_chart(
            prev, diff, focus=self._topic, contrast=f"{a} minus {b}", note=note
        )

    def _update_warning(self, heavy):
        if heavy is None or not heavy["flagged"].any():
            self.warning.value = ""
            return
        flagged = heavy[heavy["flagged"]]
        items = "".join(
            f"<li>{esc(g)} carries {s:.0%} of the weight of '{esc(src)}'</li>"
            for src, g, s in flagged[["source", "group", "share"]].itertuples(index=False)
        )
        threshold = float(flagged["threshold"].iloc[0])
        self.warning.value = (
            '<div class="tmc-influence" style="border-left:4px solid #b5523b;background:#fbeeea;'
            'padding:6px 10px;font-size:12px"><b>One cluster may be driving a source.</b> '
            f"Above the {threshold:.0%} share threshold:<ul style='margin:2px 0'>{items}</ul>"
            "Try counting each article once, or cap cluster shares with "
            "<code>comparison.cap_effect</code>.</div>"
        )

    def _settings_changed(self, change):
        if change["owner"] is self.contrast and change["new"] is None:
            return
        frames = self._frames() if change["owner"] is self.contrast else self._frames_for_default()
        self.chart.chart = self._build_chart(*frames)
        self._refresh_list()

    def _refresh_list(self):
        diff = self._diff
        shown = diff[["topic", "name", "estimate", "lower", "upper", "p_adjusted"]].copy()
        shown["estimate"] = shown["estimate"].map("{:+.3f}".format)
        shown["interval"] = [
            f"[{lo:+.3f}, {hi:+.3f}]" for lo, hi in zip(diff["lower"], diff["upper"], strict=True)
        ]
        shown["p_adjusted"] = shown["p_adjusted"].map("{:.3g}".format)
        shown = shown[["topic", "name", "estimate", "interval", "p_adjusted"]]
        shown.columns = ["topic", "top words", "difference", "interval", "adjusted p"]
        self.topic_list.show_frame(shown, diff["topic"].tolist())
        self.topic_list.selected = self._topic

    def _clicked(self, change):
        value = change["new"].value
        if value:
            self._on_pick(int(value[0]["topic"]))

    def _row_clicked(self, change):
        # show_topic moves the highlight too; only a click on another row is a pick
        if change["new"] is not None and int(change["new"]) != self._topic:
            self._on_pick(int(change["new"]))

    def show_topic(self, topic: int) -> None:
        self._topic = topic
        self.chart.params.focus = topic
        self.topic_list.selected = topic
