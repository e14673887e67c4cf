"""A clickable table widget: rows in, the clicked row's key out (``selected``)."""

from __future__ import annotations

import json
from pathlib import Path

import anywidget
import pandas as pd
import traitlets

_HERE = Path(__file__).parent


class RowTable(anywidget.AnyWidget):
    """A table whose rows can be clicked; cells are shown as text, never as HTML."""

    _esm = _HERE / "row_table.js"
    _css = _HERE / "row_table.css"

    columns = traitlets.List(traitlets.Unicode(), help="Column headings.").tag(sync=True)
    rows = traitlets.List(traitlets.List(), help="Cell values, one list per row.").tag(sync=True)
    row_keys = traitlets.List(help="One key per row; a click sets `selected` to it.").tag(sync=True)
    selected = traitlets.Any(None, allow_none=True, help="Key of the clicked row.").tag(sync=True)
    caption = traitlets.Unicode("", help="Title above the table.").tag(sync=True)

    def show_frame(self, frame: pd.DataFrame, keys: list) -> None:
        """Show ``frame`` (already formatted for reading) with one key per row."""
        # Through JSON so numpy scalars, NaN and timestamps arrive as plain values.
        rows = json.loads(frame.to_json(orient="values", date_format="iso"))
        with self.hold_sync():
            self.columns = [str(c) for c in frame.columns]
            self.rows = rows
            self.row_keys = list(keys)
