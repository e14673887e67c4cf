"""The one HTML table builder: structure, and nothing from the data is ever read as markup.

HTML is parsed with the standard library's ``html.parser``.
"""

from __future__ import annotations

from html.parser import HTMLParser

import pandas as pd

from tm_compare._html import esc, table

HOSTILE = '<script>alert("x")</script><img src=x onerror="alert(1)">'


class Parsed(HTMLParser):
    """Tags with their attributes, and the text of every cell, row by row."""

    def __init__(self, text: str):
        super().__init__()
        self.tags, self.rows, self._row = [], [], None
        self.feed(text)

    def handle_starttag(self, tag, attrs):
        self.tags.append((tag, dict(attrs)))
        if tag == "tr":
            self._row = []
        elif tag in ("td", "th"):
            self._row.append("")

    def handle_endtag(self, tag):
        if tag == "tr":
            self.rows.append(self._row)

    def handle_data(self, data):
        if self._row:
            self._row[-1] += data


def test_table_lays_out_headings_cells_caption_and_numeric_columns():
    frame = pd.DataFrame({"topic": ["harbour", "schools"], "share": ["0.40", "0.10"]})
    page = Parsed(table(frame, attrs={"id": "t", "class": "data"}, numeric={"share"}, caption="c"))
    assert page.rows == [["topic", "share"], ["harbour", "0.40"], ["schools", "0.10"]]
    assert ("table", {"id": "t", "class": "data"}) in page.tags
    assert [a.get("class") for tag, a in page.tags if tag == "td"] == [None, "n", None, "n"]
    assert [tag for tag, _ in page.tags][:3] == ["table", "caption", "thead"]


def test_every_heading_cell_attribute_and_caption_is_escaped():
    frame = pd.DataFrame({HOSTILE: [HOSTILE, None, float("nan")]})
    html = table(frame, attrs={"title": HOSTILE}, cell_style=HOSTILE, caption=HOSTILE)
    page = Parsed(html)
    assert "<script" not in html and "<img" not in html
    assert {tag for tag, _ in page.tags} == {"table", "caption", "thead", "tbody", "tr", "th", "td"}
    assert page.rows == [[HOSTILE], [HOSTILE], [""], [""]]  # missing values show empty


def test_esc_escapes_quotes_and_blanks_missing_values():
    assert esc("a \"b\" 'c' <d> & e") == "a &quot;b&quot; &#x27;c&#x27; &lt;d&gt; &amp; e"
    assert esc(None) == esc(float("nan")) == ""
    assert esc(3) == "3"
