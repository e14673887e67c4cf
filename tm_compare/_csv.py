"""CSV cells made safe to open in a spreadsheet (formula injection).

A spreadsheet runs a cell that begins with ``=``, ``+``, ``-`` or ``@`` (and, in some programs,
a tab or carriage return) as a formula, so a label or a title such as ``=HYPERLINK(...)`` could
act when a colleague opens an exported CSV. Following OWASP's guidance on CSV injection, text
cells that begin with one of those characters get a leading apostrophe, which spreadsheets show
as text. Text cells that already begin with an apostrophe get one more, so the rule can be
undone exactly (:func:`restore_cell`, used when label files are imported). Numbers are never
changed; Parquet files hold the values as they are.
"""

from __future__ import annotations

import pandas as pd

#: First characters a spreadsheet may read as the start of a formula (OWASP, CSV injection).
TRIGGERS = ("=", "+", "-", "@", "\t", "\r")
_ESCAPED = (*TRIGGERS, "'")


def safe_cell(value):
    """``value`` with a leading apostrophe when it is text a spreadsheet would run."""
    if isinstance(value, str) and value.startswith(_ESCAPED):
        return "'" + value
    return value


def restore_cell(value):
    """Undo :func:`safe_cell` on a cell read back from a CSV file written by tm_compare."""
    if (
        isinstance(value, str)
        and len(value) > 1
        and value[0] == "'"
        and value[1:].startswith(_ESCAPED)
    ):
        return value[1:]
    return value


def safe_frame(frame: pd.DataFrame) -> pd.DataFrame:
    """A copy of ``frame`` whose text cells are :func:`safe_cell` (numbers untouched)."""
    out = frame.copy()
    for column in out.columns:
        values = out[column]
        if values.dtype == object or pd.api.types.is_string_dtype(values.dtype):
            out[column] = values.map(safe_cell)
    return out


def to_csv(frame: pd.DataFrame, path_or_buffer=None, **options):
    """``frame.to_csv`` with text cells made safe (``index=False`` unless given)."""
    options.setdefault("index", False)
    return safe_frame(frame).to_csv(path_or_buffer, **options)
