"""Atomic writes: write to a temporary file beside the target, then rename.

A crash (or a full disk) mid-write leaves the old file, or no file, never a
half-written one that later loads as if it were whole.
"""

from __future__ import annotations

import contextlib
import json
import os
import tempfile
from collections.abc import Iterator
from pathlib import Path
from typing import Any

# mkstemp creates files readable by the owner only; a project folder is shared
# with collaborators, so finished files get the usual permissions instead.
_UMASK = os.umask(0o022)
os.umask(_UMASK)


@contextlib.contextmanager
def atomic_path(target: str | os.PathLike) -> Iterator[Path]:
    """Yield a temporary path; on success it replaces ``target`` atomically.

    On any exception the temporary file is removed and ``target`` is untouched.
    """
    target = Path(target)
    target.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=target.parent)
    os.close(fd)
    tmp_path = Path(tmp)
    try:
        os.chmod(tmp_path, 0o666 & ~_UMASK)
        yield tmp_path
        with open(tmp_path, "rb+") as fh:
            os.fsync(fh.fileno())
        os.replace(tmp_path, target)
    except BaseException:
        with contextlib.suppress(FileNotFoundError):
            tmp_path.unlink()
        raise
    _fsync_dir(target.parent)


def _fsync_dir(folder: Path) -> None:
    # Makes the rename itself durable; not supported everywhere, so best effort.
    with contextlib.suppress(OSError):
        fd = os.open(folder, os.O_RDONLY)
        try:
            os.fsync(fd)
        finally:
            os.close(fd)


def atomic_write_bytes(target: str | os.PathLike, data: bytes) -> Path:
    """Write ``data`` to ``target`` atomically and return the path."""
    with atomic_path(target) as tmp:
        tmp.write_bytes(data)
    return Path(target)


def atomic_write_text(target: str | os.PathLike, text: str) -> Path:
    """Write UTF-8 ``text`` to ``target`` atomically and return the path."""
    return atomic_write_bytes(target, text.encode("utf-8"))


def atomic_write_json(target: str | os.PathLike, obj: Any) -> Path:
    """Write ``obj`` as indented JSON to ``target`` atomically."""
    return atomic_write_text(target, json.dumps(obj, indent=2, sort_keys=True, default=str) + "\n")
