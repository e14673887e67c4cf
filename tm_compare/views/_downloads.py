"""Downloads from a view: a table as CSV, a chart as PNG or SVG, written where the view says.

Every file name carries what it shows and the settings that shaped it (model, topic, weighting,
resampling, ranking...), so two downloads never overwrite each other unless they show the same
thing. Files are written atomically; charts are drawn offline by vl-convert.
"""

from __future__ import annotations

import copy
import re
from collections.abc import Callable
from pathlib import Path

import ipywidgets as w
import pandas as pd

from .._atomic import atomic_path, atomic_write_bytes
from .._html import esc
from .charts import WARN

TABLE_FORMAT = "csv"
CHART_FORMATS = ("png", "svg")


def file_stem(*parts) -> str:
    """A safe file stem from parts such as ``("terms", "k8-seed0", "topic7", "frex-w0.5")``."""
    text = "_".join(str(p) for p in parts if p not in (None, ""))
    return re.sub(r"[^A-Za-z0-9._=+-]+", "-", text).strip("-_") or "download"


def with_params(spec: dict, values: dict) -> dict:
    """A copy of a Vega-Lite ``spec`` whose variable parameters named in ``values`` start at them
    (a chart widget moves parameters in the browser; its ``spec`` keeps the first values)."""
    out = copy.deepcopy(spec)

    def visit(node):
        if isinstance(node, dict):
            if node.get("name") in values and "value" in node and "select" not in node:
                node["value"] = values[node["name"]]
            for child in node.values():
                visit(child)
        elif isinstance(node, list):
            for child in node:
                visit(child)

    visit(out)
    return out


def write_table(frame: pd.DataFrame, path: Path) -> Path:
    """Write ``frame`` as CSV to ``path`` (atomically) and return the path."""
    with atomic_path(path) as tmp:
        frame.to_csv(tmp, index=False)
    return path


def write_chart(spec: dict, path: Path, fmt: str) -> Path:
    """Draw a Vega-Lite ``spec`` as PNG (2x scale) or SVG with vl-convert (offline)."""
    import vl_convert

    data = (
        vl_convert.vegalite_to_png(spec, scale=2)
        if fmt == "png"
        else vl_convert.vegalite_to_svg(spec).encode("utf-8")
    )
    return atomic_write_bytes(path, data)


class Downloads(w.HBox):
    """Buttons that write one table (CSV) and/or one chart (PNG, SVG) into a folder.

    Parameters
    ----------
    folder : callable() -> Path
        Where to write (asked at each click, so the view's folder field can change it).
    stem : callable() -> str
        The file name without extension (asked at each click: it holds the current settings).
    table : callable() -> DataFrame, optional
        The table on show.
    chart : callable() -> dict, optional
        The chart on show as a Vega-Lite spec.
    name : str
        What is downloaded, as a CSS class ``tmc-downloads-NAME`` (for tests and styling).
    """

    def __init__(
        self,
        folder: Callable[[], Path],
        stem: Callable[[], str],
        *,
        table: Callable[[], pd.DataFrame] | None = None,
        chart: Callable[[], dict] | None = None,
        name: str = "",
    ):
        self._folder, self._stem, self._table, self._chart = folder, stem, table, chart
        formats = ([TABLE_FORMAT] if table is not None else []) + (
            list(CHART_FORMATS) if chart is not None else []
        )
        self.buttons = {}
        for fmt in formats:
            button = w.Button(
                description=fmt.upper(),
                tooltip=f"Save as {fmt.upper()} in the downloads folder",
                layout=w.Layout(width="56px", height="24px"),
            )
            button.add_class(f"tmc-download-{fmt}")
            button.on_click(lambda _b, fmt=fmt: self._clicked(fmt))
            self.buttons[fmt] = button
        self.status = w.HTML(layout=w.Layout(margin="0 0 0 8px"))
        self.status.add_class("tmc-download-status")
        label = w.HTML('<span style="font-size:12px;color:#6b7078">Download</span>')
        super().__init__(
            [label, *self.buttons.values(), self.status],
            layout=w.Layout(align_items="center", flex_flow="row wrap"),
        )
        self.add_class("tmc-downloads")
        if name:
            self.add_class(f"tmc-downloads-{name}")

    def _clicked(self, fmt: str) -> None:
        try:
            self.save(fmt)
        except OSError:
            pass  # the status line says why; nothing was written

    def save(self, fmt: str) -> Path:
        """Write the table or chart as ``fmt`` ("csv", "png" or "svg"); show and return its path."""
        path = Path(self._folder()).expanduser().absolute() / f"{self._stem()}.{fmt}"
        try:
            if fmt == TABLE_FORMAT:
                write_table(self._table(), path)
            else:
                write_chart(self._chart(), path, fmt)
        except OSError as exc:
            self.status.value = f'<span style="color:{WARN}">Not saved: {esc(exc)}</span>'
            raise
        self.status.value = (
            f'<span style="font-size:12px">Saved <code class="tmc-saved-path">{esc(path)}</code>'
            "</span>"
        )
        return path
