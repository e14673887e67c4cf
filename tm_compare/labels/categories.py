"""The team's label categories (the codebook): define, rename, retire and restore, with history.

Categories belong to a label store, so each project (or shared PostgreSQL store) has its own
list. Labels keep the category text they were saved with: nothing stored is rewritten.

- A **rename** changes the codebook's name for the category and records the old name in
  ``category_changes``; labels saved under the old name count as the new one wherever labels are
  compared (agreement, the labelling form), and their history still shows what was chosen then.
- A **retired** category is no longer offered for new labels; labels that use it keep it, and
  :meth:`restore_category` brings it back.
- A name is never reused for a different category (current, old and retired names included),
  so every old name maps to exactly one category.

:class:`CategoriesMixin` gives :class:`~tm_compare.labels.store.LabelStore` these methods;
the functions below work on a connection inside the caller's transaction.
"""

from __future__ import annotations

import pandas as pd
import sqlalchemy as sa

from .._validation import param_error
from ..errors import LabelStoreError
from . import _schema as _s

#: Columns of :meth:`CategoriesMixin.category_table`.
CATEGORY_COLUMNS = ("category", "description", "status", "former_names", "added_by", "created_at")
#: Columns of :meth:`CategoriesMixin.category_history`.
CHANGE_COLUMNS = ("category", "action", "old_name", "new_name", "changed_by", "changed_at")

_cb, _ch = _s.codebook, _s.category_changes


def check_name(owner: str, name) -> str:
    """A category name: non-empty text of at most 200 characters, stored as given (stripped)."""
    if not isinstance(name, str) or not name.strip() or len(name.strip()) > 200:
        raise param_error(owner, "category", name, "a non-empty string of at most 200 characters")
    _s.check_text("category", name)
    return name.strip()


def _rows(conn) -> list:
    return conn.execute(sa.select(_cb).order_by(_cb.c.id)).all()


def _former(conn) -> dict[str, int]:
    """Old name -> id of the category that carried it."""
    query = sa.select(_ch.c.old_name, _ch.c.category_id).where(_ch.c.action == "renamed")
    return {r.old_name: r.category_id for r in conn.execute(query)}


def aliases(conn) -> dict[str, str]:
    """Every name a category ever had -> its current name."""
    current = {r.id: r.category for r in _rows(conn)}
    mapping = {old: current[cid] for old, cid in _former(conn).items() if cid in current}
    mapping.update({name: name for name in current.values()})
    return mapping


def active(conn) -> list[str]:
    """Categories offered for new labels, in the order they were defined."""
    return [r.category for r in _rows(conn) if r.retired_at is None]


def _log(conn, cid: int, action: str, old, new, who: str, when: str | None = None) -> None:
    conn.execute(
        _ch.insert().values(
            category_id=cid,
            action=action,
            old_name=old,
            new_name=new,
            changed_by=who,
            changed_at=when or _s.utc_now(),
        )
    )


def _taken(conn, name: str, cid: int | None = None) -> str | None:
    """Why ``name`` cannot be given to category ``cid`` (None: a new one), or None if free."""
    for row in _rows(conn):
        if row.category == name and row.id != cid:
            state = "retired" if row.retired_at else "in use"
            return f"the category {name!r} already exists ({state})"
    owner = _former(conn).get(name)
    if owner is not None and owner != cid:
        now = next(r.category for r in _rows(conn) if r.id == owner)
        return f"{name!r} is a former name of the category {now!r}"
    return None


def add(conn, entries: list[dict]) -> list[str]:
    """Define categories (dicts with ``category``, ``description``, ``added_by`` and optionally
    ``created_at``, and, from a label file's codebook, ``former_names``, ``retired_at`` and
    ``retired_by``); names already defined are skipped. Returns the names added."""
    known = {r.category for r in _rows(conn)} | set(_former(conn))
    added = []
    for entry in entries:
        name = entry["category"]
        if name not in known:
            when = entry.get("created_at") or _s.utc_now()
            cid = conn.execute(
                _cb.insert().values(
                    category=name,
                    description=entry.get("description") or "",
                    added_by=entry["added_by"],
                    created_at=when,
                    retired_at=entry.get("retired_at"),
                    retired_by=entry.get("retired_by"),
                )
            ).inserted_primary_key[0]
            _log(conn, cid, "defined", None, name, entry["added_by"], when)
            known.add(name)
            added.append(name)
        cid = next((r.id for r in _rows(conn) if r.category == name), None)
        for old in entry.get("former_names") or []:
            if cid is not None and old not in known:  # keeps labels saved under it readable
                _log(conn, cid, "renamed", old, name, entry["added_by"])
                known.add(old)
    return added


def codebook_frame(conn) -> pd.DataFrame:
    """Every category with its description, who added it and when, its retirement, and its
    former names (a list): what a label file carries so that an import keeps all of it."""
    former: dict[int, list[str]] = {}
    for old, cid in _former(conn).items():
        former.setdefault(cid, []).append(old)
    columns = ["category", "description", "added_by", "created_at", "retired_at", "retired_by"]
    rows = [
        {
            **{c: getattr(r, c) for c in columns},
            "former_names": [n for n in former.get(r.id, []) if n != r.category],
        }
        for r in _rows(conn)
    ]
    return pd.DataFrame(rows, columns=[*columns, "former_names"])


def _find(conn, owner: str, name: str):
    for row in _rows(conn):
        if row.category == name:
            return row
    now = aliases(conn).get(name)
    hint = (
        f" It was renamed to {now!r}."
        if now
        else f" Defined: {', '.join(map(repr, (r.category for r in _rows(conn)))) or 'none yet'}."
    )
    msg = f"{owner}: no category named {name!r} in the label store's codebook.{hint}"
    raise LabelStoreError(msg)


def refuse_for_new_label(conn, category) -> None:
    """Raise when ``category`` is retired or a former name (a new label needs a current one)."""
    if category is None:
        return
    names = {r.category: r for r in _rows(conn)}
    row = names.get(category)
    if row is not None and row.retired_at is not None:
        msg = (
            f"The category {category!r} was retired on {row.retired_at[:10]} by "
            f"{row.retired_by}; choose a current one ({', '.join(map(repr, active(conn)))}) or "
            f"restore it with store.restore_category({category!r})."
        )
        raise LabelStoreError(msg)
    if row is None and category in aliases(conn):
        msg = f"The category {category!r} was renamed to {aliases(conn)[category]!r}; save the label with the new name."
        raise LabelStoreError(msg)


def _entries(categories, who: str) -> list[dict]:
    items = [categories] if isinstance(categories, (str, tuple, dict)) else list(categories)
    entries = []
    for item in items:
        if isinstance(item, dict):
            name, description = item.get("category"), item.get("description", "")
        elif isinstance(item, tuple) and len(item) == 2:
            name, description = item
        else:
            name, description = item, ""
        if not isinstance(description, str):
            raise param_error("define_categories", "description", description, "a string")
        _s.check_text("description", description)
        entries.append(
            {
                "category": check_name("define_categories", name),
                "description": description,
                "added_by": who,
            }
        )
    return entries


class CategoriesMixin:
    """Codebook methods of :class:`~tm_compare.labels.store.LabelStore`."""

    def define_categories(self, categories) -> list[str]:
        """Define the project's label categories; names already defined are left as they are.

        ``categories``: names, ``(name, description)`` pairs or dicts with ``category`` and
        ``description``. Refuses a former name of another category and a retired one (restore
        it instead). Returns the names added, so re-running the call adds nothing.
        """
        who = self._writer("define categories")
        entries = _entries(categories, who)
        with self._guard(), _s.write_transaction(self._engine) as conn:
            for entry in entries:
                row = next((r for r in _rows(conn) if r.category == entry["category"]), None)
                if row is not None and row.retired_at is not None:
                    msg = f"The category {entry['category']!r} is retired; bring it back with store.restore_category({entry['category']!r})."
                    raise LabelStoreError(msg)
                reason = None if row is not None else _taken(conn, entry["category"])
                if reason:
                    msg = f"Cannot define {entry['category']!r}: {reason}. Pick another name."
                    raise LabelStoreError(msg)
            return add(conn, entries)

    def define_category(self, category: str, description: str = "") -> None:
        """Add one category to the codebook (see :meth:`define_categories`)."""
        self.define_categories([(category, description)])

    def categories(self, *, retired: bool = False) -> list[str]:
        """The categories offered for new labels (with ``retired=True``, retired ones too),
        in the order they were defined."""
        with self._guard(), self._engine.connect() as conn:
            return [r.category for r in _rows(conn) if retired or r.retired_at is None]

    def category_aliases(self) -> dict[str, str]:
        """Every name a category ever had -> its current name (current names map to themselves)."""
        with self._guard(), self._engine.connect() as conn:
            return aliases(conn)

    def rename_category(self, old: str, new: str) -> None:
        """Rename a category. Labels keep the name they were saved with; they count under the
        new name in agreement and in the form, and the rename is kept in the history."""
        old = check_name("rename_category", old)
        new = check_name("rename_category", new)
        who = self._writer("rename a category")
        with self._guard(), _s.write_transaction(self._engine) as conn:
            row = _find(conn, "rename_category", old)
            if new == old:
                return
            reason = _taken(conn, new, row.id)
            if reason:
                msg = f"Cannot rename {old!r} to {new!r}: {reason}. Pick another name."
                raise LabelStoreError(msg)
            conn.execute(_cb.update().where(_cb.c.id == row.id).values(category=new))
            _log(conn, row.id, "renamed", old, new, who)

    def _set_retired(self, name: str, retire: bool) -> None:
        action = "retire" if retire else "restore"
        name = check_name(f"{action}_category", name)
        who = self._writer(f"{action} a category")
        with self._guard(), _s.write_transaction(self._engine) as conn:
            row = _find(conn, f"{action}_category", name)
            if (row.retired_at is not None) == retire:
                return  # already so: nothing to record
            when = _s.utc_now() if retire else None
            conn.execute(
                _cb.update()
                .where(_cb.c.id == row.id)
                .values(retired_at=when, retired_by=who if retire else None)
            )
            _log(conn, row.id, "retired" if retire else "restored", name, name, who)

    def retire_category(self, category: str) -> None:
        """Stop offering ``category`` for new labels; labels that use it keep it."""
        self._set_retired(category, True)

    def restore_category(self, category: str) -> None:
        """Offer a retired category again."""
        self._set_retired(category, False)

    def category_table(self) -> pd.DataFrame:
        """Every category: ``category``, ``description``, ``status`` ("in use" or "retired"),
        ``former_names`` (comma-separated), ``added_by``, ``created_at``."""
        with self._guard(), self._engine.connect() as conn:
            frame = codebook_frame(conn)
        frame["status"] = ["retired" if r else "in use" for r in frame["retired_at"].notna()]
        frame["former_names"] = frame["former_names"].map(", ".join)
        return frame[list(CATEGORY_COLUMNS)]

    def category_history(self) -> pd.DataFrame:
        """Every change to the codebook, oldest first: ``category`` (its current name),
        ``action`` (defined, renamed, retired, restored), ``old_name``, ``new_name``,
        ``changed_by``, ``changed_at``."""
        query = (
            sa.select(_cb.c.category, *[_ch.c[c] for c in CHANGE_COLUMNS[1:]])
            .join(_cb, _cb.c.id == _ch.c.category_id)
            .order_by(_ch.c.id)
        )
        with self._guard(), self._engine.connect() as conn:
            rows = conn.execute(query).all()
        return pd.DataFrame([dict(r._mapping) for r in rows], columns=list(CHANGE_COLUMNS))
