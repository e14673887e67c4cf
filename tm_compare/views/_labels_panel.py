"""The labelling form: name a topic, see colleagues' labels, conflicts and agreement.

Everything is read from and written to a :class:`tm_compare.labels.LabelStore`; colleagues'
labels appear without re-running the cell because the panel asks the store for rows newer than
its cursor (``store.poll``) every few seconds and whenever the topic changes. All label text is
escaped before it is shown.
"""

from __future__ import annotations

import math
import threading

import ipywidgets as w
import pandas as pd

from .._html import esc, table
from ..errors import LabelConflictError, TmCompareError
from ..labels.store import LabelStore

_TABLE = "border-collapse:collapse;font-size:12px;margin:2px 0 8px 0"
_CELL = "padding:2px 8px;border-top:1px solid #e3e6ea;text-align:left;vertical-align:top"


def label_table(frame: pd.DataFrame, columns: list[str]) -> str:
    """Rows of a label frame as an HTML table, every value escaped."""
    if frame.empty:
        return '<div style="color:#6b7078;font-size:12px">None yet.</div>'
    shown = frame.reindex(columns=columns).map(_cell)
    return table(shown, attrs={"style": _TABLE}, cell_style=_CELL)


def _cell(value):
    return f"{value:.2f}" if isinstance(value, float) and not math.isnan(value) else value


class LabelsPanel(w.VBox):
    """A form to label the selected topic, with the topic's labels, history and agreement.

    Parameters
    ----------
    store : LabelStore
    fit : Fit
        The model being labelled (its fingerprint keys the labels).
    poll_seconds : float or None
        How often to look for colleagues' new labels; None only looks on interaction.
    """

    def __init__(self, store: LabelStore, fit, *, poll_seconds: float | None = 3.0):
        self.store = store
        self.fit = fit
        self._topic = 0
        self._base: int | None = None
        self._cursor = 0
        self._data: dict | None = None
        self._lock = threading.RLock()
        self._stop = threading.Event()
        narrow = w.Layout(width="340px")
        self.analyst = w.Text(value=store.analyst or "", description="Analyst", layout=narrow)
        self.name = w.Text(
            description="Name", placeholder="a short name for the topic", layout=narrow
        )
        self.note = w.Textarea(
            description="Note",
            placeholder="why this name; doubts",
            layout=w.Layout(width="340px", height="60px"),
        )
        self.verdict = w.Dropdown(description="Verdict", layout=narrow)
        self.category = w.Dropdown(description="Category", layout=narrow)
        self.confidence = w.FloatSlider(
            value=0.7,
            min=0,
            max=1,
            step=0.05,
            description="Confidence",
            readout_format=".2f",
            layout=narrow,
        )
        self.save = w.Button(description="Save label", button_style="primary", icon="check")
        self.save.on_click(lambda _: self.save_label())
        self.status = w.HTML()
        self.conflict = w.HTML()
        self.keep_mine = w.Button(description="Save mine over it", layout=w.Layout(display="none"))
        self.keep_mine.on_click(lambda _: self.save_label(force=True))
        self.labels = w.HTML()
        self.history = w.HTML()
        self.agreement = w.HTML()
        form = w.VBox(
            [
                self.analyst,
                self.name,
                self.note,
                self.verdict,
                self.category,
                self.confidence,
                w.HBox([self.save, self.keep_mine]),
                self.status,
                self.conflict,
            ],
            layout=w.Layout(width="380px"),
        )
        reading = w.VBox(
            [self.labels, self.history, self.agreement],
            layout=w.Layout(flex="1 1 auto", overflow="auto", max_height="420px"),
        )
        super().__init__([w.HBox([form, reading])])
        self.add_class("tmc-labels")
        self._load_choices()
        if poll_seconds:
            threading.Thread(
                target=self._poll_loop, args=(float(poll_seconds),), daemon=True
            ).start()

    # --- reading the store ----------------------------------------------------------------

    def _writer_store(self) -> LabelStore:
        who = self.analyst.value.strip()
        if who and who != self.store.analyst:
            # A store object writes as one analyst; the form may name another.
            self.store = self.store.as_analyst(who)
        return self.store

    def _load_choices(self):
        self.verdict.options = [("(none)", None)] + [(v, v) for v in self.store.verdicts]
        cats = self.store.codebook()["category"].tolist()
        self.category.options = [("(none)", None)] + [(c, c) for c in cats]

    def show_topic(self, topic: int) -> None:
        """Fill the form with this analyst's label of ``topic`` and show the topic's labels."""
        with self._lock:
            self._topic = int(topic)
            self.conflict.value = ""
            self.keep_mine.layout.display = "none"
            self.status.value = ""
            self._fill_form()
            self.refresh()

    def _fill_form(self):
        own = self.store.label(self.fit, self._topic) if self.store.analyst else None
        self._base = None if own is None else own.version
        with self.hold_trait_notifications():
            self.name.value = "" if own is None or own.retracted else own.name
            self.note.value = "" if own is None or own.retracted else own.note
            self.verdict.value = None if own is None else own.verdict
            self.category.value = None if own is None else own.category
            if own is not None and own.confidence is not None:
                self.confidence.value = own.confidence

    def _snapshot(self, force: bool = False) -> bool:
        """Re-read the model's labels if the store changed since the last look; True if it did.

        One cheap query asks for rows newer than the cursor (and one whether a blind round is
        open); the full tables are read again only when something changed.
        """
        news = self.store.poll(self._cursor, fit=self.fit)
        blind = self.store.in_blind_round(self.fit)
        if (
            not force
            and self._data is not None
            and news.labels.empty
            and blind == self._data["blind"]
        ):
            return False
        self._cursor = news.cursor
        self._data = {
            "blind": blind,
            "current": self.store.current(self.fit),
            "history": self.store.history(self.fit),
            "agreement": None if blind else self.store.agreement(self.fit),
        }
        return True

    def refresh(self, force: bool = False) -> None:
        """Show the topic's labels, history and agreement (re-read from the store if changed)."""
        with self._lock:
            self._snapshot(force)
            self._render()

    def _render(self) -> None:
        topic, data = self._topic, self._data
        current = data["current"][data["current"]["topic"] == topic]
        who = "your own: a blind round is open" if data["blind"] else "everyone's"
        self.labels.value = f"<b>Current labels of topic {topic}</b> ({who})" + label_table(
            current, ["analyst", "name", "verdict", "category", "confidence", "note"]
        )
        history = data["history"]
        history = history[history["topic"] == topic].tail(12)
        self.history.value = "<b>History</b> (latest 12 changes)" + label_table(
            history, ["created_at", "analyst", "version", "name", "verdict", "retracted"]
        )
        self.agreement.value = self._agreement_html(topic, data["agreement"])

    def _agreement_html(self, topic: int, table) -> str:
        if table is None:
            return (
                '<div style="font-size:12px;color:#6b7078"><b>Blind round open:</b> you see only '
                "your own labels; agreement appears when the round is closed.</div>"
            )
        rows = table[(table["scope"] == "overall") | (table["topic"] == topic)].copy()
        rows["scope"] = [
            "all topics" if s == "overall" else f"topic {topic}" for s in rows["scope"]
        ]
        return "<b>Agreement</b> (Krippendorff's alpha, nominal)" + label_table(
            rows, ["field", "scope", "alpha", "percent_agreement", "n_coders", "n_units"]
        )

    def check_for_news(self) -> bool:
        """Show colleagues' labels saved since the last look; True if there were any."""
        with self._lock:
            if not self._snapshot():
                return False
            self._render()
            return True

    def _poll_loop(self, seconds: float) -> None:
        while not self._stop.wait(seconds):
            try:
                self.check_for_news()
            except TmCompareError:
                continue  # a store briefly locked or unreachable: try again next time

    def close(self):
        self._stop.set()
        super().close()

    # --- writing --------------------------------------------------------------------------

    def save_label(self, force: bool = False) -> None:
        """Save the form as a new version of this analyst's label of the selected topic."""
        with self._lock:
            try:
                before = self.store
                store = self._writer_store()
                if force or store is not before:
                    # Keeping one's own version over a colleague's, or writing as another
                    # analyst: the edit is based on what is stored now.
                    own = store.label(self.fit, self._topic)
                    self._base = None if own is None else own.version
                saved = store.save(
                    self.fit,
                    self._topic,
                    name=self.name.value,
                    note=self.note.value,
                    verdict=self.verdict.value,
                    category=self.category.value,
                    confidence=float(self.confidence.value),
                    based_on=self._base,
                )
            except LabelConflictError as exc:
                self._show_conflict(exc)
                return
            except TmCompareError as exc:
                self.status.value = f'<span style="color:#b5523b">{esc(exc)}</span>'
                return
            self._base = saved.version
            self.conflict.value = ""
            self.keep_mine.layout.display = "none"
            self.status.value = (
                f'<span style="color:#1b6f80">Saved as version {saved.version}.</span>'
            )
            self.refresh(force=True)

    def _show_conflict(self, exc: LabelConflictError) -> None:
        fields = ["version", "name", "verdict", "category", "confidence", "note"]
        both = pd.DataFrame(
            [
                {"which": "stored now", **{f: (exc.current or {}).get(f) for f in fields}},
                {"which": "yours (not saved)", **{f: exc.attempted.get(f) for f in fields}},
            ]
        )
        self.conflict.value = (
            '<div style="border-left:4px solid #b5523b;padding:4px 8px;font-size:12px">'
            "<b>Someone saved this label while you were editing.</b>"
            + label_table(both, ["which", *fields])
            + "</div>"
        )
        self.keep_mine.layout.display = None
        self.refresh(force=True)
