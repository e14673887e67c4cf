"""A project folder: everything one study produces, with a manifest.

Layout (each stage owns one sub-folder; all writes are atomic)::

    PROJECT/
      manifest.json     settings, corpus fingerprint, package versions
      corpus.parquet    the corpus after intake
      corpus_report.json  its intake report, settings and fingerprint
      prepared/         prepared corpora, one folder per settings fingerprint
      fits/             one file per fitted model
      scores/           score tables of the sweep
      comparison/       comparison tables
      labels.sqlite     the default label store
      report/           report and exports
"""

from __future__ import annotations

import datetime as _dt
import json
import os
import platform
from importlib import metadata
from pathlib import Path
from typing import Any

import pandas as pd

from ._atomic import atomic_path, atomic_write_json
from .errors import CorruptArtifactError, ProjectError

MANIFEST = "manifest.json"
CORPUS_FILE = "corpus.parquet"
CORPUS_REPORT = "corpus_report.json"
FORMAT = "tm_compare project"
FORMAT_VERSION = 1
_VERSIONED = ("tm_compare", "numpy", "scipy", "pandas", "gensim", "scikit-learn", "altair")


def package_versions() -> dict[str, str]:
    """Versions of Python and the packages whose changes can change results."""
    versions = {"python": platform.python_version()}
    for name in _VERSIONED:
        try:
            versions[name] = metadata.version(name)
        except metadata.PackageNotFoundError:
            versions[name] = "not installed"
    return versions


class Project:
    """A study's folder. Use :meth:`create` for a new one and :meth:`open` for an existing one."""

    def __init__(self, path: str | os.PathLike):
        self.path = Path(path)

    def __repr__(self) -> str:
        return f"Project({str(self.path)!r})"

    def __fspath__(self) -> str:
        return str(self.path)

    @classmethod
    def create(cls, path: str | os.PathLike) -> Project:
        """Create the folder and its manifest, or open it if it is already a project."""
        project = cls(path)
        if (project.path / MANIFEST).exists():
            return cls.open(path)
        if project.path.exists() and not project.path.is_dir():
            msg = (
                f"Cannot create a project at {str(project.path)!r}: it is a file. "
                "Choose a folder path that does not exist yet or is a folder."
            )
            raise ProjectError(msg)
        project.path.mkdir(parents=True, exist_ok=True)
        now = _dt.datetime.now(_dt.UTC).isoformat(timespec="seconds")
        atomic_write_json(
            project.path / MANIFEST,
            {
                "format": FORMAT,
                "format_version": FORMAT_VERSION,
                "created": now,
                "package_versions": package_versions(),
                "settings": {},
            },
        )
        return project

    @classmethod
    def open(cls, path: str | os.PathLike) -> Project:
        """Open an existing project, checking its manifest."""
        project = cls(path)
        manifest_path = project.path / MANIFEST
        if not manifest_path.exists():
            msg = (
                f"{str(project.path)!r} is not a tm_compare project (no {MANIFEST}). "
                "Create one with `tm-compare prepare ... --project DIR` or Project.create(DIR)."
            )
            raise ProjectError(msg)
        manifest = project.manifest
        if not isinstance(manifest, dict) or manifest.get("format") != FORMAT:
            msg = (
                f"{str(manifest_path)!r} is not a tm_compare manifest (no 'format': {FORMAT!r}). "
                "Open the folder that holds the study, or create a new one with Project.create(DIR)."
            )
            raise ProjectError(msg)
        version = manifest.get("format_version", 0)
        if not isinstance(version, int):
            msg = (
                f"The manifest {str(manifest_path)!r} has format_version {version!r}; a whole "
                f"number up to {FORMAT_VERSION} is expected. Restore the manifest from a copy."
            )
            raise ProjectError(msg)
        if version > FORMAT_VERSION:
            msg = (
                f"The project {str(project.path)!r} was written by a newer tm_compare "
                f"(format {version}, this version reads up to {FORMAT_VERSION}). "
                "Upgrade tm_compare to open it."
            )
            raise ProjectError(msg)
        return project

    @property
    def manifest(self) -> dict[str, Any]:
        """The manifest as a dict (read fresh from disk)."""
        path = self.path / MANIFEST
        try:
            return json.loads(path.read_text(encoding="utf-8"))
        except (OSError, json.JSONDecodeError) as exc:
            msg = (
                f"Cannot read the project manifest {str(path)!r}: {exc}. Restore it from a copy; "
                "the other files of the project are untouched."
            )
            raise ProjectError(msg) from exc

    def update_manifest(self, **entries: Any) -> dict[str, Any]:
        """Merge ``entries`` into the manifest (dicts merge one level deep) and save it atomically."""
        manifest = self.manifest
        for key, value in entries.items():
            if isinstance(value, dict) and isinstance(manifest.get(key), dict):
                manifest[key] = {**manifest[key], **value}
            else:
                manifest[key] = value
        manifest["package_versions"] = package_versions()
        manifest["updated"] = _dt.datetime.now(_dt.UTC).isoformat(timespec="seconds")
        atomic_write_json(self.path / MANIFEST, manifest)
        return manifest

    def folder(self, name: str) -> Path:
        """The sub-folder ``name``, created if missing."""
        sub = self.path / name
        sub.mkdir(parents=True, exist_ok=True)
        return sub

    def save_corpus(self, corpus) -> Path:
        """Store ``corpus`` as ``corpus.parquet`` with its intake report beside it.

        The manifest records the corpus fingerprint, size, sources and intake
        settings. Each file is written atomically; a failed save leaves the
        previously saved corpus in place. Saving the corpus already stored
        writes nothing.
        """
        import pyarrow as pa

        fingerprint = corpus.fingerprint
        target = self.path / CORPUS_FILE
        saved = self.manifest.get("corpus", {}).get("fingerprint")
        if saved == fingerprint and target.exists() and (self.path / CORPUS_REPORT).exists():
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
            self.path / CORPUS_REPORT,
            {
                "fingerprint": fingerprint,
                "report": corpus.report.to_dict(),
                "settings": corpus.settings,
            },
        )
        self.update_manifest(
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

    def load_corpus(self):
        """The corpus saved by :meth:`save_corpus`, checked against the manifest's fingerprint."""
        from .corpus import Corpus
        from .removals import RemovalLog

        target, side = self.path / CORPUS_FILE, self.path / CORPUS_REPORT
        expected = self.manifest.get("corpus", {}).get("fingerprint")
        if expected is None or not target.exists():
            msg = (
                f"The project {str(self.path)!r} holds no saved corpus. Save one with "
                "project.save_corpus(corpus) (or run `tm-compare prepare ... --project DIR`)."
            )
            raise ProjectError(msg)
        try:
            frame = pd.read_parquet(target)
            stored = json.loads(side.read_text(encoding="utf-8"))
        except (OSError, ValueError) as exc:
            msg = (
                f"The saved corpus {str(target)!r} (or {CORPUS_REPORT}) cannot be read: {exc}. "
                "Save the corpus again with project.save_corpus(corpus)."
            )
            raise CorruptArtifactError(msg) from exc
        if "duplicate_ids" in frame.columns:  # Parquet gives arrays back; the frame holds lists
            frame["duplicate_ids"] = [
                [] if v is None else [str(x) for x in v] for v in frame["duplicate_ids"]
            ]
        corpus = Corpus(
            frame, RemovalLog.from_dict(stored.get("report", {})), stored.get("settings")
        )
        found = corpus.fingerprint
        if found != expected or stored.get("fingerprint") != expected:
            msg = (
                f"The saved corpus {str(target)!r} does not match the manifest (fingerprint "
                f"{found}, report {stored.get('fingerprint')}, manifest {expected}): a file was "
                "changed or a save was interrupted. Save the corpus again with "
                "project.save_corpus(corpus)."
            )
            raise CorruptArtifactError(msg)
        return corpus

    def load_prepared(self, key: str | None = None):
        """A prepared corpus saved in this project.

        ``key`` is its folder name under ``prepared/`` (a fit's ``corpus_fingerprint``,
        a sweep's ``corpus_fingerprint_``); by default the most recently written one.
        """
        from .prepared import PreparedCorpus

        root = self.path / "prepared"
        have = sorted(p.name for p in root.iterdir() if p.is_dir()) if root.is_dir() else []
        if key is None and have:
            key = max(have, key=lambda name: (root / name).stat().st_mtime)
        if key is None or key not in have:
            wanted = "any prepared corpus" if key is None else f"the prepared corpus {key!r}"
            msg = (
                f"The project {str(self.path)!r} holds no {wanted} (present under prepared/: "
                f"{', '.join(have) or 'none'}). Run `tm-compare prepare CORPUS_FILE --project "
                "DIR ...` (or prepare(corpus, project=...)) with the settings you want first."
            )
            raise ProjectError(msg)
        return PreparedCorpus.load(root / key)

    def load_sweep(self):
        """The sweep saved in this project (its fits load from disk when asked for)."""
        from .sweeps import Sweep

        return Sweep.load(self)

    def load_model(self, k: int | None = None, seed: int | None = None):
        """One fit of the saved sweep; by default the one the sweep recommends."""
        result = self.load_sweep()
        if k is None:
            pick = result.recommend()
            k, seed = pick.k, pick.seed if seed is None else seed
        return result.model(k, 0 if seed is None else seed)
