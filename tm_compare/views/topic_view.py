"""The topic view: one fitted model read side by side across sources, topic by topic."""

from __future__ import annotations

import asyncio
from pathlib import Path

import ipywidgets as w
import traitlets

from .._deprecation import renamed_parameters
from .._validation import param_error
from ..options import default
from ._burst import Courier, one_burst
from ._cards import esc
from ._downloads import file_stem

#: Where downloads go when the view knows no project: this folder under the working directory.
DOWNLOADS_FOLDER = "tm_compare_downloads"
#: Seconds the kernel waits after a change before it prepares other topics (the browser paints
#: the change first).
PREPARE_AFTER = 0.25


def _section(title: str, hint: str) -> w.HTML:
    return w.HTML(
        f'<h3 style="margin:14px 0 2px 0">{title}</h3>'
        f'<div style="color:#6b7078;font-size:12px;margin-bottom:4px">{hint}</div>'
    )


def _project_downloads(labels) -> Path | None:
    """The project's report folder when the label store is a project's ``labels.sqlite``."""
    url = getattr(labels, "_url", None)
    database = getattr(url, "database", None)
    if not database or getattr(url, "drivername", "").split("+")[0] != "sqlite":
        return None
    folder = Path(database).parent
    return folder / "report" if (folder / "manifest.json").exists() else None


class TopicView(w.VBox):
    """Read one model: sources side by side, the selected topic's terms and documents, labels.

    One trait, ``topic``, is the selected topic and its only owner: clicking a topic in any
    chart or table sets it, and every panel of :attr:`panels` draws it, on first display as after
    every change. Set it from Python (``view.topic = 3``) to the same effect. Every number shown
    comes from :attr:`results` (a :class:`tm_compare.results.ModelResults`); the controls switch
    its settings (``view.sources_panel.results`` holds the ones on show).

    Parameters
    ----------
    fit : Fit
    prepared : PreparedCorpus
        The prepared corpus the fit was trained on.
    labels : LabelStore, optional
        Show the labelling form, writing to this store.
    topic : int, optional
        The topic shown first (default: the one whose difference between sources is largest).
    method : "probability", "lift", "frex" or "relevance"
        The term ranking shown first (``ranking=`` is its old, deprecated name).
    poll_seconds : float or None
        How often the labelling form looks for colleagues' labels.
    downloads : path or Project, optional
        Folder the download buttons write to (a Project: its ``report`` folder). Default: the
        project of ``labels`` when it is a project's store, else ``./tm_compare_downloads``.
    **settings
        Settings of :class:`tm_compare.results.ModelResults`: ``weighting``, ``cluster``,
        ``n_boot``, ``random_state``, ``n_terms``, ``n_docs``, ... (defaults from
        :mod:`tm_compare.options`).

    Adding a panel
    --------------
    A panel is any widget with a ``show_topic(topic: int)`` method; :meth:`add_panel` puts it
    under a heading and draws the selected topic in it at once and after every change. A panel
    may also have ``prepare(topic: int)``, which computes what ``show_topic`` will need and
    shows nothing: in a running kernel the view calls it for every other topic, one topic per
    turn of the kernel's event loop while it has nothing else to do, so that a later switch only
    sends what is ready (a click waits for at most one topic's preparation).
    """

    topic = traitlets.Int(0, help="The selected topic, shared by every panel.")

    @renamed_parameters(ranking="method")
    def __init__(
        self,
        fit,
        prepared,
        labels=None,
        *,
        topic: int | None = None,
        method: str = default("method"),
        poll_seconds=3.0,
        downloads=None,
        **settings,
    ):
        from ..models.quality import topic_quality
        from ..results import ModelResults
        from ._documents_panel import DocumentsPanel
        from ._find_panel import FindPanel
        from ._sources_panel import SourcesPanel
        from ._terms_panel import TermsPanel
        from ._time_panel import TimePanel

        self.results = ModelResults(fit, prepared, **settings)
        if len(self.results.sources) < 2:
            raise param_error(
                "TopicView",
                "prepared",
                f"a corpus with sources {self.results.sources}",
                "a prepared corpus with at least two sources to compare",
            )
        self.fit = fit
        if topic is not None:
            self._check(topic)
        self.panels: list = []
        # Carries each change's widget updates to the browser in one message (see _burst.py).
        self._courier = Courier()
        self._to_prepare: list[int] = []
        self._preparing = False
        folder = downloads.folder("report") if hasattr(downloads, "folder") else downloads
        self.downloads_folder = w.Text(
            value=str(folder or _project_downloads(labels) or Path.cwd() / DOWNLOADS_FOLDER),
            description="Downloads go to",
            style={"description_width": "initial"},
            layout=w.Layout(width="100%", max_width="640px"),
        )
        self.downloads_folder.add_class("tmc-downloads-folder")
        if topic is None:  # the most different topic of the first comparison
            first = int(self.results.chart_frames()[1]["topic"].iloc[0])
        else:
            first = int(topic)
        # Every panel is built on the first topic, so its first drawing is already right.
        self.sources_panel = SourcesPanel(
            self.results, self._pick, topic=first, downloads=self._namer
        )
        self.terms_panel = TermsPanel(
            self.sources_panel.results,
            self._pick,
            method=method,
            topic=first,
            downloads=self._namer,
        )
        self.find_panel = FindPanel(self.results, self._pick, self._ranking, downloads=self._namer)
        for control in (self.terms_panel.method, self.terms_panel.weight):
            # a word's rank depends on the ranking: a search on show follows it
            control.observe(lambda _change: self.find_panel.search(), names="value")
        self.documents_panel = DocumentsPanel(self.results)
        self.time_panel = TimePanel(self.results, self._narrow, topic=first)
        self.quality = topic_quality(fit)  # near-empty and near-duplicate flags per topic
        self.labels_panel = None
        if labels is not None:
            from ._labels_panel import LabelsPanel

            self.labels_panel = LabelsPanel(labels, fit, poll_seconds=poll_seconds)
        self.sources_panel.observe(self._settings_changed, names="results")
        self.sources_panel.contrast.observe(self._settings_changed, names="value")
        self.reading_title = w.HTML()
        self.reading_title.add_class("tmc-reading-title")
        self.badges = w.HBox()  # small marks beside the heading (added by other panels)
        self.header = w.HBox(
            [
                w.HTML(
                    f'<h2 style="margin:4px 0">Model with k = {int(fit.k)} topics '
                    f"(seed {int(fit.random_state)})</h2>"
                ),
                self.badges,
            ],
            layout=w.Layout(align_items="center"),
        )
        super().__init__(
            [self._courier, self.header, self.find_panel, self.downloads_folder],
            layout=w.Layout(width="100%"),
        )
        self.add_class("tmc-topic-view")
        self.add_panel(
            self.sources_panel,
            "Sources side by side",
            "Click a topic (a dot or a row) to read it below.",
        )
        self.children = [*self.children, self.reading_title]
        self.panels.append(self.find_panel)
        self.add_panel(
            self.time_panel,
            "Over time",
            "The topic's share of each source, period by period. Pick dates to narrow every "
            "panel to the articles of those dates.",
        )
        self.add_panel(
            self.terms_panel,
            "Terms",
            "Where the topic's leading terms sit, the ranking you choose, and the terms each "
            "source uses more when it writes on this topic.",
        )
        self.add_panel(
            self.documents_panel, "Documents", "Articles most devoted to the topic, per source."
        )
        if self.labels_panel is not None:
            self.add_panel(
                self.labels_panel,
                "Label",
                "Name the topic; colleagues' labels appear as they save them.",
            )
        if first == self.topic:
            self._update_panels(first)
        self.topic = first
        for control in (self.terms_panel.method, self.terms_panel.weight):
            control.observe(lambda _change: self._prepare_others(), names="value")

    # --- panels ------------------------------------------------------------------------------

    def add_panel(self, panel, title: str | None = None, hint: str = "") -> None:
        """Show ``panel`` (a widget with ``show_topic(topic)``) at the end of the view, under
        ``title``; it draws the selected topic now and after every change."""
        parts = [] if title is None else [_section(esc(title), esc(hint))]
        self.panels.append(panel)
        self.children = [*self.children, *parts, panel]
        if hasattr(self, "_shown"):
            panel.show_topic(self.topic)

    def _check(self, value) -> int:
        if isinstance(value, bool) or not 0 <= int(value) < self.results.k:
            raise param_error(
                "TopicView", "topic", value, f"a topic number from 0 to {self.results.k - 1}"
            )
        return int(value)

    @traitlets.validate("topic")
    def _check_topic(self, proposal):
        return self._check(proposal["value"])

    @traitlets.observe("topic")
    def _topic_changed(self, change):
        self._update_panels(change["new"])

    def _update_panels(self, topic: int) -> None:
        self._shown = topic
        # Every panel's changes reach the browser together, once all panels have made them.
        with one_burst(self, self._courier):
            self.reading_title.value = (
                f'<div class="tmc-selected" style="font-size:15px;margin-top:10px">'
                f"Reading topic <b>{esc(self.results.captions[topic])}</b>"
                f"{self._badge(topic)}</div>"
            )
            for panel in self.panels:
                panel.show_topic(topic)
        self._prepare_others()

    # --- topics prepared ahead -----------------------------------------------------------------

    def _prepare_others(self) -> None:
        """Queue every topic for the panels' ``prepare``, to run while the kernel is idle."""
        self._to_prepare = [t for t in range(self.results.k) if t != self.topic]
        if self._preparing:
            return
        try:
            loop = asyncio.get_running_loop()
        except RuntimeError:  # no kernel event loop (a script, a test): prepare nothing ahead
            return
        self._preparing = True
        loop.call_later(PREPARE_AFTER, self._prepare_next, loop)

    def _prepare_next(self, loop) -> None:
        if not self._to_prepare or getattr(self, "_closed", False):
            self._preparing = False
            return
        topic = self._to_prepare.pop(0)
        try:
            for panel in self.panels:
                if hasattr(panel, "prepare"):
                    panel.prepare(topic)
        except Exception:  # noqa: BLE001  (shown, with its message, when the topic is picked)
            self._preparing, self._to_prepare = False, []
            return
        loop.call_soon(self._prepare_next, loop)

    def _badge(self, topic: int) -> str:
        from ..models.quality import topic_badge

        flag = topic_badge(self.quality.iloc[topic])
        return (
            f' <span class="tmc-junk" style="font-size:12px;color:#7a5c12">(junk topic? {esc(flag)})</span>'
            if flag
            else ""
        )

    def _pick(self, topic: int) -> None:
        self.topic = int(topic)

    def _narrow(self, results) -> None:
        """Every panel reads ``results``: the same model on the dates picked over time."""
        self.results = results
        self.documents_panel.results = results
        self.find_panel.results = results
        panel = self.sources_panel
        panel._base = results
        panel._settings_changed({"owner": panel.weighting, "new": panel.weighting.value})
        self._update_panels(self.topic)

    def _ranking(self):
        """The terms panel's ranking and its weight, for the word search."""
        from ..results import METHOD_WEIGHT

        method = self.terms_panel.method.value
        setting = METHOD_WEIGHT.get(method)
        return method, ({} if setting is None else {setting: float(self.terms_panel.weight.value)})

    def _namer(self, what: str, parts):
        """(folder(), stem()) for the downloads of one table or chart: the file name holds the
        model, what is shown and ``parts()`` (the settings that shaped it)."""

        def stem():
            return file_stem(what, f"k{int(self.fit.k)}-seed{int(self.fit.random_state)}", *parts())

        return (lambda: Path(self.downloads_folder.value)), stem

    def _settings_changed(self, change):
        self.time_panel.follow(self.sources_panel.results)
        # The wording follows the weighting and the pair of sources compared.
        if self.sources_panel.pair is None:
            return
        with one_burst(self.terms_panel, self._courier):
            self.terms_panel.results = self.sources_panel.results
            self.terms_panel.pair = self.sources_panel.pair
            self.terms_panel.show_topic(self.topic)
        self._prepare_others()

    def close(self):
        self._closed = True
        if getattr(self, "labels_panel", None) is not None:
            self.labels_panel.close()
        super().close()
