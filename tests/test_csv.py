"""CSV cells safe to open in a spreadsheet (:mod:`tm_compare._csv`).

The rule follows OWASP's guidance on CSV injection: a cell that begins with ``=``, ``+``,
``-``, ``@``, a tab or a carriage return is prefixed with an apostrophe.
"""

from __future__ import annotations

import io

import pandas as pd
from hypothesis import given
from hypothesis import strategies as st

from tm_compare._csv import TRIGGERS, restore_cell, safe_cell, to_csv


def test_the_owasp_triggers_get_an_apostrophe():
    assert set(TRIGGERS) == {"=", "+", "-", "@", "\t", "\r"}  # OWASP, "CSV Injection"
    for text in ("=1+1", "+1", "-1", "@SUM(A1)", "\tx", "\rx"):
        assert safe_cell(text) == "'" + text
    assert safe_cell("harbour") == "harbour"
    assert safe_cell(-1.5) == -1.5  # numbers are never changed


@given(st.text())
def test_the_rule_is_undone_exactly(text):
    assert restore_cell(safe_cell(text)) == text
    assert not str(safe_cell(text)).startswith(TRIGGERS)


def test_frames_keep_numbers_and_neutralise_text():
    frame = pd.DataFrame({"name": ["=cmd", "ok"], "difference": [-0.25, 0.5]})
    back = pd.read_csv(io.StringIO(to_csv(frame)))
    assert back["name"].tolist() == ["'=cmd", "ok"]
    assert back["difference"].tolist() == [-0.25, 0.5]
