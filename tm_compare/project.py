"""A project folder: everything one study produces, with a manifest.

It knows no stage: each stage saves and loads itself into a project (``save_corpus`` and
``load_corpus`` in :mod:`tm_compare.text.corpus`, ``load_prepared`` in
:mod:`tm_compare.text.prepared`, ``load_sweep`` and ``load_fit`` in
:mod:`tm_compare.models.sweeps`).

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

from ._atomic import atomic_write_json
from .errors import ProjectError

MANIFEST = "manifest.json"
FORMAT = "tm_compare project"
FORMAT_VERSION = 1
#: Sections of the manifest and the JSON type each must have.
_SECTIONS = {
    "corpus": dict,
    "prepared": dict,
    "settings": dict,
    "package_versions": dict,
    "created": str,
    "updated": str,
}
_VERSIONED = ("tm_compare", "numpy", "scipy", "pandas", "gensim", "numba", "scikit-learn", "altair")


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
        if not isinstance(path, str | os.PathLike):
            msg = (
                f"A project is a folder path (str or pathlib.Path); got {type(path).__name__} "
                f"{path!r}. Pass the folder, e.g. Project.open('study')."
            )
            raise ProjectError(msg)
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
        if not isinstance(version, int) or isinstance(version, bool):
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
            manifest = json.loads(path.read_text(encoding="utf-8"))
        except (OSError, ValueError) as exc:  # ValueError: not UTF-8, or not JSON
            msg = (
                f"Cannot read the project manifest {str(path)!r}: {exc}. It must be UTF-8 JSON "
                "as tm_compare wrote it; restore it from a copy. The other files of the project "
                "are untouched."
            )
            raise ProjectError(msg) from exc
        if not isinstance(manifest, dict):
            return manifest  # open() says it is not a manifest
        wrong = [
            f"{key!r} is {type(manifest[key]).__name__}"
            for key, kind in _SECTIONS.items()
            if key in manifest and not isinstance(manifest[key], kind)
        ]
        if wrong:
            msg = (
                f"The manifest {str(path)!r} is damaged: {', '.join(wrong)}, where "
                f"tm_compare writes a JSON object (corpus, prepared, settings, package_versions) "
                "or a text (created, updated). Restore the manifest from a copy."
            )
            raise ProjectError(msg)
        return manifest

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
