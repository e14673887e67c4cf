"""The sources-side-by-side panel: prevalence per source, the difference, the influence check."""

from __future__ import annotations

import ipywidgets as w
import traitlets

from ..options import verdict_rule, verdict_word
from ..results import ModelResults
from ..text.languages import describe_mix, is_only_english
from . import charts
from ._cards import esc
from ._downloads import Downloads, with_params
from ._offline import chart_widget
from ._row_table import RowTable

_NO_CLUSTER = "each document"


class SourcesPanel(w.VBox):
    """Prevalence of every topic per source and their difference; clicks pick a topic.

    The weighting and cluster controls switch the settings of the results on show
    (:attr:`results`, a :class:`tm_compare.results.ModelResults` sharing its tables' cache).

    Parameters
    ----------
    results : ModelResults
        Its settings are the controls' first values.
    on_pick : callable(int)
        Called with the topic clicked in the chart or the topic list.
    topic : int
        The topic in focus when the panel is first drawn.
    downloads : callable, optional
        The topic view's file namer (see :class:`tm_compare.views.topic_view.TopicView`).
    """

    results = traitlets.Instance(ModelResults, help="The results on show (current settings).")

    def __init__(self, results: ModelResults, on_pick, *, topic: int = 0, downloads=None):
        self._base = results
        self._on_pick = on_pick
        self._topic = int(topic)
        self.weighting = w.ToggleButtons(
            options=[("by exposure", "exposure"), ("each article once", "unique")],
            value=results.settings["weighting"],
            description="Count",
            tooltips=[
                "documents weighted by how often readers met them",
                "every article counts once",
            ],
            style={"button_width": "160px"},
        )
        clusters = results.cluster_choices()
        cluster = results.settings["cluster"]
        if cluster is not None and cluster not in clusters:  # another column of the corpus
            clusters.append(cluster)
        self.cluster = w.Dropdown(
            options=[(_NO_CLUSTER, None)] + [(c, c) for c in clusters],
            value=cluster,
            description="Resample by",
            style={"description_width": "initial"},
        )
        self.contrast = w.Dropdown(description="Compare", layout=w.Layout(width="300px"))
        self.warning = w.HTML()
        self.note = w.HTML()
        super().__init__()
        self.results = results
        self.chart = chart_widget(self._build_chart(*self._frames_for_settings()))
        self.chart.selections.observe(self._clicked, names=[charts.TOPIC_PICK])
        self.chart.add_class("tmc-sources")
        self.topic_list = RowTable(
            caption="Topics (click a row to read it)", layout=w.Layout(width="100%")
        )
        self.topic_list.observe(self._row_clicked, names="selected")
        for control in (self.weighting, self.cluster, self.contrast):
            control.observe(self._settings_changed, names="value")
        mix = "" if is_only_english(results.prepared) else describe_mix(results.prepared)
        self.languages = w.HTML(
            mix and f"<small>Languages: {esc(mix.replace(chr(10), '; '))}</small>"
        )
        children = [
            w.HBox(
                [self.weighting, self.cluster, self.contrast],
                layout=w.Layout(flex_flow="row wrap"),
            ),
            self.languages,
            self.warning,
            self.chart,
            self.note,
            self.topic_list,
        ]
        if downloads is not None:
            folder, stem = downloads("sources", self._file_parts)
            self.chart_downloads = Downloads(
                folder, stem, table=self._chart_table, chart=self._spec, name="sources"
            )
            folder, stem = downloads("differences", self._file_parts)
            self.table_downloads = Downloads(
                folder, stem, table=self.differences, name="differences"
            )
            children.insert(3, self.chart_downloads)
            children.append(self.table_downloads)
        self.children = children
        self._refresh_list()

    def _frames_for_settings(self):
        self._pairs = self.results.pairs()
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
        return self.results.chart_frames(self.pair)

    def _build_chart(self, prev, diff):
        self._diff = diff
        a, b = self.pair
        row = self.results.differences().iloc[0]
        cluster = self.results.settings["cluster"]
        resample = "documents" if cluster is None else f"clusters of '{cluster}'"
        note = (
            f"Counting {'by exposure' if row['weighting'] == 'exposure' else 'each article once'}; "
            f"{row['ci_level']:.0%} {row['interval']} intervals from {row['n_boot']} bootstrap "
            f"replicates resampling {resample}. {verdict_rule(row['fdr'])} "
            "Topics ordered by difference."
        )
        self._update_warning()
        return charts.source_chart(
            prev, diff, focus=self._topic, contrast=f"{a} minus {b}", note=note
        )

    def _update_warning(self):
        if self.results.settings["cluster"] is None:  # no clusters, nothing to check
            self.warning.value = ""
            return
        heavy = self.results.influence()
        flagged = heavy[heavy["flagged"]]
        if flagged.empty:
            self.warning.value = ""
            return
        items = "".join(
            f"<li>{esc(g)} carries {s:.0%} of the weight of '{esc(src)}'</li>"
            for src, g, s in flagged[["source", "group", "share"]].itertuples(index=False)
        )
        threshold = float(flagged["threshold"].iloc[0])
        self.warning.value = (
            f'<div class="tmc-influence" style="border-left:4px solid {charts.WARN};'
            f"background:{charts.WARN_BG};"
            'padding:6px 10px;font-size:12px"><b>One cluster may be driving a source.</b> '
            f"Above the {threshold:.0%} share threshold:<ul style='margin:2px 0'>{items}</ul>"
            "Try counting each article once, or see the cap effect "
            "(<code>view.results.cap_effect()</code>).</div>"
        )

    def _settings_changed(self, change):
        if change["owner"] is self.contrast:
            if change["new"] is None:
                return
            frames = self._frames()
        else:
            self.results = self._base.with_settings(
                weighting=self.weighting.value, cluster=self.cluster.value
            )
            frames = self._frames_for_settings()
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
        shown["verdict"] = [verdict_word(v) for v in diff["clear"]]
        shown = shown[["topic", "name", "estimate", "interval", "p_adjusted", "verdict"]]
        shown.columns = ["topic", "top words", "difference", "interval", "adjusted p", "verdict"]
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
        self._topic = int(topic)
        self.chart.hold_param(charts.FOCUS, self._topic)
        self.topic_list.selected = self._topic

    # --- downloads ---------------------------------------------------------------------------

    def _file_parts(self) -> list[str]:
        a, b = self.pair
        s = self.results.settings
        return [
            f"{a}-minus-{b}",
            s["weighting"],
            f"cluster-{s['cluster'] or 'document'}",
            f"nboot{s['n_boot']}",
            f"seed{s['random_state']}",
        ]

    def differences(self):
        """The differences table of the comparison on show (every topic, with its settings)."""
        a, b = self.pair
        diff = self.results.differences()
        return diff[(diff["source"] == a) & (diff["other"] == b)].reset_index(drop=True)

    def _chart_table(self):
        prev, diff = self._frames()
        return prev.merge(
            diff[["topic", "estimate", "lower", "upper", "clear"]].rename(
                columns={
                    "estimate": "difference",
                    "lower": "diff_lower",
                    "upper": "diff_upper",
                    "clear": "holds_up",
                }
            ),
            on="topic",
        )

    def _spec(self) -> dict:
        return with_params(self.chart.spec, {charts.FOCUS: self._topic})
