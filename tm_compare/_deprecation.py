"""Old names that keep working for one release, each with a FutureWarning naming the new one.

- :func:`renamed_parameters` decorates a function whose keyword arguments were renamed;
- :func:`renamed_attribute` is a property standing for an attribute under its old name;
- :func:`warn_renamed` is the one message, for the other cases (a renamed function or flag).
"""

from __future__ import annotations

import functools
import warnings


def warn_renamed(old: str, new: str, stacklevel: int = 3) -> None:
    """Warn that ``old`` is deprecated in favour of ``new`` (both as the user writes them)."""
    warnings.warn(
        f"{old} is deprecated and will be removed in the next release; use {new} instead.",
        FutureWarning,
        stacklevel=stacklevel,
    )


def renamed_parameters(**renames: str):
    """Accept keyword arguments under their old names: ``@renamed_parameters(seed="random_state")``.

    An old name is passed on under its new one with a FutureWarning; giving both is a TypeError.
    """

    def decorate(func):
        owner = func.__qualname__.replace(".__init__", "")

        @functools.wraps(func)
        def wrapper(*args, **kwargs):
            for old, new in renames.items():
                if old in kwargs:
                    if new in kwargs:
                        msg = f"{owner}() got both {old!r} and its new name {new!r}; pass {new!r}."
                        raise TypeError(msg)
                    warn_renamed(f"{owner}({old}=...)", f"{new}=...")
                    kwargs[new] = kwargs.pop(old)
            return func(*args, **kwargs)

        return wrapper

    return decorate


def renamed_attribute(old: str, new: str) -> property:
    """A property ``old`` that reads and writes attribute ``new``, with a FutureWarning."""

    def get(self):
        warn_renamed(f"{type(self).__name__}.{old}", f".{new}")
        return getattr(self, new)

    def set_(self, value):
        warn_renamed(f"{type(self).__name__}.{old}", f".{new}")
        setattr(self, new, value)

    return property(get, set_, doc=f"Deprecated: use ``{new}``.")
