"""Private parts of the label store: tables, engines, transactions, migrations, errors, checks,
and conflict messages (the label files are in ``_files``).

Schema history (``meta.schema_version``):

1. ``meta`` and an append-only ``labels`` table (name, note, verdict, confidence, retraction).
2. adds team procedures: ``labels.category`` and ``labels.round_id``, and the tables
   ``codebook``, ``rounds`` and ``consensus``.
3. categories can be renamed and retired: ``codebook.retired_at``/``retired_by`` and the table
   ``category_changes`` (every definition, rename, retirement and restoration; see
   :mod:`tm_compare.labels.categories`).

An older store is upgraded in place inside one write transaction (DDL is transactional in both
SQLite and PostgreSQL, so a failed upgrade leaves the old store as it was).

The fingerprint of the fit a label belongs to is stored in a column named ``model``, as the first
release named it; the API calls it ``fit`` (the column's SQLAlchemy ``key``), and :func:`record`
turns rows, and records of label files written by the first release, into API names. Keeping
the stored name needs no schema upgrade, so colleagues on an older tm_compare can still open a
shared store.
"""

from __future__ import annotations

import contextlib
import datetime as _dt
import json
import os
import re
import sqlite3
from collections.abc import Iterator
from pathlib import Path
from urllib.parse import quote

import sqlalchemy as sa
from sqlalchemy import event
from sqlalchemy.engine import URL, make_url

from .._validation import param_error
from ..errors import LabelConflictError, LabelStoreError, StoreVersionError

SCHEMA_VERSION = 3
STORE_FILE = "labels.sqlite"
# An arbitrary constant key: every writer of a PostgreSQL store takes this transaction-level
# lock, which serialises writes so that row ids follow commit order (polling relies on it).
_PG_WRITE_LOCK = 7_413_209_551

metadata = sa.MetaData()

meta = sa.Table(
    "meta",
    metadata,
    sa.Column("key", sa.String(64), primary_key=True),
    sa.Column("value", sa.Text, nullable=False),
)


def _fit_column() -> sa.Column:
    # Stored as "model" (the first release's name), read and written as "fit".
    return sa.Column("model", sa.String(200), key="fit", nullable=False)


def _entry(key: list[sa.Column], *rest) -> list:
    """Columns of a versioned entry: its row id and uid, the fit and topic it is about, the
    rest of its ``key``, its version, then the words of a label and ``rest``."""
    return [
        sa.Column("id", sa.Integer, primary_key=True, autoincrement=True),
        sa.Column("uid", sa.String(32), nullable=False, unique=True),
        _fit_column(),
        sa.Column("topic", sa.Integer, nullable=False),
        *key,
        sa.Column("version", sa.Integer, nullable=False),
        sa.Column("name", sa.Text, nullable=False),
        sa.Column("note", sa.Text, nullable=False),
        sa.Column("verdict", sa.Text),
        *rest,
    ]


rounds = sa.Table(
    "rounds",
    metadata,
    sa.Column("id", sa.Integer, primary_key=True, autoincrement=True),
    _fit_column(),
    sa.Column("name", sa.Text, nullable=False),
    sa.Column("blind", sa.Boolean, nullable=False),
    sa.Column("opened_by", sa.Text, nullable=False),
    sa.Column("opened_at", sa.String(32), nullable=False),
    sa.Column("closed_by", sa.Text),
    sa.Column("closed_at", sa.String(32)),
)
# Column order is that of stores upgraded from version 1: category and round_id come last.
labels = sa.Table(
    "labels",
    metadata,
    *_entry(
        [sa.Column("analyst", sa.Text, nullable=False)],
        sa.Column("confidence", sa.Float),
        sa.Column("retracted", sa.Boolean, nullable=False),
        sa.Column("created_at", sa.String(32), nullable=False),
        sa.Column("category", sa.Text),
        sa.Column("round_id", sa.Integer, sa.ForeignKey("rounds.id")),
    ),
    sa.UniqueConstraint("fit", "topic", "analyst", "version", name="uq_labels_key_version"),
)
codebook = sa.Table(
    "codebook",
    metadata,
    sa.Column("id", sa.Integer, primary_key=True, autoincrement=True),
    sa.Column("category", sa.String(200), nullable=False, unique=True),
    sa.Column("description", sa.Text, nullable=False),
    sa.Column("added_by", sa.Text, nullable=False),
    sa.Column("created_at", sa.String(32), nullable=False),
    sa.Column("retired_at", sa.String(32)),
    sa.Column("retired_by", sa.Text),
)
category_changes = sa.Table(
    "category_changes",
    metadata,
    sa.Column("id", sa.Integer, primary_key=True, autoincrement=True),
    sa.Column("category_id", sa.Integer, sa.ForeignKey("codebook.id"), nullable=False),
    sa.Column("action", sa.String(16), nullable=False),  # defined, renamed, retired, restored
    sa.Column("old_name", sa.Text),
    sa.Column("new_name", sa.Text),
    sa.Column("changed_by", sa.Text, nullable=False),
    sa.Column("changed_at", sa.String(32), nullable=False),
)
consensus = sa.Table(
    "consensus",
    metadata,
    *_entry(
        [],
        sa.Column("category", sa.Text),
        sa.Column("settled_by", sa.Text, nullable=False),
        sa.Column("sources", sa.Text, nullable=False),  # JSON list of label uids
        sa.Column("created_at", sa.String(32), nullable=False),
    ),
    sa.UniqueConstraint("fit", "topic", "version", name="uq_consensus_key_version"),
)
sa.Index("ix_labels_model_topic", labels.c.fit, labels.c.topic)
# Stored column name -> API name, for rows read back (SQLAlchemy names their values by column).
API_NAMES = {c.name: c.key for t in metadata.tables.values() for c in t.c if c.name != c.key}
#: What an analyst writes about a topic: the fields of a label, in the order they are shown.
LABEL_FIELDS = ("name", "verdict", "category", "confidence", "note")
#: The fields of a settled (consensus) label.
SETTLED_FIELDS = tuple(f for f in LABEL_FIELDS if f in consensus.c)

# Statements of the write path, built once (values travel as bound parameters).
KEYS = {"labels": ("fit", "topic", "analyst"), "consensus": ("fit", "topic")}
LATEST = {
    name: sa.select(table)
    .where(*[table.c[k] == sa.bindparam(k) for k in KEYS[name]])
    .order_by(table.c.version.desc())
    .limit(1)
    for name, table in (("labels", labels), ("consensus", consensus))
}
CATEGORIES = sa.select(codebook.c.category).order_by(codebook.c.id)
OPEN_ROUND = sa.select(rounds).where(
    rounds.c.fit == sa.bindparam("fit"), rounds.c.closed_at.is_(None)
)


def record(row) -> dict:
    """A database row, or a record of a label file, as a dict under the API's names."""
    items = row.items() if isinstance(row, dict) else row._mapping.items()
    return {API_NAMES.get(name, name): value for name, value in items}


def utc_now() -> str:
    """A UTC timestamp as fixed-width ISO text (sorts as text in every back end)."""
    return _dt.datetime.now(_dt.UTC).strftime("%Y-%m-%dT%H:%M:%S.%fZ")


# --- locations and engines ---------------------------------------------------------------


def resolve_url(location, read_only: bool) -> URL:
    """A SQLAlchemy URL from a Project (any os.PathLike folder), a file path or a URL string."""
    if isinstance(location, URL):
        url = location
    elif isinstance(location, str) and "://" in location:
        try:
            url = make_url(location)
        except (sa.exc.ArgumentError, ValueError):
            shown = re.sub(r"(//[^:/@]*:)[^@]*@", r"\1***@", location)  # hide a password
            msg = f"Cannot read the label store URL {shown!r}. Give a path or a URL such as 'postgresql+psycopg://user@host:5432/db'."
            raise LabelStoreError(msg) from None
    elif not isinstance(location, (str, os.PathLike)):
        accepted = "a Project, a folder or SQLite file path, or a database URL"
        raise param_error("LabelStore", "location", type(location).__name__, accepted)
    else:
        path = Path(location)
        if path.is_dir():
            path = path / STORE_FILE
        path = path.resolve()
        if read_only:
            return make_url(f"sqlite:///file:{quote(str(path))}?mode=ro&uri=true")
        path.parent.mkdir(parents=True, exist_ok=True)
        return URL.create("sqlite", database=str(path))
    if url.drivername in ("postgresql", "postgres"):
        url = url.set(drivername="postgresql+psycopg")
    if url.get_backend_name() not in ("sqlite", "postgresql"):
        msg = f"The label store supports SQLite and PostgreSQL, not {url.get_backend_name()!r} ({describe(url)})."
        raise LabelStoreError(msg)
    if read_only and url.get_backend_name() == "sqlite" and url.database:
        if not url.query.get("mode"):
            url = make_url(f"sqlite:///file:{quote(url.database)}?mode=ro&uri=true")
    return url


def describe(url: URL) -> str:
    """The URL with its password hidden: safe for reprs, logs and messages."""
    if url.get_backend_name() == "sqlite":  # a plain path reads better than a quoted URI
        suffix = "?mode=ro" if url.query.get("mode") == "ro" else ""
        return f"sqlite:///{url.database}{suffix}"
    return url.render_as_string(hide_password=True)


def make_engine(url: URL, timeout: float, read_only: bool = False) -> sa.Engine:
    """An engine whose write transactions are serialised (see :func:`write_transaction`)."""
    if url.get_backend_name() == "postgresql":
        connect_args = {"connect_timeout": max(1, int(timeout))}
        if read_only:
            # Added to (not replacing) any server options the URL carries, e.g. a search_path.
            given = url.query.get("options", "")
            connect_args["options"] = f"{given} -c default_transaction_read_only=on".strip()
        return sa.create_engine(url, connect_args=connect_args, pool_pre_ping=True)
    engine = sa.create_engine(url, connect_args={"timeout": timeout})

    @event.listens_for(engine, "connect")
    def _on_connect(dbapi_connection, _record):
        # Take BEGIN out of pysqlite's hands (it would defer it to the first write), so that
        # writers can ask for the write lock up front and wait on the busy timeout for it.
        dbapi_connection.isolation_level = None
        cursor = dbapi_connection.cursor()
        cursor.execute(f"PRAGMA busy_timeout = {int(timeout * 1000)}")
        cursor.execute("PRAGMA foreign_keys = ON")
        if url.query.get("mode") != "ro":
            # WAL: readers never block the writer, so several kernels can label at once.
            cursor.execute("PRAGMA journal_mode = WAL")
            cursor.execute("PRAGMA synchronous = NORMAL")
        cursor.close()

    @event.listens_for(engine, "begin")
    def _on_begin(conn):
        write = conn.get_execution_options().get("tm_write", False)
        conn.exec_driver_sql("BEGIN IMMEDIATE" if write else "BEGIN")

    return engine


@contextlib.contextmanager
def write_transaction(engine: sa.Engine) -> Iterator[sa.Connection]:
    """A transaction holding the store's single write lock until commit."""
    with engine.connect() as conn:
        conn.execution_options(tm_write=True)
        with conn.begin():
            if engine.dialect.name == "postgresql":
                conn.execute(sa.select(sa.func.pg_advisory_xact_lock(_PG_WRITE_LOCK)))
            yield conn


# --- errors ------------------------------------------------------------------------------


# (back end, or None for both; words of the driver's message; what to tell), first match wins
_KNOWN_ERRORS = (
    (
        None,
        ("readonly", "read-only"),
        "The label store {where} is read-only, so labels cannot be saved: {detail}. Open it "
        "without read_only=True / mode=ro, or copy it to a writable folder.",
    ),
    (
        "postgresql",
        ("connect", "refused", "timeout"),
        "Cannot reach the PostgreSQL label store at host {host} port {port} (database {database!r}, "
        "user {user!r}): {detail}. Check that the server runs and accepts connections there.",
    ),
    (
        "sqlite",
        ("locked", "busy"),
        "The label store {where} stayed locked by another process for {timeout:g} s: {detail}. "
        "Retry, or raise the 'timeout' parameter of LabelStore.",
    ),
    (
        "sqlite",
        ("not a database", "malformed", "corrupt"),
        "The label store {where} is corrupted or not an SQLite database: {detail}. Restore it from "
        "a backup or an export; tm_compare will not write to it.",
    ),
    (
        "sqlite",
        ("unable to open",),
        "Cannot open the label store {where}: {detail}. Check that the file and its folder exist "
        "and are readable.",
    ),
)


def translate(exc: Exception, url: URL, timeout: float) -> LabelStoreError:
    """A clear LabelStoreError for a driver error; the URL's password never appears."""
    orig = getattr(exc, "orig", None) or exc
    detail = str(orig).strip().splitlines()[0] if str(orig).strip() else type(orig).__name__
    if url.password:
        detail = detail.replace(str(url.password), "***")
    facts = {
        "where": describe(url),
        "detail": detail,
        "timeout": timeout,
        "host": url.host or "localhost",
        "port": url.port or 5432,
        "database": url.database,
        "user": url.username,
    }
    for backend, words, template in _KNOWN_ERRORS:
        if backend in (None, url.get_backend_name()) and any(w in detail.lower() for w in words):
            return LabelStoreError(template.format(**facts))
    msg = f"The label store {facts['where']} failed: {type(orig).__name__}: {detail}"
    return LabelStoreError(msg)


# --- schema versions ---------------------------------------------------------------------


def _v1_to_v2(conn: sa.Connection) -> None:
    """Version 2: categories from a codebook, coding rounds, and consensus labels."""
    metadata.create_all(conn, tables=[rounds, codebook, consensus])
    conn.execute(sa.text("ALTER TABLE labels ADD COLUMN category TEXT"))
    conn.execute(sa.text("ALTER TABLE labels ADD COLUMN round_id INTEGER REFERENCES rounds (id)"))


def _v2_to_v3(conn: sa.Connection) -> None:
    """Version 3: categories can be renamed and retired, with a history of changes."""
    # A store upgraded from version 1 in the same session got today's codebook from step 1.
    have = {c["name"] for c in sa.inspect(conn).get_columns("codebook")}
    for name, kind in (("retired_at", "VARCHAR(32)"), ("retired_by", "TEXT")):
        if name not in have:
            conn.execute(sa.text(f"ALTER TABLE codebook ADD COLUMN {name} {kind}"))
    metadata.create_all(conn, tables=[category_changes])
    conn.execute(
        category_changes.insert().from_select(
            ["category_id", "action", "new_name", "changed_by", "changed_at"],
            sa.select(
                codebook.c.id,
                sa.literal("defined"),
                codebook.c.category,
                codebook.c.added_by,
                codebook.c.created_at,
            ).order_by(codebook.c.id),
        )
    )


MIGRATIONS = {1: _v1_to_v2, 2: _v2_to_v3}  # from version -> step to version + 1


def read_verdicts(conn: sa.Connection) -> list[str]:
    """The store's allowed verdicts, in their configured order."""
    return json.loads(
        conn.execute(sa.select(meta.c.value).where(meta.c.key == "verdicts")).scalar()
    )


def stored_version(conn: sa.Connection) -> int | None:
    """The schema version recorded in the store, or ``None`` for an empty database."""
    names = set(sa.inspect(conn).get_table_names())
    if "meta" not in names:
        if names & {"labels", "rounds", "consensus"}:
            msg = "The database holds label tables but no 'meta' table with a schema version: it is not a tm_compare label store (or it was damaged)."
            raise LabelStoreError(msg)
        return None
    value = conn.execute(sa.select(meta.c.value).where(meta.c.key == "schema_version")).scalar()
    if value is None or not str(value).isdigit():
        msg = f"The label store records no valid schema version (found {value!r}); it was damaged."
        raise LabelStoreError(msg)
    return int(value)


def prepare_schema(conn: sa.Connection, where: str, settings: dict[str, str]) -> None:
    """Create a new store, or upgrade an older one, inside the caller's write transaction."""
    version = stored_version(conn)
    if version is None:
        metadata.create_all(conn)
        rows = [{"key": "schema_version", "value": str(SCHEMA_VERSION)}]
        rows += [{"key": k, "value": v} for k, v in settings.items()]
        conn.execute(meta.insert(), rows)
        return
    refuse_newer(version, where)
    while version < SCHEMA_VERSION:
        MIGRATIONS[version](conn)
        version += 1
    conn.execute(meta.update().where(meta.c.key == "schema_version").values(value=str(version)))
    for key, value in settings.items():
        if conn.execute(sa.select(meta.c.key).where(meta.c.key == key)).first() is None:
            conn.execute(meta.insert().values(key=key, value=value))


def refuse_newer(version: int, where: str) -> None:
    """Raise StoreVersionError for a store written by a newer tm_compare."""
    if version > SCHEMA_VERSION:
        msg = (
            f"The label store {where} has schema version {version}, written by a newer "
            f"tm_compare; this version reads up to {SCHEMA_VERSION}. Upgrade tm_compare to open it."
        )
        raise StoreVersionError(msg)


# --- integrity ---------------------------------------------------------------------------


def _version_problems(conn: sa.Connection, table: sa.Table, key: tuple[str, ...]) -> list[str]:
    cols = [table.c[k] for k in key]
    rows = conn.execute(sa.select(*cols, table.c.version, table.c.id).order_by(*cols, table.c.id))
    problems, current, seen = [], None, []
    for row in [*rows, None]:
        this = None if row is None else tuple(row[: len(key)])
        if this != current and current is not None and seen != list(range(1, len(seen) + 1)):
            label = ", ".join(f"{k}={v!r}" for k, v in zip(key, current, strict=True))
            problems.append(
                f"{table.name}: versions of ({label}) in write order are {seen}, "
                f"expected 1..{len(seen)} with no gap, repeat or reordering"
            )
        if row is not None:
            seen = [*seen, row.version] if this == current else [row.version]
        current = this
    return problems


def integrity_problems(conn: sa.Connection, verdicts: list[str]) -> list[str]:
    """Invariants of the store that no write through tm_compare can break."""
    problems = []
    version = stored_version(conn)
    if version != SCHEMA_VERSION:
        problems.append(f"meta: schema version is {version}, expected {SCHEMA_VERSION}")
    if conn.dialect.name == "sqlite":
        result = [r[0] for r in conn.exec_driver_sql("PRAGMA integrity_check")]
        if result != ["ok"]:
            problems.append(f"sqlite integrity_check: {'; '.join(map(str, result[:5]))}")
    problems += _version_problems(conn, labels, KEYS["labels"])
    problems += _version_problems(conn, consensus, KEYS["consensus"])
    orphan_rounds = conn.execute(
        sa.select(labels.c.id, labels.c.round_id)
        .where(labels.c.round_id.is_not(None))
        .where(~sa.exists().where(rounds.c.id == labels.c.round_id))
    ).all()
    problems += [
        f"labels: row {r.id} refers to round {r.round_id}, which does not exist"
        for r in orphan_rounds
    ]
    uids = set(conn.execute(sa.select(labels.c.uid)).scalars())
    for row in conn.execute(sa.select(consensus.c.id, consensus.c.sources)):
        try:
            missing = sorted(set(json.loads(row.sources)) - uids)
        except (TypeError, ValueError):
            missing = [f"unreadable list {row.sources!r}"]
        if missing:
            problems.append(
                f"consensus: row {row.id} was settled from labels {missing}, which do not exist"
            )
    known = set(conn.execute(sa.select(codebook.c.category)).scalars())
    known |= set(
        conn.execute(
            sa.select(category_changes.c.old_name).where(category_changes.c.action == "renamed")
        ).scalars()
    )
    for table in (labels, consensus):
        for row in conn.execute(
            sa.select(table.c.id, table.c.category, table.c.verdict).where(
                table.c.category.is_not(None) | table.c.verdict.is_not(None)
            )
        ):
            if row.category is not None and row.category not in known:
                problems.append(
                    f"{table.name}: row {row.id} has category {row.category!r}, not in the codebook"
                )
            if row.verdict is not None and row.verdict not in verdicts:
                problems.append(
                    f"{table.name}: row {row.id} has verdict {row.verdict!r}, not one of {verdicts}"
                )
    return problems


def check_text(field: str, value: str | None) -> None:
    """Refuse text no back end can store the same way (NUL, lone surrogates), so stores stay
    interchangeable."""
    if value is not None and "\x00" in value:
        pos = value.index("\x00")
        msg = (
            f"The {field!r} of a label contains a NUL character (\\x00) at position {pos}; "
            "PostgreSQL cannot store it, so no label store accepts it. Remove the character."
        )
        raise LabelStoreError(msg)
    if value is not None and not value.isascii():
        try:
            value.encode("utf-8")
        except UnicodeEncodeError as exc:
            msg = (
                f"The {field!r} of a label contains {value[exc.start]!r} at position "
                f"{exc.start}, half of a UTF-16 surrogate pair, which is not a character and "
                "cannot be stored as UTF-8. Remove it (it often comes from text cut in two)."
            )
            raise LabelStoreError(msg) from None


# --- conflicts and label files -------------------------------------------------------------


def is_driver_error(exc: BaseException) -> bool:
    """Whether ``exc`` came from the database driver (and so needs :func:`translate`)."""
    return isinstance(exc, (sa.exc.SQLAlchemyError, sqlite3.Error)) and not isinstance(
        exc, sa.exc.ArgumentError
    )


_SHOWN_IN_CONFLICTS = ("version", *LABEL_FIELDS, "retracted", "created_at")


def _short(values) -> str:
    if values is None:
        return "no label"
    data = record(values)
    shown = {k: data.get(k) for k in _SHOWN_IN_CONFLICTS if data.get(k) is not None}
    return ", ".join(f"{k}={v!r}" for k, v in shown.items())


def conflict_error(table: str, key: dict, base: int, latest, attempted: dict) -> LabelConflictError:
    where = ", ".join(f"{k}={v!r}" for k, v in key.items())
    have = 0 if latest is None else latest.version
    kind = "settled label" if table == "consensus" else "label"
    msg = (
        f"The {kind} ({where}) changed since the version you started from: your edit is based on "
        f"version {base}, the store holds version {have}. Stored: [{_short(latest)}]. "
        f"Yours (not saved): [{_short(attempted)}]. Nothing was lost: both are on this error "
        f"(.current, .attempted); to keep yours, save it again with based_on={have}."
    )
    err = LabelConflictError(msg)
    err.current = None if latest is None else record(latest)
    err.attempted = dict(attempted)
    return err
