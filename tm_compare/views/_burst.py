"""One message per change: every widget of a view holds its updates until all panels have
computed theirs, and all of them reach the browser in one message.

ipywidgets sends a message the moment a synced trait changes, and one message per widget even
when its changes are held (``hold_sync``). The browser handles each message in its own task and
may lay out and paint the page between two of them, so a topic switch that touched nine widgets
painted three or four times (a Chromium trace at 200k documents x 50 topics). Under :func:`one_burst` every widget below a root holds its changes; on
leaving, a :class:`Courier` (a widget with no look, shown inside the view) sends all of them as
one custom message, which its front end (``burst.js``) applies to each widget's model in one task,
queued behind that widget's own updates. Until the front end has said it is ready (its first
message), and for any state that carries binary buffers, the widgets send their own messages.
"""

from __future__ import annotations

import contextlib
from collections.abc import Iterator
from pathlib import Path

import anywidget
import traitlets
from ipywidgets.widgets.widget import _remove_buffers


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


class Courier(anywidget.AnyWidget):
    """Carries the held changes of many widgets to the browser in one message."""

    _esm = Path(__file__).parent / "burst.js"
    ready = traitlets.Bool(False, help="The front end can apply a burst (it said so).")

    def __init__(self, **kwargs):
        super().__init__(**kwargs)
        self.on_msg(self._heard)

    def _heard(self, _widget, content, _buffers) -> None:
        if isinstance(content, dict) and content.get("kind") == "tmc-ready":
            self.ready = True

    def carry(self, widgets) -> None:
        """Send the held changes of ``widgets`` as one message; they then have none left."""
        updates = []
        for widget in widgets:
            keys = getattr(widget, "_states_to_send", None)
            if not keys or widget.comm is None:
                continue
            state = widget.get_state(key=keys)
            state, _paths, buffers = _remove_buffers(state)
            if buffers:  # binary data: left to the widget's own message
                continue
            for name, value in state.items():  # as Widget.send_state keeps its lock current
                if name in widget._property_lock:
                    widget._property_lock[name] = value
            updates.append([widget.model_id, state])
            keys.clear()
        if updates:
            self.send({"kind": "tmc-burst", "updates": updates})


@contextlib.contextmanager
def one_burst(root, courier: Courier | None = None):
    """Hold the messages of ``root`` and every widget below it; on leaving, send them in one
    message through ``courier`` when its front end is ready, else one message per widget."""
    widgets = [widget for widget in widgets_under(root) if hasattr(widget, "hold_sync")]
    with contextlib.ExitStack() as stack:
        for widget in widgets:
            stack.enter_context(widget.hold_sync())
        try:
            yield
        finally:
            if courier is not None and courier.ready:
                courier.carry(widgets)
