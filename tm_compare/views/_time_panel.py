"""The panel of the selected topic over time, per source, and the dates every panel reads."""

from __future__ import annotations

import warnings

import ipywidgets as w
import pandas as pd

from ..compare.over_time import PERIODS
from ..errors import ComparisonError
from . import charts
from ._cards import esc
from ._offline import chart_widget

_WORDS = {"D": "days", "W": "weeks", "M": "months", "Q": "quarters", "Y": "years"}
_AUTO = "auto"  # the dropdown's value for freq=None (a Dropdown shows None as no choice)
#: Period lengths offered, as the options table's ``freq`` takes them (``"auto"``: None).
PERIOD_NAMES = [("as the span suggests", _AUTO), *((_WORDS[p], p) for p in PERIODS)]
_DAYS_OFFERED = 731  # longer spans offer month starts on the date slider
#: Larger corpora draw the panel on request: a bootstrap per source and period takes seconds
#: there (about 9 s for 200,000 documents, 5,000 readers, 18 weeks, 1,000 replicates).
DRAW_AT_ONCE = 50_000


def _note(text: str) -> str:
    return (
        '<div class="tmc-time-note" style="border-left:4px solid #c9ccd1;padding:4px 10px;'
        f'font-size:12px;color:#4b4f56">{esc(text)}</div>'
    )


def date_marks(first: pd.Timestamp, last: pd.Timestamp) -> list[pd.Timestamp]:
    """The dates a range can start or end on: every day, or month starts on long spans."""
    if (last - first).days <= _DAYS_OFFERED:
        return list(pd.date_range(first, last, freq="D"))
    return [first, *pd.date_range(first, last, freq="MS")[1:], last]


class TimePanel(w.VBox):
    """The selected topic's share of each source, period by period, and a range of dates.

    Moving the range calls ``on_window`` with the results of the same model on the documents
    dated inside it (:meth:`tm_compare.results.ModelResults.within`), or with the full results
    when the range covers every date; a range the comparison cannot use (a source without
    documents in it, a single reader) is refused with a note and changes nothing. On corpora of
    more than :data:`DRAW_AT_ONCE` documents the panel waits for a click on its button.

    Parameters
    ----------
    results : ModelResults
        Over every date; :meth:`follow` switches its settings (weighting, cluster).
    on_window : callable(ModelResults)
    topic : int
    """

    def __init__(self, results, on_window, *, topic: int = 0):
        self._full = results
        self._on_window = on_window
        self._topic = topic
        self.window: tuple[pd.Timestamp, pd.Timestamp] | None = None
        self.status = w.HTML()
        super().__init__()
        self.add_class("tmc-time")
        try:
            first, last = results.date_span()
        except ComparisonError as exc:
            self.available = False
            self.status.value = _note(f"No view over time: {exc}")
            self.children = [self.status]
            return
        self.available = True
        self._span = (first, last)
        if len(results.prepared) <= DRAW_AT_ONCE:
            self.draw()
            return
        self.start = w.Button(
            description="Draw the topic over time",
            tooltip="a bootstrap per source and period: a few seconds on this corpus",
            layout=w.Layout(width="260px"),
        )
        self.start.on_click(lambda _: self.draw())
        self.children = [self.start]

    def draw(self) -> None:
        """Build the controls and the chart (at once on small corpora, on request on large)."""
        if hasattr(self, "chart"):
            return
        marks = date_marks(*self._span)
        self.period = w.Dropdown(
            options=PERIOD_NAMES,
            value=self._full.settings["freq"] or _AUTO,
            description="Periods",
            layout=w.Layout(width="260px"),
        )
        self.dates = w.SelectionRangeSlider(
            options=[(f"{d:%d %b %Y}", d) for d in marks],
            index=(0, len(marks) - 1),
            description="Dates",
            continuous_update=False,
            layout=w.Layout(width="560px"),
        )
        self.dates.add_class("tmc-dates")
        self.chart = chart_widget(self._build())
        self.chart.add_class("tmc-time-chart")
        self.period.observe(self._redraw, names="value")
        self.dates.observe(self._dates_changed, names="value")
        self.children = [w.HBox([self.period, self.dates]), self.status, self.chart]

    @property
    def results(self):
        """The full-span results at the chosen period length."""
        return self._full.with_settings(freq=self._freq())

    def _freq(self) -> str | None:
        return None if self.period.value == _AUTO else self.period.value

    def _build(self):
        results = self.results
        with warnings.catch_warnings():
            # Thin periods are drawn as such (hollow rings, stated under the title).
            warnings.filterwarnings("ignore", message=".*fewer than .* documents")
            table = results.over_time()
        row = table.iloc[0]
        cluster = results.settings["cluster"]
        resample = "documents" if cluster is None else f"clusters of '{cluster}'"
        note = (
            f"Periods: {_WORDS.get(row['freq'], row['freq'])}; "
            f"{row['ci_level']:.0%} {row['interval']} intervals from {row['n_boot']} bootstrap "
            f"replicates resampling {resample} within each source and period."
        )
        return charts.time_chart(
            results.over_time_frame(),
            focus=self._topic,
            min_period_docs=int(row["min_period_docs"]),
            window=self.window,
            note=note,
        )

    def _redraw(self, change=None):
        self.chart.chart = self._build()

    def follow(self, results) -> None:
        """Use the settings of ``results`` (weighting, cluster) from now on."""
        if not self.available:
            return
        if not hasattr(self, "chart"):  # not drawn yet: its first drawing takes them
            self._full = self._full.with_settings(**results.settings)
            return
        self._full = self._full.with_settings(**{**results.settings, "freq": self._freq()})
        self._redraw()

    def _dates_changed(self, change):
        start, end = change["new"]
        marks = self.dates.options
        whole = (start, end) == (marks[0][1], marks[-1][1])
        try:
            narrowed = self._full if whole else self._full.within(start, end)
            narrowed.differences()  # what every panel needs: refuse here, not half-way
        except ComparisonError as exc:
            self.status.value = _note(f"Those dates cannot be compared: {exc}")
            return
        self.status.value = ""
        self.window = None if whole else (start, end)
        self._on_window(narrowed)
        self._redraw()

    def show_topic(self, topic: int) -> None:
        self._topic = topic
        if hasattr(self, "chart"):
            self.chart.params.focus = topic
