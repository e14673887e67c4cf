"""Chart builders: valid Vega-Lite, named selections, small data, rendered by vl-convert.

The outside references are the Vega-Lite JSON schema (Altair validates ``to_dict()`` against
it) and vl-convert, which renders specs with the real Vega engine, offline.
"""

import json
import re

import numpy as np
import pandas as pd
import pytest
import vl_convert as vlc

from tm_compare.views import charts


@pytest.fixture
def sweep_scores():
    rng = np.random.default_rng(0)
    rows = [(k, s, 0.05 + 0.002 * k + rng.normal(0, 0.004)) for k in (5, 10, 15) for s in range(3)]
    return pd.DataFrame(rows, columns=["k", "seed", "value"])


@pytest.fixture
def comparison_frames():
    names = {t: f"{t} · word{t}" for t in range(4)}
    prev = pd.DataFrame(
        [
            (t, names[t], s, e, e - 0.01, e + 0.01)
            for t, (a, b) in enumerate([(0.4, 0.2), (0.3, 0.3), (0.2, 0.3), (0.1, 0.2)])
            for s, e in (("shared", a), ("visited", b))
        ],
        columns=["topic", "name", "source", "estimate", "lower", "upper"],
    )
    diff = pd.DataFrame(
        {
            "topic": [0, 1, 3, 2],
            "name": [names[t] for t in (0, 1, 3, 2)],
            "estimate": [0.2, 0.0, -0.1, -0.1],
            "lower": [0.15, -0.05, -0.15, -0.16],
            "upper": [0.25, 0.05, -0.05, -0.04],
            "clear": [True, False, True, True],
        }
    )
    return prev, diff


def _params(spec):
    return {p["name"]: p for p in spec.get("params", [])}


def _svg(chart) -> str:
    return vlc.vegalite_to_svg(chart.to_dict())


def test_sweep_chart_is_valid_and_marks_the_suggestion(sweep_scores):
    chart = charts.sweep_chart(
        sweep_scores,
        title="NPMI",
        recommended_k=10,
        rule="highest mean NPMI <among> stable k",
        picked=(10, 1),
    )
    spec = chart.to_dict()  # validates against the Vega-Lite schema (altair)
    params = _params(spec)
    assert params[charts.FIT_PICK]["select"]["fields"] == ["k", "seed"]
    assert params[charts.PICKED]["value"] == "10:1"
    svg = _svg(chart)
    # vl-convert draws text as SVG text nodes, escaping it: the rule survives as words
    assert "suggested k = 10" in svg
    assert "highest mean NPMI &lt;among&gt; stable k" in svg


def test_sweep_chart_mean_line_is_the_mean_over_seeds(sweep_scores):
    # The line's y is Vega-Lite's "mean" aggregate of the seeds' values at each k; compare the
    # rendered view's data with pandas (common practice: the seed spread is drawn around a mean).
    spec = charts.sweep_chart(sweep_scores, title="NPMI").to_dict()
    line = next(layer for layer in spec["layer"] if layer["mark"]["type"] == "line")
    assert line["encoding"]["y"] == {"aggregate": "mean", "field": "value", "type": "quantitative"}
    band = next(layer for layer in spec["layer"] if layer["mark"]["type"] == "area")
    assert (
        band["encoding"]["y"]["aggregate"] == "min" and band["encoding"]["y2"]["aggregate"] == "max"
    )
    rows = (
        spec["datasets"][spec["data"]["name"]]
        if "data" in spec
        else next(iter(spec["datasets"].values()))
    )
    assert len(rows) == len(sweep_scores)  # one row per fit, never per document


def test_source_chart_orders_topics_by_difference_and_shares_one_click(comparison_frames):
    prev, diff = comparison_frames
    chart = charts.source_chart(prev, diff, focus=3, contrast="shared minus visited")
    spec = chart.to_dict()
    params = _params(spec)
    assert params[charts.TOPIC_PICK]["select"]["fields"] == ["topic"]
    assert len(params[charts.TOPIC_PICK]["views"]) >= 2  # both panels answer a click
    assert params[charts.FOCUS]["value"] == 3
    left = spec["hconcat"][0]["layer"][1]["encoding"]["y"]
    assert left["sort"] == diff["name"].tolist()
    total_rows = sum(len(v) for v in spec["datasets"].values())
    # aggregated tables only: prevalence, differences, the focus bands (one row per topic), zero
    assert total_rows <= len(prev) + 2 * len(diff) + 1
    svg = _svg(chart)
    assert "0 · word0" in svg and "shared minus visited" in svg


def _term_frames():
    rows = [
        (t, f"t{t}w{i}", i + 1, 0.1 / (i + 1), 0.9 / (1 + 0.3 * i))
        for t in range(3)
        for i in range(12)
    ]
    frame = pd.DataFrame(rows, columns=["topic", "term", "rank", "probability", "share_of_term"])
    return frame[frame["rank"] <= 8], frame


def test_term_map_draws_the_focus_topic_and_names_its_ranked_terms():
    ranked, context = _term_frames()
    chart = charts.term_map(ranked, focus=2, ranking="distinctive (FREX)", context=context)
    spec = chart.to_dict()
    assert _params(spec)[charts.FOCUS]["value"] == 2
    svg = _svg(chart)
    assert "1 t2w0" in svg and "8 t2w7" in svg  # ranked terms are named with their rank
    assert "t0w0" not in svg and "t2w9" not in svg  # other topics and context terms are not
    assert "share of the term" in svg and "share of the topic" in svg
    rows = [r for rows in spec["datasets"].values() for r in rows]
    assert sum(r["kind"] == "context" for r in rows) == 3 * 4  # context adds only unranked terms


def test_source_chart_encodes_verdict_by_fill_and_sources_by_colour(comparison_frames):
    prev, diff = comparison_frames
    spec = charts.source_chart(prev, diff, focus=1).to_dict()
    right = spec["hconcat"][1]["layer"]
    points = [layer for layer in right if layer["mark"].get("shape") == "diamond"]
    # one filled layer (holds up) and one hollow (could be chance), both ink, never a source colour
    assert sorted(layer["mark"]["filled"] for layer in points) == [False, True]
    assert {layer["mark"]["color"] for layer in points} == {charts.INK}
    svg = _svg(charts.source_chart(prev, diff, focus=1))
    assert "holds up" in svg and "could be chance" in svg
    diamonds = re.findall(r'<path aria-label="[^"]*verdict: [^"]*"[^>]*>', svg)
    assert len(diamonds) == len(diff)
    assert all(f'stroke="{charts.INK}"' in d for d in diamonds)
    assert sum(f'fill="{charts.INK}"' in d for d in diamonds) == int(diff["clear"].sum())
    # the focus topic has a band in each panel, named for screen readers
    assert svg.count('aria-label="selected topic 1 · word1"') == 2


def test_long_captions_and_titles_fit_their_chart():
    names = {t: f"{t} · " + " ".join(["harbourmaster"] * (t + 1)) for t in range(4)}
    prev = pd.DataFrame(
        [(t, names[t], s, 0.2, 0.1, 0.3) for t in range(4) for s in ("shared", "visited")],
        columns=["topic", "name", "source", "estimate", "lower", "upper"],
    )
    diff = pd.DataFrame(
        {
            "topic": range(4),
            "name": [names[t] for t in range(4)],
            "estimate": [0.3, 0.1, -0.1, -0.3],
            "lower": [0.2, 0.0, -0.2, -0.4],
            "upper": [0.4, 0.2, 0.0, -0.2],
            "clear": [True, False, False, True],
        }
    )
    note = "Counting by exposure; 95% percentile intervals from 1000 replicates. " * 4
    spec = charts.source_chart(prev, diff, note=note).to_dict()
    subtitle = spec["title"]["subtitle"]
    assert len(subtitle) > 1 and max(map(len, subtitle)) * charts.CHAR_PX <= 720
    svg = _svg(charts.source_chart(prev, diff, note=note))
    texts = re.findall(r"<text[^>]*>([^<]*)</text>", svg)
    assert charts.short(names[3]) in texts and names[3] not in texts
    assert len(charts.short(names[3])) == charts.CAPTION_CHARS


def test_wording_chart_colours_by_leaning_source():
    wording = pd.DataFrame({"term": ["rent", "tide", "<b>x</b>"], "score": [2.5, -1.5, 0.5]})
    chart = charts.wording_chart(wording, sources=("shared", "visited"))
    rows = next(iter(chart.to_dict()["datasets"].values()))
    assert [r["leans"] for r in rows] == ["shared", "visited", "shared"]
    svg = _svg(chart)
    assert "&lt;b&gt;x&lt;/b&gt;" in svg and "<b>x</b>" not in svg


def test_charts_hold_no_external_urls(sweep_scores, comparison_frames):
    prev, diff = comparison_frames
    for chart in (charts.sweep_chart(sweep_scores, title="NPMI"), charts.source_chart(prev, diff)):
        text = json.dumps(chart.to_dict())
        assert "http" not in text.replace("https://vega.github.io/schema", "")
