"""Exports: tables (CSV, Parquet) with documented columns, charts (PNG, SVG), document-topic shares.

Uses the small demo project of ``test_pipeline.small_demo``. The document-topic shares are checked
against the input CSV the demo wrote (read back with pandas) and, for the regression use they are
meant for, against statsmodels' weighted least squares.
"""

from __future__ import annotations

import struct
import xml.etree.ElementTree as ET

import numpy as np
import pandas as pd
import pytest
from test_pipeline import small_demo

from tm_compare.compare.documents import document_topics
from tm_compare.errors import SettingsError
from tm_compare.report.exports import COLUMNS, data_dictionary, export, undocumented

pytestmark = pytest.mark.slow


@pytest.fixture(scope="module")
def demo_run():
    return small_demo()[0]


def test_document_topics_join_shares_to_the_users_ids_and_metadata(demo_run):
    results = demo_run.results
    fit, prepared = results.fit, results.prepared
    table = document_topics(fit, prepared, results.corpus)
    assert len(table) == len(prepared) and table["id"].is_unique
    shares = table[[f"topic_{t}" for t in range(fit.k)]].to_numpy()
    np.testing.assert_allclose(shares, fit.doc_topic)  # the model's own shares, same order
    np.testing.assert_allclose(shares.sum(axis=1), 1.0, atol=1e-9)
    assert table["heldout"].tolist() == fit.heldout.tolist()
    # The user's ids and a metadata column of their own, as in the file they gave.
    given = pd.read_csv(demo_run.project.path / "demo" / "quillhaven.csv").set_index("id")
    assert set(table["id"]) <= set(given.index)
    assert table["outlet"].tolist() == given.loc[table["id"], "outlet"].tolist()
    assert table["source"].tolist() == given.loc[table["id"], "source"].tolist()


def test_document_topics_feed_a_weighted_regression(demo_run):
    sm = pytest.importorskip("statsmodels.api")
    results = demo_run.results
    table = pd.read_csv(demo_run.report_path.parent / "document_topics.csv")
    diff = pd.read_csv(demo_run.report_path.parent / "differences.csv")
    row = diff.iloc[0]
    # Reference: statsmodels WLS on a source dummy; with exposure weights its slope is the
    # difference of weighted means, which is the exported point estimate (common practice).
    x = sm.add_constant((table["source"] == row["source"]).astype(float))
    fitted = sm.WLS(table[f"topic_{row['topic']}"], x, weights=table["weight"]).fit()
    assert fitted.params.iloc[1] == pytest.approx(row["difference"], abs=1e-9)
    assert results.settings["weighting"] == "exposure"


def test_csv_and_parquet_hold_the_same_values_and_every_column_is_documented(demo_run):
    folder = demo_run.report_path.parent
    for name, table in demo_run.results.tables.items():
        csv, parquet = (
            pd.read_csv(folder / f"{name}.csv"),
            pd.read_parquet(folder / f"{name}.parquet"),
        )
        assert list(csv.columns) == list(parquet.columns) == list(table.columns), name
        assert len(csv) == len(parquet) == len(table), name
        numeric = [c for c in parquet.columns if pd.api.types.is_float_dtype(parquet[c])]
        np.testing.assert_allclose(
            csv[numeric].to_numpy(float),
            parquet[numeric].to_numpy(float),
            rtol=1e-12,
            equal_nan=True,
        )
        assert undocumented(name, table) == [], name
    text = (folder / "columns.md").read_text(encoding="utf-8")
    assert text == data_dictionary(tables=list(demo_run.results.tables))
    for name in (
        "scores",
        "prevalence",
        "differences",
        "terms",
        "documents",
        "labels",
        "agreement",
    ):
        assert f"## {name}" in text


def test_charts_are_valid_png_and_svg(demo_run):
    folder = demo_run.report_path.parent / "charts"
    expected = {"sweep-npmi", "sweep-stability", "sources"} | {
        f"terms-topic{t}" for t in range(demo_run.results.fit.k)
    }
    assert {p.stem for p in folder.glob("*.svg")} == expected
    assert {p.stem for p in folder.glob("*.png")} == expected
    for stem in expected:
        png = (folder / f"{stem}.png").read_bytes()
        # PNG signature and IHDR size (PNG specification, ISO/IEC 15948, section 5 and 11.2.2).
        assert png[:8] == b"\x89PNG\r\n\x1a\n"
        width, height = struct.unpack(">II", png[16:24])
        assert width > 100 and height > 50
        root = ET.parse(folder / f"{stem}.svg").getroot()
        assert root.tag.endswith("svg")


def test_export_options_and_bad_formats(demo_run, tmp_path):
    written = export(
        demo_run.project, charts=(), tables="csv", out=tmp_path, results=demo_run.results
    )
    assert {p.suffix for p in written} == {".csv", ".md"}
    assert not (tmp_path / "charts").exists()
    with pytest.raises(SettingsError, match="'tables' parameter of export .* 'csv', 'parquet'"):
        export(
            demo_run.project, charts=(), tables="xlsx", out=tmp_path / "x", results=demo_run.results
        )
    assert not (tmp_path / "x").exists()


def test_data_dictionary_lists_every_table():
    text = data_dictionary()
    assert [line[3:] for line in text.splitlines() if line.startswith("## ")] == list(COLUMNS)
