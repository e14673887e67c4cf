"""Loading the chart library on first use, without what it does not need.

Altair imports jsonschema, and jsonschema, on import, imports ``rfc3987_syntax`` when it is
installed (as Jupyter's ``jsonschema[format-nongpl]`` installs it), which builds some forty
grammar parsers only to check the ``iri`` and ``iri-reference`` string formats: most of Altair's
import time (measured on 2 shared cores: 2.9-3.8 s of CPU with it, 0.4-0.5 s without). Vega-Lite's
schema uses neither format, so :func:`altair` imports jsonschema with that module held back and
registers the two checks itself, each importing ``rfc3987_syntax`` on its first call: every
jsonschema check then behaves as after a plain import, only later.

A fresh kernel also pays, at its first view, for importing Altair and for loading the compiled
bootstrap (numba's import and its on-disk cache, about a second). :func:`warm_up` does both in a
background thread as soon as a view class is imported (``from tm_compare.views import
TopicView``), so that they are done while the notebook loads its model; the thread imports only
Altair (and draws a one-point chart), the tables' modules and numba's kernels, which the
caller's thread waits for if it needs them first (:func:`altair` waits; a kernel's import or
cache load waits on Python's and numba's own locks).
The thread is not a daemon: a process that exits at once waits for it rather than stopping
numba's compiler midway.
"""

from __future__ import annotations

import importlib.util
import sys
import threading

_HELD = "rfc3987_syntax"
#: The checks jsonschema registers from rfc3987_syntax: format name, rule and the drafts.
_IRI_CHECKS = {"iri": "iri", "iri-reference": "iri_reference"}
_DRAFTS = ("Draft7Validator", "Draft201909Validator", "Draft202012Validator")


#: What :func:`warm_up` loads, by name.
_PARTS = ("altair", "bootstrap")
_started: dict[str, threading.Thread] = {}
_start_lock = threading.Lock()


def warm_up(*parts: str) -> None:
    """Load ``parts`` (``"altair"``, ``"bootstrap"``) in a background thread, each once per
    process; a failure is left for the foreground to meet, with its own message."""
    with _start_lock:
        todo = [p for p in parts if p in _PARTS and p not in _started]
        if not todo:
            return
        thread = threading.Thread(target=_load, args=(todo,), name="tm_compare warm-up")
        for part in todo:
            _started[part] = thread
        thread.start()


def wait(part: str) -> None:
    """Return once the warm-up of ``part`` (if one started) has finished."""
    thread = _started.get(part)
    if thread is not None and thread is not threading.current_thread():
        thread.join()


def _load(parts: list[str]) -> None:
    for part in parts:
        try:
            if part == "altair":
                import pandas as pd

                alt = altair()
                # A first small chart loads what Altair imports lazily (its pandas support)
                # and builds its schema validator.
                frame = pd.DataFrame({"x": [1.0], "y": ["a"]})
                alt.Chart(frame).mark_point().encode(x="x:Q", y="y:N").to_dict()
            else:
                import numpy as np

                from .. import results  # noqa: F401 - the tables' modules
                from ..compare._kernels import multinomial_counts

                # the compiled kernel of the default (multinomial) bootstrap, from numba's cache
                multinomial_counts(np.random.default_rng(0), 2, 1)
        except Exception:  # noqa: BLE001, S112 - the foreground meets it again and says why
            continue


def altair():
    """The ``altair`` module, imported on the first call (see the module's docstring)."""
    wait("altair")
    if "altair" not in sys.modules and _should_hold():
        _import_jsonschema_lazily()
    import altair as alt

    return alt


def _should_hold() -> bool:
    if "jsonschema" in sys.modules or _HELD in sys.modules:
        return False  # jsonschema has made its checks already, or the module is loaded anyway
    # jsonschema prefers the ``rfc3987`` package when installed; it is cheap to import.
    return (
        importlib.util.find_spec("rfc3987") is None and importlib.util.find_spec(_HELD) is not None
    )


def _import_jsonschema_lazily() -> None:
    sys.modules[_HELD] = None  # an import of it raises ImportError, which jsonschema ignores
    try:
        import jsonschema
    finally:
        if _HELD in sys.modules and sys.modules[_HELD] is None:
            del sys.modules[_HELD]
    from jsonschema import FormatChecker

    for name, rule in _IRI_CHECKS.items():
        check = _iri_check(rule)
        for draft in _DRAFTS:
            getattr(jsonschema, draft).FORMAT_CHECKER.checks(name, raises=ValueError)(check)
        # jsonschema also registers its checks on FormatChecker() made without arguments.
        FormatChecker.checkers[name] = (check, ValueError)


def _iri_check(rule: str):
    def check(instance: object) -> bool:
        if not isinstance(instance, str):
            return True
        from rfc3987_syntax import is_valid_syntax

        return is_valid_syntax(rule, instance)

    check.__name__ = f"is_{rule}"
    return check
