"""The one results layer (tm_compare.results.ModelResults): one set of tables for every skin.

The identity test runs the small demo of ``test_pipeline.small_demo`` through the four paths a
user can take (``tm-compare compare``, ``report``, ``export`` and ``TopicView``) with the same
settings and asks for the same numbers, to the last bit, with the settings beside every table.
The other tests plant a small model with the builders of ``_builders`` and check the
fallback to documents and the cache.
"""

from __future__ import annotations

import io

import numpy as np
import pandas as pd
import pytest
from _builders import build_prepared

from tm_compare.cli import main
from tm_compare.errors import SettingsError
from tm_compare.models.fits import Fit
from tm_compare.results import SHAPED_BY, ModelResults

SETTINGS = {"n_boot": 50, "random_state": 3}  # not the defaults, so each path must pass them on
FLAGS = ["--n-boot", "50", "--random-state", "3"]
FORMULA = ["--model", "~ source"]
#: Tables compared across the command line, the exports and the report (the view: the first two).
CLI_TABLES = ("prevalence", "differences", "over_time", "over_time_differences")
BOOT_COLUMNS = {"weighting", "cluster", "n_boot", "ci_level", "interval", "resampling"}


def _as_written(table: pd.DataFrame) -> pd.DataFrame:
    """``table`` as it reads back from CSV (the form the command-line paths leave)."""
    return pd.read_csv(io.StringIO(table.to_csv(index=False)))


# --- the identity of every path -------------------------------------------------------------


@pytest.fixture(scope="module")
def four_paths(tmp_path_factory):
    """Prevalence and differences of one model, by the four paths, under the same settings."""
    from test_pipeline import small_demo

    from tm_compare.models.sweeps import load_fit
    from tm_compare.report.exports import collect
    from tm_compare.text.prepared import load_prepared
    from tm_compare.views import TopicView

    run, _ = small_demo()
    project = run.project.path
    k, seed = 6, 1  # not the recommended model: --k and --seed must reach every path
    out = tmp_path_factory.mktemp("paths")
    model = ["--k", str(k), "--seed", str(seed)]
    assert main(["compare", str(project), *model, *FLAGS, "--over-time", *FORMULA]) == 0
    folder = project / "comparison" / f"k{k}_seed{seed}"
    cli = {n: pd.read_csv(folder / f"{n}-exposure-group.csv") for n in CLI_TABLES}
    cli["model_effects-1"] = pd.read_csv(folder / "model_effects-1-exposure-group.csv")
    assert (
        main(
            [
                "export",
                str(project),
                *model,
                *FLAGS,
                *FORMULA,
                "--charts",
                "none",
                "--out",
                str(out),
            ]
        )
        == 0
    )
    exported = {n: pd.read_csv(out / f"{n}.csv") for n in (*CLI_TABLES, "model_effects-1")}
    # the tables the report renders
    report = collect(project, k, seed, formulas=FORMULA[1:], **SETTINGS)
    fit = load_fit(project, k, seed)
    view = TopicView(
        fit, load_prepared(project, fit.corpus_fingerprint), poll_seconds=None, **SETTINGS
    )
    try:
        shown = view.sources_panel.results  # the results the view's charts are drawn from
        frames = view.sources_panel._frames()
        paths = {
            "compare": cli,
            "export": exported,
            "report": {n: report.tables[n] for n in (*CLI_TABLES, "model_effects-1")},
            "view": {"prevalence": shown.prevalence(), "differences": shown.differences()},
        }
        yield paths, report, frames, out
    finally:
        view.close()


@pytest.mark.slow
def test_every_path_gives_identical_prevalence_differences_and_intervals(four_paths):
    paths, _, _, _ = four_paths
    for name in (*CLI_TABLES, "model_effects-1"):
        reference = _as_written(paths["compare"][name])
        for path, tables in paths.items():
            if name not in tables:  # the view charts prevalence and differences only
                continue
            # Bit for bit: the same model, settings and random_state give the same draws.
            pd.testing.assert_frame_equal(
                _as_written(tables[name]), reference, check_exact=True, obj=f"{path} {name}"
            )
        if name in ("prevalence", "differences"):
            for column in ("ci_low", "ci_high") if name == "prevalence" else ("diff_ci_low",):
                assert reference[column].notna().all()


@pytest.mark.slow
def test_the_settings_used_stand_beside_every_table(four_paths):
    paths, report, _, out = four_paths
    for path, tables in paths.items():
        for name, table in tables.items():
            assert set(table["cluster"]) == {"group"} and set(table["weighting"]) == {"exposure"}
            if name.startswith("model_"):  # a regression: no bootstrap settings
                assert {"formula", "n_draws", "ci_level"} <= set(table.columns), (path, name)
                continue
            assert BOOT_COLUMNS | {"random_state"} <= set(table.columns), (path, name)
            assert set(table["n_boot"]) == {50} and set(table["random_state"]) == {3}
    assert set(paths["export"]["differences"]["against"]) == {"each"}
    assert report.settings == report.results.settings and report.settings["n_boot"] == 50
    for name, shaped_by in SHAPED_BY.items():
        if name in report.tables:  # every model table the report and export show
            columns = {"ci_level" if s == "ci" else s for s in shaped_by}
            assert columns <= set(report.tables[name].columns), name
            assert columns <= set(pd.read_csv(out / f"{name}.csv").columns), name


@pytest.mark.slow
def test_the_views_chart_draws_the_same_numbers(four_paths):
    paths, _, (prev, diff), _ = four_paths
    table = paths["compare"]["prevalence"].set_index(["source", "topic"])
    drawn = prev.set_index(["source", "topic"])
    np.testing.assert_array_equal(drawn["lower"], table.loc[drawn.index, "ci_low"])
    np.testing.assert_array_equal(drawn["upper"], table.loc[drawn.index, "ci_high"])
    differences = paths["compare"]["differences"]
    first = differences[differences["source"] == differences["source"].iloc[0]]
    first = first[first["other"] == first["other"].iloc[0]].set_index("topic")
    np.testing.assert_array_equal(diff["estimate"], first.loc[diff["topic"], "difference"])


# --- a planted model --------------------------------------------------------------------------


def planted(groups=15):
    """Two sources, two topics over four terms; ``groups`` readers (0: none) per source."""
    rng = np.random.default_rng(5)
    n = 60
    sources = np.repeat(["a", "b"], n // 2)
    shares = np.where(sources[:, None] == "a", [0.7, 0.3], [0.4, 0.6])
    doc_topic = rng.dirichlet(shares[0] * 20, size=n)
    vocab = ["tide", "levy", "ferry", "toll"]
    texts = [list(rng.choice(vocab, 12)) for _ in range(n)]
    prepared = build_prepared(
        sources,
        texts,
        vocab=vocab,
        groups=np.array([f"r{i % groups}" for i in range(n)], dtype=object) if groups else None,
        title=[f"Article {i}" for i in range(n)],
    )
    topic_term = [[0.4, 0.3, 0.2, 0.1], [0.1, 0.2, 0.3, 0.4]]
    return Fit.from_arrays(prepared, topic_term, doc_topic), prepared


def test_without_groups_the_api_falls_back_to_documents_and_says_so():
    fit, prepared = planted(groups=0)
    with pytest.warns(UserWarning, match=r"no group column.*resamples documents instead"):
        results = ModelResults(fit, prepared, n_boot=20)
    assert results.settings["cluster"] is None
    assert set(results.prevalence()["cluster"]) == {"document"}  # the column says so too
    assert "influence" not in results.tables() and "cap_effect" not in results.tables()


def test_without_groups_the_cli_prints_what_it_fell_back_to(tmp_path, monkeypatch, capsys):
    from tm_compare.cli import _compare
    from tm_compare.project import Project

    fit, prepared = planted(groups=0)
    project = Project.create(tmp_path / "p")
    monkeypatch.setattr(_compare, "_load", lambda *args: (project, fit, prepared))
    assert main(["compare", str(project.path), "--k", "2", "--n-boot", "20"]) == 0
    out, err = capsys.readouterr()
    assert "Note: The corpus has no group column" in err and "resamples documents" in err
    assert "intervals resample documents" in out and "clusters of" not in out
    written = {p.name for p in (project.path / "comparison" / "k2_seed0").iterdir()}
    assert "prevalence-exposure-document.csv" in written


def test_old_cli_flags_still_work_with_a_warning(tmp_path, monkeypatch, capsys):
    from tm_compare.cli import _compare
    from tm_compare.project import Project

    fit, prepared = planted()
    project = Project.create(tmp_path / "p")
    monkeypatch.setattr(_compare, "_load", lambda *args: (project, fit, prepared))
    argv = ["compare", str(project.path), "--k", "2", "--n-boot", "20", "--weight", "unique"]
    with pytest.warns(FutureWarning) as caught:
        assert main([*argv, "--by-group"]) == 0
    said = " ".join(str(w.message) for w in caught)
    assert "use --weighting" in said and "--by-group is deprecated" in said
    assert "unique weighting; intervals resample clusters of 'group'" in capsys.readouterr().out


def test_wording_against_the_rest_pooled():
    # A view set to compare "a minus rest" asks for the pair (a, "rest"): "rest" is no source.
    fit, prepared = planted()
    table = ModelResults(fit, prepared, against="rest").wording(1, ("a", "rest"))
    assert set(zip(table["source"], table["other"], strict=True)) == {("a", "rest"), ("b", "rest")}
    both = ModelResults(fit, prepared).wording(1, ("a", "b"))
    # With two sources, "the rest" of a is b: the same terms and scores, by definition.
    mine = table[table["source"] == "a"].reset_index(drop=True)
    theirs = both[(both["source"] == "a") & (both["other"] == "b")].reset_index(drop=True)
    pd.testing.assert_series_equal(mine["z"], theirs["z"])


def test_tables_are_cached_per_setting():
    fit, prepared = planted()
    results = ModelResults(fit, prepared, n_boot=20)
    assert results.prevalence() is results.prevalence()
    assert results.documents(0) is results.documents(0)
    assert results.terms("frex") is results.terms("frex")
    assert results.tables()["differences"] is results.differences()
    # Another setting recomputes what it shapes, and only that.
    unique = results.with_settings(weighting="unique")
    assert unique.prevalence() is not results.prevalence()
    assert set(unique.prevalence()["weighting"]) == {"unique"}
    assert unique.terms("frex") is results.terms("frex")
    assert results.with_settings(weighting="exposure").prevalence() is results.prevalence()
    other_seed = results.with_settings(random_state=1)
    assert not other_seed.prevalence()["ci_low"].equals(results.prevalence()["ci_low"])
    assert results.with_settings(n_docs=2).documents(0) is not results.documents(0)


def test_every_table_carries_its_settings():
    fit, prepared = planted()
    results = ModelResults(fit, prepared, n_boot=20, random_state=7, n_terms=3, n_docs=2)
    tables = results.tables()
    assert {"prevalence", "differences", "influence", "terms", "documents"} <= set(tables)
    for name, shaped_by in SHAPED_BY.items():
        table = results.wording(0) if name == "wording" else tables.get(name)
        if table is None:  # cap_effect: no cluster is above the threshold here
            continue
        for setting in shaped_by:
            column = "ci_level" if setting == "ci" else setting
            expected = results.settings[setting]
            assert set(table[column]) == {"group" if setting == "cluster" else expected}, name
    assert set(tables["terms"].groupby(["method", "topic"]).size()) == {3}
    assert (tables["documents"].groupby(["topic", "source"]).size() <= 2).all()


def test_no_cap_effect_when_a_source_has_too_few_clusters_to_cap():
    # 7 readers per source each carry about 1/7 of it: all above the 10% threshold, and no
    # share can be capped at 10% (the cap must be at least 1/7; cap_effect explains why).
    fit, prepared = planted(groups=7)
    tables = ModelResults(fit, prepared, n_boot=20).tables()
    assert tables["influence"]["flagged"].all() and "cap_effect" not in tables


def test_unknown_and_bad_settings_are_named():
    fit, prepared = planted()
    with pytest.raises(SettingsError, match="no setting 'n_boots'.*n_boot"):
        ModelResults(fit, prepared, n_boots=10)
    with pytest.raises(SettingsError, match="'weighting' parameter of ModelResults"):
        ModelResults(fit, prepared, weighting="both")
    with pytest.raises(SettingsError, match="'cluster' parameter of ModelResults.*'group'"):
        ModelResults(fit, prepared, cluster="reader")
    with pytest.raises(SettingsError, match="'random_state' parameter of ModelResults"):
        ModelResults(fit, prepared, random_state=np.random.default_rng(0))
