"""One burst of widget messages per change: every widget of a view holds its updates until all
panels have computed theirs.

ipywidgets sends a message the moment a synced trait changes. A topic switch changes a dozen
traits across the view while Python still computes the next panel, so the browser would lay out
and paint the page again for each early message while later ones are still being computed.
Under :func:`one_burst` each widget keeps its changes (``hold_sync``) and all of them leave
together at the end, so the browser applies them in one go and paints about once.
"""

from __future__ import annotations

import contextlib
from collections.abc import Iterator


def widgets_under(root) -> Iterator:
    """``root`` and every widget below it (through ``children``), each once."""
    seen: set[int] = set()
    stack = [root]
    while stack:
        widget = stack.pop()
        if id(widget) in seen:
            continue
        seen.add(id(widget))
        yield widget
        stack.extend(reversed(tuple(getattr(widget, "children", ()) or ())))


@contextlib.contextmanager
def one_burst(root):
    """Hold the messages of ``root`` and every widget below it; send them all on leaving."""
    with contextlib.ExitStack() as stack:
        # Entered top-down, so left bottom-up: the last widget's message leaves first.
        for widget in widgets_under(root):
            if hasattr(widget, "hold_sync"):
                stack.enter_context(widget.hold_sync())
        yield
