"""On-disk storage and cache of prepared corpora (see :mod:`.prepared`).

Folder layout: tokens.npz (token ids of the texts and the bags of words, flat with offsets),
vocab.json (terms by id), meta.parquet, boilerplate.parquet, phrases.parquet, and
prepared.json: settings, report and the size and sha256 of every other file. The manifest
is removed first and written last, so a folder without it is incomplete and never loaded.
"""

from __future__ import annotations

import hashlib
import json
import warnings
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np
import pandas as pd

from .._atomic import atomic_path, atomic_write_json
from .._validation import param_error
from ..errors import CorruptArtifactError
from ._ragged import Ragged, TokenTexts
from ._tokens import BagOfWords
from .removals import RemovalLog

if TYPE_CHECKING:
    from gensim.corpora import Dictionary

FORMAT = "tm_compare prepared corpus"
FORMAT_VERSION = 1
MANIFEST = "prepared.json"


def _cache_folder(project, cache_dir, key: str):
    """The project (opened or created, or None) and the cache folder (or None)."""
    if project is not None and cache_dir is not None:
        msg = (
            "prepare got both project= and cache_dir=; give one: project= caches inside the "
            "project folder, cache_dir= anywhere else."
        )
        raise param_error("prepare", "cache_dir", cache_dir, "None when project is given", msg)
    if cache_dir is not None:
        return None, Path(cache_dir) / key
    if project is None:
        return None, None
    from ..project import Project

    if not isinstance(project, Project):
        project = Project.create(project)
    return project, project.folder("prepared") / key


# Here, not in prepared, because loading needs it and prepared imports this module.
def make_dictionary(tokens, dfs, cfs, num_docs, num_nnz) -> Dictionary:
    """A gensim Dictionary from its parts (term id = position in ``tokens``)."""
    from gensim.corpora import Dictionary

    d = Dictionary()
    d.token2id = {t: i for i, t in enumerate(tokens)}
    d.dfs = dict(enumerate(dfs))
    d.cfs = dict(enumerate(cfs))
    d.num_docs = int(num_docs)
    d.num_pos = int(sum(cfs))
    d.num_nnz = int(num_nnz)
    return d


def _save(p, folder) -> Path:
    """Write the prepared corpus ``p`` to ``folder``, its manifest last."""
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    (folder / MANIFEST).unlink(missing_ok=True)
    token2id = p.dictionary.token2id
    size = len(token2id)
    tokens = [None] * size
    for t, i in token2id.items():
        tokens[i] = t
    texts = p.texts if isinstance(p.texts, TokenTexts) else TokenTexts.from_lists(p.texts, tokens)
    to_dictionary = np.array([token2id[t] for t in texts.strings.tolist()], dtype=np.int32)
    arrays = {
        "text_ids": to_dictionary[texts.docs.values],
        "text_offsets": texts.docs.offsets,
        "bow_ids": p.bow.ids,
        "bow_counts": p.bow.counts,
        "bow_offsets": p.bow.indptr,
        "dfs": np.array([p.dictionary.dfs.get(i, 0) for i in range(size)], dtype=np.int64),
        "cfs": np.array([p.dictionary.cfs.get(i, 0) for i in range(size)], dtype=np.int64),
    }
    with atomic_path(folder / "tokens.npz") as tmp, open(tmp, "wb") as fh:
        np.savez(fh, **arrays)
    atomic_write_json(
        folder / "vocab.json",
        {"tokens": tokens, "num_docs": p.dictionary.num_docs, "num_nnz": p.dictionary.num_nnz},
    )
    for name, table in (("meta", p.meta), ("boilerplate", p.boilerplate), ("phrases", p.phrases)):
        with atomic_path(folder / f"{name}.parquet") as tmp:
            _write_parquet(table, tmp)
    files = {
        name: {"bytes": (folder / name).stat().st_size, "sha256": _sha256(folder / name)}
        for name in (
            "tokens.npz",
            "vocab.json",
            "meta.parquet",
            "boilerplate.parquet",
            "phrases.parquet",
        )
    }
    atomic_write_json(
        folder / MANIFEST,
        {
            "format": FORMAT,
            "format_version": FORMAT_VERSION,
            "fingerprint": p.fingerprint,
            "settings": p.settings,
            "report": p.report.to_dict(),
            "documents": len(p),
            "files": files,
        },
    )
    return folder


def _load(folder) -> dict:
    folder = Path(folder)
    path = folder / MANIFEST
    try:
        manifest = json.loads(path.read_text(encoding="utf-8"))
        ok = manifest.get("format") == FORMAT and int(manifest["format_version"]) <= FORMAT_VERSION
    except (OSError, ValueError, KeyError, TypeError) as exc:
        msg = (
            f"The prepared corpus in {str(folder)!r} cannot be read ({MANIFEST}: {exc}). "
            "Delete the folder and run prepare() again."
        )
        raise CorruptArtifactError(msg) from exc
    if not ok:
        msg = (
            f"{str(path)!r} is not a prepared corpus this tm_compare can read. "
            "Delete the folder and run prepare() again."
        )
        raise CorruptArtifactError(msg)
    for name, info in manifest["files"].items():
        f = folder / name
        if not f.exists() or f.stat().st_size != info["bytes"] or _sha256(f) != info["sha256"]:
            msg = (
                f"The file {str(f)!r} of a saved prepared corpus is missing or changed since it "
                "was written (size or sha256 differ). Delete the folder and run prepare() again."
            )
            raise CorruptArtifactError(msg)
    try:
        with np.load(folder / "tokens.npz") as z:
            arrays = {k: z[k] for k in z.files}
        vocab = json.loads((folder / "vocab.json").read_text(encoding="utf-8"))
        tables = {
            n: pd.read_parquet(folder / f"{n}.parquet") for n in ("meta", "boilerplate", "phrases")
        }
    except (OSError, ValueError, KeyError) as exc:
        msg = f"The prepared corpus in {str(folder)!r} cannot be read: {exc}. Delete the folder."
        raise CorruptArtifactError(msg) from exc
    strings = np.array(vocab["tokens"], dtype=object)
    texts = TokenTexts(strings, Ragged(arrays["text_ids"], arrays["text_offsets"]))
    bow = BagOfWords(arrays["bow_offsets"], arrays["bow_ids"], arrays["bow_counts"])
    meta = tables["meta"]
    meta["duplicate_ids"] = [list(v) for v in meta["duplicate_ids"]]
    dictionary = make_dictionary(
        vocab["tokens"],
        arrays["dfs"].tolist(),
        arrays["cfs"].tolist(),
        vocab["num_docs"],
        vocab["num_nnz"],
    )
    return {
        "texts": texts,
        "dictionary": dictionary,
        "bow": bow,
        "meta": meta,
        "report": RemovalLog.from_dict(manifest["report"]),
        "boilerplate": tables["boilerplate"],
        "phrases": tables["phrases"],
        "settings": manifest["settings"],
        "fingerprint": manifest["fingerprint"],
    }


def _load_if_valid(folder: Path, cls: type):
    """The cached prepared corpus in ``folder`` (read by ``cls.load``, ``cls`` being
    PreparedCorpus), or None when absent or failing its checks."""
    if not (folder / MANIFEST).exists():
        return None
    try:
        # The class comes from the caller: importing prepared here would be circular.
        return cls.load(folder)
    except CorruptArtifactError as exc:
        warnings.warn(f"{exc} Rebuilding it.", RuntimeWarning, stacklevel=3)
        return None


def _write_parquet(table: pd.DataFrame, path) -> None:
    try:
        table.to_parquet(path, index=False)
    except (TypeError, ValueError):  # mixed-type extra columns: store them as text
        fixed = table.copy()
        for col in fixed.columns:
            if fixed[col].dtype == object and col != "duplicate_ids":
                fixed[col] = fixed[col].map(lambda v: v if v is None else str(v))
        fixed.to_parquet(path, index=False)


def _sha256(path: Path) -> str:
    with open(path, "rb") as fh:
        return hashlib.file_digest(fh, "sha256").hexdigest()
