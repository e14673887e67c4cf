"""Coding rounds of a label store: while a blind round is open on a fit, each analyst reads only
their own labels of it, so first judgements are independent (agreement is measured on them).

:class:`RoundsMixin` gives :class:`~tm_compare.labels.store.LabelStore` these methods.
"""

from __future__ import annotations

import functools

import pandas as pd
import sqlalchemy as sa

from ..errors import LabelStoreError
from . import _schema as _s
from ._keys import fit_id, renamed_fit


class RoundsMixin:
    def _open_round(self, conn, fit: str):
        return conn.execute(_s.OPEN_ROUND, {"fit": fit}).first()

    @renamed_fit
    def open_round(self, fit, name: str = "", blind: bool = True) -> int:
        """Open a coding round on ``fit``; while a blind round is open, each analyst reads
        only their own labels of that fit. Returns the round's id."""
        fit = fit_id(fit)
        who = self._writer("open a round")
        _s.check_text("name", name)
        with self._guard(), self._write_transaction() as conn:
            existing = self._open_round(conn, fit)
            if existing is not None:
                msg = f"Round {existing.id} ({existing.name!r}) is still open on fit {fit!r}; close it with close_round first."
                raise LabelStoreError(msg)
            return conn.execute(
                _s.rounds.insert().values(
                    fit=fit, name=name, blind=bool(blind), opened_by=who, opened_at=_s.utc_now()
                )
            ).inserted_primary_key[0]

    @renamed_fit
    def close_round(self, fit) -> int:
        """Close the open round on ``fit``; everyone's labels become visible. Returns its id."""
        fit = fit_id(fit)
        who = self._writer("close a round")
        with self._guard(), self._write_transaction() as conn:
            existing = self._open_round(conn, fit)
            if existing is None:
                msg = f"No round is open on fit {fit!r}."
                raise LabelStoreError(msg)
            conn.execute(
                _s.rounds.update()
                .where(_s.rounds.c.id == existing.id)
                .values(closed_by=who, closed_at=_s.utc_now())
            )
            return existing.id

    @renamed_fit
    def rounds(self, fit=None) -> pd.DataFrame:
        """Rounds, oldest first: ``id``, ``fit``, ``name``, ``blind``, who/when opened and closed."""
        r = _s.rounds
        query = sa.select(r).order_by(r.c.id)
        if fit is not None:
            query = query.where(r.c.fit == fit_id(fit))
        return pd.DataFrame([_s.record(x) for x in self._read(query)], columns=[c.key for c in r.c])

    @functools.cached_property
    def _visible(self):
        """A filter on labels hiding other analysts' rows of fits in an open blind round."""
        r = _s.rounds
        blind = sa.select(r.c.fit).where(r.c.blind.is_(True), r.c.closed_at.is_(None))
        if self.analyst is None:
            return _s.labels.c.fit.not_in(blind)
        return sa.or_(_s.labels.c.fit.not_in(blind), _s.labels.c.analyst == self.analyst)

    @functools.cached_property
    def _latest_visible(self):
        t = _s.labels
        return (
            sa.select(t)
            .where(*[t.c[k] == sa.bindparam(k) for k in _s.KEYS["labels"]], self._visible)
            .order_by(t.c.version.desc())
            .limit(1)
        )

    @renamed_fit
    def in_blind_round(self, fit) -> bool:
        """Whether a blind round is open on ``fit``."""
        r = _s.rounds
        rows = self._read(
            sa.select(r.c.id).where(
                r.c.fit == fit_id(fit), r.c.blind.is_(True), r.c.closed_at.is_(None)
            )
        )
        return bool(rows)
