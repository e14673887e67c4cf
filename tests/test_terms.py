"""Term rankings and source wording (tm_compare.terms), against hand-computed cases."""

import numpy as np
import pandas as pd
import pytest
from _builders import build_prepared, topics_fit

from tm_compare.compare.terms import (
    log_odds_with_prior,
    source_wording,
    term_rankings,
    topic_term_counts,
)
from tm_compare.errors import ComparisonError, SettingsError
from tm_compare.models.fits import Fit

PHI = np.array([[0.4, 0.3, 0.2, 0.1], [0.6, 0.1, 0.1, 0.2]])
FIT = topics_fit(PHI, ["w0", "w1", "w2", "w3"], doc_topic=[[0.5, 0.5], [0.5, 0.5]])


def scores(method, **kwargs):
    table = term_rankings(FIT, method=method, n_terms=4, **kwargs)
    return table.pivot(index="topic", columns="term_id", values="score").to_numpy(), table


def test_probability_order_with_ties_by_term_id():
    table = term_rankings(FIT, n_terms=3)
    assert table[table.topic == 1].term.tolist() == ["w0", "w3", "w1"]  # 0.6, 0.2, 0.1 (tie: id)
    assert table["rank"].tolist() == [1, 2, 3, 1, 2, 3]


def test_lift_and_relevance_by_hand():
    # p_w from the model: mean topic share (0.5, 0.5) -> p = (0.5, 0.2, 0.15, 0.15), by hand.
    lift, _ = scores("lift")
    np.testing.assert_allclose(
        lift[0], [0.4 / 0.5, 0.3 / 0.2, 0.2 / 0.15, 0.1 / 0.15]
    )  # Taddy 2012
    rel, table = scores("relevance", lam=0.6)
    # Sievert & Shirley 2014: 0.6 log phi + 0.4 log lift, for topic 0, term w1 by hand.
    assert rel[0, 1] == pytest.approx(0.6 * np.log(0.3) + 0.4 * np.log(1.5))
    assert (table.parameter == 0.6).all()
    # lam = 1 is the probability order, lam = 0 the lift order (Sievert & Shirley 2014, sec. 3.1).
    for lam, method in ((1.0, "probability"), (0.0, "lift")):
        a = term_rankings(FIT, method="relevance", lam=lam, n_terms=4).term.tolist()
        assert a == term_rankings(FIT, method=method, n_terms=4).term.tolist()


def test_frex_by_hand():
    # Bischof & Airoldi 2012 as in stm's calcfrex: 1 / (w / ECDF(excl) + (1 - w) / ECDF(freq)).
    # Topic 0: exclusivity (0.4, 0.75, 0.667, 0.333) ranks (2, 4, 3, 1)/4; frequency ranks
    # (4, 3, 2, 1)/4. Topic 1: frequency ranks (4, 1.5, 1.5, 3)/4 (tie averaged); exclusivity
    # (0.6, 0.25, 0.333, 0.667) ranks (3, 1, 2, 4)/4. Hand-computed:
    frex, table = scores("frex", frex_weight=0.5)
    np.testing.assert_allclose(
        frex[0], [1 / 1.5, 1 / (0.5 + 0.5 / 0.75), 1 / (0.5 / 0.75 + 1), 0.25]
    )
    np.testing.assert_allclose(
        frex[1], [1 / (0.5 / 0.75 + 0.5), 0.3, 1 / (1 + 0.5 / 0.375), 1 / (0.5 + 0.5 / 0.75)]
    )
    assert table[table.topic == 0].term.tolist() == ["w1", "w0", "w2", "w3"]
    # All weight on frequency gives ECDF(phi), i.e. probability order.
    freq_only, _ = scores("frex", frex_weight=0.0)
    np.testing.assert_allclose(freq_only[0], [1, 0.75, 0.5, 0.25])


def test_empirical_term_share_from_prepared():
    texts = [["w0"] * 3 + ["w1"], ["w2"] * 4 + ["w3"] * 2]  # counts 3, 1, 4, 2
    prepared = build_prepared(["a", "a"], texts, vocab=FIT.vocab)
    fit = Fit.from_arrays(prepared, PHI, FIT.doc_topic)  # the fit of this prepared corpus
    table = term_rankings(fit, method="lift", n_terms=4, prepared=prepared)
    lift = table.pivot(index="topic", columns="term_id", values="score").to_numpy()
    np.testing.assert_allclose(lift[1], PHI[1] / (np.array([3, 1, 4, 2]) / 10))  # by hand


def test_bad_parameters():
    with pytest.raises(SettingsError, match="'method'"):
        term_rankings(FIT, method="salience")
    with pytest.raises(SettingsError, match="'lam'"):
        term_rankings(FIT, method="relevance", lam=1.5)
    broken = topics_fit(PHI, FIT.vocab)
    broken.k = 3  # a fit whose k disagrees with its topic_term
    with pytest.raises(ComparisonError, match="k=3"):
        term_rankings(broken)


def wording_case(theta=1.0):
    """Source a: counts (10, 5, 0); source b: (2, 8, 4); topic 0 share ``theta`` everywhere."""
    texts = [["tax"] * 10 + ["levy"] * 5, ["tax"] * 2 + ["levy"] * 8 + ["toll"] * 4]
    prepared = build_prepared(
        ["a", "b"], texts, ids=["x", "y"], weights=[1.0, 3.0], vocab=["tax", "levy", "toll"]
    )
    fit = Fit.from_arrays(prepared, np.full((2, 3), 1 / 3), [[theta, 1 - theta]] * 2)
    return fit, prepared


def test_log_odds_with_informative_prior_by_hand():
    fit, prepared = wording_case()
    table = source_wording(fit, prepared, 0, against="each", weighting="unique")
    a = table[table.source == "a"].set_index("term")
    # Monroe, Colaresi & Quinn 2008, eqs. 16-22, by hand: prior a_w = y_w = (12, 13, 4),
    # a_0 = 29, n_a = 15, n_b = 14. For "tax":
    # delta = log(22 / (15 + 29 - 22)) - log(14 / (14 + 29 - 14)) = 0 - log(14 / 29)
    # var = 1 / 22 + 1 / 14
    delta = -np.log(14 / 29)
    se = np.sqrt(1 / 22 + 1 / 14)
    assert a.loc["tax", "log_odds"] == pytest.approx(delta)
    assert a.loc["tax", "z"] == pytest.approx(delta / se)
    assert a.index[0] == "tax" and a.loc["tax", "rank"] == 1
    # "toll" (0 in a, 4 in b): log(4 / 40) - log(8 / 35)
    assert a.loc["toll", "log_odds"] == pytest.approx(np.log(4 / 40) - np.log(8 / 35))
    b = table[table.source == "b"].set_index("term")
    assert b.loc["tax", "log_odds"] == pytest.approx(-delta)  # antisymmetric by definition
    assert table.prior_strength.iloc[0] == pytest.approx(29)


def test_counts_are_topic_weighted_and_optionally_exposure_weighted():
    fit, prepared = wording_case(theta=0.25)
    table = source_wording(fit, prepared, 0, against="rest", weighting="exposure")
    b = table[table.source == "b"].set_index("term")
    # Document y has weight 3 and topic share 0.25: its "levy" count 8 becomes 8 * 0.25 * 3.
    assert b.loc["levy", "count_source"] == pytest.approx(6.0)
    assert b.loc["levy", "count_other"] == pytest.approx(5 * 0.25 * 1)
    y_i, y_j = np.array([0.5 * 3, 6.0, 3.0]), np.array([2.5, 1.25, 0.0])
    expected, _ = log_odds_with_prior(y_i, y_j, y_i + y_j)
    np.testing.assert_allclose(b.loc[["tax", "levy", "toll"], "log_odds"], expected)


@pytest.mark.parametrize("weighting", ["unique", "exposure"])
def test_counts_of_all_topics_at_once_give_the_same_wording(weighting):
    # The one-product path for views must equal the per-topic definition above (up to float
    # summation order). Topic 1 carries the other 0.75 of each document.
    fit, prepared = wording_case(theta=0.25)
    counts = topic_term_counts(fit, prepared, weighting=weighting)
    np.testing.assert_allclose(
        counts.by_source["b"][:, 1],
        np.array([2, 8, 4]) * 0.75 * (3.0 if weighting == "exposure" else 1.0),
    )
    for topic in (0, 1):
        direct = source_wording(fit, prepared, topic, against="each", weighting=weighting)
        shared = source_wording(
            fit, prepared, topic, against="each", weighting=weighting, topic_counts=counts
        )
        pd.testing.assert_frame_equal(direct, shared, check_exact=False, rtol=1e-12)
    with pytest.raises(SettingsError, match="'topic_counts' parameter of source_wording"):
        other = "unique" if weighting == "exposure" else "exposure"
        source_wording(fit, prepared, 0, weighting=other, topic_counts=counts)


def test_wording_needs_two_sources_and_a_valid_topic():
    fit, prepared = wording_case()
    with pytest.raises(SettingsError, match="'topic'"):
        source_wording(fit, prepared, 5)
    with pytest.raises(ComparisonError, match="at least two sources"):
        source_wording(fit, prepared, 0, sources=["a"])
    with pytest.raises(ComparisonError, match="'c'"):
        source_wording(fit, prepared, 0, sources=["a", "c"])


def test_old_argument_order_and_names_still_work_with_a_warning():
    # Old spellings keep working for one release (issue 10), with a FutureWarning naming the new.
    with pytest.warns(FutureWarning, match=r"use term_rankings\(fit, prepared, method=\.\.\.\)"):
        old = term_rankings(FIT, "frex", prepared=None)
    pd.testing.assert_frame_equal(old, term_rankings(FIT, None, "frex"))
    with pytest.warns(FutureWarning, match=r"term_rankings\(topn=\.\.\.\).*n_terms=\.\.\."):
        short = term_rankings(FIT, method="frex", topn=3)
    pd.testing.assert_frame_equal(short, term_rankings(FIT, method="frex", n_terms=3))


def test_share_of_term_is_bayes_rule_by_hand():
    # pi = mean topic share (0.5, 0.5) without a prepared corpus: p(k | w) = phi_kw / sum_j phi_jw.
    table = term_rankings(FIT, n_terms=4)
    got = table.set_index(["topic", "term"])["share_of_term"]
    assert got[(0, "w0")] == pytest.approx(0.4 / (0.4 + 0.6))
    assert got[(1, "w3")] == pytest.approx(0.2 / (0.1 + 0.2))
    # each term's shares over topics sum to 1 (a distribution over topics)
    np.testing.assert_allclose(table.groupby("term")["share_of_term"].sum(), 1.0)


def test_find_topics_ranks_and_errors():
    from tm_compare import find_topics

    found = find_topics(FIT, "W3", n_terms=2)  # any case
    # w3 is 2nd in topic 1 (0.6, 0.2, ...) and last in topic 0: only topic 1 within the top 2
    assert found[["topic", "rank"]].values.tolist() == [[1, 2]]
    assert found["probability"].tolist() == [0.2]
    everywhere = find_topics(FIT, "w0", n_terms=4)
    assert everywhere[["topic", "rank"]].values.tolist() == [[1, 1], [0, 1]]
    with pytest.raises(SettingsError, match="Closest terms: w0"):
        find_topics(FIT, "w00")
    with pytest.raises(SettingsError, match="'method' parameter of find_topics"):
        find_topics(FIT, "w0", method="salience")


def test_find_topics_matches_phrase_terms():
    phrase = topics_fit(PHI, ["city_council", "w1", "w2", "w3"], doc_topic=[[0.5, 0.5]] * 2)
    from tm_compare.compare.terms import find_topics

    assert find_topics(phrase, "City Council", n_terms=1)["topic"].tolist() == [1, 0]
