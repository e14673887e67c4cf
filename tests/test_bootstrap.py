"""Checks of the bootstrap engine against scipy and published values."""

import numpy as np
import pytest
from scipy import stats
from statsmodels.stats.multitest import multipletests

from tm_compare.compare import _bootstrap as bs
from tm_compare.compare._kernels import multinomial_counts


def _units(values, weights=None, strata=None, clusters=None):
    values = np.asarray(values, dtype=float).reshape(len(values), -1)
    weights = np.ones(len(values)) if weights is None else np.asarray(weights, dtype=float)
    strata = np.zeros(len(values), dtype=np.int64) if strata is None else np.asarray(strata)
    codes = bs.unit_codes(strata, clusters)
    return bs.unit_sums(values, weights, strata, codes, int(strata.max()) + 1)


def _mean_stat(num, den):
    return (num / den[..., None]).reshape(*num.shape[:-2], -1)


# The 15 p-values of the worked example in Benjamini & Hochberg (1995), sec. 4 (values
# recalled from memory; the paper states that 4 hypotheses are rejected at q = 0.05).
BH_1995 = np.array(
    [
        0.0001,
        0.0004,
        0.0019,
        0.0095,
        0.0201,
        0.0278,
        0.0298,
        0.0344,
        0.0459,
        0.3240,
        0.4262,
        0.5719,
        0.6528,
        0.7590,
        1.0000,
    ]
)


def _statsmodels_bh(p, q):
    # Reference: statsmodels' multipletests(method="fdr_bh") (Benjamini & Hochberg 1995).
    reject, adjusted, _, _ = multipletests(p, alpha=q, method="fdr_bh")
    return reject, adjusted


def test_benjamini_hochberg_matches_paper_and_statsmodels():
    adjusted = bs.benjamini_hochberg(BH_1995)
    assert (adjusted <= 0.05).sum() == 4  # Benjamini & Hochberg 1995: 4 rejections
    reject, expected = _statsmodels_bh(BH_1995, 0.05)
    np.testing.assert_allclose(adjusted, expected, rtol=1e-12)
    assert ((adjusted <= 0.05) == reject).all()
    shuffled = np.random.default_rng(1).permutation(BH_1995)  # order must not matter
    np.testing.assert_allclose(
        bs.benjamini_hochberg(shuffled), _statsmodels_bh(shuffled, 0.05)[1], rtol=1e-12
    )


@pytest.mark.parametrize(
    ("p", "q"),
    [
        ([1 / 60, 2 / 60, 3 / 60], 0.05),  # each p exactly on its boundary j q / m
        ([0.01, 0.02, 0.03, 0.04, 0.05], 0.05),
        ([0.05], 0.05),
    ],
)
def test_benjamini_hochberg_rejects_p_values_on_the_boundary(p, q):
    # Benjamini & Hochberg (1995) reject H_(j) for j <= max{j : p_(j) <= j q / m}: a p-value
    # equal to its boundary is rejected; statsmodels' fdr_bh agrees (the reference here).
    reject, expected = _statsmodels_bh(np.array(p), q)
    adjusted = bs.benjamini_hochberg(p)
    assert reject.all()
    assert (adjusted <= q).all()
    np.testing.assert_allclose(adjusted, expected, rtol=1e-12)


def _random_p(seed, m):
    return np.random.default_rng(seed).uniform(size=m)


def _tied_p(seed, m):
    rng = np.random.default_rng(seed)
    return rng.choice(rng.uniform(0, 0.2, size=max(1, m // 4)), size=m)


def _small_p(seed, m):
    # A few strong effects among many nulls, as in a comparison of k topics.
    rng = np.random.default_rng(seed)
    return np.concatenate([rng.uniform(0, 0.01, size=m // 5), rng.uniform(size=m - m // 5)])


@pytest.mark.parametrize("make", [_random_p, _tied_p, _small_p])
@pytest.mark.parametrize("m", [1, 2, 7, 40, 500])
@pytest.mark.parametrize("seed", [0, 1, 2])
def test_benjamini_hochberg_equals_statsmodels(make, m, seed):
    # Reference: statsmodels' multipletests(method="fdr_bh"); tolerance: float rounding.
    p = make(seed, m)
    adjusted = bs.benjamini_hochberg(p)
    for q in (0.01, 0.05, 0.1):
        reject, expected = _statsmodels_bh(p, q)
        np.testing.assert_allclose(adjusted, expected, rtol=1e-12)
        assert ((adjusted <= q) == reject).all()
    assert ((adjusted >= p) & (adjusted <= 1)).all()


@pytest.mark.parametrize("method", ["percentile", "bca"])
def test_unweighted_mean_intervals_equal_scipy(method):
    x = np.random.default_rng(3).exponential(size=40)  # skewed, so BCa differs from percentile
    units = _units(x)
    num, den = bs.replicate(units, 999, np.random.default_rng(11))
    theta_b = _mean_stat(num, den)
    accel = bs.jackknife_acceleration(units, _mean_stat) if method == "bca" else None
    lo, hi = bs.interval(_mean_stat(*units.totals()), theta_b, 0.9, method, accel)
    # Reference: scipy.stats.bootstrap with the same generator draws the same resamples
    # (rng.integers(0, n, (B, n))); its BCa uses the mid-rank bias correction.
    ref = stats.bootstrap(
        (x,),
        np.mean,
        n_resamples=999,
        confidence_level=0.9,
        method="BCa" if method == "bca" else "percentile",
        rng=np.random.default_rng(11),
    )
    np.testing.assert_allclose(theta_b[:, 0], ref.bootstrap_distribution, rtol=1e-12)
    np.testing.assert_allclose([lo[0], hi[0]], ref.confidence_interval, rtol=1e-10)


def test_cluster_bootstrap_equals_scipy_paired_on_cluster_totals():
    # Resampling whole clusters of a weighted mean (Field & Welsh 2007) is the bootstrap of
    # the ratio sum(num_c) / sum(den_c) over cluster totals; scipy's paired bootstrap of
    # that ratio, with the same generator, is the reference (its BCa jackknife is over clusters).
    rng = np.random.default_rng(5)
    n_docs, n_clusters = 300, 25
    clusters = rng.integers(0, n_clusters, n_docs)
    clusters[:n_clusters] = np.arange(n_clusters)
    x, w = rng.beta(0.5, 2, n_docs), rng.integers(1, 30, n_docs).astype(float)
    units = _units(x, w, clusters=clusters)
    num_c = np.bincount(clusters, weights=w * x)
    den_c = np.bincount(clusters, weights=w)

    def ratio(a, b, axis=-1):
        return a.sum(axis=axis) / b.sum(axis=axis)

    reps = bs.replicate(units, 500, np.random.default_rng(8))
    accel = bs.jackknife_acceleration(units, _mean_stat)
    lo, hi = bs.interval(_mean_stat(*units.totals()), _mean_stat(*reps), 0.95, "bca", accel)
    ref = stats.bootstrap(
        (num_c, den_c),
        ratio,
        paired=True,
        n_resamples=500,
        method="BCa",
        rng=np.random.default_rng(8),
    )
    np.testing.assert_allclose([lo[0], hi[0]], ref.confidence_interval, rtol=1e-10)


def _numpy_counts(rng, n, size, dtype=np.int64):
    # Reference: numpy's Generator.integers, the call scipy.stats.bootstrap draws its
    # resample indices with (rng.integers(0, n, (n_resamples, n))), counted per row.
    drawn = rng.integers(0, n, (size, n), dtype=dtype)
    return np.stack([np.bincount(row, minlength=n) for row in drawn]).astype(float)


@pytest.mark.parametrize(
    ("n", "size"),
    [
        (2, 50),
        (3, 7),
        (1000, 20),
        (66_667, 3),
        # 2**32 + 1 = 641 x 6,700,417, so numpy's Lemire threshold (2**32 - n) % n is n - 1:
        # about 10,450 rejected 32-bit values in these 6.7 million draws (arithmetic).
        (6_700_417, 1),
    ],
)
@pytest.mark.parametrize("skip", [0, 1])
@pytest.mark.parametrize("cap", [255, 1, 2])
def test_compiled_counts_equal_numpy_draws_and_leave_the_same_state(n, size, skip, cap):
    ours_rng, ref_rng = np.random.default_rng(n), np.random.default_rng(n)
    for rng in (ours_rng, ref_rng):  # skip=1 leaves half of a 64-bit output buffered
        rng.integers(0, 10, skip, dtype=np.int32)
    # cap 1 redraws every row in float64, cap 2 the rows where some unit is drawn twice
    # (most rows here), so both paths and their mix meet the same reference.
    if cap == 255:
        counts = bs.draw_counts(n, size, ours_rng, "multinomial").dense()
    else:
        counts = multinomial_counts(ours_rng, n, size, cap).dense()
    np.testing.assert_array_equal(counts, _numpy_counts(ref_rng, n, size))
    # The generator continues as numpy's would (both buffered halves and 64-bit draws).
    assert ours_rng.integers(0, 2**40, 5).tolist() == ref_rng.integers(0, 2**40, 5).tolist()
    assert ours_rng.bit_generator.state == ref_rng.bit_generator.state


@pytest.mark.parametrize("cap", [255, 2])
def test_count_products_equal_float64_products(cap):
    # 5,000 units span three widened pieces of the counts (the last one short); cap 2 puts
    # most rows in the float64 spill. Reference: numpy's own float64 matrix product of the
    # counts numpy's Generator.integers draws (rng.integers(0, n, (size, n)), counted).
    n, size = 5000, 7
    sums = np.random.default_rng(3).random((n, 4))
    counts = multinomial_counts(np.random.default_rng(5), n, size, cap)
    reference = _numpy_counts(np.random.default_rng(5), n, size)
    assert (len(counts.wide) > 0) == (cap == 2)
    np.testing.assert_allclose(counts.times(sums), reference @ sums, rtol=1e-13)


def test_replicates_over_blocks_and_strata_equal_one_numpy_draw_per_stratum(monkeypatch):
    # replicate() draws each stratum in blocks of rows; numpy's stream continues across
    # calls (its buffered 32-bit half included), so the blocks together are the draws of one
    # rng.integers(0, n_s, (B, n_s)) per stratum in order (numpy Generator.integers, the
    # call scipy.stats.bootstrap makes). Small blocks force many of them, some ragged.
    monkeypatch.setattr(bs, "_BLOCK", 50)
    strata = np.repeat([0, 1, 2], [7, 23, 2])
    values = np.random.default_rng(8).random((len(strata), 3))
    weights = np.random.default_rng(9).integers(1, 5, len(strata)).astype(float)
    units = _units(values, weights, strata)
    rng, ref_rng = np.random.default_rng(11), np.random.default_rng(11)
    for gen in (rng, ref_rng):  # leave half of a 64-bit output buffered at the start
        gen.integers(0, 10, 1, dtype=np.int32)
    num, den = bs.replicate(units, 31, rng)
    for s, (a, b) in enumerate(units.bounds()):
        both = _numpy_counts(ref_rng, b - a, 31) @ units.sums[a:b]
        np.testing.assert_allclose(num[:, s], both[:, :-1], rtol=1e-13)
        np.testing.assert_allclose(den[:, s], both[:, -1], rtol=1e-13)
    assert rng.bit_generator.state == ref_rng.bit_generator.state


def test_counts_from_other_bit_generators_and_one_unit_equal_numpy():
    ours_rng = np.random.Generator(np.random.MT19937(4))
    ref_rng = np.random.Generator(np.random.MT19937(4))
    counts = bs.draw_counts(500, 6, ours_rng, "multinomial").dense()
    np.testing.assert_array_equal(counts, _numpy_counts(ref_rng, 500, 6))
    ours_rng, ref_rng = np.random.default_rng(9), np.random.default_rng(9)
    assert (bs.draw_counts(1, 4, ours_rng, "multinomial").dense() == 1).all()
    ref_rng.integers(0, 1, (4, 1))  # numpy draws nothing for a one-value range
    assert ours_rng.bit_generator.state == ref_rng.bit_generator.state


@pytest.mark.parametrize("method", ["percentile", "bca"])
def test_exposure_weighted_documents_equal_scipy_paired_ratio(method):
    # A weighted mean over resampled documents is the ratio sum(w x) / sum(w) of the drawn
    # (x, w) pairs: scipy's paired bootstrap of that ratio, with the same generator, is the
    # reference (its BCa jackknife leaves out one document at a time).
    rng = np.random.default_rng(6)
    x, w = rng.beta(0.5, 3, (400, 3)), rng.integers(1, 20, 400).astype(float)
    units = _units(x, w)
    num, den = bs.replicate(units, 600, np.random.default_rng(13))
    theta_b = _mean_stat(num, den)
    # The closed form prevalence() uses (scipy's own jackknife is the reference below).
    accel = bs.stratum_acceleration(units) if method == "bca" else None
    lo, hi = bs.interval(_mean_stat(*units.totals()), theta_b, 0.9, method, accel)

    def ratio(a, b, axis=-1):
        return a.sum(axis=axis) / b.sum(axis=axis)

    for topic in range(3):
        ref = stats.bootstrap(
            (w * x[:, topic], w),
            ratio,
            paired=True,
            n_resamples=600,
            confidence_level=0.9,
            method="BCa" if method == "bca" else "percentile",
            rng=np.random.default_rng(13),
        )
        np.testing.assert_allclose(theta_b[:, topic], ref.bootstrap_distribution, rtol=1e-12)
        np.testing.assert_allclose([lo[topic], hi[topic]], ref.confidence_interval, rtol=1e-10)


def test_closed_form_acceleration_equals_the_generic_jackknife():
    rng = np.random.default_rng(10)
    strata = np.repeat([0, 1, 2], [30, 55, 41])
    clusters = rng.integers(0, 12, len(strata))
    x, w = rng.dirichlet(np.full(4, 0.3), len(strata)), rng.integers(1, 9, len(strata))
    for grouped in (None, clusters):
        units = _units(x, w, strata, grouped)
        # Reference: the leave-one-unit-out jackknife over every unit of every stratum
        # (Efron & Tibshirani 1993, sec. 14.3), as scipy.stats.bootstrap sums it over samples.
        np.testing.assert_allclose(
            bs.stratum_acceleration(units),
            bs.jackknife_acceleration(units, _mean_stat),
            rtol=1e-9,
            atol=1e-15,
        )


@pytest.mark.parametrize(
    "pairs",
    [
        [([0], [1]), ([0], [2]), ([1], [2])],  # differences(against="each")
        [([0], [1, 2]), ([1], [0, 2]), ([2], [0, 1])],  # differences(against="rest")
        [([0, 2], []), ([1], [])],  # one side pooled alone (prevalence over time)
    ],
)
def test_pooled_acceleration_equals_the_generic_jackknife(pairs):
    rng = np.random.default_rng(12)
    strata = np.repeat([0, 1, 2], [33, 47, 25])
    clusters = rng.integers(0, 9, len(strata))
    x, w = rng.dirichlet(np.full(3, 0.4), len(strata)), rng.integers(1, 7, len(strata))

    def pooled(num, den, idx):
        return num[..., idx, :].sum(axis=-2) / den[..., idx].sum(axis=-1)[..., None]

    for combine in (np.subtract, np.divide):

        def stat(num, den, combine=combine):
            return np.concatenate(
                [
                    combine(pooled(num, den, a), pooled(num, den, b)) if b else pooled(num, den, a)
                    for a, b in pairs
                ],
                -1,
            )

        for grouped in (None, clusters):
            units = _units(x, w, strata, grouped)
            # Reference: the leave-one-unit-out jackknife of the statistic itself over every
            # unit of every stratum (Efron & Tibshirani 1993, sec. 14.3), summed over strata
            # as scipy.stats.bootstrap sums it over samples.
            np.testing.assert_allclose(
                bs.pooled_acceleration(units, pairs, combine),
                bs.jackknife_acceleration(units, stat),
                rtol=1e-9,
                atol=1e-15,
            )


def test_strata_keep_their_number_of_units():
    strata = np.repeat([0, 1, 2], [5, 40, 12])
    units = _units(np.ones(len(strata)), strata=strata)
    counts = [
        bs.draw_counts(b - a, 200, np.random.default_rng(0), "multinomial")
        for a, b in units.bounds()
    ]
    # Stratified resampling: each replicate draws exactly n_s units of stratum s (common practice).
    assert [c.dense().sum(axis=1).tolist() for c in counts] == [[5] * 200, [40] * 200, [12] * 200]


def test_poisson_counts_follow_poisson_one():
    counts = bs.draw_counts(1000, 400, np.random.default_rng(2), "poisson").dense()
    observed = np.bincount(counts.astype(int).ravel(), minlength=6)[:6] / counts.size
    # Reference: scipy.stats.poisson pmf with mean 1 (Hanley & MacGibbon 2006); 400k draws.
    np.testing.assert_allclose(observed, stats.poisson.pmf(np.arange(6), 1.0), atol=3e-3)


def test_centred_p_value_by_hand():
    theta_b = np.array([[0.5], [1.5], [2.5], [1.0], [3.0]])
    # centred |d* - 1| = 0.5, 0.5, 1.5, 0, 2 ; >= |1| for 2 replicates -> (1 + 2) / 6 (by hand)
    assert bs.centred_p_value(np.array([1.0]), theta_b)[0] == pytest.approx(3 / 6)


def test_bca_undefined_when_every_replicate_on_one_side():
    theta_b = np.linspace(1, 2, 50)[:, None]
    lo, hi = bs.interval(np.array([0.5]), theta_b, 0.95, "bca", np.zeros(1))
    # All replicates above the estimate: z0 = ndtri(1) = inf, as in scipy (which warns, NaN).
    assert np.isnan(lo[0]) and np.isnan(hi[0])
