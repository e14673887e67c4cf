"""The HTML report: its numbers equal the exported tables', it is self-contained, it escapes.

Uses the small demo project of ``test_pipeline.small_demo`` (run once per session). HTML is
parsed with the standard library's ``html.parser``.
"""

from __future__ import annotations

import shutil
from html.parser import HTMLParser

import pandas as pd
import pytest
from test_pipeline import small_demo

from tm_compare.errors import SweepError
from tm_compare.labels.store import LabelStore
from tm_compare.report.exports import collect
from tm_compare.report.html import render, write_report

pytestmark = pytest.mark.slow

HOSTILE = '<script>alert("x")</script><img src=x onerror="alert(1)">'


class Page(HTMLParser):
    """Tables by id (rows of cell texts), every tag with its attributes, and all text."""

    def __init__(self, text: str):
        super().__init__()
        self.tables, self.tags, self.text = {}, [], []
        self._table = self._row = self._cell = None
        self.feed(text)

    def handle_starttag(self, tag, attrs):
        self.tags.append((tag, dict(attrs)))
        if tag == "table":
            self._table = self.tables.setdefault(dict(attrs).get("id"), [])
        elif tag == "tr" and self._table is not None:
            self._row = []
        elif tag in ("td", "th") and self._row is not None:
            self._cell = []

    def handle_endtag(self, tag):
        if tag in ("td", "th") and self._cell is not None:
            self._row.append("".join(self._cell).strip())
            self._cell = None
        elif tag == "tr" and self._row is not None:
            self._table.append(self._row)
            self._row = None
        elif tag == "table":
            self._table = None

    def handle_data(self, data):
        self.text.append(data)
        if self._cell is not None:
            self._cell.append(data)

    def rows(self, key: str) -> pd.DataFrame:
        header, *body = self.tables[f"table-{key}"]
        return pd.DataFrame(body, columns=header)


@pytest.fixture(scope="module")
def shown():
    run, _ = small_demo()
    folder = run.report_path.parent
    return Page(run.report_path.read_text(encoding="utf-8")), folder, run


def _number(text: str) -> float:
    return float(text.replace(",", "").replace("%", ""))


def test_differences_in_the_report_equal_the_exported_table(shown):
    page, folder, _ = shown
    table = pd.read_csv(folder / "differences.csv")
    rows = page.rows("differences")
    assert len(rows) == len(table)
    for (_, cells), (_, row) in zip(rows.iterrows(), table.iterrows(), strict=True):
        assert cells["topic"].startswith(f"{row['topic']} · ")
        assert cells["comparison"] == f"{row['source']} vs {row['other']}"
        # Shown with 3 decimals: equal within half a unit of the last digit.
        for column, name in (
            ("prevalence", "prevalence"),
            ("prevalence_other", "in the other"),
            ("difference", "difference"),
        ):
            assert _number(cells[name]) == pytest.approx(row[column], abs=5e-4)
        low, high = cells["interval"].split(" to ")
        assert _number(low) == pytest.approx(row["diff_ci_low"], abs=5e-4)
        assert _number(high) == pytest.approx(row["diff_ci_high"], abs=5e-4)
        p = cells["adjusted p"]
        if p == "< 0.001":
            assert row["p_adjusted"] < 0.001
        else:
            assert _number(p) == pytest.approx(row["p_adjusted"], rel=5e-3)
        assert cells["verdict"] == ("holds up" if row["significant"] else "could be chance")


def test_prevalence_sweep_topics_and_influence_equal_the_exported_tables(shown):
    page, folder, run = shown
    prev, rows = pd.read_csv(folder / "prevalence.csv"), page.rows("prevalence")
    for (_, cells), (_, row) in zip(rows.iterrows(), prev.iterrows(), strict=True):
        assert (cells["source"], _number(cells["prevalence"])) == (
            row["source"],
            pytest.approx(row["prevalence"], abs=5e-4),
        )
        low, high = cells["interval"].split(" to ")
        assert (_number(low), _number(high)) == (
            pytest.approx(row["ci_low"], abs=5e-4),
            pytest.approx(row["ci_high"], abs=5e-4),
        )
    rec, rows = pd.read_csv(folder / "recommendation.csv"), page.rows("sweep")
    assert [int(x) for x in rows["k"]] == rec["k"].tolist()
    assert [_number(x) for x in rows["NPMI (mean)"]] == pytest.approx(
        rec["npmi_mean"].tolist(), abs=5e-4
    )
    assert rows.iloc[:, -1].tolist() == ["recommended" if c else "" for c in rec["chosen"]]
    topics, rows = pd.read_csv(folder / "topic_scores.csv"), page.rows("topics")
    assert [_number(x) for x in rows["stability"]] == pytest.approx(
        topics["stability"].tolist(), abs=5e-4
    )
    terms = pd.read_csv(folder / "terms.csv").query("method == 'probability' and rank <= 8")
    assert (
        rows["most probable terms"].tolist()
        == terms.groupby("topic")["term"].agg(" ".join).tolist()
    )
    heavy, rows = pd.read_csv(folder / "influence.csv"), page.rows("influence")
    assert rows["cluster"].tolist() == heavy["group"].tolist()
    assert [_number(x) / 100 for x in rows["share of the source"]] == pytest.approx(
        heavy["share"].tolist(), abs=5e-3
    )


def test_report_is_self_contained_and_in_order(shown):
    page, _, run = shown
    assert not [t for t, _ in page.tags if t in ("script", "link", "iframe", "object", "embed")]
    for _, attrs in page.tags:
        for name in ("src", "href"):
            if name in attrs:
                assert attrs[name].startswith(("data:image/svg+xml;base64,", "#")), attrs[name][:60]
    csp = [
        a for t, a in page.tags if t == "meta" and a.get("http-equiv") == "Content-Security-Policy"
    ]
    assert csp and "default-src 'none'" in csp[0]["content"]
    text = " ".join(page.text)
    order = [
        "The documents",
        "Choosing the number of topics",
        "The topics",
        "Sources compared",
        "Documents that show each topic",
        "Labels and agreement",
        "Reproducing",
        "Cautions",
    ]
    positions = [text.index(heading) for heading in order]
    assert positions == sorted(positions)
    for caution in ("model output, not ground truth", "not representative", "personal data"):
        assert caution in text
    assert run.results.recommendation.rule in text


def test_every_value_from_the_corpus_and_labels_is_escaped(shown, tmp_path):
    _, _, run = shown
    copy = tmp_path / "project"
    shutil.copytree(run.project.path, copy)
    results = collect(copy, 6, 1, n_boot=50)
    with LabelStore(copy, analyst="analyst_c") as store:
        store.save(results.fit, 0, name="label " + HOSTILE, note=HOSTILE, verdict="usable")
        store.settle(results.fit, 0, name="settled " + HOSTILE, verdict="usable")
        results.read_labels(store)
    docs = results.tables["documents"]
    docs.loc[0, "title"] = "title " + HOSTILE
    docs.loc[0, "snippet"] = "text " + HOSTILE
    page = Page(render(results))
    assert not [t for t, _ in page.tags if t == "script"]
    assert not [a for _, a in page.tags if any(k.startswith("on") for k in a)]
    assert all(a.get("src", "data:").startswith("data:") for t, a in page.tags if t == "img")
    text = "".join(page.text)
    for shown_as_text in (
        "title " + HOSTILE,
        "text " + HOSTILE,
        "label " + HOSTILE,
        "settled " + HOSTILE,
    ):
        assert shown_as_text in text


def test_write_report_for_a_chosen_model_and_a_missing_one(shown, tmp_path):
    _, _, run = shown
    path = write_report(run.project, k=6, seed=1, out=tmp_path / "k6.html")
    assert "Model with 6 topics (seed 1)" in path.read_text(encoding="utf-8")
    with pytest.raises(SweepError, match=r"no fit with k=9 .*Existing fits are: \(k=4, seed=0\)"):
        write_report(run.project, k=9, out=tmp_path / "never.html")
    assert not (tmp_path / "never.html").exists()


def test_without_clusters_the_report_says_documents_were_resampled(shown):
    _, _, run = shown
    results = collect(run.project, cluster=None, n_boot=50)
    assert "influence" not in results.tables and "cap_effect" not in results.tables
    page = Page(render(results))
    assert "table-influence" not in page.tables
    text = " ".join(page.text)
    assert "that resample documents" in " ".join(text.split()) and "no cluster to check" in text
