"""Views without a browser: set traits and selections as the front end would, then check that the
panels show what the plain functions return.

A click is simulated the way altair's front end reports it (``altair/jupyter/js/index.js`` sets
``_vl_selections`` to ``{name: {"value": {"vlPoint": {"or": [...]}}, "store": [...]}}``). The
numbers are compared with :mod:`tm_compare.comparison`, :mod:`tm_compare.terms` and
:mod:`tm_compare.documents` called directly; escaping is compared with :func:`html.escape`.
"""

from __future__ import annotations

import asyncio
import html
import re
import time
from dataclasses import replace

import numpy as np
import pandas as pd
import pytest

from tm_compare.compare import documents, terms
from tm_compare.compare import prevalence as comparison
from tm_compare.errors import SettingsError
from tm_compare.labels.store import LabelStore
from tm_compare.models.fits import Fit
from tm_compare.models.sweeps import sweep
from tm_compare.text.prepared import PreparedCorpus
from tm_compare.views import SweepView, TopicView, charts
from tm_compare.views._cards import emphasise
from tm_compare.views._offline import bundle_path, cache_dir, chart_widget

K, V, PER_TOPIC = 4, 40, 10
HOSTILE_TITLE = "Tide <script>alert('t')</script> report"
HOSTILE_TEXT = "w00 w01 w02 <img src=x onerror=alert('x')> w03 w04 harbour"


def _click(widget, name, **fields):
    widget._vl_selections = {name: {"value": {"vlPoint": {"or": [fields]}}, "store": []}}


@pytest.fixture(scope="module")
def planted():
    """Four planted topics over 40 words (topic t owns words 10t..10t+9); topic 0 is three times
    as common among shared documents; reader_00 carries most of the shared exposure."""
    rng = np.random.default_rng(7)
    n = 240
    sources = np.array(["shared"] * 120 + ["visited"] * 120)
    dominant = np.where(
        sources == "shared",
        rng.choice(K, n, p=[0.55, 0.15, 0.15, 0.15]),
        rng.choice(K, n, p=[0.18, 0.28, 0.27, 0.27]),
    )
    doc_topic = np.full((n, K), 0.02)
    doc_topic[np.arange(n), dominant] = 0.94
    vocab = [f"w{i:02d}" for i in range(V)]
    topic_term = np.full((K, V), 0.001)
    for t in range(K):
        topic_term[t, t * PER_TOPIC : (t + 1) * PER_TOPIC] = np.linspace(0.2, 0.05, PER_TOPIC)
    topic_term /= topic_term.sum(axis=1, keepdims=True)
    tokens = [[vocab[i] for i in rng.choice(V, 30, p=doc_topic[d] @ topic_term)] for d in range(n)]
    texts = [" ".join(t) for t in tokens]
    ids = [f"d{d:03d}" for d in range(n)]
    titles = [f"Article {d} on topic {dominant[d]}" for d in range(n)]
    texts[0], titles[0] = HOSTILE_TEXT + " " + texts[0], HOSTILE_TITLE
    groups = np.array([f"reader_{d % 12:02d}" for d in range(n)], dtype=object)
    weights = np.ones(n)
    weights[(groups == "reader_00") & (sources == "shared")] = 40.0
    meta = pd.DataFrame(
        {
            "id": ids,
            "source": sources,
            "weight": weights,
            "group": groups,
            "url": None,
            "title": titles,
            "date": pd.Timestamp("2024-03-01"),
            "text": texts,
            "outlet": np.where(np.arange(n) % 2, "Harbour <Times>", "Gull Post"),
        }
    )
    prepared = PreparedCorpus.from_texts(tokens, meta, vocab=vocab)
    fit = Fit.from_arrays(prepared, topic_term, doc_topic, doc_dirichlet=doc_topic * 50)
    return fit, prepared


@pytest.fixture
def store(tmp_path):
    with LabelStore(tmp_path / "labels.sqlite", analyst="analyst_a") as s:
        yield s


@pytest.fixture
def view(planted, store):
    fit, prepared = planted
    v = TopicView(fit, prepared, labels=store, n_boot=100, n_docs=3, poll_seconds=None)
    yield v
    v.close()


def test_the_view_opens_on_the_most_different_topic(view, planted):
    fit, prepared = planted
    diff = comparison.differences(fit, prepared, n_boot=100)  # the plain function
    assert view.topic == int(diff.sort_values("difference", ascending=False)["topic"].iloc[0]) == 0
    shown = view.sources_panel.topic_list
    assert shown.row_keys == diff.sort_values("difference", ascending=False)["topic"].tolist()
    # the list's differences are the plain function's, to the 3 decimals shown
    by_topic = diff.set_index("topic")["difference"]
    for key, row in zip(shown.row_keys, shown.rows, strict=True):
        assert row[2] == f"{by_topic[key]:+.3f}"


def test_one_topic_trait_moves_every_panel(view, planted):
    fit, prepared = planted
    view.topic = 2
    assert view.sources_panel.chart.params.focus == 2
    assert view.terms_panel.map_chart.params.focus == 2
    assert view.sources_panel.topic_list.selected == 2
    assert "Reading topic <b>2 · w20 w21 w22</b>" in view.reading_title.value
    _shows_what_the_plain_functions_give(view, fit, prepared, 2)
    assert "Current labels of topic 2" in view.labels_panel.labels.value


def _shows_what_the_plain_functions_give(view, fit, prepared, topic):
    """The view's documents and wording of ``topic`` are those of the plain functions."""
    expected = documents.representative_documents(fit, prepared, topic, n_docs=3)
    for source, box in view.documents_panel.columns.items():
        for title in expected[expected["source"] == source]["title"]:
            assert html.escape(title) in box.value
    wording = terms.source_wording(fit, prepared, topic, against="each", n_terms=8)
    first = wording[(wording["source"] == "shared") & (wording["other"] == "visited")]
    rows = view.terms_panel.wording_chart.rows  # the rows drawn now (swapped in place)
    assert [r["term"] for r in rows[: len(first)]] == first["term"].tolist()


def test_topics_prepared_while_the_kernel_idles_show_the_plain_functions(planted):
    fit, prepared = planted

    async def open_and_idle():
        # A running event loop, as in a kernel: the view prepares the other topics ahead.
        v = TopicView(fit, prepared, n_boot=50, n_docs=3, poll_seconds=None)
        while v._preparing:
            await asyncio.sleep(0.02)
        return v

    view = asyncio.run(open_and_idle())
    assert set(view.documents_panel._cards) == {(view.results, t) for t in range(K)}
    assert set(view.terms_panel._prepared) == set(range(K))
    view.topic = 2  # served from what was prepared
    _shows_what_the_plain_functions_give(view, fit, prepared, 2)
    method, n_terms = view.terms_panel.method.value, view.results.settings["n_terms"]
    ranked = terms.term_rankings(fit, prepared, method, n_terms=n_terms)
    for term in ranked[ranked["topic"] == 2]["term"]:
        assert f'<td class="tmc-term">{html.escape(term)}</td>' in view.terms_panel.term_list.value
    view.close()


def test_clicks_anywhere_select_the_topic(view):
    _click(view.sources_panel.chart, charts.TOPIC_PICK, topic=1)
    assert view.topic == 1
    _click(view.terms_panel.map_chart, charts.TOPIC_PICK, topic=3)
    assert view.topic == 3
    view.sources_panel.topic_list.selected = 2  # a row clicked in the topic list
    assert view.topic == 2
    with pytest.raises(ValueError, match="'topic' parameter of TopicView"):
        view.topic = K


def test_weighting_cluster_and_influence_warning(view, planted):
    fit, prepared = planted
    panel = view.sources_panel
    # reader_00 carries most of the shared exposure: the influence check fires and names it
    flagged = comparison.influence(prepared, warn=False)
    assert flagged["flagged"].any()
    assert (
        "reader_00" in panel.warning.value and "One cluster may be driving" in panel.warning.value
    )
    panel.weighting.value = "unique"
    prev = comparison.prevalence(fit, prepared, weighting="unique", n_boot=100)
    data = [d for d in panel.chart.spec["datasets"].values() if d and "source" in d[0]][0]
    got = {(r["source"], r["topic"]): r["estimate"] for r in data}
    for row in prev.itertuples():
        assert got[(row.source, row.topic)] == pytest.approx(row.prevalence, abs=1e-12)
    assert panel.warning.value == ""  # counted once per article, no reader dominates
    panel.cluster.value = None
    assert "resampling documents" in str(panel.chart.spec["title"])


def test_ranking_selector_uses_term_rankings(view, planted):
    fit, prepared = planted
    panel = view.terms_panel
    assert [label for label, _ in panel.method.options] == [
        "frequent",
        "lift",
        "distinctive (FREX)",
        "weighted (Sievert & Shirley 2014)",
    ]
    panel.method.value = "relevance"
    # the weight is a plain number under "more options", hidden until asked for
    assert panel.more.layout.display is None and panel.options_box.layout.display == "none"
    panel.more.value = True
    assert panel.options_box.layout.display is None and panel.weight.value == 0.6
    assert "lambda" not in panel.weight.description + panel.weight_help.value
    panel.weight.value = 0.3
    expected = terms.term_rankings(fit, prepared, "relevance", lam=0.3)
    rows = [r for r in _rows(panel.map_chart.spec) if r["kind"] == "ranked"]
    assert [(r["topic"], r["term"], r["rank"]) for r in rows] == list(
        zip(expected["topic"], expected["term"], expected["rank"], strict=True)
    )
    listed = re.findall(r'class="tmc-term">([^<]+)<', panel.term_list.value)
    assert listed == expected[expected["topic"] == view.topic]["term"].tolist()
    panel.method.value = "lift"
    assert panel.more.layout.display == "none" and panel.options_box.layout.display == "none"


def _rows(spec):
    return [r for rows in spec["datasets"].values() for r in rows]


def test_term_map_places_terms_by_both_conditional_probabilities(view, planted):
    fit, prepared = planted
    view.topic = 2
    rows = [r for r in _rows(view.terms_panel.map_chart.spec) if r["topic"] == 2]
    # Bayes' rule by hand: p(k | w) = pi_k phi_kw / sum_j pi_j phi_jw, pi = the topics' token
    # shares (every planted document has 30 tokens, so pi is the mean topic share).
    pi = fit.doc_topic.mean(axis=0)
    phi = fit.topic_term
    for r in rows:
        w_id = (
            fit.vocab.index(r["term"])
            if isinstance(fit.vocab, list)
            else list(fit.vocab).index(r["term"])
        )
        assert r["probability"] == pytest.approx(phi[2, w_id])
        assert r["share_of_term"] == pytest.approx(pi[2] * phi[2, w_id] / (pi @ phi[:, w_id]))
    # the planted topic 2 owns w20..w29: its ranked terms are those, most probable first
    ranked = sorted((r for r in rows if r["kind"] == "ranked"), key=lambda r: r["rank"])
    assert [r["term"] for r in ranked] == [f"w2{i}" for i in range(10)]


def test_view_against_the_rest_draws_its_wording(planted):
    # Each source against all others pooled: the pairs are (source, "rest"), and "rest" is no
    # source; the wording bars must still come from the pooled comparison.
    fit, prepared = planted
    v = TopicView(fit, prepared, topic=2, n_boot=50, against="rest", poll_seconds=None)
    try:
        panel = v.sources_panel
        assert all(b == "rest" for _, b in panel._pairs)
        panel.contrast.value = len(panel._pairs) - 1  # not the first pair
        a, _ = panel.pair
        v.topic = 3
        shown = v.terms_panel.results.wording(3, panel.pair)
        assert set(shown["other"]) == {"rest"} and a in set(shown["source"])
    finally:
        v.close()


def test_first_draw_shows_the_chosen_topic(planted, tmp_path):
    fit, prepared = planted
    v = TopicView(fit, prepared, topic=3, n_boot=50, n_docs=2, downloads=tmp_path)
    try:
        for chart in (v.sources_panel.chart, v.terms_panel.map_chart):
            focus = [p for p in chart.spec["params"] if p["name"] == charts.FOCUS]
            assert focus[0]["value"] == 3  # the first drawing already shows topic 3
            # a drawing reports the spec's values back (altair's front end does so on every
            # (re)draw): the view stays the owner and sets its topic again
            chart._params = {**chart._params, charts.FOCUS: 0}
            assert chart.params.focus == 3 and chart._params[charts.FOCUS] == 3
        assert v.sources_panel.topic_list.selected == 3
        assert "Reading topic <b>3 · w30 w31 w32</b>" in v.reading_title.value
        assert "Topic 3," in v.terms_panel.term_list.value
        with pytest.raises(ValueError, match="'topic' parameter of TopicView"):
            TopicView(fit, prepared, topic=K, n_boot=50)
    finally:
        v.close()


def test_find_by_word_lists_topics_and_picks_one(view, planted):
    fit, prepared = planted
    panel = view.find_panel
    panel.query.value = "W25"  # any case
    expected = terms.find_topics(fit, "w25", prepared)
    assert panel.found["topic"].tolist() == expected["topic"].tolist()
    # planted: w25 is the 6th most probable word of topic 2, and far down every other topic
    assert expected.iloc[0][["topic", "rank"]].tolist() == [2, 6]
    assert panel.table.rows[0][:2] == ["2 · w20 w21 w22", 6]
    panel.table.selected = 2  # a row clicked
    assert view.topic == 2
    view.terms_panel.method.value = "frex"  # a word's rank follows the ranking on show
    expected = terms.find_topics(fit, "w25", prepared, method="frex")
    assert panel.found[["topic", "rank"]].values.tolist() == (
        expected[["topic", "rank"]].values.tolist()
    )
    assert set(panel.found["method"]) == {"frex"}
    panel.query.value = "harbor"
    assert "Closest terms" in panel.message.value or "vocabulary" in panel.message.value
    assert panel.table.layout.display == "none"


def test_downloads_write_tables_and_charts_named_by_settings(planted, tmp_path):
    fit, prepared = planted
    v = TopicView(fit, prepared, topic=1, n_boot=50, n_docs=2, downloads=tmp_path)
    try:
        csv = v.sources_panel.table_downloads.save("csv")
        assert csv.parent == tmp_path
        assert csv.name == (
            "differences_k4-seed0_shared-minus-visited_exposure_cluster-group_nboot50_seed0.csv"
        )
        assert "Saved" in v.sources_panel.table_downloads.status.value
        assert html.escape(str(csv)) in v.sources_panel.table_downloads.status.value
        written = pd.read_csv(csv)
        diff = comparison.differences(fit, prepared, n_boot=50)
        diff = diff[diff["source"] == "shared"]
        np.testing.assert_allclose(
            written.sort_values("topic")["difference"], diff.sort_values("topic")["difference"]
        )
        v.terms_panel.method.value = "frex"
        png = v.terms_panel.map_downloads.save("png")
        assert png.name == "term-map_k4-seed0_topic1_frexw0.5.png"
        assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"  # the PNG signature
        svg = v.terms_panel.map_downloads.save("svg").read_text()
        assert svg.startswith("<svg") and "w10" in svg and "w20" not in svg  # topic 1 drawn
        table = pd.read_csv(v.terms_panel.map_downloads.save("csv"))
        expected = terms.term_rankings(fit, prepared, "frex")
        assert table["term"].tolist() == expected[expected["topic"] == 1]["term"].tolist()
    finally:
        v.close()


def test_corpus_and_label_text_is_escaped(view, planted, store):
    fit, _ = planted
    view.topic = int(np.argmax(fit.doc_topic[0]))
    shown = "".join(box.value for box in view.documents_panel.columns.values())
    assert html.escape(HOSTILE_TITLE) in shown
    assert "&lt;img src=x onerror=alert(&#x27;x&#x27;)&gt;" in shown
    assert "Harbour &lt;Times&gt;" in shown
    assert "<script" not in shown and "<img" not in shown
    store.save(
        fit, view.topic, name="<img src=x onerror=alert(1)>", note="<script>alert(2)</script>"
    )
    view.labels_panel.refresh(force=True)
    labels = view.labels_panel.labels.value + view.labels_panel.history.value
    assert "<img" not in labels and "<script" not in labels
    assert html.escape("<img src=x onerror=alert(1)>") in labels


def test_emphasis_is_added_after_escaping():
    out = emphasise("Rent <b>rises</b> & rents fall; city council meets", ["rent", "city_council"])
    assert out == (
        '<mark style="background:#fbe7c2;padding:0 1px;border-radius:2px">Rent</mark> '
        "&lt;b&gt;rises&lt;/b&gt; &amp; "
        '<mark style="background:#fbe7c2;padding:0 1px;border-radius:2px">rents</mark> fall; '
        '<mark style="background:#fbe7c2;padding:0 1px;border-radius:2px">city council</mark> meets'
    )
    # a term that is also an entity name never breaks an escaped entity
    assert emphasise("a & b", ["amp"]) == "a &amp; b"


def test_label_form_saves_shows_colleagues_and_conflicts(view, planted, store, tmp_path):
    fit, _ = planted
    form = view.labels_panel
    view.topic = 1
    form.name.value, form.note.value, form.verdict.value = "tides", "clear", "usable"
    form.save_label()
    assert store.label(fit, 1).name == "tides" and "Saved as version 1" in form.status.value
    # a colleague saves from another kernel: the poll finds it without re-running the cell
    with LabelStore(tmp_path / "labels.sqlite", analyst="analyst_b") as other:
        other.save(fit, 1, name="sea defences", verdict="usable")
    assert form.check_for_news() and "sea defences" in form.labels.value
    assert not form.check_for_news()  # nothing new since
    assert "all topics" in form.agreement.value
    # the same analyst edits from elsewhere: saving the stale form is a conflict, both shown
    with LabelStore(tmp_path / "labels.sqlite", analyst="analyst_a") as elsewhere:
        elsewhere.save(fit, 1, name="storm damage", based_on=1)
    form.name.value = "tidal barrier"
    form.save_label()
    assert "storm damage" in form.conflict.value and "tidal barrier" in form.conflict.value
    assert store.label(fit, 1).name == "storm damage"  # nothing lost, nothing overwritten
    form.save_label(force=True)
    assert store.label(fit, 1).name == "tidal barrier" and store.label(fit, 1).version == 3


def test_blind_round_shows_only_own_labels(view, planted, store, tmp_path):
    fit, _ = planted
    store.open_round(fit, "first pass", blind=True)
    with LabelStore(tmp_path / "labels.sqlite", analyst="analyst_b") as other:
        other.save(fit, 0, name="colleague's secret")
    view.topic = 0
    view.labels_panel.refresh(force=True)
    assert "colleague's secret" not in view.labels_panel.labels.value
    assert "Blind round open" in view.labels_panel.agreement.value


def test_polling_thread_brings_colleagues_labels(planted, store, tmp_path):
    fit, prepared = planted
    view = TopicView(fit, prepared, labels=store, n_boot=50, poll_seconds=0.2)
    try:
        with LabelStore(tmp_path / "labels.sqlite", analyst="analyst_b") as other:
            other.save(fit, view.topic, name="from another kernel")
        deadline = time.monotonic() + 10
        while (
            "from another kernel" not in view.labels_panel.labels.value
            and time.monotonic() < deadline
        ):
            time.sleep(0.1)
        assert "from another kernel" in view.labels_panel.labels.value
    finally:
        view.close()


@pytest.mark.slow
def test_sweep_view_picks_fits_by_click_and_row(planted, monkeypatch):
    _, prepared = planted
    result = sweep(
        prepared,
        k=[2, 3],
        seeds=2,
        passes=2,
        iterations=20,
        measures=("npmi", "c_v"),
        progress=False,
    )
    # No real rule text holds markup: the rule is set, on the sweep's own recommendation.
    advice = replace(result.recommend(), rule="highest mean NPMI <among> stable k")
    monkeypatch.setattr(result, "recommend", lambda measure="npmi": advice)
    view = SweepView(result)
    key = f"{advice.k}:{advice.seed}"
    assert (view.k, view.seed) == (advice.k, advice.seed) and view.chart.params.picked == key
    assert "highest mean NPMI &lt;among&gt; stable k" in view.advice.value
    other_k = 5 - advice.k  # the k of the grid [2, 3] that was not suggested
    _click(view.chart, charts.FIT_PICK, k=other_k, seed=1)
    assert (view.k, view.seed) == (other_k, 1)
    assert view.picked_fit() is result.get_fit(other_k, 1)
    assert (view.picked_fit().k, view.picked_fit().random_state) == (other_k, 1)
    assert view.fits_table.selected == f"{other_k}:1"
    view.fits_table.selected = f"{advice.k}:{1 - advice.seed}"
    assert (view.k, view.seed) == (advice.k, 1 - advice.seed)
    view.measure_choice.value = "perplexity"
    rows = next(iter(view.chart.spec["datasets"].values()))
    assert [r["value"] for r in rows] == result.scores_["perplexity"].tolist()
    assert "lower is better" in str(view.chart.spec["layer"][0]["encoding"]["y"]["title"])
    assert [o[1] for o in view.measure_choice.options] == [
        "npmi",
        "c_v",
        "perplexity",
        "stability",
        "diversity",
    ]


@pytest.mark.slow
def test_sweep_view_opened_on_another_fit_keeps_it_from_the_first_draw(planted):
    _, prepared = planted
    result = sweep(
        prepared, k=[2, 3], seeds=2, passes=2, iterations=20, measures=("npmi",), progress=False
    )
    rec = result.recommend()
    other = 5 - rec.k  # the k of the grid [2, 3] that was not suggested
    view = SweepView(result, k=other, seed=1)
    key = f"{other}:1"
    try:
        assert (view.k, view.seed) == (other, 1) and view.fits_table.selected == key
        spec_value = [p for p in view.chart.spec["params"] if p["name"] == charts.PICKED]
        assert spec_value[0]["value"] == key  # the first drawing already shows the pick
        # A drawing reports the spec's or an earlier value back (altair's front end does so on
        # every (re)draw); the view stays the owner and sets its pick again.
        view.chart._params = {**view.chart._params, charts.PICKED: f"{rec.k}:{rec.seed}"}
        assert view.chart.params.picked == key and view.chart._params[charts.PICKED] == key
        view.measure_choice.value = "stability"  # a new chart for another score keeps it too
        view.chart._params = {**view.chart._params, charts.PICKED: ""}
        assert view.chart.params.picked == key
        assert view.picked_fit() is result.get_fit(other, 1)
        # k alone opens on that k's first seed
        assert (SweepView(result, k=other).k, SweepView(result, k=other).seed) == (other, 0)
        with pytest.raises(SettingsError, match="'k and seed' parameter of SweepView"):
            SweepView(result, k=7)
    finally:
        view.close()


def test_offline_bundle_is_built_once_and_loads_nothing_remote(tmp_path, monkeypatch):
    path = bundle_path()
    a = chart_widget(
        charts.wording_chart(pd.DataFrame({"term": ["x"], "score": [1.0]}), sources=("a", "b"))
    )
    b = chart_widget(
        charts.wording_chart(pd.DataFrame({"term": ["y"], "score": [-1.0]}), sources=("a", "b"))
    )
    assert a._esm == path.read_text(encoding="utf-8")
    assert a._esm is b._esm  # one copy per kernel, shared by every chart
    # no module is fetched from a network address (the online widget imports from a CDN)
    assert not re.search(r"""(import|from)\s*\(?\s*["']https?://""", a._esm)
    assert path.parent == cache_dir()
    monkeypatch.setenv("TM_COMPARE_CACHE_DIR", str(tmp_path))
    assert cache_dir() == tmp_path  # the cache folder is overridable


def test_ipython_extension_registers_magic_and_summaries(planted):
    from IPython.core.interactiveshell import InteractiveShell

    from tm_compare import load_ipython_extension

    fit, _ = planted
    shell = InteractiveShell.instance()
    load_ipython_extension(shell)  # what %load_ext tm_compare calls
    summary = shell.display_formatter.formatters["text/html"](fit)
    assert "k = 4" in summary and "w00 w01 w02" in summary
    with pytest.raises(SettingsError, match="Usage: %tm_compare PROJECT"):
        shell.run_line_magic("tm_compare", "")


def test_importing_the_views_loads_altair_and_the_bootstrap_in_the_background():
    # Importing a view class leaves Altair to a background thread (bench/import_views.py times
    # the import); that thread also loads the compiled bootstrap kernel, and a bootstrap drawn
    # afterwards reuses the very overload it loaded (numba's dispatcher keeps one per signature).
    import subprocess
    import sys

    code = """
import builtins, sys, threading
import numpy as np
seen = []
real = builtins.__import__
def spy(name, *args, **kwargs):
    if name == "altair" and "altair" not in sys.modules:
        seen.append(threading.current_thread().name)
    return real(name, *args, **kwargs)
builtins.__import__ = spy
from tm_compare.views import TopicView, SweepView
imported_here = threading.main_thread().name in seen
from tm_compare.views import _loading
_loading.wait("altair")
_loading.wait("bootstrap")
from tm_compare.compare import _bootstrap, _kernels
loaded = len(_kernels._pcg64_counts.overloads)
_bootstrap.draw_counts(50, 10, np.random.default_rng(1), "multinomial")
print(imported_here, seen, loaded, len(_kernels._pcg64_counts.overloads))
"""
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.split() == ["False", "['tm_compare", "warm-up']", "1", "1"], out.stdout


def test_altair_loaded_by_the_views_leaves_jsonschema_checks_as_a_plain_import_does():
    # The views import jsonschema without building rfc3987_syntax's parsers and register its two
    # IRI checks themselves (tm_compare/views/_loading.py). Reference: jsonschema imported the
    # ordinary way in another process; every format checker (each draft's, and FormatChecker()'s
    # defaults) names the same checks and accepts and rejects the same strings.
    import subprocess
    import sys

    code = """
import json, sys
if sys.argv[1] == "views":
    from tm_compare.views._loading import altair
    altair()
    assert "rfc3987_syntax" not in sys.modules
import jsonschema
from jsonschema import FormatChecker
checkers = {"FormatChecker()": FormatChecker()}
checkers |= {d: getattr(jsonschema, d).FORMAT_CHECKER for d in (
    "Draft3Validator", "Draft4Validator", "Draft6Validator", "Draft7Validator",
    "Draft201909Validator", "Draft202012Validator")}
values = ["http://例え.jp/パス?q=1#f", "not an iri", "//host/path", "a b", "é:ok", "#frag", 3]
out = {}
for name, checker in checkers.items():
    out[name] = {f: [v[0].__name__, str(v[1])] for f, v in sorted(checker.checkers.items())}
    out[name + " verdicts"] = [
        [checker.conforms(v, f) for v in values] for f in ("iri", "iri-reference", "uri")
    ]
print(json.dumps(out, sort_keys=True))
"""
    runs = {
        how: subprocess.run(
            [sys.executable, "-c", code, how], capture_output=True, text=True, check=True
        ).stdout
        for how in ("views", "plain")
    }
    assert runs["views"] == runs["plain"]
    assert '"iri"' in runs["plain"] and "true" in runs["plain"] and "false" in runs["plain"]


def test_added_panels_follow_the_one_selected_topic(view):
    import ipywidgets

    class Recorder(ipywidgets.HTML):
        def show_topic(self, topic):
            self.value = f"topic {topic}"

    panel = Recorder()
    view.topic = 2
    view.add_panel(panel, "Over time", "A panel another module adds.")
    assert panel.value == "topic 2" and panel in view.panels and panel in view.children
    view.topic = 3
    assert panel.value == "topic 3"


class _RecordingComm:
    """A comm that keeps what it is asked to send (after ``DummyComm`` of ipywidgets' own tests,
    ipywidgets/widgets/tests/utils.py), with an id per widget as a kernel's comms have."""

    kernel = "a kernel"
    count = 0

    def __init__(self, **_kwargs):
        _RecordingComm.count += 1
        self.comm_id = f"comm-{_RecordingComm.count}"
        self.sent = []

    def send(self, data=None, metadata=None, buffers=None):
        self.sent.append(data)

    def open(self, *args, **kwargs): ...
    def on_msg(self, *args, **kwargs): ...
    def close(self, *args, **kwargs): ...


def test_a_topic_switch_reaches_the_page_in_one_message_with_the_usual_states(planted, monkeypatch):
    # ipywidgets sends one "update" message per widget (Widget.send_state, protocol as in
    # ipywidgets' docs, "Jupyter widgets messaging protocol"); once the page's courier has said
    # it is ready, the same states travel together as one custom message.
    from ipywidgets.widgets import widget as widget_module

    from tm_compare.views._burst import widgets_under

    monkeypatch.setattr(widget_module.comm, "create_comm", _RecordingComm)
    fit, prepared = planted

    def switched(ready: bool) -> tuple[list, list, int]:
        view = TopicView(fit, prepared, n_boot=50, n_docs=3, poll_seconds=None, topic=0)
        widgets = list(widgets_under(view))
        for widget in widgets:
            widget.comm.sent.clear()
        if ready:  # the page's hello, as burst.js sends it
            hello = {"method": "custom", "content": {"kind": "tmc-ready"}}
            view._courier._handle_msg({"content": {"data": hello}, "buffers": []})
        view.topic = 2
        sent = [(widgets.index(w), m) for w in widgets for m in w.comm.sent]
        ids = [w.model_id for w in widgets]
        courier = widgets.index(view._courier)
        view.close()
        return ids, sent, courier

    _, one_by_one, _ = switched(ready=False)
    assert len(one_by_one) > 3 and {m["method"] for _, m in one_by_one} == {"update"}
    usual = {i: m["state"] for i, m in one_by_one}

    ids, together, courier = switched(ready=True)
    assert len(together) == 1
    sender, message = together[0]
    assert sender == courier and message["method"] == "custom"
    carried = {ids.index(model_id): state for model_id, state in message["content"]["updates"]}
    assert carried == usual  # the same widgets, the same states, in one message
