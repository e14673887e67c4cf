"""Collaborative topic labels: an append-only store with history, conflicts, blind rounds,
agreement, consensus, carry-over between fits, and export/import.

A label belongs to a fit (a fitted model, named by its ``fingerprint``), a topic number and
an analyst. Every
change is a new row with the next version number of its (fit, topic, analyst) key; the
*current* label is the latest version unless that version is a retraction. Nothing is updated or
deleted in place. An edit names the version it was based on (``based_on``); if someone saved a
newer one meanwhile, :class:`~tm_compare.errors.LabelConflictError` shows both and stores nothing.

The store is SQLite by default (``PROJECT/labels.sqlite``, WAL mode and a busy timeout so that
several kernels of one machine can write at once) or PostgreSQL for teams on several machines
(``postgresql+psycopg://user@host:5432/db``). Every query is built with SQLAlchemy Core, so all
values travel as bound parameters; texts are stored exactly as given, and escaping is the job of
whatever displays them. A URL's password never appears in a repr, log line or error message.
"""

from __future__ import annotations

import contextlib
import json
import numbers
import uuid
import warnings
from dataclasses import asdict, dataclass, fields
from pathlib import Path
from typing import NamedTuple

import pandas as pd
import sqlalchemy as sa

from .._atomic import atomic_write_text
from .._deprecation import renamed_attribute, warn_renamed
from .._validation import check_choice, param_error
from ..errors import LabelStoreError, ReadOnlyStoreError
from . import _files as _f
from . import _schema as _s
from . import categories as _categories
from ._files import CSV_COLUMNS, EXPORT_FORMAT, EXPORT_VERSION  # noqa: F401 (public names)
from ._keys import check_topic, fit_id, model_id, renamed_fit
from ._schema import LABEL_FIELDS
from .agreement import agreement_table
from .consensus import CONSENSUS_COLUMNS, ConsensusMixin
from .rounds import RoundsMixin

DEFAULT_VERDICTS = ("usable", "mixed", "noise")
#: Label fields whose agreement between analysts is measured.
AGREEMENT_FIELDS = ("verdict", "category")
#: Columns of :meth:`LabelStore.agreement`.
AGREEMENT_COLUMNS = ("field", "scope", "topic", "alpha", "percent_agreement", "n_coders", "n_units")


@dataclass(frozen=True)
class Label:
    """One row of the label history."""

    id: int
    uid: str
    fit: str  # the fingerprint of the fit
    topic: int
    analyst: str
    version: int
    name: str
    note: str
    verdict: str | None
    category: str | None
    confidence: float | None
    retracted: bool
    round: int | None
    created_at: str

    model = renamed_attribute("model", "fit")


#: Columns of the label tables (:meth:`LabelStore.current`, :meth:`LabelStore.history`).
COLUMNS = tuple(f.name for f in fields(Label))


class Changes(NamedTuple):
    """Rows added since a cursor, and the cursor to pass next time."""

    labels: pd.DataFrame
    cursor: int


@dataclass(frozen=True)
class CheckReport:
    """Result of :meth:`LabelStore.check`."""

    ok: bool
    problems: list[str]
    schema_version: int
    n_labels: int


def _unchanged(latest, values: dict) -> bool:
    """Whether ``values`` are the fields of the stored ``latest`` label, which is not retracted."""
    if latest is None or latest.retracted or values.get("retracted"):
        return False
    try:
        return all(getattr(latest, f) == values.get(f) for f in LABEL_FIELDS)
    except TypeError:  # a value of the wrong type: let the field checks name it
        return False


def _label(row) -> Label:
    data = _s.record(row)
    data["round"] = data.pop("round_id")
    data["retracted"] = bool(data["retracted"])
    return Label(**{k: data[k] for k in COLUMNS})


def _frame(rows) -> pd.DataFrame:
    return pd.DataFrame([asdict(_label(r)) for r in rows], columns=list(COLUMNS))


class LabelStore(RoundsMixin, ConsensusMixin, _categories.CategoriesMixin):
    """A team's topic labels, in SQLite or PostgreSQL.

    Parameters
    ----------
    location : Project, path or URL
        A :class:`~tm_compare.project.Project` or folder (the store is ``labels.sqlite`` in it),
        an SQLite file path, or a SQLAlchemy URL (``sqlite:///...``, ``postgresql+psycopg://...``).
    analyst : str, optional
        Who writes through this store object; needed to save, retract, settle or open rounds.
    verdicts : sequence of str, optional
        The allowed verdicts, recorded in a new store (default: usable, mixed, noise).
    timeout : float
        Seconds to wait for a lock (SQLite busy timeout) or a connection (PostgreSQL).
    read_only : bool
        Open the store read-only (SQLite ``mode=ro``; PostgreSQL read-only transactions):
        every write raises LabelStoreError.
    """

    def __init__(
        self,
        location,
        analyst: str | None = None,
        *,
        verdicts=None,
        timeout: float = 30.0,
        read_only: bool = False,
    ):
        if analyst is not None and (
            not isinstance(analyst, str) or not analyst.strip() or len(analyst) > 200
        ):
            raise param_error(
                "LabelStore", "analyst", analyst, "a non-empty name of at most 200 characters"
            )
        if analyst is not None:
            _s.check_text("analyst", analyst)
        self.analyst = analyst
        self.timeout = float(timeout)
        self._damaged = None  # the message of a corruption found: every later write is refused
        self._url = _s.resolve_url(location, read_only)
        self._read_only_media = not read_only and _s.on_read_only_media(self._url)
        if self._read_only_media:
            read_only = True
            wal = Path(f"{self._url.database}-wal")  # the writable URL names the file plainly
            self._url = _s.resolve_url(location, read_only)
            if not wal.exists() or wal.stat().st_size == 0:
                # immutable: SQLite then needs no -shm file, which read-only media cannot hold.
                # Not with a -wal file that holds changes: immutable would skip them.
                self._url = self._url.update_query_dict({"immutable": "1"})
            warnings.warn(
                f"The label store {self.url} is on read-only media (or a folder you may not "
                "write): it is opened read-only. Listing, export and agreement work; saving "
                "labels does not. Copy it to a writable folder to label.",
                UserWarning,
                stacklevel=2,
            )
        read_only = self.read_only = read_only or self._url.query.get("mode") == "ro"
        self._engine = _s.make_engine(self._url, self.timeout, read_only)
        wanted = None if verdicts is None else self._clean_verdicts(verdicts)
        with self._guard():
            with self._engine.connect() as conn:
                version = _s.stored_version(conn)
                _s.refuse_damaged(conn, self.url)
            if version is not None:
                _s.refuse_newer(version, self.url)
            if read_only and version is None:
                msg = f"No label store at {self.url}: the database is empty. Open it once without read_only=True to create it."
                raise LabelStoreError(msg)
            if read_only and version < _s.SCHEMA_VERSION:
                msg = f"The label store {self.url} has schema version {version} and needs an upgrade to {_s.SCHEMA_VERSION}, which a read-only store cannot do. Open it once writable."
                raise LabelStoreError(msg)
            if version != _s.SCHEMA_VERSION:  # create or upgrade, under the write lock
                settings = {"verdicts": json.dumps(list(wanted or DEFAULT_VERDICTS))}
                with _s.write_transaction(self._engine) as conn:
                    _s.prepare_schema(conn, self.url, settings)
        if wanted is not None and wanted != self.verdicts:
            self.set_verdicts(wanted)

    # --- basics ---------------------------------------------------------------------------

    @property
    def url(self) -> str:
        """The store's URL with any password hidden."""
        return _s.describe(self._url)

    def __repr__(self) -> str:
        return f"LabelStore({self.url!r}, analyst={self.analyst!r})"

    def as_analyst(self, analyst: str) -> LabelStore:
        """The same store, opened for writing as ``analyst`` (e.g. when a form's name changes)."""
        return LabelStore(
            self._url, analyst=analyst, timeout=self.timeout, read_only=self.read_only
        )

    def close(self) -> None:
        """Release the store's connections."""
        self._engine.dispose()

    def __enter__(self) -> LabelStore:
        return self

    def __exit__(self, *exc) -> None:
        self.close()

    @contextlib.contextmanager
    def _guard(self):
        """Turn driver errors into LabelStoreError with a clear, password-free message; once a
        corruption is seen, the store refuses every later write."""
        try:
            yield
        except Exception as exc:
            if _s.is_driver_error(exc):
                error = _s.translate(exc, self._url, self.timeout)
                if _s.CORRUPT in str(error):
                    self._damaged = str(error)
                raise error from None
            raise

    @contextlib.contextmanager
    def _write_transaction(self):
        """The store's write transaction, refused on a damaged or read-only store."""
        if self._damaged:
            msg = f"{self._damaged} (found earlier in this session; nothing was written)"
            raise LabelStoreError(msg)
        if self.read_only:
            why = " because it is on read-only media" if self._read_only_media else ""
            msg = (
                f"The label store {self.url} is read-only{why}, so labels cannot be saved. "
                "Listing, export and agreement work; to label, open a writable copy without "
                "read_only=True / mode=ro."
            )
            raise ReadOnlyStoreError(msg)
        with _s.write_transaction(self._engine) as conn:
            yield conn

    def _read(self, query) -> list:
        with self._guard(), self._engine.connect() as conn:
            return conn.execute(query).all()

    def _writer(self, action: str) -> str:
        if self.analyst is None:
            msg = f"Cannot {action}: this LabelStore was opened without an analyst. Open it as LabelStore(..., analyst='your name')."
            raise LabelStoreError(msg)
        return self.analyst

    @property
    def schema_version(self) -> int:
        """The schema version recorded in the store."""
        with self._guard(), self._engine.connect() as conn:
            return _s.stored_version(conn)

    # --- verdicts and codebook ------------------------------------------------------------

    @staticmethod
    def _clean_verdicts(verdicts) -> list[str]:
        values = [verdicts] if isinstance(verdicts, str) else list(verdicts)
        if (
            not values
            or any(not isinstance(v, str) or not v.strip() for v in values)
            or len(set(values)) != len(values)
        ):
            raise param_error(
                "LabelStore", "verdicts", verdicts, "a list of distinct non-empty strings"
            )
        return values

    @property
    def verdicts(self) -> list[str]:
        """The allowed verdicts, in their configured order."""
        with self._guard(), self._engine.connect() as conn:
            return _s.read_verdicts(conn)

    def set_verdicts(self, verdicts) -> list[str]:
        """Replace the allowed verdicts; refuses to drop one that a stored label uses."""
        values = self._clean_verdicts(verdicts)
        self._writer("change the verdicts")
        with self._guard(), self._write_transaction() as conn:
            used = set(conn.execute(sa.select(_s.labels.c.verdict).distinct()).scalars()) - {None}
            used |= set(conn.execute(sa.select(_s.consensus.c.verdict).distinct()).scalars()) - {
                None
            }
            if used - set(values):
                msg = f"Cannot drop the verdicts {sorted(used - set(values))}: stored labels use them. Keep them in the list {values}."
                raise LabelStoreError(msg)
            conn.execute(
                _s.meta.update().where(_s.meta.c.key == "verdicts").values(value=json.dumps(values))
            )
        return values

    @staticmethod
    def _add_categories(conn, entries: list[dict]) -> None:
        _categories.add(conn, entries)  # codebook entries of an imported label file

    def codebook(self) -> pd.DataFrame:
        """The codebook: ``category``, ``description``, ``added_by``, ``created_at``,
        ``retired_at``, ``retired_by`` and ``former_names`` (a list), as label files carry it."""
        with self._guard(), self._engine.connect() as conn:
            return _categories.codebook_frame(conn)

    # rounds (rounds.py) and settled labels (consensus.py) are mixed in

    # --- reading --------------------------------------------------------------------------

    def _current_rows(
        self, conn, fit: str, round_id: int | None = None, analyst: str | None = None
    ):
        t = _s.labels
        scope = [t.c.fit == fit, self._visible]
        if round_id is not None:
            scope.append(t.c.round_id == round_id)
        if analyst is not None:
            scope.append(t.c.analyst == analyst)
        latest = (
            sa.select(t.c.topic, t.c.analyst, sa.func.max(t.c.version).label("v"))
            .where(*scope)
            .group_by(t.c.topic, t.c.analyst)
            .subquery()
        )
        query = (
            sa.select(t)
            .join(
                latest,
                sa.and_(
                    t.c.topic == latest.c.topic,
                    t.c.analyst == latest.c.analyst,
                    t.c.version == latest.c.v,
                ),
            )
            .where(t.c.fit == fit)
            .order_by(t.c.topic, t.c.analyst)
        )
        return conn.execute(query).all()

    @renamed_fit
    def current(self, fit, *, include_retracted: bool = False) -> pd.DataFrame:
        """The current label of each (topic, analyst) visible to this analyst."""
        fit = fit_id(fit)
        with self._guard(), self._engine.connect() as conn:
            rows = self._current_rows(conn, fit)
        frame = _frame(rows)
        return (
            frame
            if include_retracted
            else frame[~frame["retracted"].astype(bool)].reset_index(drop=True)
        )

    @renamed_fit
    def label(self, fit, topic, analyst: str | None = None) -> Label | None:
        """The latest history row of one topic by ``analyst`` (default: this store's analyst),
        retracted or not, or ``None``; its ``version`` is what an edit is ``based_on``."""
        fit, topic = fit_id(fit), check_topic(topic)
        who = analyst or self._writer("read your own label")
        with self._guard(), self._engine.connect() as conn:
            row = conn.execute(
                self._latest_visible, {"fit": fit, "topic": topic, "analyst": who}
            ).first()
        return None if row is None else _label(row)

    def _history_rows(self, fit=None, topic=None) -> list:
        t = _s.labels
        with self._guard(), self._engine.connect() as conn:
            query = sa.select(t).where(self._visible).order_by(t.c.id)
            if fit is not None:
                query = query.where(t.c.fit == fit_id(fit))
            if topic is not None:
                query = query.where(t.c.topic == check_topic(topic))
            return conn.execute(query).all()

    @renamed_fit
    def history(self, fit=None, topic=None) -> pd.DataFrame:
        """Every visible history row, in write order."""
        return _frame(self._history_rows(fit, topic))

    @renamed_fit
    def side_by_side(self, fit, field: str = "name") -> pd.DataFrame:
        """Current labels as a topic x analyst table of ``field``."""
        check_choice("side_by_side", "field", field, LABEL_FIELDS)
        frame = self.current(fit)
        if frame.empty:
            return pd.DataFrame(index=pd.Index([], name="topic"))
        return frame.pivot(index="topic", columns="analyst", values=field)

    @renamed_fit
    def poll(self, since=0, fit=None) -> Changes:
        """Rows saved after ``since``: a cursor from an earlier poll (an int) or a UTC time
        (``datetime`` or ISO text). Lets a form show colleagues' new labels as they arrive."""
        t = _s.labels
        if (
            isinstance(since, bool)
            or not isinstance(since, (numbers.Integral, str))
            and not hasattr(since, "astimezone")
        ):
            raise param_error(
                "poll", "since", since, "a cursor (int) from an earlier poll, or a datetime"
            )
        with self._guard(), self._engine.connect() as conn:
            query = sa.select(t).where(self._visible).order_by(t.c.id)
            if isinstance(since, numbers.Integral):
                query = query.where(t.c.id > int(since))
            else:
                stamp = pd.Timestamp(since)
                stamp = (
                    stamp.tz_localize("UTC") if stamp.tzinfo is None else stamp.tz_convert("UTC")
                )
                query = query.where(t.c.created_at > stamp.strftime("%Y-%m-%dT%H:%M:%S.%fZ"))
            if fit is not None:
                query = query.where(t.c.fit == fit_id(fit))
            rows = conn.execute(query).all()
        cursor = max(
            [r.id for r in rows], default=since if isinstance(since, numbers.Integral) else 0
        )
        return Changes(_frame(rows), int(cursor))

    # --- writing --------------------------------------------------------------------------

    def _clean(self, conn, values: dict) -> dict:
        """Check a label's fields against the store's verdicts and codebook."""
        owner = "LabelStore.save"
        for field in ("name", "note"):
            if not isinstance(values[field], str):
                raise param_error(owner, field, values[field], "a string")
        for field in ("name", "note", "verdict", "category"):
            _s.check_text(field, values[field])
        if values["verdict"] is not None:
            check_choice(owner, "verdict", values["verdict"], _s.read_verdicts(conn))
        known = list(conn.execute(_s.CATEGORIES).scalars()) if values["category"] else []
        former = _categories.aliases(conn) if values["category"] not in known else {}
        if values["category"] is not None and values["category"] not in {*known, *former}:
            listed = ", ".join(map(repr, known)) or "none yet"
            fix = "Add it first with store.define_category(...)."
            raise param_error(
                owner, "category", values["category"], f"a codebook category ({listed})", fix
            )
        conf = values.get("confidence")
        if conf is not None:
            # NaN fails the range test too.
            if isinstance(conf, bool) or not isinstance(conf, numbers.Real) or not 0 <= conf <= 1:
                raise param_error(owner, "confidence", conf, "a number between 0 and 1, or None")
            values["confidence"] = float(conf)
        return values

    def _append(self, conn, key: dict, values: dict, based_on: int | None, table=None) -> dict:
        """Insert the next version of ``key`` if the latest is still ``based_on``; return the row."""
        table = _s.labels if table is None else table
        latest = conn.execute(_s.LATEST[table.name], key).first()
        have = 0 if latest is None else latest.version
        base = 0 if based_on is None else based_on
        if base != have:
            raise _s.conflict_error(table.name, key, base, latest, values)
        row = {
            **key,
            **values,
            "version": have + 1,
            "uid": values.get("uid") or uuid.uuid4().hex,
            "created_at": values.get("created_at") or _s.utc_now(),
        }
        row["id"] = conn.execute(table.insert(), row).inserted_primary_key[0]
        return row

    def _write_label(self, fit, topic, values: dict, based_on) -> Label:
        fit, topic = fit_id(fit), check_topic(topic)
        who = self._writer("save a label")
        if based_on is not None and (
            isinstance(based_on, bool) or not isinstance(based_on, numbers.Integral) or based_on < 0
        ):
            raise param_error(
                "LabelStore.save",
                "based_on",
                based_on,
                "the version your edit started from (an integer >= 0), or None for a new label",
            )
        key = {"fit": fit, "topic": topic, "analyst": who}
        with self._guard(), self._write_transaction() as conn:
            latest = conn.execute(_s.LATEST["labels"], key).first()
            opened = self._open_round(conn, fit)
            round_id = None if opened is None else opened.id
            if _unchanged(latest, values) and round_id in (None, latest.round_id):
                return _label(latest)  # saving what is stored adds no version
            _categories.refuse_for_new_label(conn, values["category"])
            values = self._clean(conn, values)
            values["round_id"] = round_id
            row = self._append(conn, key, values, based_on)
        return _label(row)

    @renamed_fit
    def save(
        self,
        fit,
        topic,
        *,
        name: str,
        note: str = "",
        verdict: str | None = None,
        category: str | None = None,
        confidence: float | None = None,
        based_on: int | None = None,
    ) -> Label:
        """Save this analyst's label of ``topic`` as a new version.

        ``based_on`` is the version the edit started from (``None`` or 0 for a first label).
        If the stored latest version differs, :class:`LabelConflictError` is raised: its message
        shows both versions, ``.current`` and ``.attempted`` hold them, and nothing is stored.
        """
        values = {"name": name, "verdict": verdict, "category": category, "note": note}
        values.update(confidence=confidence, retracted=False)
        return self._write_label(fit, topic, values, based_on)

    @renamed_fit
    def retract(self, fit, topic, *, based_on: int) -> Label:
        """Withdraw this analyst's label of ``topic`` (a new, retracting version)."""
        latest = self.label(fit, topic)
        values = {"name": "", "note": "", "verdict": None, "category": None, "confidence": None}
        if latest is not None:  # the withdrawn label's fields stay readable in the history
            values = {field: getattr(latest, field) for field in LABEL_FIELDS}
        return self._write_label(fit, topic, {**values, "retracted": True}, based_on)

    # --- procedures -----------------------------------------------------------------------

    @renamed_fit
    def agreement(self, fit, fields=AGREEMENT_FIELDS, round: int | None = None) -> pd.DataFrame:
        """Krippendorff's alpha (nominal) and percent agreement, per topic and overall.

        Units are topics, coders are analysts, values their current ``verdict``/``category``
        (restricted to labels saved in ``round`` when given). Columns: ``field``, ``scope``
        ("topic" or "overall"), ``topic``, ``alpha``, ``percent_agreement``, ``n_coders``,
        ``n_units``. See :mod:`tm_compare.labels.agreement` for the per-topic alpha.
        """
        fit = fit_id(fit)
        fields = [fields] if isinstance(fields, str) else list(fields)
        for field in fields:
            check_choice("LabelStore.agreement", "field", field, AGREEMENT_FIELDS)
        if self.in_blind_round(fit):
            msg = f"A blind round is open on fit {fit!r}: agreement needs everyone's labels. Close the round first (store.close_round(fit))."
            raise LabelStoreError(msg)
        with self._guard(), self._engine.connect() as conn:
            frame = _frame(self._current_rows(conn, fit, round_id=round))
        frame = frame[~frame["retracted"].astype(bool)]
        names = self.category_aliases()  # labels saved under a former name count as the new one
        frame = frame.assign(category=frame["category"].map(lambda c: names.get(c, c)))
        tables = []
        for field in fields:
            units = frame.pivot(index="topic", columns="analyst", values=field)
            table = agreement_table(units.reindex(sorted(frame["topic"].unique())))
            tables.append(table.assign(field=field, scope=table["scope"].replace("unit", "topic")))
        result = pd.concat(tables, ignore_index=True).rename(columns={"unit": "topic"})
        result["topic"] = result["topic"].astype("Int64")
        return result[list(AGREEMENT_COLUMNS)]

    @renamed_fit
    # --- export and import -------------------------------------------------------------------

    @renamed_fit
    def export(
        self, fit, path=None, *, format: str | None = None, history: bool = False, top_words=None
    ) -> Path:
        """Write the current labels (or the full ``history``) of ``fit`` to a JSON or CSV file,
        atomically, and return its path. The format comes from the suffix unless given.

        ``top_words``: a list, per topic, of its top terms, so the file reads without the fit.
        Without ``path`` (deprecated; use :meth:`export_text`) the JSON document (a dict) or
        the CSV text is returned as before.
        """
        if path is None:
            warn_renamed("LabelStore.export(fit) without a path", "LabelStore.export_text(fit)")
            text = self.export_text(
                fit, format=format or "json", history=history, top_words=top_words
            )
            return json.loads(text) if format in (None, "json") else text
        format = format or Path(path).suffix.lstrip(".").lower()
        text = self.export_text(fit, format=format, history=history, top_words=top_words)
        atomic_write_text(path, text)
        return Path(path)

    @renamed_fit
    def export_text(
        self, fit, *, format: str = "json", history: bool = False, top_words=None
    ) -> str:
        """The text of the label file :meth:`export` writes: JSON (``format="json"``) or CSV."""
        return _f.export_text(
            self, fit_id(fit), format=format, history=history, top_words=top_words
        )

    def _labels(self, fit: str, history: bool) -> list[Label]:
        """Every visible history row of ``fit``, or its current rows (retracted included)."""
        if history:
            return [_label(r) for r in self._history_rows(fit)]
        with self._guard(), self._engine.connect() as conn:
            return [_label(r) for r in self._current_rows(conn, fit)]

    @renamed_fit
    def import_labels(self, path, *, fit) -> dict:
        """Import a file written by :meth:`export` into this store, for ``fit`` only.

        Idempotent: rows already present (same uid) are skipped; new rows are appended after the
        key's latest version, keeping their analyst and time. Returns counts ``added``/``skipped``.
        """
        return _f.import_labels(self, path, fit_id(fit))

    # --- integrity ------------------------------------------------------------------------

    def check(self, *, raise_on_error: bool = False) -> CheckReport:
        """Verify the store's invariants: schema version, contiguous versions per key in write
        order, no orphan rows, verdicts and categories known, and SQLite's own integrity check."""
        with self._guard(), self._engine.connect() as conn:
            problems = _s.integrity_problems(conn, self.verdicts)
            n = conn.execute(sa.select(sa.func.count()).select_from(_s.labels)).scalar()
            version = _s.stored_version(conn)
        report = CheckReport(not problems, problems, version, int(n))
        if problems and raise_on_error:
            msg = f"The label store {self.url} failed its integrity check: " + "; ".join(problems)
            raise LabelStoreError(msg)
        return report


__all__ = [
    "LabelStore",
    "Label",
    "Changes",
    "CheckReport",
    "DEFAULT_VERDICTS",
    "LABEL_FIELDS",
    "COLUMNS",
    "CONSENSUS_COLUMNS",
    "AGREEMENT_COLUMNS",
    "AGREEMENT_FIELDS",
    "fit_id",
    "model_id",
]
