"""What intake and preparation removed or merged, and why.

Nothing is dropped silently: every stage records counts per reason and per
source here, and the log prints as a table.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import pandas as pd

from .._validation import check_choice

_COLUMNS = ["stage", "kind", "reason", "source", "count", "example"]
#: ``removed``: rows gone; ``merged``: rows folded into another document (their
#: weight moved with them); ``flagged``: rows kept but with a value set aside
#: (an unreadable date, an unusable URL). Only the first two leave the corpus.
KINDS = ("removed", "merged", "flagged")


@dataclass
class RemovalLog:
    """Counts of rows or documents removed, merged or flagged, per stage, reason and source.

    ``input_rows`` is the number of rows that entered intake. ``kept`` maps a
    stage to the number of documents it passed on, so that for every stage
    ``kept[stage] + total(stage)`` accounts for every row that entered it
    (see :meth:`accounted_rows`).
    """

    input_rows: int = 0
    entries: list[dict] = field(default_factory=list)
    kept: dict[str, int] = field(default_factory=dict)

    def add(
        self,
        stage: str,
        reason: str,
        source: str,
        count: int,
        example: str = "",
        *,
        kind: str | None = None,
    ) -> None:
        """Record ``count`` rows of ``source`` handled at ``stage`` for ``reason``.

        ``kind`` is one of :data:`KINDS`; by default ``"merged"`` when the
        reason starts with "merged", else ``"removed"``.
        """
        if kind is None:
            kind = "merged" if reason.startswith("merged") else "removed"
        check_choice("RemovalLog.add", "kind", kind, KINDS)
        if count:
            self.entries.append(
                {
                    "stage": stage,
                    "kind": kind,
                    "reason": reason,
                    "source": str(source),
                    "count": int(count),
                    "example": str(example)[:120],
                }
            )

    def add_counts(
        self, stage: str, reason: str, counts: pd.Series, examples=None, *, kind: str | None = None
    ) -> None:
        """Record a per-source Series of counts (index = source)."""
        for source, count in counts.items():
            example = "" if examples is None else examples.get(source, "")
            self.add(stage, reason, source, int(count), example, kind=kind)

    def extend(self, other: RemovalLog) -> None:
        """Append the entries and per-stage document counts of ``other``."""
        self.entries.extend(other.entries)
        self.kept.update(other.kept)

    def to_frame(self) -> pd.DataFrame:
        """One row per (stage, kind, reason, source) with the summed count and a first example."""
        if not self.entries:
            return pd.DataFrame(columns=_COLUMNS)
        df = pd.DataFrame([{"kind": "removed", **e} for e in self.entries], columns=_COLUMNS)
        keys = ["stage", "kind", "reason", "source"]
        grouped = df.groupby(keys, sort=False)
        out = grouped["count"].sum().to_frame()
        out["example"] = grouped["example"].first()
        return out.reset_index()

    def total(self, stage: str | None = None, kind: str | None = None) -> int:
        """Rows removed or merged (``kind=None``), or of one ``kind``, optionally for one stage."""
        kinds = ("removed", "merged") if kind is None else (kind,)
        return int(
            sum(
                e["count"]
                for e in self.entries
                if (stage is None or e["stage"] == stage) and e.get("kind", "removed") in kinds
            )
        )

    def accounted_rows(self, stage: str = "intake") -> int:
        """Documents kept by ``stage`` plus rows it removed or merged.

        For intake this equals :attr:`input_rows` when nothing went unrecorded.
        """
        return int(self.kept.get(stage, 0)) + self.total(stage)

    def to_dict(self) -> dict:
        return {
            "input_rows": self.input_rows,
            "entries": list(self.entries),
            "kept": dict(self.kept),
        }

    @classmethod
    def from_dict(cls, data: dict) -> RemovalLog:
        return cls(
            input_rows=int(data.get("input_rows", 0)),
            entries=list(data.get("entries", [])),
            kept={k: int(v) for k, v in data.get("kept", {}).items()},
        )

    def _headline(self) -> str:
        lines = [f"{self.input_rows} input rows"]
        for stage, kept in self.kept.items():
            lines.append(
                f"{stage}: {kept} documents kept; removed {self.total(stage, 'removed')}, "
                f"merged {self.total(stage, 'merged')}, flagged {self.total(stage, 'flagged')}"
            )
        return "\n".join(lines)

    def __str__(self) -> str:
        df = self.to_frame()
        if df.empty:
            return self._headline() + "\nnothing removed, merged or flagged."
        return self._headline() + "\n" + df.drop(columns="example").to_string(index=False)

    def _repr_html_(self) -> str:
        from html import escape

        head = "<br>".join(escape(line) for line in self._headline().splitlines())
        return f"<p>{head}</p>" + self.to_frame().to_html(index=False, escape=True)
