"""Prevalence over time per source, differences per period, the window of dates, the planted trend."""

import warnings

import numpy as np
import pandas as pd
import pytest
from _builders import build_prepared
from scipy import stats

from tm_compare.compare.over_time import (
    MAX_PERIODS,
    choose_freq,
    differences_over_time,
    prevalence_over_time,
)
from tm_compare.errors import ComparisonError, SettingsError
from tm_compare.models.fits import Fit
from tm_compare.results import SHAPED_BY, ModelResults


def _fit(prepared, shares, dirichlet=None):
    shares = np.asarray(shares, dtype=float)
    return Fit.from_arrays(
        prepared, np.full((shares.shape[1], 1), 1.0), shares, doc_dirichlet=dirichlet
    )


def hand_case():
    """Eight documents, two sources, two months; topic 0's share t, topic 1's 1 - t."""
    rows = [
        ("a", "2024-03-02", 1.0, 0.2),
        ("a", "2024-03-20", 3.0, 0.6),
        ("a", "2024-04-05", 2.0, 0.5),
        ("a", "2024-04-25", 1.0, 0.1),
        ("b", "2024-03-10", 2.0, 0.9),
        ("b", "2024-03-11", 2.0, 0.7),
        ("b", "2024-04-01", 1.0, 0.3),
        ("b", "2024-04-30", 4.0, 0.4),
    ]
    source, date, weight, share = zip(*rows, strict=True)
    prepared = build_prepared(
        source, [["x"]] * 8, weights=weight, vocab=["x"], date=pd.to_datetime(list(date))
    )
    share = np.array(share)
    return _fit(prepared, np.column_stack([share, 1 - share])), prepared


def random_case(n_docs=300, months=3, seed=4, k=3, sources=("left", "right"), groups=None):
    rng = np.random.default_rng(seed)
    src = np.array(sources)[rng.integers(0, len(sources), n_docs)]
    days = rng.integers(0, 30 * months, n_docs)
    gamma = rng.gamma(1.0, size=(n_docs, k)) * 10 + 0.05
    extra = {} if groups is None else {"groups": groups(rng, n_docs)}
    prepared = build_prepared(
        src,
        [["x"]] * n_docs,
        weights=rng.integers(1, 5, n_docs),
        vocab=["x"],
        date=pd.Timestamp("2024-03-01") + pd.to_timedelta(days, "D"),
        **extra,
    )
    return _fit(prepared, gamma / gamma.sum(axis=1, keepdims=True), gamma), prepared


def test_per_period_values_equal_a_hand_computation():
    fit, prepared = hand_case()
    table = prevalence_over_time(
        fit, prepared, freq="M", cluster=None, n_boot=50, min_period_docs=1
    ).query("topic == 0")
    got = table.set_index(["source", "period"])["prevalence"]
    # By hand: exposure-weighted means of topic 0's share in each source and month.
    hand = {
        ("a", "2024-03"): (1 * 0.2 + 3 * 0.6) / 4,
        ("a", "2024-04"): (2 * 0.5 + 1 * 0.1) / 3,
        ("b", "2024-03"): (2 * 0.9 + 2 * 0.7) / 4,
        ("b", "2024-04"): (1 * 0.3 + 4 * 0.4) / 5,
    }
    for key, value in hand.items():
        assert got[key] == pytest.approx(value, abs=1e-12)
    assert table["n_documents"].tolist() == [2, 2, 2, 2]
    assert table["total_weight"].tolist() == [4.0, 3.0, 4.0, 5.0]
    assert (
        table["period_start"].tolist()
        == [pd.Timestamp("2024-03-01"), pd.Timestamp("2024-04-01")] * 2
    )
    assert table["period_end"].iloc[0] == pd.Timestamp("2024-03-31")
    unique = prevalence_over_time(
        fit, prepared, freq="M", weighting="unique", cluster=None, n_boot=50, min_period_docs=1
    ).query("topic == 0 and source == 'a'")
    # By hand: each article once.
    np.testing.assert_allclose(unique["prevalence"], [(0.2 + 0.6) / 2, (0.5 + 0.1) / 2])
    diff = differences_over_time(
        fit, prepared, freq="M", cluster=None, n_boot=50, min_period_docs=1
    ).query("topic == 0")
    # By hand: a minus b in each month, from the values above.
    np.testing.assert_allclose(diff["difference"], [0.5 - 0.8, 1.1 / 3 - 1.9 / 5])
    assert (diff["source"] == "a").all() and (diff["other"] == "b").all()
    assert {"weighting", "cluster", "freq", "min_period_docs", "n_boot"} <= set(table.columns)


@pytest.mark.parametrize("method", ["percentile", "bca"])
def test_bands_equal_scipy_bootstrap_on_the_same_resamples(method):
    fit, prepared = random_case()
    table = prevalence_over_time(
        fit,
        prepared,
        freq="M",
        weighting="unique",
        cluster=None,
        n_boot=299,
        ci=0.9,
        interval=method,
        random_state=np.random.default_rng(17),
    )
    months = pd.DatetimeIndex(prepared.meta["date"]).to_period("M")
    order = [(s, m) for s in ("left", "right") for m in sorted(set(months))]
    cells = [(prepared.sources == s) & (months == m) for s, m in order]
    assert len(table) == len(order) * fit.k
    for topic in range(fit.k):
        samples = tuple(fit.doc_topic[c, topic] for c in cells)
        for i, (source, month) in enumerate(order):
            # Reference: scipy.stats.bootstrap on several independent samples (one per source
            # and period, in this order) draws each sample's resamples in turn from the same
            # generator, as the strata are drawn here; its BCa sums the jackknife over samples.
            ref = stats.bootstrap(
                samples,
                lambda *s, axis=-1, i=i: s[i].mean(axis=axis),
                n_resamples=299,
                confidence_level=0.9,
                method="BCa" if method == "bca" else "percentile",
                rng=np.random.default_rng(17),
            )
            row = table[
                (table.source == source) & (table.period == str(month)) & (table.topic == topic)
            ].iloc[0]
            assert row.prevalence == pytest.approx(samples[i].mean(), abs=1e-12)
            np.testing.assert_allclose(
                [row.ci_low, row.ci_high], ref.confidence_interval, rtol=1e-9
            )


def test_differences_per_period_equal_scipy_and_bh_runs_across_topics_and_periods():
    fit, prepared = random_case(seed=8)
    table = differences_over_time(
        fit,
        prepared,
        freq="M",
        weighting="unique",
        cluster=None,
        n_boot=299,
        random_state=np.random.default_rng(5),
    )
    months = pd.DatetimeIndex(prepared.meta["date"]).to_period("M")
    periods = sorted(set(months))
    cells = [(prepared.sources == s) & (months == m) for s in ("left", "right") for m in periods]
    topic, t = 1, 2
    samples = tuple(fit.doc_topic[c, topic] for c in cells)
    a, b = t, len(periods) + t  # left and right in the third month

    def diff(*s, axis=-1):
        return s[a].mean(axis=axis) - s[b].mean(axis=axis)

    # Reference: scipy.stats.bootstrap with the same generator (see the test above).
    ref = stats.bootstrap(
        samples, diff, n_resamples=299, method="percentile", rng=np.random.default_rng(5)
    )
    row = table[(table.period == str(periods[t])) & (table.topic == topic)].iloc[0]
    np.testing.assert_allclose(
        [row.diff_ci_low, row.diff_ci_high], ref.confidence_interval, rtol=1e-9
    )
    # Reference: scipy.stats.false_discovery_control, BH (1995) over all topics x periods.
    assert len(table) == fit.k * len(periods)
    np.testing.assert_allclose(
        table["p_adjusted"], stats.false_discovery_control(table["p_value"]), rtol=1e-12
    )
    assert (table["significant"] == (table["p_adjusted"] <= 0.05)).all()
    assert "topics x periods" in table["test"].iloc[0]


def test_cluster_bootstrap_per_period_resamples_clusters_within_the_cell():
    def readers(rng, n):
        return np.array([f"r{g}" for g in rng.integers(0, 6, n)], dtype=object)

    fit, prepared = random_case(groups=readers)
    table = prevalence_over_time(fit, prepared, freq="M", n_boot=100)
    months = pd.DatetimeIndex(prepared.meta["date"]).to_period("M")
    first = (prepared.sources == "left") & (months == months.min())
    row = table[(table.source == "left") & (table.topic == 0)].iloc[0]
    # Units of a cell are its distinct readers (Field & Welsh 2007: clusters are resampled whole).
    assert row.n_units == len(set(prepared.groups[first])) and row.cluster == "group"


def test_default_period_follows_the_date_span():
    day = pd.Timestamp("2024-03-01")
    # The rule (ours): the finest of day, week, month, quarter, year with <= 26 periods.
    assert MAX_PERIODS == 26
    assert choose_freq([day, day + pd.Timedelta(days=20)]) == "D"
    assert choose_freq([day, day + pd.Timedelta(days=121)]) == "W"  # March to June: 18 weeks
    assert choose_freq([day, day + pd.Timedelta(days=700)]) == "M"
    assert choose_freq([day, day + pd.Timedelta(days=365 * 5)]) == "Q"
    assert choose_freq([day, day + pd.Timedelta(days=365 * 30)]) == "Y"


def test_periods_with_one_document_are_marked_not_drawn_as_spikes():
    fit, prepared = hand_case()
    meta = prepared.meta.copy()
    meta.loc[7, "date"] = pd.Timestamp("2024-05-15")  # b's only May document
    lone = build_prepared(
        meta["source"], [["x"]] * 8, weights=meta["weight"], vocab=["x"], date=meta["date"]
    )
    fit = _fit(lone, fit.doc_topic)
    with pytest.warns(UserWarning, match=r"cell\(s\) have fewer than 2 documents \(freq='M'\)"):
        table = prevalence_over_time(
            fit, lone, freq="M", cluster=None, n_boot=50, min_period_docs=2
        )
    may = table[(table.source == "b") & (table.period == "2024-05") & (table.topic == 0)].iloc[0]
    assert may.prevalence == pytest.approx(0.4) and may.few_documents and may.n_documents == 1
    assert np.isnan(may.ci_low) and np.isnan(may.ci_high)  # one unit: no band to measure
    empty = table[(table.source == "a") & (table.period == "2024-05")].iloc[0]
    assert empty.n_documents == 0 and np.isnan(empty.prevalence)
    with pytest.warns(UserWarning, match="fewer than 2"):
        diff = differences_over_time(
            fit, lone, freq="M", cluster=None, n_boot=50, min_period_docs=2
        )
    assert "2024-05" not in set(diff["period"])  # a thin period is not tested


def test_no_dates_at_all_is_one_clear_error():
    fit, prepared = random_case()
    bare = build_prepared(prepared.sources, [["x"]] * len(prepared), vocab=["x"])
    with pytest.raises(
        ComparisonError, match=r"needs document dates, but no document .*date='COLUMN'"
    ):
        prevalence_over_time(_fit(bare, fit.doc_topic), bare)


def test_a_date_column_that_does_not_parse_is_named(tmp_path):
    from tm_compare.demo.quillhaven import CORPUS_COLUMNS, make_frame
    from tm_compare.text.corpus import Corpus
    from tm_compare.text.prepared import prepare

    frame = make_frame(240)
    frame["date"] = "next Tuesday"
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        prepared = prepare(Corpus.from_frame(frame, **CORPUS_COLUMNS), progress=False)
    fit = _fit(prepared, np.full((len(prepared), 2), 0.5))
    with pytest.raises(
        ComparisonError,
        match=r"could not read 240 date value\(s\) \(first: 'next Tuesday'\).*date_format",
    ):
        prevalence_over_time(fit, prepared)
    strings = build_prepared(
        ["a", "b"], [["x"]] * 2, vocab=["x"], date=["2024-03-01", "31/02/2024"]
    )
    with pytest.raises(ComparisonError, match=r"not dates \(1 of 2; first: '31/02/2024'\)"):
        prevalence_over_time(_fit(strings, [[0.5, 0.5]] * 2), strings)


@pytest.mark.filterwarnings("ignore:2 document")
def test_undated_documents_are_left_out_with_a_warning_and_bad_settings_refused():
    fit, prepared = random_case()
    meta = prepared.meta.copy()
    meta.loc[[0, 1], "date"] = pd.NaT
    some = build_prepared(
        meta["source"], [["x"]] * len(meta), weights=meta["weight"], vocab=["x"], date=meta["date"]
    )
    fit = _fit(some, fit.doc_topic)
    with pytest.warns(UserWarning, match=r"2 document\(s\) have no date .*left out"):
        table = prevalence_over_time(fit, some, freq="M", cluster=None, n_boot=20)
    assert table.groupby("topic")["n_documents"].sum().iloc[0] == len(meta) - 2
    with pytest.raises(
        SettingsError, match=r"'freq' parameter of prevalence_over_time .* Got 'fortnight'"
    ):
        prevalence_over_time(fit, some, freq="fortnight", cluster=None, n_boot=20)
    with pytest.raises(SettingsError, match="'min_period_docs'"):
        prevalence_over_time(fit, some, min_period_docs=0, cluster=None, n_boot=20)
    with pytest.raises(ComparisonError, match="resampling='poisson' needs at least 30"):
        prevalence_over_time(fit, some, freq="W", cluster=None, n_boot=20, resampling="poisson")


@pytest.mark.filterwarnings("ignore:.*fewer than 10 documents")
def test_results_layer_reads_one_place_and_narrows_to_a_window():
    fit, prepared = random_case(seed=2)
    results = ModelResults(fit, prepared, cluster=None, n_boot=100, freq="M")
    direct = prevalence_over_time(fit, prepared, freq="M", cluster=None, n_boot=100, random_state=0)
    table = results.over_time()
    np.testing.assert_allclose(table["ci_low"], direct["ci_low"])  # same replicates, same numbers
    assert table is results.over_time()  # cached
    for name in ("over_time", "over_time_differences"):
        assert {"freq", "min_period_docs", "n_boot"} <= set(SHAPED_BY[name])
    assert results.with_settings(freq="W").over_time()["freq"].iloc[0] == "W"
    diff = results.over_time_differences()
    assert set(diff["period"]) == set(table["period"])
    # A window holds exactly the documents dated inside it (inclusive days), every table with it.
    window = results.within("2024-04-01", "2024-04-30")
    inside = (prepared.meta["date"] >= "2024-04-01") & (prepared.meta["date"] < "2024-05-01")
    assert window.prepared.doc_ids == [
        d for d, i in zip(prepared.doc_ids, inside, strict=True) if i
    ]
    left = inside.to_numpy() & (prepared.sources == "left")
    prev = window.prevalence().query("source == 'left'")
    # Reference: numpy.average over the window's documents, exposure-weighted.
    np.testing.assert_allclose(
        prev["prevalence"], np.average(fit.doc_topic[left], axis=0, weights=prepared.weights[left])
    )
    assert window.settings == results.settings
    with pytest.raises(ComparisonError, match="No document is dated from 2030-01-01"):
        results.within("2030-01-01", "2030-02-01")


def test_demo_trend_bands_cover_the_planted_share_week_by_week():
    from tm_compare.demo.quillhaven import scenario

    frame, truth = scenario(30000, 0)
    # Articles only: the truth's expected share leaves out rows planted later (copies, variants).
    article = (truth.docs["role"] == "article").to_numpy()
    frame, docs = frame[article], truth.docs[article]
    # The planted answer as document-topic shares: each article is its dominant theme.
    themes = list(truth.themes)
    shares = np.eye(len(themes))[[themes.index(t) for t in docs["theme"]]]
    prepared = build_prepared(
        frame["source"], [["x"]] * len(frame), ids=frame["id"], vocab=["x"], date=frame["date"]
    )
    fit = Fit.from_arrays(prepared, np.full((len(themes), 1), 1.0), shares)
    table = prevalence_over_time(
        fit, prepared, freq="W", weighting="unique", cluster=None, n_boot=1000
    )
    trend = themes.index(truth.trend_theme)
    rising = table[(table.source == truth.trend_source) & (table.topic == trend)]
    expected = truth.trend("W")
    assert rising["period"].tolist() == expected["period"].tolist()
    inside = (rising["ci_low"].to_numpy() <= expected["expected_share"].to_numpy()) & (
        expected["expected_share"].to_numpy() <= rising["ci_high"].to_numpy()
    )
    # 95% bands: 16 or more of 18 weeks happens with probability 0.94 under nominal coverage
    # (scipy.stats.binom(18, 0.95).sf(15)). Measured with this set-up over random_state 0-9:
    # 171 of 180 weeks covered (0.95, Monte Carlo error 0.016); with 6,000 rows (about 100
    # shared articles a week) 165 of 180 (0.92): percentile bands of a small-count share
    # cover a little less than nominal.
    assert inside.sum() >= 16, f"{inside.sum()} of {len(inside)} weeks covered"
    slope = np.polyfit(np.arange(len(rising)), rising["prevalence"], 1)[0]
    other = table[(table.source != truth.trend_source) & (table.topic == trend)]
    flat = np.polyfit(np.arange(len(other)), other["prevalence"], 1)[0]
    assert slope > 0.005 and abs(flat) < slope / 3


@pytest.mark.slow
def test_lda_on_the_demo_recovers_the_planted_rise():
    from tm_compare.demo.quillhaven import CORPUS_COLUMNS, scenario
    from tm_compare.models.fits import fit_lda
    from tm_compare.text.corpus import Corpus
    from tm_compare.text.prepared import prepare

    frame, truth = scenario(3000, 0)
    prepared = prepare(Corpus.from_frame(frame, **CORPUS_COLUMNS), progress=False)
    fit = fit_lda(prepared, 9, random_state=0, holdout=0)
    words = set(truth.theme_words[truth.trend_theme])
    topic = int(np.argmax([len(words & set(w)) for w in fit.top_words(20)]))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        table = prevalence_over_time(
            fit, prepared, freq="M", weighting="unique", cluster=None, n_boot=500
        ).query(f"topic == {topic}")
    # The planted content of each document (demo truth): its share of sentences on the theme.
    docs = truth.docs.set_index("id").loc[prepared.doc_ids]
    planted = np.where(docs["theme"] == truth.trend_theme, docs["theme_share"], 0.0) + np.where(
        docs["second_theme"] == truth.trend_theme, 1 - docs["theme_share"], 0.0
    )
    month = pd.DatetimeIndex(prepared.meta["date"]).to_period("M").astype(str)
    sample = pd.Series(planted).groupby([prepared.sources, month]).mean()
    rising = table[table.source == truth.trend_source]
    first, last = rising.iloc[0], rising.iloc[-1]
    assert last.prevalence > first.prevalence and last.ci_low > first.ci_high  # right sign, clear
    for row in rising.itertuples():
        assert row.ci_low <= sample[(row.source, row.period)] <= row.ci_high


# --- the chart and the view -------------------------------------------------------------------


def test_time_chart_keeps_thin_periods_off_the_line():
    from tm_compare.views import charts

    fit, prepared = random_case(n_docs=300, seed=3)
    with pytest.warns(UserWarning, match="fewer than 10 documents"):
        results = ModelResults(fit, prepared, cluster=None, n_boot=50, freq="W")
        frame = results.over_time_frame()
    assert frame["few"].any() and (~frame["few"]).any()
    spec = charts.time_chart(
        frame, focus=1, min_period_docs=10, window=("2024-03-10", "2024-04-01")
    ).to_dict()
    layers = spec["layer"]
    marks = [layer["mark"]["type"] for layer in layers]
    assert marks == ["rect", "area", "rule", "line", "point", "point"]
    filters = [[t.get("filter") for t in layer.get("transform", [])] for layer in layers[1:]]
    # The line, its band and its dots skip thin periods; the hollow rings show only those.
    assert all("!datum.few" in f for f in filters[:4])
    assert "datum.few && isValid(datum.estimate)" in filters[4]
    assert layers[-1]["mark"]["filled"] is False
    assert "fewer than 10 documents" in " ".join(spec["title"]["subtitle"])
    assert {"name": "focus", "value": 1} in spec["params"]


@pytest.fixture(scope="module")
def dated_view():
    from tm_compare.views import TopicView

    def readers(rng, n):
        return np.array([f"r{g}" for g in rng.integers(0, 8, n)], dtype=object)

    fit, prepared = random_case(n_docs=400, months=4, seed=6, groups=readers)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        view = TopicView(fit, prepared, n_boot=60, freq="M")
    yield view, fit, prepared
    view.close()


def test_time_panel_follows_the_selected_topic(dated_view):
    view, fit, prepared = dated_view
    panel = view.time_panel
    assert panel.available and panel.period.value == "M"
    view.topic = 2
    assert panel.chart.params.focus == 2
    shown = panel.results.over_time_frame()
    # The chart's numbers are the results layer's table (one place for every skin).
    table = view.results.with_settings(freq="M").over_time()
    np.testing.assert_allclose(shown["estimate"], table["prevalence"])


def test_date_range_narrows_every_panel(dated_view):
    view, fit, prepared = dated_view
    panel = view.time_panel
    marks = [v for _, v in panel.dates.options]
    start, end = pd.Timestamp("2024-04-01"), pd.Timestamp("2024-05-31")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        panel.dates.value = (start, end)
    inside = ((prepared.meta["date"] >= start) & (prepared.meta["date"] <= end)).to_numpy()
    expected_ids = [d for d, i in zip(prepared.doc_ids, inside, strict=True) if i]
    assert view.results.prepared.doc_ids == expected_ids
    assert view.sources_panel.results.prepared.doc_ids == expected_ids
    assert view.terms_panel.results.prepared.doc_ids == expected_ids
    assert view.documents_panel.results.prepared.doc_ids == expected_ids
    left = inside & (prepared.sources == "left")
    prev = view.sources_panel.results.prevalence().query("source == 'left'")
    # Reference: numpy.average over the documents of those dates (exposure weighting).
    np.testing.assert_allclose(
        prev["prevalence"], np.average(fit.doc_topic[left], axis=0, weights=prepared.weights[left])
    )
    assert panel.window == (start, end)
    shown_ids = set(view.documents_panel.results.documents(view.topic)["id"])
    assert shown_ids <= set(expected_ids)
    panel.dates.value = (marks[0], marks[-1])  # the whole span again
    assert view.results.prepared.doc_ids == prepared.doc_ids and panel.window is None


def test_view_without_dates_says_so_and_still_opens():
    from tm_compare.views import TopicView

    fit, prepared = random_case(n_docs=120)
    bare = build_prepared(prepared.sources, [["x"]] * len(prepared), vocab=["x"])
    view = TopicView(_fit(bare, fit.doc_topic), bare, n_boot=30, cluster=None)
    assert not view.time_panel.available
    assert "no document of the prepared corpus has one" in view.time_panel.status.value
    view.topic = 1  # the other panels still follow
    view.close()


# --- the report -------------------------------------------------------------------------------


@pytest.mark.slow
def test_report_section_shows_the_results_layer_numbers():
    from test_pipeline import small_demo
    from test_report import Page

    run, _ = small_demo()
    page = Page(run.report_path.read_text(encoding="utf-8"))
    text = " ".join(page.text)
    assert (
        text.index("Sources compared")
        < text.index("Change over time")
        < text.index("Documents that show each topic")
    )
    shown = page.rows("over-time")
    table = run.results.results.over_time()
    kept = table[~table["few_documents"]]
    for row in shown.itertuples(index=False):
        topic = int(row[0].split(" · ")[0])
        first = kept[(kept.topic == topic) & (kept.source == row[1])].sort_values("period_start")
        # The report's numbers are the results layer's (rounded to 3 places as shown).
        assert float(row[3]) == pytest.approx(first["prevalence"].iloc[0], abs=5e-4)
        assert float(row[5]) == pytest.approx(first["prevalence"].iloc[-1], abs=5e-4)
    diff = run.results.results.over_time_differences()
    stands = page.rows("over-time-differences")
    assert int(stands.iloc[0, 1]) == len(diff) and int(stands.iloc[0, 2]) == int(
        diff["significant"].sum()
    )
    alts = [a.get("alt", "") for t, a in page.tags if t == "img"]
    assert sum("over time, per source" in a for a in alts) == 3


@pytest.mark.slow
def test_cli_compare_over_time_writes_both_tables(capsys):
    from test_pipeline import small_demo

    from tm_compare.cli import main

    run, _ = small_demo()
    folder = run.project.path
    args = ["compare", str(folder), "--k", "4", "--n-boot", "50", "--over-time", "--freq", "M"]
    assert main(args) == 0
    out = capsys.readouterr().out
    written = folder / "comparison" / "k4_seed0"
    prev = pd.read_csv(written / "over_time-exposure-group.csv")
    diff = pd.read_csv(written / "over_time_differences-exposure-group.csv")
    assert set(prev["period"]) == {"2024-03", "2024-04", "2024-05", "2024-06"}
    assert (prev["freq"] == "M").all() and (prev["n_boot"] == 50).all()
    line = next(li for li in out.splitlines() if li.startswith("Over time:"))
    assert f"{int(diff['significant'].sum())} of {len(diff)} topic-period differences stand" in line
    assert main(["compare", str(folder), "--k", "4", "--over-time", "--freq", "fortnight"]) == 1
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and err[0].startswith("Error: The 'freq' parameter")


def test_large_corpora_draw_the_time_panel_on_request(monkeypatch):
    from tm_compare.views import _time_panel

    fit, prepared = random_case(n_docs=200, seed=9)
    monkeypatch.setattr(_time_panel, "DRAW_AT_ONCE", 100)
    results = ModelResults(fit, prepared, cluster=None, n_boot=30)
    picked = []
    panel = _time_panel.TimePanel(results, picked.append, topic=1)
    assert not hasattr(panel, "chart") and panel.children == (panel.start,)
    panel.show_topic(2)  # nothing drawn yet: remembered for the first drawing
    panel.start.click()
    assert panel.chart.params.focus == 2 and panel.period.value == "auto"
    assert panel.period.label == "as the span suggests" and panel.results.settings["freq"] is None
    panel.period.value = "M"
    assert panel.results.over_time()["freq"].iloc[0] == "M"


@pytest.mark.parametrize("against", ["each", "rest"])
def test_bca_acceleration_equals_the_generic_jackknife(against):
    from tm_compare.compare import _bootstrap as bs
    from tm_compare.compare import over_time as ot

    def readers(rng, n):
        return np.array([f"r{g}" for g in rng.integers(0, 9, n)], dtype=object)

    fit, prepared = random_case(n_docs=240, sources=("a", "b", "c"), groups=readers)
    cells = ot._cells("test", fit, prepared, "M", "exposure", "group", None, 1, {"n_boot": 20})
    m = len(cells.measured)
    fast = ot._acceleration(cells.units, np.eye(m))
    # Reference: the generic leave-one-unit-out jackknife over every unit of every stratum.
    slow = bs.jackknife_acceleration(cells.units, ot._prevalence_stat)
    np.testing.assert_allclose(fast, slow, rtol=1e-9, atol=1e-15)
    n_per = len(cells.index)
    a_side = np.zeros((n_per, m))
    b_side = np.zeros((n_per, m))
    for t in range(n_per):  # source a against b (each) or against b and c pooled (rest)
        a_side[t, t] = 1.0
        b_side[t, n_per + t] = 1.0
        if against == "rest":
            b_side[t, 2 * n_per + t] = 1.0

    def diff(num, den):
        pa = np.einsum("cm,...mk->...ck", a_side, num) / (den @ a_side.T)[..., None]
        pb = np.einsum("cm,...mk->...ck", b_side, num) / (den @ b_side.T)[..., None]
        return (pa - pb).reshape(*num.shape[:-2], -1)

    np.testing.assert_allclose(
        ot._acceleration(cells.units, a_side, b_side),
        bs.jackknife_acceleration(cells.units, diff),
        rtol=1e-9,
        atol=1e-15,
    )


@pytest.mark.filterwarnings("ignore:58 document")
def test_prepare_reads_day_first_dates_and_says_which_dates_it_could_not_read(tmp_path, capsys):
    from tm_compare.cli import main
    from tm_compare.demo.quillhaven import make_frame
    from tm_compare.project import Project
    from tm_compare.text.prepared import load_prepared

    frame = make_frame(240)
    written = frame.assign(date=frame["date"].dt.strftime("%d/%m/%Y"))
    written.to_csv(tmp_path / "c.csv", index=False)
    base = ["prepare", str(tmp_path / "c.csv"), "--text", "text", "--source", "source"]
    for name, extra in (("p", ["--date-format", "%d/%m/%Y"]), ("q", [])):
        assert main([*base, "--project", str(tmp_path / name), *extra]) == 0
        meta = load_prepared(Project.open(tmp_path / name)).meta
        given = frame.set_index("id").loc[meta["id"], "date"]
        # Day first, stated or seen in the values (25/03/2024): 03/04/2024 is 3 April (by hand).
        assert (meta["date"].to_numpy() == given.to_numpy()).all(), name
    written.loc[::4, "date"] = "soon"  # a quarter of the dates cannot be read
    written.to_csv(tmp_path / "c.csv", index=False)
    assert main([*base, "--project", str(tmp_path / "r")]) == 0
    capsys.readouterr()
    prepared = load_prepared(Project.open(tmp_path / "r"))
    fit = _fit(prepared, np.full((len(prepared), 2), 0.5))
    with pytest.warns(
        UserWarning, match=r"Intake could not read \d+ date value.*'soon'.*--date-format"
    ):
        prevalence_over_time(fit, prepared, cluster=None, n_boot=20, freq="M")
