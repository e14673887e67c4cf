"""Checks of a sweep saved in a project (``scores/sweep.json`` and its score tables).

A saved sweep is read back only if ``sweep.json`` has every key with its type and names fit
files inside ``fits/``; the score tables carry sha256 checksums recorded in ``sweep.json``, so a
table edited or damaged since the sweep wrote it is recomputed from the fits, never used (see
:meth:`tm_compare.models.sweeps.Sweep.load`).
"""

from __future__ import annotations

import json
from pathlib import Path

from ..errors import CorruptArtifactError
from .fits import from_stored

STATE = "sweep.json"
TABLES = ("scores.parquet", "topic_scores.parquet")
#: Keys of sweep.json (after ``from_stored``) and the type each must have.
STATE_KEYS = {
    "engine": str,
    "settings": dict,
    "n_terms": int,
    "corpus_fingerprint": str,
    "fits": list,
}


def sha256(path: Path) -> str:
    import hashlib

    with open(path, "rb") as fh:
        return hashlib.file_digest(fh, "sha256").hexdigest()


def read_state(folder: Path) -> dict:
    """sweep.json, checked: every key present with its type (a damaged file is refused)."""
    path = folder / STATE
    try:
        state = json.loads(path.read_text(encoding="utf-8"))
    except UnicodeDecodeError as exc:
        raise ValueError(f"{STATE} is not UTF-8 text ({exc.reason})") from exc
    state = from_stored(state) if isinstance(state, dict) else state
    wrong = (
        [key for key, kind in STATE_KEYS.items() if not isinstance(state.get(key), kind)]
        if isinstance(state, dict)
        else ["(the file is not a JSON object)"]
    )
    if not wrong:
        fit_keys = {"k": int, "seed": int, "file": str}
        for entry in state["fits"]:
            if (
                not isinstance(entry, dict)
                or any(
                    not isinstance(entry.get(n), t) or isinstance(entry.get(n), bool)
                    for n, t in fit_keys.items()
                )
                or Path(entry["file"]).name != entry["file"]
            ):
                wrong = [f"fits entry {entry!r}"]
                break
    if wrong:
        msg = (
            f"{str(path)!r} is damaged: {', '.join(wrong)} missing or of the wrong type "
            f"(expected {', '.join(STATE_KEYS)}). Run the sweep again (`tm-compare sweep "
            f"{folder.parent}` with the same grid): finished fits are reused."
        )
        raise CorruptArtifactError(msg)
    return state


def grid_of(state: dict) -> tuple[list[int], list[int]]:
    return sorted({f["k"] for f in state["fits"]}), sorted({f["seed"] for f in state["fits"]})
