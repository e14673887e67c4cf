"""Private helpers of corpus intake: file readers, column checks, merging of duplicates."""

from __future__ import annotations

import bz2
import codecs
import difflib
import gzip
import json
import lzma
import os
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components

from .._hashing import fingerprint as _fingerprint
from .._validation import param_error
from ..errors import CorpusError, MissingDependencyError
from .removals import RemovalLog

FORMATS = ("csv", "tsv", "parquet", "jsonl")
_SUFFIXES = {
    ".csv": "csv",
    ".tsv": "tsv",
    ".parquet": "parquet",
    ".pq": "parquet",
    ".jsonl": "jsonl",
    ".ndjson": "jsonl",
}
_OPENERS = {".gz": gzip.open, ".bz2": bz2.open, ".xz": lzma.open}
_COMPRESSED = (*_OPENERS, ".zip", ".zst")
_SHOWN = 5  # how many offending rows an error message lists


# ---------------------------------------------------------------- files


def infer_format(path: Path) -> str:
    """The format named by the file suffix, looking past a compression suffix."""
    suffixes = [s.lower() for s in path.suffixes]
    if suffixes and suffixes[-1] in _COMPRESSED:
        suffixes = suffixes[:-1]
    if suffixes and suffixes[-1] in _SUFFIXES:
        return _SUFFIXES[suffixes[-1]]
    known = ", ".join(sorted(_SUFFIXES))
    msg = (
        f"Cannot tell the format of {str(path)!r} from its name. Known suffixes: {known} "
        f"(optionally followed by {', '.join(_COMPRESSED)}). Pass format= one of {FORMATS}; "
        "a .json file with one object per line is format='jsonl'."
    )
    raise CorpusError(msg)


def read_table(
    path: Path, fmt: str, encoding: str | None, string_columns: list[str]
) -> pd.DataFrame:
    """Read a CSV/TSV, Parquet or JSON Lines file into a DataFrame, with errors that name the file."""
    if not path.is_file():
        msg = f"The corpus file {str(path)!r} does not exist (working folder: {os.getcwd()!r}). Check the path."
        raise CorpusError(msg)
    enc = encoding or "utf-8-sig"  # a byte-order mark is harmless; plain UTF-8 reads the same
    check_encoding("Corpus.read", enc)
    try:
        if fmt in ("csv", "tsv"):
            # Only empty cells are missing: words such as "NA" or "null" stay text.
            return pd.read_csv(
                path,
                sep="\t" if fmt == "tsv" else ",",
                encoding=enc,
                dtype=dict.fromkeys(string_columns, "str"),
                keep_default_na=False,
                na_values=[""],
            )
        if fmt == "jsonl":
            return _read_jsonl(path, enc)
        return pd.read_parquet(path)
    except UnicodeDecodeError as exc:
        raise CorpusError(_decode_message(path, enc, exc)) from exc
    except CorpusError:
        raise
    except ImportError as exc:  # e.g. .zst files need the optional 'zstandard' package
        msg = (
            f"Reading {str(path)!r} needs an optional package that is not installed ({exc}). "
            "Install it, or decompress the file first."
        )
        raise MissingDependencyError(msg) from exc
    except (ValueError, OSError) as exc:  # parser errors, pyarrow errors, bad gzip data
        msg = f"Cannot read {str(path)!r} as {fmt}: {exc}. Check that the file is {fmt}, or pass format=."
        raise CorpusError(msg) from exc


def check_encoding(owner: str, encoding) -> str:
    """Refuse an encoding Python does not know, before any file is read."""
    try:
        return codecs.lookup(encoding).name
    except (LookupError, TypeError):
        accepted = "a text encoding Python knows, e.g. 'utf-8', 'cp1252', 'latin-1'"
        fix = "See the list of standard encodings in Python's codecs documentation."
        raise param_error(owner, "encoding", encoding, accepted, fix) from None


def _read_jsonl(path: Path, encoding: str) -> pd.DataFrame:
    try:
        return pd.read_json(path, lines=True, dtype=False, encoding=encoding)
    except ValueError as exc:
        if isinstance(exc, UnicodeDecodeError):
            raise
        # pandas does not say which line is bad; find it so the user can fix it.
        with _open_binary(path) as fh:
            for number, raw in enumerate(fh, start=1):
                line = raw.decode(encoding).strip()
                if not line:
                    continue
                try:
                    value = json.loads(line)
                except json.JSONDecodeError as bad:
                    msg = f"Line {number} of {str(path)!r} is not valid JSON ({bad.msg}): {line[:80]!r}."
                    raise CorpusError(msg) from exc
                if not isinstance(value, dict):
                    msg = (
                        f"Line {number} of {str(path)!r} is a JSON {type(value).__name__}, "
                        "but JSON Lines input needs one object per line."
                    )
                    raise CorpusError(msg) from exc
        raise


def _open_binary(path: Path):
    return _OPENERS.get(path.suffix.lower(), open)(path, "rb")


def _decode_message(path: Path, encoding: str, exc: UnicodeDecodeError) -> str:
    """Name the file, the first undecodable byte, its offset and line, and the fix."""
    where = ""
    try:
        offset, line, byte = _first_bad_byte(path, encoding)
        where = f": byte 0x{byte:02x} at offset {offset} (line {line})"
    except (OSError, EOFError, lzma.LZMAError):
        pass
    name = codecs.lookup(encoding).name.replace("-sig", "")
    return (
        f"The file {str(path)!r} is not valid {name}{where} cannot be decoded. "
        "Pass the file's encoding, e.g. Corpus.read(path, encoding='cp1252') or "
        "encoding='latin-1' (on the command line: --encoding cp1252), or re-save the file as "
        "UTF-8."
    )


def _first_bad_byte(path: Path, encoding: str, chunk: int = 1 << 20) -> tuple[int, int, int]:
    # A byte-order mark is valid UTF-8; decoding it plainly keeps offsets true to the file.
    if codecs.lookup(encoding).name == "utf-8-sig":
        encoding = "utf-8"
    decoder = codecs.getincrementaldecoder(encoding)()
    consumed = lines = 0
    with _open_binary(path) as fh:
        while data := fh.read(chunk):
            pending = decoder.getstate()[0]
            try:
                decoder.decode(data)
            except UnicodeDecodeError as exc:
                at = consumed - len(pending) + exc.start
                before = (pending + data)[: exc.start]
                return at, lines + before.count(b"\n") + 1, exc.object[exc.start]
            consumed += len(data)
            lines += data.count(b"\n")
    msg = "no undecodable byte found"
    raise EOFError(msg)


# ---------------------------------------------------------------- columns


def check_column_labels(df: pd.DataFrame, origin: str) -> None:
    """Refuse column labels that make a column ambiguous: MultiIndex levels or duplicates."""
    if isinstance(df.columns, pd.MultiIndex):
        msg = (
            f"{origin} has {df.columns.nlevels}-level (MultiIndex) column labels such as "
            f"{df.columns[0]!r}; intake needs one name per column. Flatten them first, e.g. "
            "df.columns = ['_'.join(map(str, c)) for c in df.columns]."
        )
        raise CorpusError(msg)
    twice = sorted({str(c) for c in df.columns[df.columns.duplicated()]})
    if twice:
        msg = (
            f"{origin} has more than one column named {', '.join(map(repr, twice))}; intake "
            "needs each column name once. Rename or drop the copies, e.g. "
            "df = df.loc[:, ~df.columns.duplicated()]."
        )
        raise CorpusError(msg)


def resolve_columns(df: pd.DataFrame, roles: dict, origin: str) -> dict[str, str]:
    """Map each role to a column: the one named, else a column named like the role, unless False."""
    present = [str(c) for c in df.columns]
    mapping = {}
    for role, col in roles.items():
        if col is False:
            continue
        if col is None:
            if role in present:
                mapping[role] = role
            continue
        if col not in df.columns:
            close = difflib.get_close_matches(str(col), present, n=1)
            hint = f" Did you mean {close[0]!r}?" if close else ""
            msg = (
                f"The {role} column {col!r} is not in {origin}. Columns present: "
                f"{', '.join(present)}.{hint} Pass {role}='NAME' with one of them."
            )
            raise CorpusError(msg)
        mapping[role] = col
    return mapping


def describe_rows(positions, labels: pd.Series, values=None) -> str:
    """'a17', 'a18' (+3 more), with values when given; used in error messages."""
    positions = list(positions)
    shown = []
    for pos in positions[:_SHOWN]:
        item = str(labels.iloc[pos])
        if values is not None:
            value = values.iloc[pos]
            item += f" ({(value.item() if isinstance(value, np.generic) else value)!r})"
        shown.append(item)
    more = f" and {len(positions) - _SHOWN} more" if len(positions) > _SHOWN else ""
    return ", ".join(shown) + more


def as_strings(
    values: pd.Series,
    role: str,
    column: str,
    labels: pd.Series,
    origin: str,
    numbers_ok: bool = True,
) -> pd.Series:
    """Values as strings (missing stays missing); bytes are decoded as UTF-8.

    Integer-valued floats become '3', not '3.0' (pandas reads an integer
    column with gaps as floats).
    """
    if pd.api.types.is_float_dtype(values.dtype) and numbers_ok:
        finite = values.dropna()
        if (finite == np.round(finite)).all():
            values = values.astype("Int64")
    elif pd.api.types.is_numeric_dtype(values.dtype) and not numbers_ok:
        msg = (
            f"The {role} column {column!r} of {origin} holds numbers ({values.dtype}); "
            f"text is expected. Pass {role}='NAME' naming the column that holds the {role}."
        )
        raise CorpusError(msg)
    if values.dtype == object:
        values = values.map(lambda v: _decode(v, role, column, origin))
        plain = (str, int, float, np.integer, np.floating, bool) if numbers_ok else str
        kinds = values.isna() | values.map(lambda v: isinstance(v, plain))
        bad = np.flatnonzero(~kinds.to_numpy(bool))
        if len(bad):
            kinds_seen = sorted({type(values.iloc[i]).__name__ for i in bad})
            accepted = "strings or numbers" if numbers_ok else "strings"
            msg = (
                f"The {role} column {column!r} of {origin} must hold {accepted}; rows "
                f"{describe_rows(bad, labels, values)} hold {', '.join(kinds_seen)}. "
                f"Convert the column to text before intake, or name another column."
            )
            raise CorpusError(msg)
    _refuse_surrogates(values, role, column, labels, origin)
    out = values.astype("str")
    return out.where(values.notna())


def _has_surrogate(value) -> bool:
    if not isinstance(value, str) or value.isascii():
        return False
    try:
        value.encode("utf-8")
    except UnicodeEncodeError:
        return True
    return False


def _refuse_surrogates(values: pd.Series, role, column, labels, origin) -> None:
    """Refuse lone UTF-16 surrogates: they are not characters and no file or store holds them."""
    if values.dtype != object:
        return
    bad = np.flatnonzero(values.map(_has_surrogate).to_numpy(bool))
    if len(bad):
        msg = (
            f"The {role} column {column!r} of {origin} holds half of a UTF-16 surrogate pair "
            f"(not a character; it often comes from text cut in two) in rows "
            f"{describe_rows(bad, labels)}. Remove those characters, e.g. "
            f"df[{column!r}].str.encode('utf-8', 'replace').str.decode('utf-8')."
        )
        raise CorpusError(msg)


def _decode(value, role, column, origin):
    """Bytes decoded as UTF-8; an integer-valued float as an int (so 3.0 reads '3')."""
    if isinstance(value, float | np.floating) and value.is_integer():
        return int(value)
    if not isinstance(value, bytes):
        return value
    try:
        return value.decode("utf-8")
    except UnicodeDecodeError as exc:
        msg = (
            f"The {role} column {column!r} of {origin} holds bytes that are not valid UTF-8 "
            f"(byte 0x{value[exc.start]:02x} at offset {exc.start} of {value[:40]!r}). "
            f"Decode the column first, e.g. df[{column!r}].str.decode('cp1252')."
        )
        raise CorpusError(msg) from exc


def as_weights(values: pd.Series, column: str, labels: pd.Series, origin: str) -> np.ndarray:
    """Exposure weights as floats; non-numeric (complex too), missing, infinite or negative values
    are errors."""
    complex_ = values.map(lambda v: isinstance(v, complex | np.complexfloating)).to_numpy(bool)
    if pd.api.types.is_complex_dtype(values.dtype) or complex_.any():
        bad = np.flatnonzero(complex_) if complex_.any() else np.arange(len(values))
        msg = (
            f"The weight column {column!r} of {origin} holds complex numbers in rows "
            f"{describe_rows(bad, labels, values)}. Weights must be real counts >= 0 (the "
            "number of exposures); keep the real part (df[col].real) if that is what you mean."
        )
        raise CorpusError(msg)
    numbers = pd.to_numeric(values, errors="coerce").astype(float)
    checks = [
        (numbers.isna() & values.notna(), "non-numeric", "numbers"),
        (values.isna(), "missing", "a number in every row (fill gaps, e.g. with 1)"),
        (np.isinf(numbers), "infinite", "finite numbers"),
        (numbers < 0, "negative", "counts >= 0"),
    ]
    for mask, what, accepted in checks:
        bad = np.flatnonzero(mask.to_numpy(bool))
        if len(bad):
            msg = (
                f"The weight column {column!r} of {origin} has {len(bad)} {what} value(s) in rows "
                f"{describe_rows(bad, labels, values)}. Weights must be {accepted}: the "
                "number of exposures (visits, shares) of each row. Fix those rows or "
                "pass weight=None to count each row once."
            )
            raise CorpusError(msg)
    return numbers.to_numpy(float)


def _day_first(text: pd.Series) -> bool:
    """Whether numeric dates such as ``03/04/2024`` put the day first: some value's first
    number is above 12 and no value's second is (read value by value, ``03/04/2024`` would
    otherwise be March 4th beside ``25/03/2024`` as March 25th)."""
    parts = text.str.extract(r"^\s*(\d{1,2})[/.\-](\d{1,2})[/.\-]\d{2,4}\b").dropna().astype(int)
    return bool(len(parts)) and (parts[0] > 12).any() and not (parts[1] > 12).any()


def as_dates(values: pd.Series, date_format: str | None) -> tuple[pd.Series, np.ndarray]:
    """Dates as naive UTC datetimes, and a mask of values that could not be read.

    ISO 8601 first; other values are read one by one, numeric day/month dates day first when
    the column shows it (:func:`_day_first`), month first otherwise (pandas' rule).
    """
    if pd.api.types.is_datetime64_any_dtype(values.dtype):
        parsed = (
            values if values.dt.tz is None else values.dt.tz_convert("UTC").dt.tz_localize(None)
        )
        return parsed, np.zeros(len(values), bool)
    text = values.astype("str").where(values.notna())
    fmt = date_format or "ISO8601"
    parsed = pd.to_datetime(text, errors="coerce", utc=True, format=fmt)
    retry = parsed.isna() & text.notna()
    if date_format is None and retry.any():  # slower per-value parsing only where needed
        parsed[retry] = pd.to_datetime(
            text[retry], errors="coerce", utc=True, format="mixed", dayfirst=_day_first(text[retry])
        )
    unread = (parsed.isna() & text.notna()).to_numpy(bool)
    return parsed.dt.tz_localize(None), unread


# ---------------------------------------------------------------- merging


def merge_duplicates(
    frame: pd.DataFrame, by_id: bool, on_conflict: str, log: RemovalLog, origin: str
) -> pd.DataFrame:
    """Fold rows with the same id or canonical URL (same source and group) into one document.

    Weights add. The kept row is the first with text (``on_conflict='longest'``:
    the longest text). Groups with no text at all are removed and counted.
    """
    n = len(frame)
    has_text = (frame["text"].str.strip().str.len() > 0).to_numpy(bool)  # missing gives False
    if by_id and on_conflict == "error":
        _check_conflicts(frame, has_text, origin)
    comp = _components(frame, by_id)
    length = frame["text"].str.len().fillna(0).to_numpy()
    rank = -length if on_conflict == "longest" else np.zeros(n)
    order = np.lexsort((np.arange(n), rank, ~has_text, comp))
    first = np.ones(n, bool)
    first[1:] = comp[order][1:] != comp[order][:-1]
    rep = np.empty(n, np.int64)  # representative row of each row's component
    rep[order] = np.repeat(order[first], np.diff(np.flatnonzero(np.r_[first, True])))
    is_rep = rep == np.arange(n)
    keep = is_rep & has_text
    # A component whose representative has no text had no text in any row.
    empty = ~has_text[rep]
    sources = frame["source"]
    log.add_counts(
        "intake",
        "empty or missing text",
        sources[empty].value_counts(sort=False),
        frame["id"][empty].groupby(sources[empty]).first(),
        kind="removed",
    )
    absorbed = ~is_rep & ~empty
    same_id = frame["id"].to_numpy() == frame["id"].to_numpy()[rep]
    for mask, reason in (
        (absorbed & same_id & by_id, "merged: same id"),
        (absorbed & ~(same_id & by_id), "merged: same canonical URL"),
    ):
        log.add_counts(
            "intake",
            reason,
            sources[mask].value_counts(sort=False),
            frame["id"][mask].groupby(sources[mask]).first(),
            kind="merged",
        )
    out = _fill_from_copies(frame, rep, absorbed, keep)
    with np.errstate(over="ignore"):
        out["weight"] = np.bincount(rep, weights=frame["weight"].to_numpy(), minlength=n)[keep]
    if not np.isfinite(out["weight"]).all():
        bad = np.flatnonzero(~np.isfinite(out["weight"].to_numpy()))
        msg = (
            f"The weights of {origin} overflow when rows of the same document are added: "
            f"document(s) {', '.join(map(repr, out['id'].iloc[bad[:5]]))} sum to infinity. "
            f"Weights must add up to less than {np.finfo(float).max:.3g}; rescale them (e.g. "
            "divide by a constant) before intake."
        )
        raise CorpusError(msg)
    out["duplicate_ids"] = _duplicate_ids(frame["id"], frame["duplicate_ids"], rep, absorbed, keep)
    return out


def _fill_from_copies(
    frame: pd.DataFrame, rep: np.ndarray, absorbed: np.ndarray, keep: np.ndarray
) -> pd.DataFrame:
    """The kept rows, with missing url, title, date or metadata filled from rows merged into them."""
    out = frame[keep].reset_index(drop=True)
    rows = np.flatnonzero(absorbed | np.isin(np.arange(len(frame)), rep[absorbed]))
    if not len(rows):
        return out
    fixed = {"id", "text", "source", "weight", "group", "duplicate_ids"}
    columns = [c for c in frame.columns if c not in fixed]
    # Representative first within each merged set, so its own values win where present.
    rows = rows[np.lexsort((rows, rows != rep[rows], rep[rows]))]
    firsts = frame.iloc[rows][columns].groupby(rep[rows], sort=False).first()
    at = (np.cumsum(keep) - 1)[firsts.index.to_numpy()]  # positions of the representatives in out
    for column in columns:
        values = out[column].copy()
        values.iloc[at] = firsts[column].to_numpy()
        out[column] = values
    return out


def _components(frame: pd.DataFrame, by_id: bool) -> np.ndarray:
    """Connected components of rows linked by a shared (source, group, id) or (source, group, URL)."""
    n = len(frame)
    rows, keys, offset = [np.arange(n)], [np.arange(n)], n
    for column, use in (("id", by_id), ("canonical_url", True)):
        present = frame[column].notna().to_numpy(bool)
        if not use or not present.any():
            continue
        codes = (
            frame[present].groupby(["source", "group", column], dropna=False, sort=False).ngroup()
        )
        rows.append(np.flatnonzero(present))
        keys.append(codes.to_numpy() + offset)
        offset += int(codes.max()) + 1
    r, k = np.concatenate(rows), np.concatenate(keys)
    graph = coo_matrix((np.ones(len(r)), (r, k)), shape=(offset, offset))
    return connected_components(graph, directed=False)[1][:n]


def _duplicate_ids(
    ids: pd.Series, earlier: pd.Series, rep: np.ndarray, absorbed: np.ndarray, keep: np.ndarray
) -> list[list[str]]:
    """For each kept row, the ids folded into it: from an earlier intake, then merged now."""
    out = [
        [str(x) for x in b] if isinstance(b, list | tuple | np.ndarray) else []
        for b in earlier.tolist()
    ]
    ids = ids.to_numpy(object)
    for i in np.flatnonzero(absorbed).tolist():
        target, own = out[rep[i]], ids[rep[i]]
        for doc_id in [ids[i], *out[i]]:
            if doc_id != own and doc_id not in target:
                target.append(doc_id)
    return [out[i] for i in np.flatnonzero(keep).tolist()]


def _check_conflicts(frame: pd.DataFrame, has_text: np.ndarray, origin: str) -> None:
    """Same id, same source, texts that differ beyond whitespace: an error that names the ids."""
    sub = frame.loc[has_text, ["source", "id", "text"]]
    sub = sub[sub.duplicated(["source", "id"], keep=False)]
    # Exact copies are the common case and cheap to rule out; normalise only the rest.
    exact = sub.groupby(["source", "id"], sort=False)["text"].transform("nunique")
    sub = sub[exact.to_numpy() > 1]
    if sub.empty:
        return
    norm = sub["text"].str.split().str.join(" ")
    counts = norm.groupby([sub["source"], sub["id"]], sort=False).nunique()
    conflicts = counts[counts > 1]
    if conflicts.empty:
        return
    shown = []
    for source, doc_id in conflicts.index[:_SHOWN]:
        texts = norm[(sub["source"] == source) & (sub["id"] == doc_id)].unique()
        shown.append(f"{doc_id!r} in source {source!r}: {texts[0][:40]!r} vs {texts[1][:40]!r}")
    more = f"; and {len(conflicts) - _SHOWN} more" if len(conflicts) > _SHOWN else ""
    msg = (
        f"{len(conflicts)} id(s) of {origin} have different texts within the same source: "
        f"{'; '.join(shown)}{more}. An id should name one article. Fix the ids, or pass "
        "on_conflict='first' (keep the first row's text) or on_conflict='longest' "
        "(keep the longest text) -- on the command line --on-conflict first or longest; "
        "either way the rows merge and their weights add."
    )
    raise CorpusError(msg)


def unique_ids(frame: pd.DataFrame) -> pd.Series:
    """Document ids, unique: an id used in several sources (or groups) gets '@source[/group]'."""
    ids = frame["id"]
    clash = ids.duplicated(keep=False)
    if not clash.any():
        return ids
    qualified = ids.where(~clash, ids + "@" + frame["source"])
    clash = qualified.duplicated(keep=False)
    if clash.any():
        qualified = qualified.where(~clash, qualified + "/" + frame["group"].fillna(""))
    clash = qualified.duplicated(keep=False)
    if clash.any():  # only when given ids already look like qualified ones
        count = qualified.groupby(qualified).cumcount().astype(str)
        qualified = qualified.where(~clash, qualified + "~" + count)
    return qualified


# ---------------------------------------------------------------- fingerprint


def frame_fingerprint(frame: pd.DataFrame) -> str:
    """Content hash of a corpus frame: column names, then each column's values.

    Text columns are hashed as one block of UTF-8 bytes with their lengths and
    missing-value mask, so that a million documents hash in seconds.
    """
    parts: list = [[str(c) for c in frame.columns]]
    for column in frame.columns:
        values = frame[column]
        if column == "duplicate_ids":
            values = pd.Series(["\x1f".join(map(str, v)) for v in values], dtype="str")
        if pd.api.types.is_datetime64_any_dtype(values.dtype):
            if getattr(values.dt, "tz", None) is not None:  # a metadata column with a time zone
                values = values.dt.tz_convert("UTC").dt.tz_localize(None)
            parts.append(values.astype("datetime64[us]").to_numpy().view("int64"))
        elif pd.api.types.is_numeric_dtype(values.dtype) and not pd.api.types.is_bool_dtype(
            values.dtype
        ):
            parts.append(values.to_numpy(float, na_value=np.nan))
        else:
            parts += _text_parts(values)
    return _fingerprint(*parts)


def _text_parts(values: pd.Series) -> list:
    try:
        arr = pa.array(values, from_pandas=True)
        if not pa.types.is_string(arr.type) and not pa.types.is_large_string(arr.type):
            raise pa.ArrowTypeError("not text")
    except (pa.ArrowInvalid, pa.ArrowTypeError):  # mixed or non-text values: hash their str()
        arr = pa.array(
            values.map(str).where(values.notna()), type=pa.large_string(), from_pandas=True
        )
    if isinstance(arr, pa.ChunkedArray):
        arr = arr.combine_chunks()
    # The data buffer is hashed in place (a view, not a copy): a million texts are a GiB.
    wide = pa.types.is_large_string(arr.type)
    offsets = np.frombuffer(arr.buffers()[1], np.int64 if wide else np.int32)
    offsets = offsets[arr.offset : arr.offset + len(arr) + 1].astype(np.int64)
    data = arr.buffers()[2]
    blob = b"" if data is None else memoryview(data).cast("B")[offsets[0] : offsets[-1]]
    missing = arr.is_null().to_numpy(zero_copy_only=False)
    return [missing, np.diff(offsets), blob]
