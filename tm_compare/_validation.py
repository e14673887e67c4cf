"""One message template for parameter checks (see DEVELOPERS.md, "Errors")."""

from __future__ import annotations

from collections.abc import Iterable
from typing import Any

from .errors import MissingDependencyError, SettingsError


def param_error(owner: str, name: str, value: Any, accepted: str, fix: str | None = None):
    """Build the SettingsError for parameter ``name`` of ``owner``.

    >>> str(param_error("sweep", "k", 1, "integers >= 2"))
    "The 'k' parameter of sweep must be integers >= 2. Got 1 instead."
    """
    msg = f"The {name!r} parameter of {owner} must be {accepted}. Got {value!r} instead."
    if fix:
        msg += f" {fix}"
    return SettingsError(msg)


def check_choice(owner: str, name: str, value: Any, choices: Iterable[Any]) -> Any:
    """Return ``value`` if it is one of ``choices``, else raise SettingsError."""
    choices = list(choices)
    if value not in choices:
        listed = ", ".join(repr(c) for c in choices)
        raise param_error(owner, name, value, f"one of {listed}")
    return value


def require(module: str, extra: str | None = None):
    """Import an optional dependency or raise an ImportError that says what to install."""
    import importlib

    try:
        return importlib.import_module(module)
    except ImportError as exc:
        hint = f"pip install 'tm_compare[{extra}]'" if extra else f"pip install {module}"
        msg = f"This feature needs the optional package {module!r}, which is not installed. Install it with: {hint}"
        raise MissingDependencyError(msg) from exc
