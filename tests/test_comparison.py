"""Prevalence, differences and the influence check (tm_compare.comparison)."""

import dataclasses
import inspect
import os
import warnings

import gensim
import numpy as np
import pandas as pd
import pytest
from scipy import stats

from tm_compare.compare.prevalence import (
    Bootstrap,
    cap_effect,
    differences,
    influence,
    prevalence,
)
from tm_compare.errors import ComparisonError, SettingsError
from tm_compare.models.fits import Fit
from tm_compare.text.prepared import PreparedCorpus


def make_case(n_docs=240, k=4, seed=0, sources=("left", "right"), n_groups=12, planted=2):
    """A small fit and prepared corpus; source 0 leans towards topic ``planted``."""
    rng = np.random.default_rng(seed)
    src = np.array(sources)[rng.integers(0, len(sources), n_docs)]
    alpha = np.where(src[:, None] == sources[0], np.eye(k)[planted] * 3 + 0.5, 0.5)
    gamma = np.vstack([rng.dirichlet(a) for a in alpha]) * 20 + 0.01
    groups = np.array([f"reader{g}" for g in rng.integers(0, n_groups, n_docs)], dtype=object)
    ids = [f"d{i}" for i in range(n_docs)]
    weights = rng.integers(1, 6, n_docs).astype(float)
    meta = pd.DataFrame({"id": ids, "source": src, "weight": weights, "group": groups})
    prepared = PreparedCorpus.from_texts([[] for _ in ids], meta, vocab=["a", "b", "c"])
    doc_topic = gamma / gamma.sum(axis=1, keepdims=True)
    fit = Fit.from_arrays(prepared, np.full((k, 3), 1 / 3), doc_topic, doc_dirichlet=gamma)
    return fit, prepared


def test_point_estimates_are_weighted_means_and_settings_are_stated():
    fit, prep = make_case()
    for weighting in ("exposure", "unique"):
        table = prevalence(fit, prep, weighting=weighting, n_boot=50)
        for source in ("left", "right"):
            rows = table[table.source == source].sort_values("topic")
            mask = prep.sources == source
            w = prep.weights[mask] if weighting == "exposure" else None
            # Reference: numpy.average, the weighted mean by definition.
            np.testing.assert_allclose(
                rows.prevalence, np.average(fit.doc_topic[mask], axis=0, weights=w)
            )
        assert (table.weighting == weighting).all() and (table.cluster == "group").all()
    assert (prevalence(fit, prep, cluster=None, n_boot=20).cluster == "document").all()


def test_cluster_resampling_widens_intervals_when_clusters_share_a_topic():
    # Documents of one cluster resemble each other: resampling documents understates the
    # uncertainty, resampling clusters does not (Cameron, Gelbach & Miller 2008, sec. II).
    rng = np.random.default_rng(4)
    fit, prep = make_case(n_docs=600, n_groups=15, seed=4)
    lean = rng.dirichlet(np.ones(fit.k) * 0.3, 15)
    codes = np.array([int(g[6:]) for g in prep.groups])
    fit = Fit.from_arrays(prep, fit.topic_term, 0.2 * fit.doc_topic + 0.8 * lean[codes])
    by_doc = prevalence(fit, prep, cluster=None, n_boot=300)
    by_group = prevalence(fit, prep, cluster="group", n_boot=300)
    assert (by_group.std_error.to_numpy() > 1.5 * by_doc.std_error.to_numpy()).mean() > 0.8
    assert (by_group.n_units <= 15).all()


@pytest.mark.slow
def test_cluster_intervals_keep_their_coverage_when_documents_do_not():
    # Monte Carlo: documents of a cluster share its lean (intra-cluster correlation 0.8).
    # Cameron, Gelbach & Miller (2008, Table I) show intervals that ignore clustering
    # cover far below nominal while cluster resampling stays near it; the true prevalence
    # here is 0.5 by construction.
    rng = np.random.default_rng(12)
    n_clusters, per_cluster, hits = 30, 20, {"group": 0, None: 0}
    groups = np.repeat([f"r{c}" for c in range(2 * n_clusters)], per_cluster).astype(object)
    sources = np.repeat(["a", "b"], n_clusters * per_cluster)
    ids = [f"d{i}" for i in range(len(groups))]
    meta = pd.DataFrame({"id": ids, "source": sources, "weight": 1.0, "group": groups})
    prep = PreparedCorpus.from_texts([[] for _ in ids], meta, vocab=["a"])
    n_sims = 120
    for _ in range(n_sims):
        lean = np.repeat(rng.normal(0, 0.1, 2 * n_clusters), per_cluster)
        theta = 0.5 + lean + rng.normal(0, 0.05, len(ids))
        fit = Fit.from_arrays(prep, np.ones((2, 1)), np.column_stack([theta, 1 - theta]))
        for cluster in hits:
            row = prevalence(fit, prep, weighting="unique", cluster=cluster, n_boot=200).iloc[0]
            hits[cluster] += row.ci_low <= 0.5 <= row.ci_high
    assert hits["group"] / n_sims >= 0.85  # nominal 0.95, a little under with 30 clusters
    assert hits[None] / n_sims <= 0.6


def test_differences_find_the_planted_topic_and_adjust_by_bh():
    fit, prep = make_case(n_docs=400, planted=2)
    table = differences(fit, prep, n_boot=400)
    assert table.iloc[0].topic == 2 and table.iloc[0].significant
    assert table.iloc[0].source == "left" and table.iloc[0].difference > 0
    # Reference: scipy.stats.false_discovery_control, BH (1995) across the k topics.
    np.testing.assert_allclose(
        table.sort_values("topic").p_adjusted,
        stats.false_discovery_control(table.sort_values("topic").p_value),
        rtol=1e-12,
    )
    np.testing.assert_allclose(table.ratio, table.prevalence / table.prevalence_other)
    assert (table.diff_ci_low <= table.difference).all() and (
        table.difference <= table.diff_ci_high
    ).all()
    assert table["rank"].tolist() == [1, 2, 3, 4]
    assert {"weighting", "cluster", "test"} <= set(table.columns)


@pytest.mark.parametrize("interval", ["percentile", "bca"])
def test_difference_of_unweighted_means_equals_scipy_two_sample(interval):
    fit, prep = make_case(n_docs=90)
    table = differences(
        fit,
        prep,
        weighting="unique",
        cluster=None,
        n_boot=499,
        ci=0.9,
        interval=interval,
        random_state=np.random.default_rng(21),
    ).sort_values("topic")
    left, right = fit.doc_topic[prep.sources == "left"], fit.doc_topic[prep.sources == "right"]

    def diff(x, y, axis=-1):
        return x.mean(axis=axis) - y.mean(axis=axis)

    for topic in range(fit.k):
        # Reference: scipy.stats.bootstrap on two independent samples draws each sample's
        # resamples in turn from the same generator, as the source strata are drawn here; its
        # BCa acceleration sums the jackknife over both samples.
        ref = stats.bootstrap(
            (left[:, topic], right[:, topic]),
            diff,
            n_resamples=499,
            confidence_level=0.9,
            method="BCa" if interval == "bca" else "percentile",
            rng=np.random.default_rng(21),
        )
        row = table.iloc[topic]
        np.testing.assert_allclose(
            [row.diff_ci_low, row.diff_ci_high], ref.confidence_interval, rtol=1e-9
        )


def test_rest_with_two_sources_equals_each_pair():
    fit, prep = make_case()
    each = differences(fit, prep, n_boot=100).sort_values("topic")
    rest = differences(fit, prep, against="rest", n_boot=100)
    left = rest[rest.source == "left"].sort_values("topic")
    assert (rest.other == "rest").all() and len(rest) == 2 * fit.k
    # Same replicates (same seed, same draws), so identical numbers (common practice check).
    np.testing.assert_allclose(left.difference, each.difference)
    np.testing.assert_allclose(left.diff_ci_low, each.diff_ci_low)


def test_model_uncertainty_widens_intervals_only_when_documents_are_uncertain():
    fit, prep = make_case()
    plain = prevalence(fit, prep, n_boot=200)
    fit.doc_dirichlet = fit.doc_topic * 1e7  # nearly certain shares
    sure = prevalence(fit, prep, n_boot=200, model_uncertainty=True, n_model_draws=10)
    fit.doc_dirichlet = fit.doc_topic * 1.5  # very uncertain shares
    unsure = prevalence(fit, prep, n_boot=200, model_uncertainty=True, n_model_draws=10)
    np.testing.assert_allclose(sure.prevalence, plain.prevalence)
    assert (sure.std_error / plain.std_error).between(0.7, 1.4).all()
    assert (unsure.std_error > sure.std_error).mean() > 0.7
    fit.doc_dirichlet = None
    with pytest.raises(ComparisonError, match="doc_dirichlet"):
        prevalence(fit, prep, n_boot=20, model_uncertainty=True)


def test_bca_and_poisson_run_and_bracket_the_estimate():
    fit, prep = make_case()
    for kwargs in ({"interval": "bca"}, {"resampling": "poisson", "cluster": None}):
        table = prevalence(fit, prep, n_boot=300, **kwargs)
        assert ((table.ci_low <= table.prevalence) & (table.prevalence <= table.ci_high)).all()


def test_influence_flags_a_heavy_reader_and_capping_bounds_shares():
    fit, prep = make_case()
    prep.meta.loc[prep.groups == "reader3", "weight"] *= 40
    with pytest.warns(UserWarning, match="reader3"):
        table = influence(prep, threshold=0.10)
    flagged = table[table.flagged]
    assert set(flagged.group) == {"reader3"} and (flagged.share > 0.10).all()
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        assert not influence(prep, weighting="unique", threshold=0.5).flagged.any()
    effect = cap_effect(fit, prep, cap_group_share=0.10)
    before = prevalence(fit, prep, n_boot=20)
    np.testing.assert_allclose(effect.prevalence_before, before.prevalence)
    capped = prevalence(fit, prep, n_boot=20, cap_group_share=0.10)
    np.testing.assert_allclose(effect.prevalence_after, capped.prevalence)
    assert (capped.cap_group_share == 0.10).all() and effect.change.abs().max() > 0


def test_old_and_unknown_keywords():
    fit, prep = make_case()
    with pytest.warns(FutureWarning, match=r"influence\(top=...\) is deprecated.*n_groups=..."):
        old = influence(prep, top=2, warn=False)
    pd.testing.assert_frame_equal(old, influence(prep, n_groups=2, warn=False))
    with pytest.raises(TypeError, match=r"prevalence\(\) got unexpected keyword.*'n_boots'"):
        prevalence(fit, prep, n_boots=20)
    shown = inspect.signature(differences).parameters  # the bootstrap settings, for help()
    assert list(shown)[-8:] == [f.name for f in dataclasses.fields(Bootstrap)]


def test_capping_redistributes_iteratively_by_hand():
    from tm_compare.compare.prevalence import _water_fill

    # By hand: shares (0.7, 0.2, 0.1) capped at 0.5 -> 0.5, then 0.5 split 2:1.
    np.testing.assert_allclose(_water_fill(np.array([0.7, 0.2, 0.1]), 0.5), [0.5, 1 / 3, 1 / 6])
    # Second round needed: 0.55 -> 0.4, then (0.3, 0.15) scaled to (0.4, 0.2) hits the cap.
    np.testing.assert_allclose(_water_fill(np.array([0.55, 0.3, 0.15]), 0.4), [0.4, 0.4, 0.2])


# --- bad input --------------------------------------------------------------------------


def test_single_source_prevalence_works_but_differences_explain():
    fit, prep = make_case(sources=("only",))
    assert set(prevalence(fit, prep, n_boot=20).source) == {"only"}
    with pytest.raises(ComparisonError, match="at least two sources"):
        differences(fit, prep, n_boot=20)


def test_source_with_no_documents_is_named():
    fit, prep = make_case()
    with pytest.raises(ComparisonError, match="'archive'.*no documents"):
        prevalence(fit, prep, sources=["left", "archive"], n_boot=20)


def test_all_weights_zero():
    fit, prep = make_case()
    prep.meta.loc[prep.sources == "right", "weight"] = 0
    with pytest.raises(ComparisonError, match="'right' have weight 0.*weighting='unique'"):
        prevalence(fit, prep, n_boot=20)
    assert len(prevalence(fit, prep, weighting="unique", n_boot=20)) == 2 * fit.k


def test_negative_weights_and_a_lone_document_are_refused():
    fit, prep = make_case()
    prep.meta.loc[3, "weight"] = -1.0
    with pytest.raises(ComparisonError, match="1 document.*-1.0"):
        prevalence(fit, prep, n_boot=20)
    fit, prep = make_case()
    prep.meta["source"] = np.where(np.arange(len(prep)) == 0, "right", "left")
    with pytest.raises(ComparisonError, match="single resampling unit"):
        prevalence(fit, prep, cluster=None, n_boot=20)


def test_one_group_cannot_be_resampled():
    fit, prep = make_case()
    prep.meta["group"] = "everyone"
    with pytest.raises(ComparisonError, match="single cluster.*cluster=None"):
        prevalence(fit, prep, n_boot=20)
    with pytest.raises(SettingsError, match="'cluster' parameter"):
        prevalence(fit, prep, cluster="reader", n_boot=20)


def test_k_and_document_mismatch():
    fit, prep = make_case()
    fit.k = 5
    with pytest.raises(ComparisonError, match="k=5"):
        prevalence(fit, prep, n_boot=20)
    fit, prep = make_case()
    fit.doc_ids = list(reversed(fit.doc_ids))
    with pytest.raises(ComparisonError, match="doc_ids"):
        prevalence(fit, prep, n_boot=20)


def test_nan_shares_are_refused():
    fit, prep = make_case()
    fit.doc_topic[7, 1] = np.nan
    with pytest.raises(ComparisonError, match="NaN.*'d7'"):
        differences(fit, prep, n_boot=20)


def test_bad_parameters():
    fit, prep = make_case()
    with pytest.raises(SettingsError, match="'weighting'"):
        prevalence(fit, prep, weighting="reach")
    with pytest.raises(SettingsError, match="'n_boot'"):
        prevalence(fit, prep, n_boot=3)
    with pytest.raises(ComparisonError, match="resampling='multinomial'"):
        prevalence(fit, prep, n_boot=20, resampling="poisson")  # 12 readers per source
    with pytest.raises(ComparisonError, match="cap must be at least 1/12"):
        prevalence(fit, prep, n_boot=20, cap_group_share=0.05)


# --- an open data set --------------------------------------------------------------------


def test_sentence_polarity_end_to_end():
    # gensim's bundled sentence-polarity sample: 100 negative and 100 positive sentences,
    # labelled "__label__neg" / "__label__pos" as the first token of each line.
    from gensim.corpora import Dictionary
    from gensim.models import LdaModel

    path = os.path.join(
        os.path.dirname(gensim.__file__), "test", "test_data", "pang_lee_polarity.cor"
    )
    with open(path, encoding="latin-1") as fh:  # not UTF-8: it holds cp1252 dashes
        lines = [line.split() for line in fh if line.strip()]
    labels = np.array([tokens[0].removeprefix("__label__") for tokens in lines])
    texts = [[t for t in tokens[1:] if t.isalpha() and len(t) > 2] for tokens in lines]
    dictionary = Dictionary(texts)
    bow = [dictionary.doc2bow(t) for t in texts]
    lda = LdaModel(bow, id2word=dictionary, num_topics=4, passes=5, random_state=1)
    gamma = lda.inference(bow)[0].astype(float)
    ids = [f"s{i}" for i in range(len(lines))]
    meta = pd.DataFrame({"id": ids, "source": labels})
    vocab = [dictionary[i] for i in range(len(dictionary))]
    prep = PreparedCorpus.from_texts(texts, meta, vocab=vocab)
    doc_topic = gamma / gamma.sum(axis=1, keepdims=True)
    fit = Fit.from_arrays(
        prep, lda.get_topics(), doc_topic, doc_dirichlet=gamma, random_state=1, engine="gensim"
    )
    table = differences(fit, prep, n_boot=500, interval="bca").sort_values("topic")
    direct = fit.doc_topic[labels == "neg"].mean(axis=0) - fit.doc_topic[labels == "pos"].mean(
        axis=0
    )
    np.testing.assert_allclose(table.difference, direct)  # computed without resampling
    assert ((table.diff_ci_low <= direct) & (direct <= table.diff_ci_high)).all()
    assert (table.cluster == "document").all() and set(table.source) == {"neg"}


# --- the invented demo scenario ----------------------------------------------------------


@pytest.mark.slow
def test_demo_scenario_planted_theme_and_heavy_reader(tmp_path, capsys):
    import argparse

    from tm_compare.cli import _compare
    from tm_compare.demo import quillhaven as demo
    from tm_compare.models.sweeps import sweep
    from tm_compare.text.corpus import Corpus
    from tm_compare.text.prepared import prepare

    frame, truth = demo.scenario(1500, random_state=0)
    project = tmp_path / "quillhaven"
    prepared = prepare(
        Corpus.from_frame(frame, **demo.CORPUS_COLUMNS), project=project, progress=False
    )
    fit = sweep(
        prepared, k=[9], seeds=[0], project=project, measures=("umass",), progress=False
    ).get_fit(9, 0)

    # The planted theme is the one whose top words hold most of its planted words (demo truth).
    planted = set(truth.theme_words[truth.source_heavy_theme])
    overlap = [len(planted & set(words)) for words in fit.top_words(20)]
    theme_topic = int(np.argmax(overlap))
    table = differences(fit, prepared, weighting="unique", cluster=None, n_boot=300)
    first = table.iloc[0]
    assert first.topic == theme_topic and first.significant
    assert (first.source == truth.source_heavy_source) == (first.difference > 0)

    with pytest.warns(UserWarning, match=truth.heavy_reader):
        flags = influence(prepared)
    assert truth.heavy_reader in set(flags[flags.flagged].group)

    # The CLI writes the tables and prints the summary (its own parser, as tm-compare builds it).
    parser = argparse.ArgumentParser()
    _compare.register(parser.add_subparsers())
    args = parser.parse_args(["compare", str(project), "--k", "9", "--n-boot", "200"])
    assert args.func(args) == 0
    written = sorted(p.name for p in (project / "comparison" / "k9_seed0").iterdir())
    assert written == [
        "cap_effect-exposure-group.csv",  # the heavy reader is flagged, so the cap is tried
        "differences-exposure-group.csv",
        "documents.csv",
        "influence-exposure-group.csv",
        "prevalence-exposure-group.csv",
        "terms.csv",
    ]
    saved = pd.read_csv(project / "comparison" / "k9_seed0" / "prevalence-exposure-group.csv")
    assert (saved.weighting == "exposure").all() and (saved.cluster == "group").all()
    out = capsys.readouterr()
    assert "shared vs visited" in out.out and truth.heavy_reader in out.err
