"""Prevalence regression on covariates: ``prevalence_model`` (compare/covariates.py).

References: statsmodels ``WLS``/``OLS`` with ``cov_type="cluster"`` on the shares the exports
write (``ModelResults.document_topics``), with design matrices from patsy (a second formula
library, so the formula handling is checked too); Rubin's rules for pooling draws (Rubin 1987,
"Multiple imputation for nonresponse in surveys", eqs. 3.1.2-3.1.5: mean of estimates, mean
within variance plus (1 + 1/m) times the between variance; recalled from memory); coverage of
a planted effect by simulation.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import patsy
import pytest
import statsmodels.api as sm

from tests._builders import build_prepared
from tm_compare.compare.covariates import prevalence_model
from tm_compare.errors import InputError, SettingsError
from tm_compare.models.fits import Fit
from tm_compare.results import ModelResults
from tm_compare.views.charts import covariate_chart

K = 3
ALPHA = 0.1
VOCAB = ["w0", "w1", "w2", "w3"]
TOPICS = np.array([[0.7, 0.1, 0.1, 0.1], [0.1, 0.7, 0.1, 0.1], [0.1, 0.1, 0.1, 0.7]])


def _design(rng, n_readers=24, per_reader=12):
    """Readers who each share and visit, outlets, dates over three months, exposure weights."""
    n = n_readers * per_reader
    reader = np.repeat([f"r{i:02d}" for i in range(n_readers)], per_reader)
    source = np.tile(["shared", "visited"], n // 2)
    outlet = rng.choice(["o1", "o2", "o3"], size=n)
    date = pd.Timestamp("2024-03-01") + pd.to_timedelta(rng.integers(0, 90, n), "D")
    weight = rng.integers(1, 6, n).astype(float)
    return reader, source, outlet, date, weight


def _gamma(rng, reader, source, effect, n_words=60, reader_sd=0.05):
    """Each document's Dirichlet: alpha + topic counts of its words (the exact posterior of
    its shares when every word's topic is known). Topic 0 is ``effect`` more likely in
    'visited'; each reader shifts it by a random amount."""
    readers, codes = np.unique(reader, return_inverse=True)
    shift = rng.normal(0.0, reader_sd, len(readers))[codes]
    mu0 = 0.3 + effect * (source == "visited") + shift
    mu = np.column_stack([mu0, (1 - mu0) / 2, (1 - mu0) / 2])
    theta = np.vstack([rng.dirichlet(10 * m) for m in mu])
    counts = np.vstack([rng.multinomial(n_words, t) for t in theta])
    return ALPHA + counts


@pytest.fixture(scope="module")
def planted():
    rng = np.random.default_rng(11)
    reader, source, outlet, date, weight = _design(rng)
    period = date.to_period("M").astype(str)
    prepared = build_prepared(
        source,
        [VOCAB[:2]] * len(source),
        groups=reader,
        weights=weight,
        vocab=VOCAB,
        outlet=outlet,
        date=date,
        period=np.asarray(period),
    )
    gamma = _gamma(rng, reader, source, effect=0.1)
    fit = Fit.from_arrays(prepared, TOPICS, doc_dirichlet=gamma)
    return fit, prepared


FORMULA = "~ source * period + outlet"


@pytest.mark.parametrize("weighting", ["exposure", "unique"])
def test_posterior_mean_equals_statsmodels_cluster_robust(planted, weighting):
    fit, prepared = planted
    model = prevalence_model(fit, prepared, FORMULA, n_draws=0, weighting=weighting)
    # The shares as the exports write them.
    shares = ModelResults(fit, prepared).document_topics()
    shares["period"] = prepared.meta["period"].to_numpy()
    x = patsy.dmatrix(FORMULA, shares, return_type="dataframe")
    groups = pd.factorize(shares["group"])[0]
    for topic in range(K):
        y = shares[f"topic_{topic}"].to_numpy()
        if weighting == "exposure":
            ref = sm.WLS(y, x, weights=shares["weight"].to_numpy())
        else:
            ref = sm.OLS(y, x)
        ref = ref.fit(cov_type="cluster", cov_kwds={"groups": groups})
        got = model.coefficients[model.coefficients["topic"] == topic].set_index("term")
        assert sorted(got.index) == sorted(ref.params.index)
        # Reference: statsmodels WLS/OLS, cov_type="cluster" (1e-10).
        np.testing.assert_allclose(got.loc[ref.params.index, "estimate"], ref.params, atol=1e-10)
        np.testing.assert_allclose(got.loc[ref.params.index, "std_error"], ref.bse, atol=1e-10)
        np.testing.assert_allclose(got.loc[ref.params.index, "p_value"], ref.pvalues, atol=1e-10)
        low, high = ref.conf_int(alpha=0.05).T.to_numpy()
        np.testing.assert_allclose(got.loc[ref.params.index, "ci_low"], low, atol=1e-10)
        np.testing.assert_allclose(got.loc[ref.params.index, "ci_high"], high, atol=1e-10)
    assert set(model.coefficients["cluster"]) == {"group"}
    assert set(model.coefficients["n_clusters"]) == {24}


def test_prevalence_by_source_is_the_weighted_mean(planted):
    fit, prepared = planted
    model = prevalence_model(fit, prepared, "~ source", n_draws=0)
    got = model.prevalence.set_index(["topic", "value"])["estimate"]
    w, source = prepared.weights, prepared.sources
    for name in ("shared", "visited"):
        rows = source == name
        # Hand computation: a saturated model's prediction is the group's weighted mean.
        expected = w[rows] @ fit.doc_topic[rows] / w[rows].sum()
        np.testing.assert_allclose([got[(t, name)] for t in range(K)], expected, atol=1e-12)
    effect = model.effects.set_index(["topic", "value"])
    diff = got.xs("visited", level="value") - got.xs("shared", level="value")
    np.testing.assert_allclose(effect.xs("visited", level="value")["estimate"], diff, atol=1e-12)


def test_draws_are_pooled_by_rubins_rules(planted):
    fit, prepared = planted
    model = prevalence_model(fit, prepared, "~ source + outlet", n_draws=4, random_state=8)
    shares = prepared.meta.assign(w=prepared.weights)
    x = patsy.dmatrix("~ source + outlet", shares, return_type="dataframe")
    groups = pd.factorize(prepared.groups)[0]
    rng = np.random.default_rng(8)  # the same draws, in the same order
    draws = []
    for _ in range(4):
        g = rng.standard_gamma(fit.doc_dirichlet)
        draws.append(g / g.sum(axis=1, keepdims=True))
    for topic in range(K):
        fits = [
            sm.WLS(d[:, topic], x, weights=prepared.weights).fit(
                cov_type="cluster", cov_kwds={"groups": groups}
            )
            for d in draws
        ]
        params = np.array([f.params for f in fits])
        within = np.mean([f.bse**2 for f in fits], axis=0)
        between = params.var(axis=0, ddof=1)
        got = model.coefficients[model.coefficients["topic"] == topic].set_index("term")
        got = got.loc[x.columns]
        # Reference: Rubin's rules (Rubin 1987) on statsmodels' fits of the same draws.
        np.testing.assert_allclose(got["estimate"], params.mean(axis=0), atol=1e-12)
        np.testing.assert_allclose(
            got["std_error"], np.sqrt(within + (1 + 1 / 4) * between), atol=1e-12
        )
    # Model uncertainty widens the intervals compared with the posterior mean alone.
    mean_only = prevalence_model(fit, prepared, "~ source + outlet", n_draws=0)
    assert (model.coefficients["std_error"] > mean_only.coefficients["std_error"]).all()


def test_period_is_made_from_dates(planted):
    fit, prepared = planted
    given = prevalence_model(fit, prepared, "~ source + period", n_draws=0)
    meta = prepared.meta.drop(columns="period")
    dated = build_prepared(
        prepared.sources,
        prepared.texts,
        groups=prepared.groups,
        weights=prepared.weights,
        vocab=VOCAB,
        date=meta["date"],
    )
    refit = Fit.from_arrays(dated, TOPICS, doc_dirichlet=fit.doc_dirichlet)
    made = prevalence_model(refit, dated, "~ source + period", n_draws=0)
    pd.testing.assert_frame_equal(given.coefficients, made.coefficients)


@pytest.mark.slow
def test_planted_source_effect_is_covered_at_the_nominal_rate():
    """Coverage of the 95% interval of a planted source effect, by simulation.

    Measured: 0.970 over 400 replications (Monte Carlo standard error
    sqrt(0.95 * 0.05 / 400) = 0.011), with 24 readers x 12 documents, 5 draws per replication:
    nominal within three Monte Carlo errors, on the conservative side (the spread of the draws
    is added to residuals that already hold the shares' noise).
    """
    rng = np.random.default_rng(2024)
    reader, source, outlet, date, weight = _design(rng)
    prepared = build_prepared(source, [VOCAB[:2]] * len(source), groups=reader, vocab=VOCAB)
    effect, n_words, reps = 0.1, 60, 400
    # The regression's target: the planted effect on the expected posterior mean share, which
    # the Dirichlet(alpha + counts) shrinks by n_words / (n_words + K * alpha).
    truth = effect * n_words / (n_words + K * ALPHA)
    covered = 0
    for _ in range(reps):
        gamma = _gamma(rng, reader, source, effect, n_words)
        fit = Fit.from_arrays(prepared, TOPICS, doc_dirichlet=gamma)
        model = prevalence_model(
            fit, prepared, "~ source", topics=[0], n_draws=5, random_state=int(rng.integers(1e9))
        )
        row = model.effects.iloc[0]
        covered += row["ci_low"] <= truth <= row["ci_high"]
    rate = covered / reps
    mc_error = np.sqrt(0.95 * 0.05 / reps)
    assert abs(rate - 0.95) < 3 * mc_error, (rate, mc_error)


def test_missing_column_is_named_with_the_columns_available(planted):
    fit, prepared = planted
    with pytest.raises(InputError) as err:
        prevalence_model(fit, prepared, "~ source + outlet_type", n_draws=0)
    text = str(err.value)
    assert "'outlet_type'" in text and "Available columns: id, source, weight, group" in text
    assert "\n" not in text


def test_covariate_with_one_level_is_refused(planted):
    fit, prepared = planted
    meta = prepared.meta.assign(region="north")
    one = build_prepared(
        prepared.sources, prepared.texts, groups=prepared.groups, vocab=VOCAB, region=meta["region"]
    )
    refit = Fit.from_arrays(one, TOPICS, doc_dirichlet=fit.doc_dirichlet)
    with pytest.raises(InputError, match="'region' has one value \\('north'\\)"):
        prevalence_model(refit, one, "~ source + region", n_draws=0)


def test_other_bad_formulas(planted):
    fit, prepared = planted
    with pytest.raises(InputError, match="left-hand side"):
        prevalence_model(fit, prepared, "topic ~ source", n_draws=0)
    nested = build_prepared(
        prepared.sources,
        prepared.texts,
        groups=prepared.groups,
        vocab=VOCAB,
        outlet=np.where(prepared.sources == "shared", "a", "b"),
    )
    refit = Fit.from_arrays(nested, TOPICS, doc_dirichlet=fit.doc_dirichlet)
    with pytest.raises(InputError, match="only 2 are independent"):
        prevalence_model(refit, nested, "~ source + outlet", n_draws=0)
    with pytest.raises(SettingsError, match="'n_draws' parameter of prevalence_model"):
        prevalence_model(fit, prepared, "~ source", n_draws=-1)


def test_model_results_and_chart(planted):
    fit, prepared = planted
    results = ModelResults(fit, prepared)
    model = results.prevalence_model("~ source + outlet", n_draws=0)
    assert results.prevalence_model("~ source + outlet", n_draws=0) is model  # cached
    assert list(results.prevalence_models()) == [model]
    chart = covariate_chart(model.prevalence, covariate="outlet", captions=results.captions)
    spec = chart.to_dict()
    rows = [r for data in spec["datasets"].values() for r in data]
    assert len(rows) == K * 3 and {r["value"] for r in rows} == {"o1", "o2", "o3"}


@pytest.fixture(scope="module")
def project(tmp_path_factory):
    from tm_compare.demo.quillhaven import make_corpus
    from tm_compare.models.sweeps import sweep
    from tm_compare.project import Project
    from tm_compare.text.corpus import save_corpus
    from tm_compare.text.prepared import prepare

    project = Project.create(tmp_path_factory.mktemp("cov") / "p")
    corpus = make_corpus(300, random_state=2)
    save_corpus(corpus, project)
    sweep(prepare(corpus, project=project), k=[3], seeds=1, project=project, passes=2)
    return project


@pytest.mark.slow
def test_report_section_and_cli(project, capsys):
    from tm_compare.cli import main
    from tm_compare.report.exports import collect
    from tm_compare.report.html import render

    results = collect(project, 3, 0, n_boot=20)
    model = results.results.prevalence_model("~ source + period", n_draws=2)
    page = render(results)
    assert 'id="prevalence-model"' in page and "<code>~ source + period</code>" in page
    first = model.effects.sort_values("p_value", kind="stable").iloc[0]
    assert f"{first['estimate']:+.3f}" in page  # the table shows the model's own numbers
    args = ["compare", str(project.path), "--k", "3", "--n-boot", "20", "--n-draws", "2"]
    assert main([*args, "--model", "~ source + period"]) == 0
    assert "Model 1 '~ source + period'" in capsys.readouterr().out
    folder = project.path / "comparison" / "k3_seed0"
    written = pd.read_csv(next(folder.glob("model_effects-1-*.csv")))
    np.testing.assert_allclose(
        written.sort_values(["topic", "value"])["estimate"],
        model.effects.sort_values(["topic", "value"])["estimate"],
        atol=1e-12,
    )
    assert main([*args, "--model", "~ source + outlet_type"]) == 1
    last = capsys.readouterr().err.splitlines()[-1]  # after any Note lines
    assert last.startswith("Error: The formula '~ source + outlet_type'")
    # The report and the exports take the same flag and show the same numbers.
    out = project.path / "out"
    flags = ["--k", "3", "--n-boot", "20", "--n-draws", "2", "--model", "~ source + period"]
    assert main(["report", str(project.path), *flags, "--out", str(out / "r.html")]) == 0
    assert "<code>~ source + period</code>" in (out / "r.html").read_text(encoding="utf-8")
    assert main(["export", str(project.path), *flags, "--charts", "none", "--out", str(out)]) == 0
    exported = pd.read_csv(out / "model_effects-1.csv")
    pd.testing.assert_frame_equal(exported, written, check_exact=True)


def test_many_valued_covariate_gets_coefficients_only(planted):
    fit, prepared = planted
    day = prepared.meta["date"].dt.strftime("%m-%d")  # about 90 values
    daily = build_prepared(
        prepared.sources, prepared.texts, groups=prepared.groups, vocab=VOCAB, day=day
    )
    refit = Fit.from_arrays(daily, TOPICS, doc_dirichlet=fit.doc_dirichlet)
    model = prevalence_model(refit, daily, "~ source + day", n_draws=0)
    assert day.nunique() > 30
    assert set(model.prevalence["covariate"]) == {"source"}
    terms = model.coefficients[model.coefficients["topic"] == 0]["term"]
    assert terms.str.startswith("day[").sum() == day.nunique() - 1
