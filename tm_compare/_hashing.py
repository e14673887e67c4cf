"""Stable content fingerprints (sha256) for corpora, settings and fits."""

from __future__ import annotations

import hashlib
import json
from typing import Any

import numpy as np


def fingerprint(*parts: Any, length: int = 16) -> str:
    """Hex digest of ``parts``: strings, bytes, numpy arrays or JSON-able values.

    The same parts in the same order always give the same digest, across
    processes and machines (no use of Python's salted ``hash``).
    """
    h = hashlib.sha256()
    for part in parts:
        _feed(h, part)
    return h.hexdigest()[:length]


def _feed(h, part: Any) -> None:
    if isinstance(part, bytes | memoryview):
        h.update(b"B%d:" % len(part))
        h.update(part)
    elif isinstance(part, str):
        _feed(h, part.encode("utf-8"))
    elif isinstance(part, np.ndarray):
        arr = np.ascontiguousarray(part)
        _feed(h, f"A{arr.dtype.str}{arr.shape}")
        if arr.dtype == object:
            for item in arr.ravel():
                _feed(h, str(item))
        else:
            h.update(arr.tobytes())
    else:
        _feed(h, json.dumps(part, sort_keys=True, default=str))
