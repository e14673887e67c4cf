"""Agreement figures against a published worked example and reference libraries."""

import krippendorff
import numpy as np
import pandas as pd
import pytest
from statsmodels.stats.inter_rater import aggregate_raters, fleiss_kappa

from tm_compare.errors import SettingsError
from tm_compare.labels.agreement import (
    NEEDS_TWO_ANALYSTS,
    agreement_by_unit,
    agreement_summary,
    agreement_table,
    can_compute,
    explain_agreement,
    krippendorff_alpha,
    percent_agreement,
)

# Krippendorff, K. (2011). "Computing Krippendorff's Alpha-Reliability", Annenberg School for
# Communication, University of Pennsylvania: the example "C. Nominal data, any number of
# observers, missing data": 4 observers (A-D) x 12 units, "." = missing. Stated result:
# alpha = 0.743 (nominal). Rows here are observers as printed in the paper.
_ = None
KRIPPENDORFF_2011 = [
    [1, 2, 3, 3, 2, 1, 4, 1, 2, _, _, _],  # observer A
    [1, 2, 3, 3, 2, 2, 4, 1, 2, 5, _, 3],  # observer B
    [_, 3, 3, 3, 2, 3, 4, 2, 2, 5, 1, _],  # observer C
    [1, 2, 3, 3, 2, 4, 4, 1, 2, 5, 1, _],  # observer D
]
UNITS_BY_CODERS = pd.DataFrame(KRIPPENDORFF_2011, index=list("ABCD")).T


def test_krippendorff_2011_worked_example():
    # Source: Krippendorff (2011), nominal example with missing data: alpha = 0.743.
    assert krippendorff_alpha(UNITS_BY_CODERS) == pytest.approx(0.743, abs=5e-4)


def test_worked_example_counts():
    # Source: Krippendorff (2011): unit 12 has a single value and is not pairable, leaving
    # 11 units and n = 40 pairable values (the total of the paper's coincidence matrix;
    # value recalled from memory of the paper and recounted by hand from the table above).
    summary = agreement_summary(UNITS_BY_CODERS)
    assert summary["n_units"] == 11
    assert summary["n_values"] == 40
    assert summary["n_coders"] == 4


def _random_table(rng, units, coders, categories, missing):
    values = rng.integers(0, categories, size=(units, coders)).astype(object)
    values[rng.random((units, coders)) < missing] = None
    return values


@pytest.mark.parametrize("seed", range(12))
def test_alpha_matches_krippendorff_package(seed):
    # Reference: the `krippendorff` package (PyPI), level_of_measurement="nominal"; it takes
    # coders x units with NaN for missing, hence the transpose.
    rng = np.random.default_rng(seed)
    units, coders = rng.integers(5, 60), rng.integers(2, 7)
    table = _random_table(rng, units, coders, rng.integers(2, 6), missing=rng.uniform(0, 0.4))
    reference_input = np.where(table == None, np.nan, table).T.astype(float)  # noqa: E711
    expected = krippendorff.alpha(reliability_data=reference_input, level_of_measurement="nominal")
    assert krippendorff_alpha(table) == pytest.approx(expected, abs=1e-12)


def test_alpha_accepts_text_values_like_codes():
    # Nominal alpha depends only on which values are equal (Krippendorff 2011), so text
    # values must give the same result as the integer codes in the worked example.
    names = {1: "usable", 2: "mixed", 3: "noise", 4: "off-topic", 5: "duplicate"}
    as_text = UNITS_BY_CODERS.map(lambda v: None if pd.isna(v) else names[int(v)])
    assert krippendorff_alpha(as_text) == pytest.approx(
        krippendorff_alpha(UNITS_BY_CODERS), abs=1e-15
    )


@pytest.mark.parametrize("seed", range(6))
def test_percent_agreement_matches_statsmodels_free_marginal_kappa(seed):
    # Reference: statsmodels `fleiss_kappa(..., method="randolph")` is Randolph's free-marginal
    # kappa (P_bar - 1/q) / (1 - 1/q), where P_bar, the mean share of agreeing rater pairs per
    # subject, is our percent agreement on complete data (q = number of categories).
    rng = np.random.default_rng(100 + seed)
    table = rng.integers(0, 4, size=(30, 5))
    counts, categories = aggregate_raters(table)
    q = len(categories)
    kappa_r = fleiss_kappa(counts, method="randolph")
    assert percent_agreement(table) == pytest.approx(kappa_r * (1 - 1 / q) + 1 / q, abs=1e-12)


def test_percent_agreement_two_coders_is_share_of_equal_units():
    # Common practice: with two coders, percent agreement is the share of units coded alike.
    table = [["a", "a"], ["a", "b"], ["b", "b"], ["c", "a"], [None, "a"]]
    assert percent_agreement(table) == pytest.approx(2 / 4)


def test_unit_alphas_average_to_overall_alpha():
    # Decomposition stated in tm_compare.agreement: the n_coders-weighted mean of per-unit alpha
    # over pairable units equals overall alpha (follows from D_o = sum_u m_u D_o(u) / n,
    # Krippendorff 2011).
    units = agreement_by_unit(UNITS_BY_CODERS)
    pairable = units[units["n_coders"] >= 2]
    weighted = (pairable["alpha"] * pairable["n_coders"]).sum() / pairable["n_coders"].sum()
    assert weighted == pytest.approx(krippendorff_alpha(UNITS_BY_CODERS), abs=1e-12)
    assert np.isnan(units["alpha"].iloc[11])  # unit 12: one value only
    assert units["percent_agreement"].iloc[5] == 0.0  # unit 6: values 1, 2, 3, 4


def test_alpha_is_invariant_to_coder_order_and_value_names():
    rng = np.random.default_rng(7)
    table = pd.DataFrame(_random_table(rng, 25, 4, 3, 0.2))
    shuffled = table[[2, 0, 3, 1]].map(lambda v: None if v is None else f"v{v * 7}")
    assert krippendorff_alpha(shuffled) == pytest.approx(krippendorff_alpha(table), abs=1e-12)


def test_undefined_alpha_is_nan():
    # Krippendorff (2011): alpha needs variation among pairable values (D_e > 0).
    assert np.isnan(krippendorff_alpha([["x", "x"], ["x", "x"]]))
    assert np.isnan(krippendorff_alpha([["x", None], [None, "y"]]))  # nothing pairable
    assert np.isnan(percent_agreement([["x", None]]))


def test_perfect_agreement_is_one():
    assert krippendorff_alpha([["a", "a", "a"], ["b", "b", None], ["c", "c", "c"]]) == 1.0


def test_only_nominal_level():
    with pytest.raises(SettingsError, match="'level' parameter of krippendorff_alpha"):
        krippendorff_alpha(UNITS_BY_CODERS, level="interval")


def test_agreement_table_lists_units_then_overall():
    # Source for the overall value: Krippendorff (2011), alpha = 0.743 on the worked example.
    table = agreement_table(UNITS_BY_CODERS)
    assert table["scope"].tolist() == ["unit"] * 12 + ["overall"]
    overall = table.iloc[-1]
    assert overall["alpha"] == pytest.approx(0.743, abs=5e-4)
    assert (overall["n_units"], overall["n_coders"]) == (11, 4)
    assert table["n_units"].iloc[:12].sum() == 11  # one per pairable unit


# --- when alpha can be computed, and the sentence shown instead -------------------------------


@pytest.mark.parametrize(
    ("table", "reference_refusal"),
    [
        # One coder per unit: nothing pairable. The reference library refuses the same table
        # ("at least one unit with values assigned by at least two coders").
        ([["usable", None], [None, "noise"]], "at least two coders"),
        # Pairable, but one value only: D_e = 0 (Krippendorff 2011); the reference library
        # refuses it too ("more than one value in the domain").
        ([["usable", "usable"], ["usable", "usable"]], "more than one value"),
    ],
)
def test_cannot_compute_exactly_when_the_reference_library_refuses(table, reference_refusal):
    codes = {"usable": 1.0, "noise": 2.0, None: np.nan}
    reference_input = np.array([[codes[v] for v in row] for row in table]).T
    with pytest.raises(ValueError, match=reference_refusal):
        krippendorff.alpha(reliability_data=reference_input, level_of_measurement="nominal")
    summary = agreement_summary(table)
    assert not can_compute(summary)
    assert np.isnan(summary["alpha"])


def test_sentence_for_no_shared_topics_names_what_is_needed():
    summary = agreement_summary([["usable", None], [None, "noise"]])
    assert summary["n_units"] == 0
    assert explain_agreement(summary, "verdicts") == f"Agreement on verdicts {NEEDS_TWO_ANALYSTS}."
    assert NEEDS_TWO_ANALYSTS == "needs labels from 2 analysts on the same topics"


def test_sentence_for_no_variation_says_why_and_that_they_agree():
    text = explain_agreement(agreement_summary([["a", "a"], ["a", "a"], ["a", None]]), "categories")
    assert "cannot be computed yet" in text and "2 topics labelled by 2 analysts" in text
    assert "nan" not in text.lower()


@pytest.mark.parametrize("seed", range(4))
def test_sentence_quotes_the_alpha_of_the_reference_library(seed):
    # Reference: the `krippendorff` package, nominal; the reading bands are Krippendorff
    # (2004), Content Analysis, 2nd ed., p. 241 (0.800 and 0.667; recalled from memory).
    rng = np.random.default_rng(40 + seed)
    table = _random_table(rng, 20, 3, 3, missing=0.2)
    reference = krippendorff.alpha(
        reliability_data=np.where(table == None, np.nan, table).T.astype(float),  # noqa: E711
        level_of_measurement="nominal",
    )
    row = agreement_table(table).iloc[-1]
    assert can_compute(row)
    text = explain_agreement(row, "verdicts")
    assert f"is {reference:.2f} on " in text
    band = "reliable" if reference >= 0.8 else "tentative" if reference >= 0.667 else "too low"
    assert band in text


def test_sentence_on_the_worked_example():
    # Krippendorff (2011): alpha = 0.743 on 11 pairable units by 4 observers, which his
    # (2004) bands place between 0.667 and 0.800: tentative conclusions only.
    text = explain_agreement(agreement_table(UNITS_BY_CODERS).iloc[-1], "verdicts")
    assert text.startswith("Krippendorff's alpha for verdicts is 0.74 on 11 topics labelled by 4")
    assert "tentative conclusions only" in text
