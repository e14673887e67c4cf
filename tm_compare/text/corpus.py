"""Corpus intake: one row per document, from a DataFrame or a CSV, Parquet or JSON Lines file.

Intake checks every column, canonicalises URLs, merges rows that are the
same document (same id, or same canonical URL, within one source and group:
their exposure weights add) and records every removal and merge in an intake
report, so that nothing leaves the corpus unseen.
"""

from __future__ import annotations

import json
import os
from collections.abc import Iterable
from pathlib import Path

import numpy as np
import pandas as pd

from .._atomic import atomic_path, atomic_write_json
from .._validation import check_choice, param_error
from ..errors import CorpusError, CorruptArtifactError, ProjectError
from ..project import Project
from . import _intake, _urls
from ._urls import TRACKING_PARAMS, canonical_url
from .removals import RemovalLog

__all__ = ["Corpus", "canonical_url", "load_corpus", "save_corpus", "TRACKING_PARAMS"]

CORPUS_FILE = "corpus.parquet"
CORPUS_REPORT = "corpus_report.json"

CANONICAL = [
    "id",
    "text",
    "source",
    "weight",
    "group",
    "url",
    "canonical_url",
    "title",
    "date",
    "duplicate_ids",
]
_ROLES = ("text", "source", "id", "weight", "group", "url", "title", "date")
_STRING_ROLES = ("id", "text", "source", "group", "url", "title")
CONFLICT_RULES = ("error", "first", "longest")


class Corpus:
    """Documents from one or more sources, with an intake report.

    Build one with :meth:`from_frame` or :meth:`read`. Attributes:

    frame : DataFrame
        One row per document: ``id``, ``text``, ``source``, ``weight`` (exposures,
        1.0 when not given), ``group`` (str or missing), ``url``, ``canonical_url``,
        ``title``, ``date`` (datetime64, naive UTC, or missing), ``duplicate_ids``
        (ids of the rows merged into this one), then any extra metadata columns
        (``outlet``, ...). Treat it as read-only.
    report : RemovalLog
        What intake removed, merged or flagged, per reason and source.
    settings : dict
        The column mapping and intake options, as recorded in a project manifest.
    """

    def __init__(self, frame: pd.DataFrame, report: RemovalLog, settings: dict | None = None):
        self.frame = frame
        self.report = report
        self.settings = dict(settings or {})

    @classmethod
    def from_frame(
        cls,
        df: pd.DataFrame,
        text="text",
        source="source",
        id=None,
        weight=None,
        group=None,
        url=None,
        title=None,
        date=None,
        *,
        on_conflict: str = "error",
        tracking_params: Iterable[str] | None = None,
        date_format: str | None = None,
        origin: str = "the data frame",
    ) -> Corpus:
        """Build a corpus from a DataFrame, naming the column of each role.

        Parameters
        ----------
        df : DataFrame
            One row per article (or per exposure: rows of the same article merge).
        text, source : str
            Columns holding the article text and the source ("shared", "visited", ...).
        id, weight, group, url, title, date : str, None or False
            Columns of the optional roles. ``None`` uses a column named like the
            role when there is one (``url`` for url, ...); ``False`` ignores it.
            Without ids, documents are named ``doc0``, ``doc1``, ... by input row.
        on_conflict : {"error", "first", "longest"}
            What to do when one id has different texts within a source
            (whitespace differences aside): stop with an error naming the ids, or
            keep the first row's text, or the longest. The rule also picks the text
            of rows merged by URL ("error" keeps the first there).
        tracking_params : iterable of str, optional
            Query-parameter patterns dropped from URLs (default ``TRACKING_PARAMS``).
        date_format : str, optional
            A ``strftime`` format such as ``"%d/%m/%Y"``; by default ISO 8601, then
            any format pandas recognises (month first when ambiguous).
        origin : str
            How error messages name the data (``read`` passes the file name).

        Notes
        -----
        Rows with the same id, or the same canonical URL (:func:`canonical_url`),
        in the same source and group merge into one document whose weight is the
        sum; rows of different groups (readers) stay apart so that exposure can be
        clustered by group later. Ids that recur across sources or groups get
        ``"@source"`` (then ``"/group"``) appended, so ``frame["id"]`` is unique.
        """
        check_choice("Corpus.from_frame", "on_conflict", on_conflict, CONFLICT_RULES)
        if not isinstance(df, pd.DataFrame):
            raise param_error("Corpus.from_frame", "df", type(df).__name__, "a pandas DataFrame")
        _intake.check_column_labels(df, origin)
        if tracking_params is not None and (
            isinstance(tracking_params, str | bytes)
            or not isinstance(tracking_params, Iterable)
            or not all(isinstance(p, str) for p in tracking_params)
        ):
            accepted = "a list of query-parameter patterns (strings such as 'utm_*')"
            raise param_error("Corpus.from_frame", "tracking_params", tracking_params, accepted)
        if date_format is not None and not isinstance(date_format, str):
            accepted = "None or a strftime format such as '%d/%m/%Y'"
            raise param_error("Corpus.from_frame", "date_format", date_format, accepted)
        tracking = tuple(TRACKING_PARAMS if tracking_params is None else tracking_params)
        roles = dict(zip(_ROLES, (text, source, id, weight, group, url, title, date), strict=True))
        for role in ("text", "source"):
            if not isinstance(roles[role], str):
                raise param_error("Corpus.from_frame", role, roles[role], "a column name")
        columns = _intake.resolve_columns(df, roles, origin)
        log = RemovalLog(input_rows=len(df))
        if len(df) == 0:
            msg = f"{origin} has no rows; a corpus needs at least one document."
            raise CorpusError(msg)
        ignored = {role for role, col in roles.items() if col is False}
        frame = _typed_frame(df, columns, ignored, origin, date_format, tracking, log)
        frame = _intake.merge_duplicates(frame, "id" in columns, on_conflict, log, origin)
        if frame.empty:
            msg = f"No documents left in {origin}: every row was removed.\n{log}"
            raise CorpusError(msg)
        frame["id"] = _intake.unique_ids(frame)
        log.kept["intake"] = len(frame)
        settings = {
            "columns": columns,
            "on_conflict": on_conflict,
            "tracking_params": list(tracking),
            "date_format": date_format,
        }
        return cls(frame, log, settings)

    @classmethod
    def read(
        cls,
        path: str | os.PathLike,
        format: str | None = None,
        *,
        encoding: str | None = None,
        **columns,
    ) -> Corpus:
        """Read a corpus from a CSV (or TSV), Parquet or JSON Lines file.

        Parameters
        ----------
        path : str or path-like
            The file; ``.csv``, ``.tsv``, ``.parquet``/``.pq``, ``.jsonl``/``.ndjson``,
            optionally compressed (``.gz``, ``.bz2``, ``.xz``, ``.zip``, ``.zst``).
        format : {"csv", "tsv", "parquet", "jsonl"}, optional
            Overrides the format inferred from the suffix.
        encoding : str, optional
            Text encoding of CSV and JSON Lines files (default UTF-8).
        **columns
            Column names and options, as for :meth:`from_frame`.
        """
        path = Path(path)
        if format is None:
            format = _intake.infer_format(path)
        check_choice("Corpus.read", "format", format, _intake.FORMATS)
        # Read id-like columns as text so that ids such as "007" keep their zeros.
        strings = [
            columns[r] if isinstance(columns.get(r), str) else r
            for r in _STRING_ROLES
            if columns.get(r) is not False
        ]
        df = _intake.read_table(path, format, encoding, strings)
        corpus = cls.from_frame(df, origin=f"the file {str(path)!r}", **columns)
        corpus.settings["file"] = {"name": path.name, "format": format, "encoding": encoding}
        return corpus

    @property
    def sources(self) -> list[str]:
        """Sorted source names."""
        return sorted(self.frame["source"].unique().tolist())

    @property
    def fingerprint(self) -> str:
        """A content hash of the whole frame (every column), stable across processes."""
        return _intake.frame_fingerprint(self.frame)

    def summary(self) -> pd.DataFrame:
        """Per source: rows read, removed and merged, documents, exposure, groups, date range."""
        f = self.frame
        by = f.groupby("source", sort=True)
        out = pd.DataFrame(
            {
                "documents": by.size(),
                "exposure": by["weight"].sum(),
                "groups": by["group"].nunique(),
                "first_date": by["date"].min(),
                "last_date": by["date"].max(),
            }
        )
        log = self.report.to_frame()
        log = log[log["stage"] == "intake"]
        for kind in ("removed", "merged"):
            counts = log[log["kind"] == kind].groupby("source")["count"].sum()
            out[kind] = counts.reindex(out.index).fillna(0).astype(int)
        out.insert(0, "rows_read", out["documents"] + out["removed"] + out["merged"])
        return out

    def __len__(self) -> int:
        return len(self.frame)

    def __repr__(self) -> str:
        parts = ", ".join(
            f"{s}: {n}" for s, n in self.frame["source"].value_counts().sort_index().items()
        )
        return f"<Corpus: {len(self)} documents ({parts}) from {self.report.input_rows} rows>"


def _typed_frame(df, columns, ignored, origin, date_format, tracking, log) -> pd.DataFrame:
    """The canonical columns, typed and checked, then the extra columns unchanged."""
    # A column named like a role but used for none is ambiguous, unless the role was
    # switched off (False). canonical_url is always recomputed; duplicate_ids carries on.
    clash = [c for c in df.columns if c in _ROLES and c not in ignored and columns.get(c) != c]
    if clash:
        msg = (
            f"{origin} has columns named {clash} that are not used for those roles, and "
            f"intake would overwrite them (roles: {columns}). Rename them, name them as "
            "the columns of those roles, or pass ROLE=False to leave them out."
        )
        raise CorpusError(msg)
    n = len(df)
    given = {role: df[col].reset_index(drop=True) for role, col in columns.items()}
    out = pd.DataFrame(index=pd.RangeIndex(n))
    rows = pd.Series([f"row {i}" for i in range(n)])
    if "id" in given:
        out["id"] = _intake.as_strings(given["id"], "id", columns["id"], rows, origin)
        _refuse_missing(out["id"], "id", columns["id"], origin, rows)
    else:
        out["id"] = pd.Series([f"doc{i}" for i in range(n)], dtype="str")
    for role in _STRING_ROLES[1:]:
        out[role] = (
            _intake.as_strings(given[role], role, columns[role], out["id"], origin, role != "text")
            if role in given
            else pd.Series(np.full(n, np.nan, object), dtype="str")
        )
    _refuse_missing(out["source"], "source", columns["source"], origin, out["id"])
    out["weight"] = (
        _intake.as_weights(given["weight"], columns["weight"], out["id"], origin)
        if "weight" in given
        else 1.0
    )
    out["canonical_url"] = _urls.canonical_urls(out["url"], tracking)
    unusable = out["canonical_url"].isna() & (out["url"].str.strip().str.len() > 0)
    _flag(log, "URL not absolute (kept, not used for merging)", unusable, out["source"], out["url"])
    out["date"] = pd.Series(pd.NaT, index=out.index, dtype="datetime64[us]")
    if "date" in given:
        out["date"], unread = _intake.as_dates(given["date"], date_format)
        _flag(log, "unreadable date (kept, date missing)", unread, out["source"], given["date"])
    out["duplicate_ids"] = df["duplicate_ids"].to_numpy() if "duplicate_ids" in df.columns else None
    out = out[CANONICAL]
    used = set(columns.values()) | set(CANONICAL) | ignored
    for extra in df.columns:
        if extra not in used:  # kept as given, dtype too (a category's order, nullable ints)
            out[extra] = df[extra].reset_index(drop=True)
    return out


def _flag(log: RemovalLog, reason: str, mask, sources: pd.Series, values: pd.Series) -> None:
    """Count rows kept with a value set aside, per source, with a first example."""
    mask = np.asarray(mask, bool)
    log.add_counts(
        "intake",
        reason,
        sources[mask].value_counts(sort=False),
        values[mask].groupby(sources[mask]).first(),
        kind="flagged",
    )


def _refuse_missing(values, role, column, origin, labels) -> None:
    missing = np.flatnonzero(
        values.isna().to_numpy(bool) | (values.str.strip() == "").to_numpy(bool)
    )
    if len(missing):
        msg = (
            f"The {role} column {column!r} of {origin} is empty in {len(missing)} row(s): "
            f"{_intake.describe_rows(missing, labels)}. Every row needs a {role}; fill or "
            "drop those rows first."
        )
        raise CorpusError(msg)


def save_corpus(corpus: Corpus, project: Project) -> Path:
    """Store ``corpus`` in ``project`` as ``corpus.parquet`` with its intake report beside it.

    The manifest records the corpus fingerprint, size, sources and intake
    settings. Each file is written atomically; a failed save leaves the
    previously saved corpus in place. Saving the corpus already stored
    writes nothing.
    """
    import pyarrow as pa

    project = project if isinstance(project, Project) else Project.open(project)
    fingerprint = corpus.fingerprint
    target = project.path / CORPUS_FILE
    saved = project.manifest.get("corpus", {}).get("fingerprint")
    if saved == fingerprint and target.exists() and (project.path / CORPUS_REPORT).exists():
        return target  # re-running a notebook: the same corpus is already stored
    try:
        with atomic_path(target) as tmp:
            corpus.frame.to_parquet(tmp, index=False)
    except (pa.ArrowException, TypeError, ValueError) as exc:
        msg = (
            f"Cannot save the corpus to {str(target)!r}: {exc}. A metadata column with mixed "
            "types cannot be stored; convert it first, e.g. "
            "corpus.frame[COLUMN] = corpus.frame[COLUMN].astype(str)."
        )
        raise ProjectError(msg) from exc
    atomic_write_json(
        project.path / CORPUS_REPORT,
        {
            "fingerprint": fingerprint,
            "report": corpus.report.to_dict(),
            "settings": corpus.settings,
        },
    )
    project.update_manifest(
        corpus={
            "file": CORPUS_FILE,
            "fingerprint": fingerprint,
            "documents": len(corpus),
            "sources": corpus.sources,
            "input_rows": corpus.report.input_rows,
        },
        settings={"intake": corpus.settings},
    )
    return target


def load_corpus(project: Project) -> Corpus:
    """The corpus saved by :func:`save_corpus`, checked against the manifest's fingerprint."""
    project = project if isinstance(project, Project) else Project.open(project)
    target, side = project.path / CORPUS_FILE, project.path / CORPUS_REPORT
    expected = project.manifest.get("corpus", {}).get("fingerprint")
    if expected is None or not target.exists():
        msg = (
            f"The project {str(project.path)!r} holds no saved corpus. Save one with "
            "save_corpus(corpus, project) (or run `tm-compare prepare ... --project DIR`)."
        )
        raise ProjectError(msg)
    try:
        frame = pd.read_parquet(target)
        stored = json.loads(side.read_text(encoding="utf-8"))
    except (OSError, ValueError) as exc:
        msg = (
            f"The saved corpus {str(target)!r} (or {CORPUS_REPORT}) cannot be read: {exc}. "
            "Save the corpus again with save_corpus(corpus, project)."
        )
        raise CorruptArtifactError(msg) from exc
    if "duplicate_ids" in frame.columns:  # Parquet gives arrays back; the frame holds lists
        frame["duplicate_ids"] = [
            [] if v is None else [str(x) for x in v] for v in frame["duplicate_ids"]
        ]
    corpus = Corpus(frame, RemovalLog.from_dict(stored.get("report", {})), stored.get("settings"))
    found = corpus.fingerprint
    if found != expected or stored.get("fingerprint") != expected:
        msg = (
            f"The saved corpus {str(target)!r} does not match the manifest (fingerprint "
            f"{found}, report {stored.get('fingerprint')}, manifest {expected}): a file was "
            "changed or a save was interrupted. Save the corpus again with "
            "save_corpus(corpus, project)."
        )
        raise CorruptArtifactError(msg)
    return corpus
