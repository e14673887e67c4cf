"""One HTML table for every table tm_compare shows: notebook summaries, the label panel, the report.

Every heading and cell is escaped with :func:`html.escape` (quotes too), so no corpus or label
text is ever read as markup. Callers format their values first; this module only lays them out.
"""

from __future__ import annotations

import html
from collections.abc import Collection, Mapping

import pandas as pd


def esc(value) -> str:
    """Escaped text of any value (missing values become an empty string)."""
    if value is None or (isinstance(value, float) and value != value):
        return ""
    return html.escape(str(value), quote=True)


def table(
    frame: pd.DataFrame,
    *,
    attrs: Mapping[str, str] | None = None,
    cell_style: str = "",
    numeric: Collection[str] = (),
    caption: str = "",
) -> str:
    """``frame`` as an HTML table: its column names as headings, its values as cell text.

    Parameters
    ----------
    frame : DataFrame
        The rows to show, values already formatted for reading (the index is not shown).
    attrs : mapping, optional
        Attributes of the ``<table>`` element, such as ``id``, ``class`` or ``style``.
    cell_style : str
        Inline style of every heading and cell (notebook outputs have no style sheet).
    numeric : collection of column names
        Columns whose cells hold numbers: they get ``class="n"`` (right-aligned by the report).
    caption : str
        Text of the table's ``<caption>``; none when empty.
    """
    style = f' style="{esc(cell_style)}"' if cell_style else ""
    opening = "".join(f' {esc(k)}="{esc(v)}"' for k, v in (attrs or {}).items())
    head = "".join(f'<th scope="col"{style}>{esc(c)}</th>' for c in frame.columns)
    kinds = [' class="n"' if c in numeric else "" for c in frame.columns]
    body = "".join(
        "<tr>"
        + "".join(f"<td{k}{style}>{esc(v)}</td>" for k, v in zip(kinds, row, strict=True))
        + "</tr>"
        for row in frame.itertuples(index=False, name=None)
    )
    title = f"<caption>{esc(caption)}</caption>" if caption else ""
    return f"<table{opening}>{title}<thead><tr>{head}</tr></thead><tbody>{body}</tbody></table>"
