"""Atomic writes: a failure mid-write leaves the old file whole and no temporary file behind."""

from __future__ import annotations

import errno
import json
import os
import stat
from pathlib import Path

import pytest

from tm_compare._atomic import atomic_path, atomic_write_bytes, atomic_write_json, atomic_write_text


def _listing(folder: Path) -> list[str]:
    return sorted(p.name for p in folder.iterdir())


def test_write_and_replace(tmp_path):
    target = tmp_path / "sub" / "table.bin"
    atomic_write_bytes(target, b"first")
    atomic_write_bytes(target, b"second")
    assert target.read_bytes() == b"second"
    assert _listing(target.parent) == ["table.bin"]
    atomic_write_json(tmp_path / "m.json", {"b": 1, "a": [1, 2]})
    assert json.loads((tmp_path / "m.json").read_text()) == {"a": [1, 2], "b": 1}
    atomic_write_text(tmp_path / "t.txt", "Quillhaven caf\u00e9")
    assert (tmp_path / "t.txt").read_bytes() == "Quillhaven caf\u00e9".encode()


def test_exception_inside_atomic_path_keeps_old_file(tmp_path):
    target = tmp_path / "corpus.parquet"
    target.write_bytes(b"old, whole")
    with pytest.raises(RuntimeError, match="crash"):
        with atomic_path(target) as tmp:
            tmp.write_bytes(b"half a fi")
            raise RuntimeError("crash mid-write")
    assert target.read_bytes() == b"old, whole"
    assert _listing(tmp_path) == ["corpus.parquet"]


def test_disk_full_during_write_keeps_old_file(tmp_path, monkeypatch):
    target = tmp_path / "manifest.json"
    atomic_write_json(target, {"version": 1})
    original = target.read_bytes()

    def write_then_fill_disk(self, data):
        # Half the bytes reach the disk, then the device is full (what ENOSPC looks like).
        with open(self, "wb") as fh:
            fh.write(data[: len(data) // 2])
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC), str(self))

    monkeypatch.setattr(Path, "write_bytes", write_then_fill_disk)
    with pytest.raises(OSError) as info:
        atomic_write_json(target, {"version": 2, "padding": "x" * 1000})
    assert info.value.errno == errno.ENOSPC
    assert target.read_bytes() == original
    assert _listing(tmp_path) == ["manifest.json"]


def test_interrupt_keeps_old_file(tmp_path):
    # KeyboardInterrupt (a user stopping a notebook cell) is not an Exception but must clean up too.
    target = tmp_path / "a.txt"
    target.write_text("old")
    with pytest.raises(KeyboardInterrupt):
        with atomic_path(target) as tmp:
            tmp.write_text("new")
            raise KeyboardInterrupt
    assert target.read_text() == "old"
    assert _listing(tmp_path) == ["a.txt"]


def test_new_files_follow_the_umask(tmp_path):
    # A project folder is shared: files must not stay owner-only as temporary files are.
    old = os.umask(0o022)
    os.umask(old)
    target = atomic_write_text(tmp_path / "shared.txt", "x")
    mode = stat.S_IMODE(target.stat().st_mode)
    assert mode == 0o666 & ~old
