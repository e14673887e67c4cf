"""Corpus intake: one row per document, from a DataFrame or a file.

Core only; validation, URL canonicalisation and file readers are filled in
by the intake work (see DEVELOPERS.md, "Corpus").
"""

from __future__ import annotations

import pandas as pd

from ._hashing import fingerprint as _fingerprint
from .errors import CorpusError
from .removals import RemovalLog

CANONICAL = ["id", "text", "source", "weight", "group", "url", "canonical_url", "title", "date"]


class Corpus:
    """Documents from one or more sources, with an intake report."""

    def __init__(self, frame: pd.DataFrame, report: RemovalLog):
        self.frame = frame
        self.report = report

    @classmethod
    def from_frame(cls, df: pd.DataFrame, text="text", source="source", id=None, weight=None,
                   group=None, url=None, title=None, date=None) -> Corpus:
        mapping = {"text": text, "source": source, "id": id, "weight": weight, "group": group,
                   "url": url, "title": title, "date": date}
        for role, col in mapping.items():
            if col is not None and col not in df.columns:
                msg = (f"The {role} column {col!r} is not in the data. "
                       f"Columns present: {', '.join(map(str, df.columns))}.")
                raise CorpusError(msg)
        out = pd.DataFrame(index=range(len(df)))
        for role, col in mapping.items():
            out[role] = df[col].to_numpy() if col is not None else None
        if id is None:
            out["id"] = [f"doc{i}" for i in range(len(df))]
        out["id"] = out["id"].astype(str)
        out["text"] = out["text"].astype(str)
        out["source"] = out["source"].astype(str)
        out["weight"] = 1.0 if weight is None else pd.to_numeric(out["weight"]).astype(float)
        out["canonical_url"] = out["url"]
        used = {c for c in mapping.values() if c is not None}
        for extra in df.columns:
            if extra not in used and extra not in CANONICAL:
                out[extra] = df[extra].to_numpy()
        return cls(out, RemovalLog(input_rows=len(df)))

    @property
    def sources(self) -> list[str]:
        return sorted(self.frame["source"].unique().tolist())

    @property
    def fingerprint(self) -> str:
        f = self.frame
        return _fingerprint(f["id"].to_numpy(), f["text"].to_numpy(), f["source"].to_numpy(),
                            f["weight"].to_numpy())

    def __len__(self) -> int:
        return len(self.frame)
