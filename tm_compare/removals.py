"""What intake and preparation removed or merged, and why.

Nothing is dropped silently: every stage records counts per reason and per
source here, and the log prints as a table.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import pandas as pd

_COLUMNS = ["stage", "reason", "source", "count", "example"]


@dataclass
class RemovalLog:
    """Counts of rows or documents removed/merged, per stage, reason and source.

    ``input_rows`` is the number of rows that entered intake; with the
    counts of rows dropped and merged it accounts for every input row
    (see :meth:`accounted_rows`).
    """

    input_rows: int = 0
    entries: list[dict] = field(default_factory=list)

    def add(self, stage: str, reason: str, source: str, count: int, example: str = "") -> None:
        """Record ``count`` rows of ``source`` removed at ``stage`` for ``reason``."""
        if count:
            self.entries.append(
                {"stage": stage, "reason": reason, "source": str(source), "count": int(count),
                 "example": str(example)[:120]}
            )

    def add_counts(self, stage: str, reason: str, counts: pd.Series, examples=None) -> None:
        """Record a per-source Series of counts (index = source)."""
        for source, count in counts.items():
            example = "" if examples is None else examples.get(source, "")
            self.add(stage, reason, source, int(count), example)

    def extend(self, other: RemovalLog) -> None:
        self.entries.extend(other.entries)

    def to_frame(self) -> pd.DataFrame:
        """One row per (stage, reason, source) with the summed count."""
        if not self.entries:
            return pd.DataFrame(columns=_COLUMNS)
        df = pd.DataFrame(self.entries, columns=_COLUMNS)
        first = df.groupby(["stage", "reason", "source"], sort=False)["example"].first()
        out = df.groupby(["stage", "reason", "source"], sort=False)["count"].sum().to_frame()
        out["example"] = first
        return out.reset_index()

    def total(self, stage: str | None = None) -> int:
        """Total count, optionally for one stage."""
        return int(sum(e["count"] for e in self.entries if stage is None or e["stage"] == stage))

    def to_dict(self) -> dict:
        return {"input_rows": self.input_rows, "entries": list(self.entries)}

    @classmethod
    def from_dict(cls, data: dict) -> RemovalLog:
        return cls(input_rows=int(data.get("input_rows", 0)), entries=list(data.get("entries", [])))

    def __str__(self) -> str:
        df = self.to_frame()
        head = f"{self.input_rows} input rows"
        if df.empty:
            return head + "; nothing removed or merged."
        return head + "\n" + df.drop(columns="example").to_string(index=False)

    def _repr_html_(self) -> str:
        from html import escape

        return f"<p>{escape(str(self.input_rows))} input rows</p>" + self.to_frame().to_html(
            index=False, escape=True
        )
