"""The project folder: manifest, saved corpus, version checks, failed saves."""

from __future__ import annotations

import errno
import json
from importlib import metadata
from pathlib import Path

import pandas as pd
import pytest
from test_corpus import COLUMNS, FIXTURE  # the intake fixture and its column mapping

from tm_compare import Corpus, Project
from tm_compare.errors import CorruptArtifactError, ProjectError
from tm_compare.project import FORMAT_VERSION, MANIFEST
from tm_compare.text.corpus import CORPUS_FILE, CORPUS_REPORT, load_corpus, save_corpus


@pytest.fixture
def corpus() -> Corpus:
    return Corpus.read(FIXTURE, **COLUMNS)


def test_create_writes_a_manifest(tmp_path):
    project = Project.create(tmp_path / "study")
    manifest = project.manifest
    assert manifest["format"] == "tm_compare project"
    assert manifest["format_version"] == FORMAT_VERSION
    # Versions come from the installed distributions (importlib.metadata is the reference).
    assert manifest["package_versions"]["pandas"] == metadata.version("pandas")
    assert manifest["package_versions"]["gensim"] == metadata.version("gensim")
    assert Project.create(tmp_path / "study").manifest["created"] == manifest["created"]  # reopens


def test_saved_corpus_reloads_identically(tmp_path, corpus):
    project = Project.create(tmp_path / "study")
    save_corpus(corpus, project)
    again = load_corpus(Project.open(tmp_path / "study"))
    pd.testing.assert_frame_equal(again.frame, corpus.frame)
    assert again.fingerprint == corpus.fingerprint
    assert again.report.to_dict() == corpus.report.to_dict()
    assert str(again.report) == str(corpus.report)
    assert again.settings == json.loads(json.dumps(corpus.settings))
    manifest = project.manifest
    assert manifest["corpus"]["fingerprint"] == corpus.fingerprint
    assert manifest["corpus"]["documents"] == 5 and manifest["corpus"]["input_rows"] == 8
    assert manifest["settings"]["intake"]["columns"]["text"] == "body"
    assert (project.path / CORPUS_REPORT).exists()
    stamp = (project.path / CORPUS_FILE).stat().st_mtime_ns
    save_corpus(again, project)  # the same content again: nothing is rewritten
    assert (project.path / CORPUS_FILE).stat().st_mtime_ns == stamp


def test_newer_format_version_is_refused(tmp_path):
    project = Project.create(tmp_path / "study")
    manifest = project.manifest
    manifest["format_version"] = FORMAT_VERSION + 1
    (project.path / MANIFEST).write_text(json.dumps(manifest))
    with pytest.raises(ProjectError) as info:
        Project.open(project.path)
    msg = str(info.value)
    assert f"was written by a newer tm_compare (format {FORMAT_VERSION + 1}" in msg
    assert f"this version reads up to {FORMAT_VERSION}" in msg
    assert "Upgrade tm_compare to open it." in msg
    manifest["format_version"] = "2.0"
    (project.path / MANIFEST).write_text(json.dumps(manifest))
    with pytest.raises(ProjectError, match=r"has format_version '2.0'; a whole number up to"):
        Project.open(project.path)
    (project.path / MANIFEST).write_text(json.dumps({"format": "something else"}))
    with pytest.raises(ProjectError, match=r"is not a tm_compare manifest"):
        Project.open(project.path)


def test_not_a_project_and_broken_manifest(tmp_path):
    with pytest.raises(ProjectError, match=r"is not a tm_compare project \(no manifest.json\)"):
        Project.open(tmp_path)
    (tmp_path / MANIFEST).write_text("{half a manifest")
    with pytest.raises(ProjectError, match=r"Cannot read the project manifest"):
        Project.open(tmp_path)
    afile = tmp_path / "afile"
    afile.write_text("x")
    with pytest.raises(ProjectError, match=r"it is a file"):
        Project.create(afile)


def test_load_without_a_saved_corpus(tmp_path):
    with pytest.raises(ProjectError, match=r"holds no saved corpus. Save one with save_corpus"):
        load_corpus(Project.create(tmp_path))


def test_truncated_corpus_file_is_refused(tmp_path, corpus):
    project = Project.create(tmp_path)
    path = save_corpus(corpus, project)
    path.write_bytes(path.read_bytes()[:100])
    with pytest.raises(CorruptArtifactError, match=r"cannot be read: .*Save the corpus again"):
        load_corpus(project)


def test_swapped_corpus_file_is_refused(tmp_path, corpus):
    project = Project.create(tmp_path)
    save_corpus(corpus, project)
    other = Corpus.from_frame(pd.DataFrame({"text": ["Pier reopens"], "source": ["archive"]}))
    other.frame.to_parquet(tmp_path / CORPUS_FILE, index=False)  # written behind the project's back
    with pytest.raises(CorruptArtifactError, match=r"does not match the manifest"):
        load_corpus(project)


def test_failed_save_keeps_the_previous_corpus(tmp_path, corpus, monkeypatch):
    project = Project.create(tmp_path)
    save_corpus(corpus, project)
    before = sorted(p.name for p in tmp_path.iterdir())
    smaller = Corpus.from_frame(corpus.frame.iloc[:2])

    def disk_full(self, path, *args, **kwargs):
        Path(path).write_bytes(b"PAR1 partial")
        raise OSError(errno.ENOSPC, "No space left on device")

    monkeypatch.setattr(pd.DataFrame, "to_parquet", disk_full)
    with pytest.raises(OSError, match="No space left"):
        save_corpus(smaller, project)
    monkeypatch.undo()
    assert sorted(p.name for p in tmp_path.iterdir()) == before  # no temporary file left
    assert load_corpus(project).fingerprint == corpus.fingerprint


def test_unstorable_extra_column_is_a_clear_error(tmp_path):
    df = pd.DataFrame({"text": ["a", "b"], "source": "s", "extra": [1, "two"]})
    project = Project.create(tmp_path)
    with pytest.raises(
        ProjectError, match=r"Cannot save the corpus to .*corpus.parquet.*astype\(str\)"
    ):
        save_corpus(Corpus.from_frame(df), project)
    assert not (tmp_path / CORPUS_FILE).exists()


@pytest.mark.parametrize(
    ("raw", "expected"),
    [
        (b'{"format": "tm_compare project", "note": "caf\xe9"}', "must be UTF-8 JSON"),
        (b"\x00\x01binary", "Cannot read the project manifest"),
        (b"[1, 2]", "is not a tm_compare manifest"),
        (
            b'{"format": "tm_compare project", "format_version": 1, "corpus": "oops"}',
            "'corpus' is str",
        ),
        (
            b'{"format": "tm_compare project", "format_version": 1, "prepared": [1]}',
            "'prepared' is list",
        ),
        (b'{"format": "tm_compare project", "format_version": "1"}', "format_version '1'"),
        (b'{"format": "tm_compare project", "format_version": true}', "format_version True"),
    ],
)
def test_a_damaged_manifest_is_refused_with_what_is_wrong(tmp_path, corpus, raw, expected):
    project = Project.create(tmp_path / "p")
    save_corpus(corpus, project)
    (project.path / MANIFEST).write_bytes(raw)
    with pytest.raises(ProjectError, match=expected):
        load_corpus(Project.open(project.path))
    assert (project.path / CORPUS_FILE).exists()  # the other files are untouched
