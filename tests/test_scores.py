"""Coherence against gensim's CoherenceModel; stability, diversity and recommend by hand."""

from __future__ import annotations

import itertools
import os
import re
import warnings

import gensim
import numpy as np
import pandas as pd
import pytest
from gensim.corpora import Dictionary
from gensim.models import CoherenceModel, LdaModel
from gensim.utils import simple_preprocess
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from tm_compare.errors import InputError, SettingsError
from tm_compare.models.choice import recommend
from tm_compare.models.scores import (
    CoherenceScorer,
    average_jaccard,
    coherence,
    diversity,
    match_topics,
    stability,
)

GENSIM_NAMES = {"npmi": "c_npmi", "c_v": "c_v", "uci": "c_uci", "umass": "u_mass"}


def gensim_per_topic(topics, texts, dictionary, measure, topn=10):
    """Reference: gensim 4 CoherenceModel(...).get_coherence_per_topic(), one process."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        model = CoherenceModel(
            topics=topics,
            texts=texts,
            dictionary=dictionary,
            coherence=GENSIM_NAMES[measure],
            topn=topn,
            processes=1,
        )
        return np.array(model.get_coherence_per_topic(), dtype=float)


@pytest.fixture(scope="module")
def lee():
    # Lee, Pincombe & Welsh 2005 news corpus, shipped with gensim's test data.
    path = os.path.join(os.path.dirname(gensim.__file__), "test", "test_data", "lee_background.cor")
    with open(path, encoding="utf-8") as handle:
        texts = [simple_preprocess(line) for line in handle]
    return texts, Dictionary(texts)


def _lda_top_words(texts, dictionary, k, topn=10):
    bow = [dictionary.doc2bow(t) for t in texts]
    lda = LdaModel(bow, id2word=dictionary, num_topics=k, passes=1, random_state=k, eval_every=None)
    return [
        [dictionary[int(i)] for i in np.argsort(-row, kind="stable")[:topn]]
        for row in lda.get_topics()
    ]


@pytest.mark.slow
def test_equals_gensim_on_lee_corpus_for_several_models(lee):
    # Reference: gensim CoherenceModel per model, all four measures, gensim's default
    # windows (c_v 110, c_uci/c_npmi 10), on lee_background.cor. Models: two quick
    # LDA fits (k = 3, 6) and one of vocabulary samples mixed with words the
    # dictionary lacks (dropped before taking the top 10, as gensim does).
    texts, dictionary = lee
    rng = np.random.default_rng(7)
    vocab = sorted(dictionary.token2id)
    sampled = [
        list(rng.choice(vocab, 8, replace=False)) + ["qzxnotaword", "vvmissing"] for _ in range(4)
    ]
    models = [_lda_top_words(texts, dictionary, 3), _lda_top_words(texts, dictionary, 6), sampled]
    scorer = CoherenceScorer(texts, dictionary).fit(models)
    # Per-topic values do not depend on the other topics scored alongside, so one
    # gensim run over all models' topics gives every model's reference values.
    everything = [t for m in models for t in m]
    for measure in GENSIM_NAMES:
        expected = gensim_per_topic(everything, texts, dictionary, measure)
        got = np.concatenate([scorer.score(m)[measure] for m in models])
        np.testing.assert_allclose(got, expected, rtol=0, atol=1e-9)


def test_held_out_reference_texts_and_truncation_equal_gensim(lee):
    # Reference: gensim CoherenceModel with a dictionary from all texts and a held-out
    # part (40 documents) as reference texts: topic words that never occur there have
    # zero counts (UMass 0 for their pairs, NPMI/UCI infinite, C_V NaN in gensim).
    # Topics of 12 words with missing words in later topics check gensim's order:
    # drop words outside the dictionary first, then keep the top 10.
    texts, dictionary = lee
    held_out = texts[-40:]
    seen = sorted({w for t in held_out for w in t})
    unseen = sorted(set(dictionary.token2id) - set(seen))
    rng = np.random.default_rng(11)
    topics = [list(rng.choice(seen, 12, replace=False))]
    topics += [
        list(rng.choice(seen, 9, replace=False)) + ["notinthedictionary", *rng.choice(unseen, 2)]
        for _ in range(3)
    ]
    scorer = CoherenceScorer(held_out, dictionary).fit([topics])
    for measure in GENSIM_NAMES:
        expected = gensim_per_topic(topics, held_out, dictionary, measure)
        got = scorer.score(topics)[measure]
        np.testing.assert_allclose(got, expected, rtol=0, atol=1e-9, equal_nan=True)
    assert np.isinf(scorer.score(topics)["npmi"][1:]).all()  # gensim has no guard here


words = st.sampled_from("abcdefgh")
texts_strategy = st.lists(
    st.lists(st.sampled_from("abcdefghxy"), max_size=16), min_size=2, max_size=7
)
topics_strategy = st.lists(
    st.lists(words | st.just("oov"), min_size=3, max_size=5), min_size=1, max_size=3
)


@settings(max_examples=40, deadline=None, database=None)
@given(
    texts=texts_strategy,
    topics=topics_strategy,
    windows=st.tuples(st.integers(1, 6), st.integers(2, 12)),
)
def test_adversarial_small_corpora_equal_gensim(texts, topics, windows):
    # Reference: gensim CoherenceModel. Corpora with repeated words inside windows,
    # texts shorter than the window and empty texts; "x" and "y" are outside the
    # dictionary but take positions; "oov" in topics is dropped; topics may repeat a
    # word; dictionary words absent from the texts have zero counts.
    dictionary = Dictionary([list("abcdefgh")])
    topics = [t for t in topics if any(w != "oov" for w in t)]
    known = [[w for w in t if w != "oov"] for t in topics]
    # gensim truncates every topic to topn only when its first topic is longer than
    # topn (documented difference: we truncate each topic).
    assume(topics and (len(known[0]) > 4 or all(len(k) <= 4 for k in known)))
    small, large = windows
    sizes = {"npmi": small, "uci": small, "c_v": large}
    scorer = CoherenceScorer(texts, dictionary, n_terms=4, window_sizes=sizes).fit([topics])
    got = scorer.score(topics)
    for measure, name in GENSIM_NAMES.items():
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)
            ref = CoherenceModel(
                topics=topics,
                texts=texts,
                dictionary=dictionary,
                coherence=name,
                topn=4,
                window_size=sizes.get(measure),
                processes=1,
            ).get_coherence_per_topic()
        np.testing.assert_allclose(
            got[measure], np.array(ref, dtype=float), rtol=0, atol=1e-9, equal_nan=True
        )


def test_topic_without_known_words_is_nan():
    # gensim raises ValueError for such a topic (it cannot map it to ids); a sweep
    # must not stop, so it gets NaN.
    texts, dictionary = [list("abcab"), list("bca")], Dictionary([list("abc")])
    topics = [["a", "b", "c"], ["p", "q"]]
    with pytest.raises(ValueError):
        CoherenceModel(
            topics=topics, texts=texts, dictionary=dictionary, coherence="c_npmi", processes=1
        )
    result = CoherenceScorer(texts, dictionary).fit([topics]).score(topics)
    for values in result.values():
        assert np.isfinite(values[0]) and np.isnan(values[1])


def test_convenience_equals_scorer(lee):
    texts, dictionary = lee
    texts = texts[:60]
    topics = [["said", "government", "people", "minister"], ["fire", "sydney", "new", "area"]]
    scorer = CoherenceScorer(texts, dictionary, window_sizes={"c_v": 50}).fit([topics])
    for measure in GENSIM_NAMES:
        window = 50 if measure == "c_v" else None
        alone = coherence(texts, topics, measure, dictionary=dictionary, window_size=window)
        np.testing.assert_array_equal(alone, scorer.score(topics)[measure])
    # NPMI is the default measure; gensim's name is accepted as an alias.
    np.testing.assert_array_equal(
        coherence(texts, topics, dictionary=dictionary), scorer.score(topics)["npmi"]
    )
    np.testing.assert_array_equal(
        coherence(texts, topics, "c_npmi", dictionary=dictionary), scorer.score(topics)["npmi"]
    )


def test_scorer_refuses_bad_input():
    texts = [list("abcab")]
    with pytest.raises(SettingsError, match="'measures'"):
        CoherenceScorer(texts, measures=("nmpi",)).fit([[["a", "b"]]])
    with pytest.raises(SettingsError, match="'n_terms'"):
        CoherenceScorer(texts, n_terms=0).fit([[["a", "b"]]])
    with pytest.raises(SettingsError, match="'window_sizes'"):
        CoherenceScorer(texts, window_sizes={"npmi": 0}).fit([[["a", "b"]]])
    with pytest.raises(SettingsError, match=r"'models_top_words\[0\]'"):
        CoherenceScorer(texts).fit([["a", "b"]])
    with pytest.raises(InputError, match="before fit"):
        CoherenceScorer(texts).score([["a", "b"]])
    scorer = CoherenceScorer(texts).fit([[["a", "b"]]])
    with pytest.raises(SettingsError, match="passed to fit"):
        scorer.score([["a", "c"]])


def test_average_jaccard_by_hand():
    # By hand from the definition (Greene, O'Callaghan & Cunningham 2014, eq. 1):
    # depth 1: {x} vs {y} -> 0; depth 2: {x,y} vs {y,x} -> 1; depth 3: {x,y,z} vs
    # {y,x,w} -> 2/4. AJ = (0 + 1 + 0.5) / 3 = 0.5.
    assert average_jaccard(["x", "y", "z"], ["y", "x", "w"]) == pytest.approx(0.5)
    # The paper's own example (recalled from memory): album music best award win vs
    # sport best win medal award -> 0, 0, 1/5, 1/7, 3/7, AJ = 0.154.
    a = ["album", "music", "best", "award", "win"]
    b = ["sport", "best", "win", "medal", "award"]
    assert average_jaccard(a, b) == pytest.approx((0.2 + 1 / 7 + 3 / 7) / 5)
    assert round(average_jaccard(a, b), 3) == 0.154
    with pytest.raises(SettingsError, match="'n_terms'"):
        average_jaccard(a, b, n_terms=6)


def test_match_topics_is_the_best_one_to_one_matching():
    # Reference: exhaustive search over all one-to-one matchings.
    rng = np.random.default_rng(5)
    vocab = [f"w{i}" for i in range(12)]
    a = [list(rng.choice(vocab, 5, replace=False)) for _ in range(4)]
    b = [list(rng.choice(vocab, 5, replace=False)) for _ in range(4)]
    pairs, scores = match_topics(a, b, n_terms=5)
    best = max(
        sum(average_jaccard(a[i], b[j], 5) for i, j in enumerate(perm))
        for perm in itertools.permutations(range(4))
    )
    assert scores.sum() == pytest.approx(best)
    assert sorted(pairs[:, 1].tolist()) == [0, 1, 2, 3]


def test_stability_by_hand():
    # Seeds 0 and 2 identical; seed 1 differs. Depth 2, by hand:
    # AJ(T0=[a,b], U0=[c,e]) = 0; AJ(T0, U1=[b,a]) = (0 + 1)/2 = 0.5;
    # AJ(T1=[c,d], U0) = (1 + 1/3)/2 = 2/3; AJ(T1, U1) = 0.
    # Best matching T0-U1, T1-U0: pair (0, 1) = (0.5 + 2/3)/2 = 7/12; pair (0, 2) = 1;
    # pair (1, 2) = 7/12. Per fit: seed 0 = (7/12 + 1)/2 = 19/24, seed 1 = 7/12.
    # Per topic: seed 0 T0 = (0.5 + 1)/2 = 0.75, T1 = (2/3 + 1)/2 = 5/6; seed 1 U0 = 2/3, U1 = 0.5.
    run = [["a", "b"], ["c", "d"]]
    by_seed = {0: run, 1: [["c", "e"], ["b", "a"]], 2: run}
    per_fit, per_topic, per_pair = stability(by_seed, n_terms=2)
    assert per_pair["stability"].tolist() == pytest.approx([7 / 12, 1.0, 7 / 12])
    assert per_pair[["seed_a", "seed_b"]].values.tolist() == [[0, 1], [0, 2], [1, 2]]
    assert per_fit.set_index("seed")["stability"].to_dict() == pytest.approx(
        {0: 19 / 24, 1: 7 / 12, 2: 19 / 24}
    )
    topic = per_topic.set_index(["seed", "topic"])["stability"]
    assert topic[(0, 0)] == pytest.approx(0.75)
    assert topic[(0, 1)] == pytest.approx(5 / 6)
    assert topic[(1, 0)] == pytest.approx(2 / 3)
    assert topic[(1, 1)] == pytest.approx(0.5)
    one = stability({0: run})
    assert one[0]["stability"].isna().all() and one[2].empty


def test_diversity_by_hand():
    # Dieng, Ruiz & Blei 2020: unique words / all words among the topics' top 25.
    # By hand: {a, b, c, d, e} over 6 words = 5/6.
    assert diversity([["a", "b", "c"], ["a", "d", "e"]]) == pytest.approx(5 / 6)
    # Only the top `n_terms` count: top 2 -> {a, b, d} over 4.
    assert diversity([["a", "b", "c"], ["a", "d", "e"]], n_terms=2) == pytest.approx(3 / 4)
    # 40 topics of 25 distinct words each, no overlap -> 1.
    assert diversity([[f"t{i}w{j}" for j in range(30)] for i in range(40)]) == 1.0


@pytest.fixture
def crafted():
    # Stability falls with k; NPMI rises. Best stability 0.80 at k = 5 with standard
    # error sd(0.78, 0.80, 0.82)/sqrt(3) = 0.02/sqrt(3) = 0.01155; k = 10 has mean 0.79
    # (within), k = 15 has 0.60 (not). Among k = 5 and 10, NPMI is highest at 10 (0.075),
    # where seed 1 has the best NPMI (0.08).
    return pd.DataFrame(
        {
            "k": [5, 5, 5, 10, 10, 10, 15, 15, 15],
            "seed": [0, 1, 2] * 3,
            "npmi": [0.05, 0.06, 0.04, 0.07, 0.08, 0.075, 0.09, 0.085, 0.095],
            "stability": [0.78, 0.80, 0.82, 0.78, 0.79, 0.80, 0.55, 0.60, 0.65],
        }
    )


def test_recommend_one_standard_error_rule(crafted):
    # Rule (recommend's docstring): among k within one standard error of the best stability
    # (a one-standard-error rule, common practice in model selection; stability after Greene,
    # O'Callaghan & Cunningham 2014), keep k within one standard error of the best NPMI; with
    # no perplexities the best mean NPMI decides. By hand: stability keeps 5 and 10; NPMI
    # best 0.075 at k = 10 with s.e. sd(0.07, 0.08, 0.075)/sqrt(3) = 0.00289, so k = 5
    # (0.05) drops out and is the runner-up.
    rec = recommend(crafted)
    assert (rec.k, rec.seed) == (10, 1)
    assert rec.rule == (
        "k = 10: best mean NPMI among k with stability and NPMI within one standard error of "
        "the best; runner-up k = 5 has lower mean NPMI (0.05 vs 0.075, beyond one standard error)"
    )
    assert (rec.runner_up, rec.why_not_runner_up) == (
        5,
        "has lower mean NPMI (0.05 vs 0.075, beyond one standard error)",
    )
    assert str(rec) == rec.rule
    assert rec.table.loc[rec.table["chosen"], "k"].tolist() == [10]
    assert rec.table["candidate"].tolist() == [False, True, False]
    assert rec.table["step"].tolist() == [2, 4, 1]
    assert rec.table["stability_se"].iloc[0] == pytest.approx(0.02 / np.sqrt(3))
    assert any("best 0.8 at k = 5; kept 5, 10" in line for line in rec.details)
    assert any("Junk topics: not counted" in line for line in rec.details)


def test_recommend_drops_junk_then_takes_the_best_held_out_fit(crafted):
    # k = 15 is the most coherent but has a near-empty topic in 2 of its 3 fits: out at step 1.
    # k = 5 and 10 pass stability and NPMI once NPMI spreads; held-out perplexity decides.
    table = crafted.assign(
        npmi=[0.07, 0.08, 0.075, 0.07, 0.08, 0.074, 0.09, 0.085, 0.095],
        perplexity=[100.0, 101, 102, 90, 91, 92, 80, 81, 82],
        near_empty=[0, 0, 0, 0, 0, 0, 1, 1, 0],
        near_duplicate=[0, 0, 0, 0, 0, 1, 0, 0, 0],
        converged=[True] * 5 + [False] + [True] * 3,
    )
    rec = recommend(table)
    # Seed: seed 2 did not converge and has a near-duplicate pair; of seeds 0 and 1 seed 0
    # has the lower perplexity (90).
    assert (rec.k, rec.seed) == (10, 0)
    assert rec.rule == (
        "k = 10: lowest held-out perplexity among k with no junk topics in most fits, "
        "stability and NPMI within one standard error of the best; runner-up k = 5 has "
        "higher held-out perplexity (101 vs 91)"
    )
    assert rec.table["step"].tolist() == [3, 4, 0]
    assert rec.table["near_empty_mean"].tolist() == pytest.approx([0, 0, 2 / 3])
    assert rec.table["converged_share"].tolist() == pytest.approx([1, 2 / 3, 1])
    assert "Note: 1 of 9 fits did not converge: k = 10 seed 2" in rec.details
    # Junk everywhere: the k with the fewest junk topics per fit go on.
    everywhere = table.assign(near_duplicate=1)
    assert recommend(everywhere).k == 10
    assert "every k has junk topics in most fits" in recommend(everywhere).details[0]


def test_rarely_dominant_topics_are_junk_for_the_k_and_the_seed(crafted):
    # Rule (recommend's docstring, models/quality.py): a rarely dominant topic is junk like a
    # near-empty one. By hand: k = 10 has some in 2 of its 3 fits, so step 1 drops it; of k = 5
    # and 15, stability keeps 5 (0.8 vs 0.6, s.e. 0.0115), and 15, which got further than 10,
    # is the runner-up.
    table = crafted.assign(
        near_empty=0, near_duplicate=0, rarely_dominant=[0, 0, 0, 1, 2, 0, 0, 0, 0]
    )
    rec = recommend(table)
    assert (rec.k, rec.runner_up) == (5, 15)
    assert rec.table["step"].tolist() == [4, 0, 1]
    assert rec.table["rarely_dominant_mean"].tolist() == pytest.approx([0, 1, 0])
    assert "k = 10: 0, 1, 0" in rec.details[0]
    # One fit in three with a rarely dominant topic keeps k = 10, and the seed read is clean:
    # seed 1 has the best NPMI (0.08) but the junk topic, so seed 2 (0.075) is read.
    once = crafted.assign(near_empty=0, near_duplicate=0, rarely_dominant=[0] * 4 + [1] + [0] * 4)
    assert (recommend(once).k, recommend(once).seed) == (10, 2)


def test_recommend_says_what_is_missing(crafted):
    no_stability = recommend(crafted.drop(columns="stability"))
    assert (no_stability.k, no_stability.seed) == (15, 2)
    assert "(stability across seeds cannot be judged with fewer than 3 seeds)" not in (
        no_stability.rule
    )
    assert any("no fit has a finite stability" in line for line in no_stability.details)
    single_seed = recommend(crafted.assign(stability=np.nan))
    assert single_seed.k == 15
    no_npmi = recommend(crafted.assign(npmi=np.nan))
    assert no_npmi.k == 5
    assert any(line.startswith("3. NPMI: no kept k") for line in no_npmi.details)
    gaps = crafted.copy()
    gaps.loc[8, "npmi"] = np.inf
    assert "Note: 1 of 9 fits without a finite NPMI were left out" in recommend(gaps).details
    with pytest.raises(InputError, match="'npmi' or 'stability'"):
        recommend(crafted.drop(columns=["npmi", "stability"]))
    with pytest.raises(SettingsError, match="'scores'"):
        recommend(crafted.drop(columns="k"))


def test_recommend_with_fewer_than_three_seeds_says_stability_cannot_be_judged(crafted):
    # With seeds 0 and 1 only, each k has one pair of runs (Greene et al. 2014 average the
    # pairs), so both fits carry the same stability: there is no spread to judge it by, and
    # the rule says so instead of using a standard error of 0.
    two = crafted[crafted["seed"] < 2].copy()
    two["stability"] = two.groupby("k")["stability"].transform("mean")
    rec = recommend(two)
    assert rec.rule.endswith("(stability across seeds cannot be judged with fewer than 3 seeds)")
    assert "standard error (0)" not in rec.rule
    assert any("needs 3 or more seeds per k (this sweep has 2)" in d for d in rec.details)
    # NPMI alone then: means 0.055, 0.075, 0.0875, s.e. 0.0025 at k = 15.
    assert rec.k == 15


def test_old_names_of_n_terms_work_with_a_future_warning():
    texts = [list("abcab"), list("bcd")]
    topics = [["a", "b", "c"], ["b", "d", "c"]]
    calls = [
        ("CoherenceScorer(topn=...)", lambda **kw: CoherenceScorer(texts, **kw).n_terms),
        ("coherence(topn=...)", lambda **kw: coherence(texts, topics, **kw).tolist()),
        ("diversity(topn=...)", lambda **kw: diversity(topics, **kw)),
        ("average_jaccard(depth=...)", lambda **kw: average_jaccard(*topics, **kw)),
        ("match_topics(depth=...)", lambda **kw: match_topics(topics, topics, **kw)[1].tolist()),
        ("stability(depth=...)", lambda **kw: stability({0: topics, 1: topics}, **kw)[0]),
    ]
    for old, call in calls:
        name = old.split("(")[1].split("=")[0]
        with pytest.warns(FutureWarning, match=rf"{re.escape(old)} is deprecated.*n_terms=..."):
            before = call(**{name: 2})
        after = call(n_terms=2)
        if isinstance(after, pd.DataFrame):
            pd.testing.assert_frame_equal(before, after)
        else:
            assert before == after
