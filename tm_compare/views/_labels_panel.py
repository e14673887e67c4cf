"""The labelling form: name a topic, keep the team's categories, see colleagues' labels, conflicts
and agreement.

Everything is read from and written to a :class:`tm_compare.labels.LabelStore`; colleagues'
labels appear without re-running the cell because the panel asks the store for rows newer than
its cursor (``store.poll``) every few seconds and whenever the topic changes. All label text is
escaped before it is shown.

Layout: the form keeps a fixed width on the left and the reading column (labels, agreement,
history) takes the rest; below about 760 px the reading column wraps under the form instead of
squeezing it, so the inputs stay whole at any notebook width.
"""

from __future__ import annotations

import datetime as _dt
import threading

import ipywidgets as w
import pandas as pd

from .._html import esc
from ..errors import LabelConflictError, TmCompareError
from ..labels.agreement import FIELD_WORDS, NEEDS_TWO_ANALYSTS, explain_agreement
from ..labels.store import LabelStore

_TABLE = "border-collapse:collapse;font-size:12px;margin:2px 0 8px 0;max-width:100%"
_CELL = "padding:2px 8px;border-top:1px solid #e3e6ea;text-align:left;vertical-align:top"
# Free text wraps anywhere (a long name never widens the table); short fields stay on one line.
_WRAPPING = ("name", "note")
_MUTED = "color:#6b7078;font-size:12px"
# Column headings of the tables, in words (the stored field names stay in the API).
_HEADINGS = {"created_at": "saved", "retracted": "withdrawn", "confidence": "confidence"}


def local_time(stamp) -> str:
    """A stored UTC timestamp as local time for reading: ``"2 Dec 14:05"`` (the year is added
    when it is not the current one)."""
    when = pd.Timestamp(stamp)
    when = (when.tz_localize("UTC") if when.tzinfo is None else when).to_pydatetime()
    when = when.astimezone()  # the kernel's local time zone
    text = f"{when.day} {when:%b %H:%M}"
    return text if when.year == _dt.datetime.now().year else f"{when.day} {when:%b %Y %H:%M}"


def _cell(column: str, value) -> str:
    if value is None or (pd.api.types.is_scalar(value) and pd.isna(value)):
        return f'<td style="{_CELL}"></td>'
    if column == "created_at":  # local time to read, the stored UTC value on hover
        return f'<td style="{_CELL};white-space:nowrap" title="{esc(value)}">{esc(local_time(value))}</td>'
    if isinstance(value, bool):
        value = "yes" if value else ""
    elif isinstance(value, float):
        value = f"{value:.2f}"
    wrap = "overflow-wrap:anywhere;min-width:6em" if column in _WRAPPING else "white-space:nowrap"
    return f'<td style="{_CELL};{wrap}">{esc(value)}</td>'


def label_table(frame: pd.DataFrame, columns: list[str]) -> str:
    """Rows of a label frame as an HTML table, every value escaped; times shown locally with
    the stored value as the cell's ``title``."""
    if frame.empty:
        return f'<div style="{_MUTED}">None yet.</div>'
    head = "".join(
        f'<th scope="col" style="{_CELL};white-space:nowrap">{esc(_HEADINGS.get(c, c))}</th>'
        for c in columns
    )
    rows = "".join(
        "<tr>" + "".join(_cell(c, row.get(c)) for c in columns) + "</tr>"
        for row in frame.to_dict("records")
    )
    return f'<table style="{_TABLE}"><thead><tr>{head}</tr></thead><tbody>{rows}</tbody></table>'


def agreement_html(table: pd.DataFrame | None, topic: int) -> str:
    """Agreement in sentences: alpha only where it can be computed, else what it needs."""
    if table is None:
        return (
            f'<div style="{_MUTED}"><b>Blind round open:</b> you see only your own labels; '
            "agreement appears when the round is closed.</div>"
        )
    parts = ["<b>Agreement between analysts</b>"]
    overall = table[table["scope"] == "overall"]
    if overall.empty or not (overall["n_units"] > 0).any():
        parts.append(f'<div style="font-size:12px">Agreement {NEEDS_TWO_ANALYSTS}.</div>')
    else:
        items = "".join(
            f"<li>{esc(explain_agreement(row))}</li>" for row in overall.to_dict("records")
        )
        parts.append(
            f'<div style="font-size:12px">Over all topics:<ul style="margin:2px 0 4px 0;'
            f'padding-left:18px;line-height:1.4">{items}</ul></div>'
        )
    here = table[(table["scope"] == "topic") & (table["topic"] == topic)]
    if not here.empty and (here["n_coders"] >= 2).any():
        shares = ", ".join(
            f"{FIELD_WORDS.get(r['field'], r['field'])} {r['percent_agreement']:.0%}"
            for r in here.to_dict("records")
            if r["n_coders"] >= 2 and not pd.isna(r["percent_agreement"])
        )
        n = int(here["n_coders"].max())
        parts.append(
            f'<div style="font-size:12px">On topic {topic}: {n} analysts; pairs that agree: '
            f"{esc(shares)}.</div>"
        )
    elif (overall["n_units"] > 0).any():
        parts.append(
            f'<div style="{_MUTED}">Topic {topic} has fewer than 2 analysts\' labels, so it '
            "does not count yet.</div>"
        )
    return "".join(parts)


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
        self._categories_shown: list[str] = []
        self._lock = threading.RLock()
        self._stop = threading.Event()
        wide = w.Layout(width="auto")  # fills the form column, margins included
        self.analyst = w.Text(value=store.analyst or "", description="Analyst", layout=wide)
        self.name = w.Text(
            description="Name", placeholder="a short name for the topic", layout=wide
        )
        self.note = w.Textarea(
            description="Note",
            placeholder="why this name; doubts",
            layout=w.Layout(width="auto", height="60px"),
        )
        self.verdict = w.Dropdown(description="Verdict", layout=wide)
        self.category = w.Dropdown(
            description="Category", layout=w.Layout(width="auto", flex="1 1 0%", min_width="0")
        )
        self.edit_categories = w.ToggleButton(
            description="Edit list",
            tooltip="Add, rename or retire the team's categories",
            layout=w.Layout(width="80px", flex="0 0 auto"),
        )
        self.confidence = w.FloatSlider(
            value=0.7,
            min=0,
            max=1,
            step=0.05,
            description="Confidence",
            readout_format=".2f",
            layout=wide,
        )
        self.save = w.Button(description="Save label", button_style="primary", icon="check")
        self.save.on_click(lambda _: self.save_label())
        self.status = w.HTML()
        self.conflict = w.HTML()
        self.keep_mine = w.Button(description="Save mine over it", layout=w.Layout(display="none"))
        self.keep_mine.on_click(lambda _: self.save_label(force=True))
        self.category_editor = self._build_category_editor()
        self.edit_categories.observe(self._toggle_editor, names="value")
        self.labels = w.HTML()
        self.history = w.HTML()
        self.agreement = w.HTML()
        form = w.VBox(
            [
                self.analyst,
                self.name,
                self.note,
                self.verdict,
                w.HBox([self.category, self.edit_categories], layout=wide),
                self.category_editor,
                self.confidence,
                w.HBox([self.save, self.keep_mine]),
                self.status,
                self.conflict,
            ],
            layout=w.Layout(flex="0 0 360px", width="360px", min_width="360px"),
        )
        form.add_class("tmc-label-form")
        reading = w.VBox(
            [self.labels, self.agreement, self.history],
            layout=w.Layout(
                flex="1 1 360px",
                min_width="0",
                overflow="auto",
                max_height="460px",
                padding="0 4px",
            ),
        )
        reading.add_class("tmc-label-reading")
        row = w.HBox([form, reading], layout=w.Layout(flex_flow="row wrap", width="100%"))
        super().__init__([row], layout=w.Layout(width="100%"))
        self.add_class("tmc-labels")
        self._load_choices()
        if poll_seconds:
            threading.Thread(
                target=self._poll_loop, args=(float(poll_seconds),), daemon=True
            ).start()

    # --- categories -----------------------------------------------------------------------

    def _build_category_editor(self) -> w.VBox:
        self.category_text = w.Text(
            placeholder="category name", layout=w.Layout(width="auto"), description="New name"
        )
        buttons = []
        for text, action, tip in (
            ("Add", self.add_category, "Add the name typed above (or bring a retired one back)"),
            ("Rename chosen", self.rename_category, "Give the chosen category the name above"),
            ("Retire chosen", self.retire_category, "Stop offering the chosen category"),
        ):
            button = w.Button(description=text, tooltip=tip, layout=w.Layout(width="auto"))
            button.on_click(lambda _, act=action: act())
            buttons.append(button)
        self.add_category_button, self.rename_category_button, self.retire_category_button = buttons
        box = w.VBox(
            [self.category_text, w.HBox(buttons)],
            layout=w.Layout(display="none", border="1px solid #e3e6ea", padding="4px"),
        )
        box.add_class("tmc-category-editor")
        return box

    def _toggle_editor(self, change) -> None:
        self.category_editor.layout.display = None if change["new"] else "none"

    def _category_change(self, act, done: str, choose=...) -> None:
        """Run ``act(store)``; on success refresh the lists, choose ``choose`` (default: keep
        the choice), clear the typed name, and only then say what was done (so a reader of the
        message sees the form already updated)."""
        with self._lock:
            try:
                act(self._writer_store())
            except TmCompareError as exc:
                self.status.value = f'<span style="color:#b5523b">{esc(exc)}</span>'
                return
            self._load_choices(category=choose)
            self.category_text.value = ""
            self.status.value = f'<span style="color:#1b6f80">{esc(done)}</span>'

    def add_category(self) -> None:
        """Add the typed category to the team's list (or restore it if it was retired)."""
        name = self.category_text.value.strip()

        def act(store):
            if name in store.categories(retired=True) and name not in store.categories():
                store.restore_category(name)
            else:
                store.define_categories([name])

        self._category_change(act, f"Category {name!r} is on the list.", choose=name)

    def rename_category(self) -> None:
        """Rename the chosen category to the typed name; labels follow the new name."""
        old, new = self.category.value, self.category_text.value.strip()
        if old is None:
            self.status.value = (
                '<span style="color:#b5523b">Choose the category to rename first.</span>'
            )
            return
        self._category_change(
            lambda store: store.rename_category(old, new), f"Renamed {old!r} to {new!r}.", new
        )

    def retire_category(self) -> None:
        """Stop offering the chosen category; labels that use it keep it (this label too: the
        form then shows it marked as retired)."""
        name = self.category.value
        if name is None:
            self.status.value = (
                '<span style="color:#b5523b">Choose the category to retire first.</span>'
            )
            return
        own = self.store.label(self.fit, self._topic) if self.store.analyst else None
        keep = name if own is not None and own.category == name else None
        self._category_change(
            lambda store: store.retire_category(name),
            f"Retired {name!r}: no longer offered; labels that use it keep it.",
            keep,
        )

    # --- reading the store ----------------------------------------------------------------

    def _writer_store(self) -> LabelStore:
        who = self.analyst.value.strip()
        if who and who != self.store.analyst:
            # A store object writes as one analyst; the form may name another.
            self.store = self.store.as_analyst(who)
        return self.store

    def _load_choices(self, category=...):
        """Refresh the lists of verdicts and categories, keeping the chosen values.

        ``category``: the category to show (default: the one chosen now). A former name shows
        as the category's name today; a retired category is listed, marked, because the label
        being edited has it, but it is not offered for other labels.
        """
        verdict = self.verdict.value
        category = self.category.value if category is ... else category
        active = self.store.categories()
        if category is not None and category not in active:
            category = self.store.category_aliases().get(category, category)
        options = [("(none)", None)] + [(c, c) for c in active]
        if category is not None and category not in active:
            options.append((f"{category} (retired)", category))
        verdicts = [("(none)", None)] + [(v, v) for v in self.store.verdicts]
        if list(self.verdict.options) != verdicts:
            self.verdict.options = verdicts
        if list(self.category.options) != options:
            self.category.options = options
        self.verdict.value = verdict if verdict in self.store.verdicts else None
        self.category.value = category
        self._categories_shown = active

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
        self._load_choices(category=None if own is None else own.category)
        with self.hold_trait_notifications():
            self.name.value = "" if own is None or own.retracted else own.name
            self.note.value = "" if own is None or own.retracted else own.note
            self.verdict.value = None if own is None else own.verdict
            if own is not None and own.confidence is not None:
                self.confidence.value = own.confidence

    def _snapshot(self, force: bool = False) -> bool:
        """Re-read the model's labels if the store changed since the last look; True if it did.

        One cheap query asks for rows newer than the cursor (and one whether a blind round is
        open); the full tables are read again only when something changed.
        """
        news = self.store.poll(self._cursor, fit=self.fit)
        blind = self.store.in_blind_round(self.fit)
        if self.store.categories() != self._categories_shown:  # a colleague edited the list
            self._load_choices()
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
            history.iloc[::-1],
            ["created_at", "analyst", "version", "name", "verdict", "category", "retracted"],
        )
        self.agreement.value = agreement_html(data["agreement"], topic)

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
        """Save the form as a new version of this analyst's label of the selected topic
        (nothing is written when the form holds what is already stored)."""
        with self._lock:
            try:
                before = self.store
                store = self._writer_store()
                if force or store is not before:
                    # Keeping one's own version over a colleague's, or writing as another
                    # analyst: the edit is based on what is stored now.
                    own = store.label(self.fit, self._topic)
                    self._base = None if own is None else own.version
                stored = store.label(self.fit, self._topic)
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
            if stored is not None and saved.id == stored.id:
                self.status.value = (
                    f'<span style="color:#6b7078">No change: version {saved.version} already '
                    "holds this label.</span>"
                )
                return
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
