"""Private part of the label store: the label files (export and import as JSON or CSV, their
readers, writers and checks) and the carry-over of labels from one fit to another.

The functions take a :class:`~tm_compare.labels.store.LabelStore` and a fit id already checked
by :func:`~tm_compare.labels.store.fit_id`; this module never imports
:mod:`tm_compare.labels.store`, so the store can import it at load time without a cycle.

Label files of format version 1 (the first release) name the fit ``model``; they are read as
well (:func:`tm_compare.labels._schema.record` maps the name).
"""

from __future__ import annotations

import csv
import io
import json
import numbers
from dataclasses import asdict
from pathlib import Path

import pandas as pd
import sqlalchemy as sa

from .._validation import check_choice, param_error
from ..errors import LabelStoreError
from . import _schema as _s

EXPORT_FORMAT = "tm_compare labels"
EXPORT_VERSION = 3  # 3: the codebook carries former_names and retirements; 2: "fit" (1: "model")
CSV_COLUMNS = (
    "fit",
    "topic",
    "top_words",
    "analyst",
    "version",
    *_s.LABEL_FIELDS,
    "retracted",
    "round",
    "created_at",
    "uid",
)


def export_text(store, fit: str, *, format: str, history: bool, top_words) -> str:
    """``fit``'s labels as the text of a JSON or CSV label file; see :meth:`LabelStore.export`."""
    check_choice("LabelStore.export", "format", format, ("json", "csv"))
    labels = store._labels(fit, history)
    words = {int(i): [str(w) for w in ws] for i, ws in enumerate(top_words or [])}
    round_names = dict(zip(*[store.rounds(fit)[c] for c in ("id", "name")], strict=True))
    records = []
    for label in labels:
        rec = asdict(label)
        rec.pop("id")
        rec["round"] = None if label.round is None else round_names.get(label.round)
        records.append(rec)
    doc = {
        "format": EXPORT_FORMAT,
        "format_version": EXPORT_VERSION,
        "fit": fit,
        "content": "history" if history else "current",
        "exported_at": _s.utc_now(),
        "analysts": sorted({r["analyst"] for r in records}),
        "top_words": {str(k): v for k, v in words.items()},
        "codebook": store.codebook().to_dict("records"),
        "labels": records,
        "consensus": store._consensus_records(fit, history=True),
    }
    if format == "json":
        return json.dumps(doc, ensure_ascii=False, indent=2)
    return csv_text(records, words, CSV_COLUMNS)


def import_labels(store, path, fit: str) -> dict:
    """Append the rows of a label file missing from ``store``; see :meth:`LabelStore.import_labels`."""
    path = Path(path)
    doc = read_export(path, EXPORT_FORMAT, EXPORT_VERSION, CSV_COLUMNS)
    settled = doc.get("consensus", [])
    found = {doc.get("fit")} | {r.get("fit") for r in [*doc["labels"], *settled]}
    if found != {fit}:
        others = sorted(str(m) for m in found - {fit})
        msg = (
            f"The label file {str(path)!r} belongs to model(s) {others}, not {fit!r}; "
            "import it into the store for that model's fingerprint, or export the right model."
        )
        raise LabelStoreError(msg)
    batches = [
        (_s.labels, [import_row(r, path) for r in doc["labels"]]),
        (_s.consensus, settled),
    ]
    counts = {"added": 0, "skipped": 0}
    with store._guard(), _s.write_transaction(store._engine) as conn:
        store._add_categories(conn, [dict(e) for e in doc.get("codebook", [])])
        for table, items in batches:
            query = sa.select(table.c.uid).where(table.c.fit == fit)
            known = set(conn.execute(query).scalars())
            for item in sorted(
                items, key=lambda r: (r["topic"], r.get("analyst", ""), r["version"])
            ):
                if item["uid"] in known:
                    counts["skipped"] += 1
                    continue
                key = {k: fit if k == "fit" else item[k] for k in _s.KEYS[table.name]}
                values = {
                    c.key: item.get(c.key) for c in table.c if c.key not in (*key, "id", "version")
                }
                if "sources" in values:  # consensus: the uids it was settled from
                    values["sources"] = json.dumps(values["sources"])
                values = store._clean(conn, values)
                # Appended after the key's latest version: an import never conflicts.
                latest = conn.execute(_s.LATEST[table.name], key).first()
                store._append(conn, key, values, latest.version if latest else 0, table=table)
                counts["added"] += 1
    return counts


def carry_over_alignment(source, target, alignment, threshold) -> pd.DataFrame:
    """The checked topic alignment for :meth:`LabelStore.carry_over` (computed when None)."""
    if not isinstance(threshold, numbers.Real) or not 0 <= threshold <= 1:
        raise param_error("carry_over", "threshold", threshold, "a similarity between 0 and 1")
    if alignment is None:
        # Imported here so that opening a store does not load scipy (used by alignment).
        from ..models.alignment import align_topics

        alignment = align_topics(source, target)
    missing = {"topic_a", "topic_b", "similarity"} - set(getattr(alignment, "columns", []))
    if missing:
        raise param_error(
            "carry_over",
            "alignment",
            f"a table without {sorted(missing)}",
            "a DataFrame with columns topic_a, topic_b, similarity",
        )
    return alignment


def carry_over(store, source_id: str, alignment: pd.DataFrame, threshold: float) -> pd.DataFrame:
    """Suggestions for the target's topics from ``source_id``'s labels and consensus."""
    matches = alignment.loc[
        alignment["similarity"] >= threshold, ["topic_a", "topic_b", "similarity"]
    ]
    labels = store.current(source_id).assign(kind="label")
    settled = (
        store.consensus(source_id)
        .rename(columns={"settled_by": "analyst"})
        .assign(kind="consensus")
    )
    keep = ["topic", "kind", "analyst", *_s.SETTLED_FIELDS]
    pool = pd.concat([settled[keep], labels[keep]], ignore_index=True).rename(
        columns={"topic": "from_topic"}
    )
    merged = matches.rename(columns={"topic_a": "from_topic", "topic_b": "topic"}).merge(
        pool, on="from_topic"
    )
    merged.insert(1, "from_fit", source_id)
    # A settled label outranks individual ones of the same source topic.
    merged["kind_order"] = merged["kind"].map({"consensus": 0, "label": 1})
    merged = merged.sort_values(
        ["topic", "similarity", "kind_order", "analyst"],
        ascending=[True, False, True, True],
        kind="stable",
    )
    columns = ["topic", "from_fit", "from_topic", "similarity", "kind", "analyst"]
    return merged[columns + list(_s.SETTLED_FIELDS)].reset_index(drop=True)


def csv_text(records: list[dict], words: dict[int, list[str]], columns) -> str:
    """Label records as CSV text: one row per label, empty cells for missing values, and the
    topic's top words joined by spaces so the file reads without the fit."""
    buffer = io.StringIO()
    writer = csv.DictWriter(buffer, fieldnames=columns, lineterminator="\n")
    writer.writeheader()
    for rec in records:
        row = {k: "" if rec.get(k) is None else rec[k] for k in columns if k != "top_words"}
        writer.writerow({**row, "top_words": " ".join(words.get(rec["topic"], []))})
    return buffer.getvalue()


def read_export(path: Path, format_name: str, format_version: int, csv_columns) -> dict:
    """The document of a label export file (JSON), or its rows (CSV), checked for shape."""
    try:
        text = path.read_text(encoding="utf-8")
    except OSError as exc:
        msg = f"Cannot read the label file {str(path)!r}: {exc}"
        raise LabelStoreError(msg) from exc
    if path.suffix.lower() == ".csv" or not text.lstrip().startswith("{"):
        reader = csv.DictReader(io.StringIO(text, newline=""))
        found = [_s.API_NAMES.get(f, f) for f in reader.fieldnames or []]
        if not found or set(csv_columns) - set(found):
            msg = f"{str(path)!r} is not a label export: a CSV needs the columns {list(csv_columns)}; found {reader.fieldnames}."
            raise LabelStoreError(msg)
        rows = [_s.record(r) for r in reader]
        fits = {r["fit"] for r in rows}
        return {"fit": next(iter(fits)) if len(fits) == 1 else None, "labels": rows}
    try:
        doc = json.loads(text)
    except json.JSONDecodeError as exc:
        msg = f"{str(path)!r} is not a label export: invalid JSON ({exc})."
        raise LabelStoreError(msg) from None
    if (
        not isinstance(doc, dict)
        or doc.get("format") != format_name
        or not isinstance(doc.get("labels"), list)
    ):
        msg = f"{str(path)!r} is not a label export (no 'format': {format_name!r} with a 'labels' list)."
        raise LabelStoreError(msg)
    if int(doc.get("format_version", 0)) > format_version:
        msg = f"{str(path)!r} was written by a newer tm_compare (label format {doc['format_version']}); upgrade to import it."
        raise LabelStoreError(msg)
    doc = _s.record(doc)
    for part in ("labels", "consensus"):
        doc[part] = [_s.record(r) if isinstance(r, dict) else r for r in doc.get(part, [])]
    return doc


def import_row(raw: dict, path: Path) -> dict:
    """A label record from JSON or CSV (where every value is text and empty means missing)."""

    def opt(value):
        return None if value is None or value == "" else value

    try:
        row = {
            "uid": str(raw["uid"]),
            "topic": int(raw["topic"]),
            "analyst": str(raw["analyst"]),
            "version": int(raw["version"]),
            "name": str(raw["name"]),
            "note": str(raw["note"]),
            "verdict": opt(raw.get("verdict")),
            "category": opt(raw.get("category")),
            "confidence": None if opt(raw.get("confidence")) is None else float(raw["confidence"]),
            "retracted": raw["retracted"] in (True, "True", "true", "1", 1),
            "created_at": str(raw["created_at"]),
        }
        if not 0 < len(row["uid"]) <= 32 or not 0 < len(row["created_at"]) <= 32:
            raise ValueError("uid and created_at must have 1 to 32 characters")
        if not row["analyst"].strip() or len(row["analyst"]) > 200:
            raise ValueError("analyst must be a name of 1 to 200 characters")
    except (KeyError, TypeError, ValueError) as exc:
        msg = f"The label file {str(path)!r} has an unreadable row ({exc!r}): {str(raw)[:200]}"
        raise LabelStoreError(msg) from None
    _s.check_text("analyst", row["analyst"])
    return row
