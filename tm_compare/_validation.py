"""One message template for parameter checks (see DEVELOPERS.md, "Errors")."""

from __future__ import annotations

import os
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


#: Upper bounds on work, checked before any work starts (a bigger grid or corpus would exhaust
#: memory or run for days on a workstation). Each can be raised with the environment variable
#: ``TM_COMPARE_MAX_<NAME>`` (e.g. ``TM_COMPARE_MAX_FITS=50000``) on a machine that can hold it.
LIMITS = {
    "fits": (10_000, "fits in one sweep (topic counts x seeds)"),
    "demo_docs": (200_000, "articles in the demo corpus"),
    "n_boot": (100_000, "bootstrap replicates"),
}
#: Largest integer the label stores hold in an integer column (PostgreSQL's ``integer``); the
#: same rule applies on SQLite, so a store moves between back ends unchanged.
INT_MAX = 2**31 - 1


def limit(name: str) -> int:
    """The upper bound ``name`` of :data:`LIMITS`, or its ``TM_COMPARE_MAX_<NAME>`` override."""
    variable = f"TM_COMPARE_MAX_{name.upper()}"
    raw = os.environ.get(variable)
    if raw is None:
        return LIMITS[name][0]
    try:
        value = int(raw)
    except ValueError:
        value = 0
    if value < 1:
        msg = f"The environment variable {variable} must be a whole number >= 1. Got {raw!r}."
        raise SettingsError(msg)
    return value


def check_limit(owner: str, name: str, value: int, which: str) -> None:
    """Refuse ``value`` above the bound ``which`` of :data:`LIMITS`, saying how to raise it."""
    bound = limit(which)
    if value > bound:
        what = LIMITS[which][1]
        fix = (
            f"This machine-size limit ({bound:,} {what}) stops work that would exhaust memory "
            f"or run for days; ask for less, or raise it with the environment variable "
            f"TM_COMPARE_MAX_{which.upper()}=N on a machine that can hold it."
        )
        raise param_error(owner, name, value, f"at most {bound:,}", fix)


def check_int(owner: str, name: str, value: Any, minimum: int | None = None) -> int:
    """Return ``value`` as an int if it is an integer (not a bool) >= ``minimum``."""
    import numbers

    ok = isinstance(value, numbers.Integral) and not isinstance(value, bool)
    if not ok or (minimum is not None and value < minimum):
        accepted = "an integer" + (f" >= {minimum}" if minimum is not None else "")
        raise param_error(owner, name, value, accepted)
    return int(value)


def check_n_jobs(owner: str, value: Any) -> Any:
    """``n_jobs`` by joblib's convention: None or 1 for one process, N > 1, -1 for all cores."""
    import numbers

    if value is None:
        return value
    if isinstance(value, bool) or not isinstance(value, numbers.Integral) or value == 0:
        accepted = "a whole number of worker processes other than 0 (1 or more; -1 all cores)"
        fix = "Use --jobs 1 to fit in this process."
        raise param_error(owner, "n_jobs", value, accepted, fix)
    return value


def check_scheduler(owner: str, address: Any) -> Any:
    """A Dask scheduler address such as ``tcp://HOST:8786``, checked before any work starts."""
    if address is None:
        return address
    import re

    ok = isinstance(address, str) and re.fullmatch(
        r"(?:(tcp|tls|ws|wss|ucx|inproc)://)?[^\s:/]+:\d{1,5}/?", address.strip()
    )
    if not ok or not 0 < int(address.rstrip("/").rsplit(":", 1)[1]) < 65536:
        accepted = "an address PROTOCOL://HOST:PORT, e.g. 'tcp://10.0.0.5:8786'"
        fix = "Copy the address the scheduler prints when it starts."
        raise param_error(owner, "scheduler", address, accepted, fix)
    return address
