"""Settled (consensus) labels of a label store, and labels carried over to another fit.

A settled label records who settled it and the uids of the analysts' labels it was settled from;
like labels, every change is a new version. :class:`ConsensusMixin` gives
:class:`~tm_compare.labels.store.LabelStore` these methods.
"""

from __future__ import annotations

import json

import pandas as pd
import sqlalchemy as sa

from .._validation import param_error
from ..errors import LabelStoreError
from . import _files as _f
from . import _schema as _s
from . import categories as _categories
from ._keys import check_topic, fit_id, renamed_fit

#: Columns of :meth:`LabelStore.consensus`.
CONSENSUS_COLUMNS = tuple(c.key for c in _s.consensus.c if c.key != "id")


class ConsensusMixin:
    def settle(self, fit, topic, *, name: str, verdict: str | None = None,
               category: str | None = None, note: str = "", from_labels=None,
               based_on: int | None = None) -> dict:  # fmt: skip
        """Record the settled (consensus) label of ``topic``, who settled it and from which labels.

        ``from_labels``: uids of the history rows it was settled from (default: every analyst's
        current label of the topic). ``based_on``: the consensus version it replaces (None: first).
        """
        fit, topic = fit_id(fit), check_topic(topic)
        who = self._writer("settle a label")
        if self.in_blind_round(fit):
            msg = f"A blind round is open on fit {fit!r}; close it before settling labels."
            raise LabelStoreError(msg)
        values = {"name": name, "note": note, "verdict": verdict, "category": category}
        with self._guard(), self._write_transaction() as conn:
            _categories.refuse_for_new_label(conn, values["category"])
            values = self._clean(conn, values)
            current = [r for r in self._current_rows(conn, fit) if r.topic == topic]
            if from_labels is None:
                sources = [r.uid for r in current if not r.retracted]
            else:
                sources = [from_labels] if isinstance(from_labels, str) else list(from_labels)
                t = _s.labels
                query = sa.select(t.c.uid).where(t.c.fit == fit, t.c.topic == topic)
                unknown = set(sources) - set(conn.execute(query).scalars())
                if unknown:
                    accepted = f"uids of labels of topic {topic} of fit {fit!r}"
                    raise param_error("settle", "from_labels", sorted(unknown), accepted)
            values.update(settled_by=who, sources=json.dumps(sources))
            key = {"fit": fit, "topic": topic}
            self._append(conn, key, values, based_on, table=_s.consensus)
        return next(r for r in self._consensus_records(fit, False) if r["topic"] == topic)

    def _consensus_records(self, fit: str, history: bool) -> list[dict]:
        c = _s.consensus
        rows = self._read(sa.select(c).where(c.c.fit == fit).order_by(c.c.topic, c.c.version))
        records = [{k: v for k, v in _s.record(r).items() if k != "id"} for r in rows]
        for rec in records:
            rec["sources"] = json.loads(rec["sources"])
        if not history:
            records = list({rec["topic"]: rec for rec in records}.values())
        return records

    @renamed_fit
    def consensus(self, fit, *, history: bool = False) -> pd.DataFrame:
        """Settled labels: the latest per topic (or every version with ``history=True``), with
        ``settled_by`` and ``sources`` (uids of the labels it was settled from)."""
        records = self._consensus_records(fit_id(fit), history)
        return pd.DataFrame(records, columns=list(CONSENSUS_COLUMNS))

    def carry_over(
        self, source, target, *, alignment: pd.DataFrame | None = None, threshold: float = 0.5
    ) -> pd.DataFrame:
        """Suggest labels for ``target`` from ``source``'s labels through topic alignment.

        ``alignment``: columns ``topic_a`` (source), ``topic_b`` (target), ``similarity``; by
        default ``tm_compare.models.alignment.align_topics(source, target)`` (needs both fits).
        Returns suggestions (nothing is stored): ``topic``, ``from_fit``, ``from_topic``,
        ``similarity``, ``kind`` ("consensus" or "label"), ``analyst``, ``name``, ``verdict``,
        ``category``, ``note``; best match first within each target topic.
        """
        alignment = _f.carry_over_alignment(source, target, alignment, threshold)
        return _f.carry_over(self, fit_id(source), alignment, threshold)
