"""Scores for choosing among fitted topic models: coherence, stability, diversity.

- Coherence (:class:`CoherenceScorer`, :func:`coherence`): NPMI (Bouma 2009;
  Aletras & Stevenson 2013), C_V (Röder, Both & Hinneburg 2015), UCI (PMI;
  Newman et al. 2010) and UMass (Mimno et al. 2011), per topic, equal to
  gensim's ``CoherenceModel(...).get_coherence_per_topic()`` (run with
  ``processes=1``). NPMI is the default: the authors of C_V have since cautioned
  against relying on C_V alone (it can rate sets of unrelated words highly), while
  NPMI over a 10-token window tracks human judgements of topics well.
- Stability across seeds (:func:`stability`): topics of two runs matched
  one-to-one by the Hungarian method and scored by average Jaccard over top-term
  prefixes (Greene, O'Callaghan & Cunningham 2014).
- Diversity (:func:`diversity`): share of unique words among all topics' top 25
  (Dieng, Ruiz & Blei 2020).

How many top terms of a topic count is ``n_terms`` everywhere (formerly ``topn`` in coherence
and diversity, ``depth`` in stability, where Greene et al. call it the depth ``t``).
The choice of k from these scores is :mod:`tm_compare.models.choice`.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from itertools import combinations

import numpy as np
import pandas as pd
from scipy.optimize import linear_sum_assignment

from .._deprecation import renamed_attribute, renamed_parameters
from .._validation import check_choice, param_error
from ..errors import InputError
from ..options import choices, default
from . import _cooccurrence

MEASURES = choices("measure")
#: How each coherence measure is named in rules, tables and views.
MEASURE_NAMES = {"npmi": "NPMI", "c_v": "C_V", "uci": "UCI (PMI)", "umass": "UMass"}
DIVERSITY_N_TERMS = 25  # Dieng, Ruiz & Blei (2020) measure diversity on each topic's top 25 words
# gensim's names, accepted as aliases.
_ALIASES = {"c_npmi": "npmi", "c_uci": "uci", "u_mass": "umass"}
# gensim's default windows (SLIDING_WINDOW_SIZES); None = whole documents.
DEFAULT_WINDOWS = {"npmi": 10, "uci": 10, "c_v": 110, "umass": None}
EPSILON = 1e-12  # gensim's direct_confirmation_measure.EPSILON, added to joint probabilities only
_SCHEMES = ("gensim", "boolean")


class CoherenceScorer:
    """Coherence of the topics of many models from one pass over reference texts.

    Parameters
    ----------
    texts : sequence of lists of str
        Reference texts: the training texts, a held-out part, or an external corpus.
    dictionary : gensim Dictionary or collection of str, optional
        Words that may be scored (the model's vocabulary). Topic words outside it are
        dropped before taking the top ``n_terms``, as gensim does. Default: the words of
        ``texts``. A word in the dictionary that never occurs in ``texts`` is kept
        with zero counts, giving UMass 0 for its pairs and infinite or NaN NPMI, UCI
        and C_V, as gensim does.
    measures : sequence of {"npmi", "c_v", "uci", "umass"}
        gensim's names ("c_npmi", "c_uci", "u_mass") are accepted too.
    n_terms : int
        Number of top words per topic (formerly ``topn``).
    window_sizes : dict, optional
        Sliding window per measure; defaults to gensim's (NPMI and UCI 10, C_V 110).
        UMass counts whole documents.
    window_counting : {"gensim", "boolean"}
        "gensim" reproduces gensim's sliding window, which forgets a word when one
        copy leaves the window even if another copy is still inside; "boolean" is
        the textbook window (a word is present if any copy is inside). Only
        "gensim" equals gensim's values.

    Attributes
    ----------
    words_ : list of str
        Union of all models' top words, as counted.
    counts_ : dict
        Window size (None = documents) -> :class:`tm_compare._cooccurrence.Counts`.

    Notes
    -----
    Definitions follow gensim 4's pipelines: UMass pairs each word with the
    higher-ranked ones and counts documents; NPMI and UCI average all ordered pairs;
    C_V takes the cosine between each word's NPMI vector over the topic (including
    npmi(w, w)) and the topic's summed vector. Natural logs; epsilon 1e-12 is added
    to joint probabilities only; UMass is 0 when the conditioning word never occurs.
    Values equal gensim's run with ``processes=1``; gensim's multi-process counter
    counts ``n - w + 1`` windows even for texts shorter than the window. gensim
    truncates topics to ``topn`` only when its first topic is longer than ``topn``;
    here every topic is truncated (the same unless the first topic has ``n_terms`` or
    fewer known words while another has more).
    Counts are exact for every model because a pair's counts do not depend on
    which other words are counted.
    """

    topn = renamed_attribute("topn", "n_terms")

    @renamed_parameters(topn="n_terms")
    def __init__(
        self,
        texts,
        dictionary=None,
        measures=MEASURES,
        n_terms: int = default("n_terms"),
        window_sizes: Mapping[str, int] | None = None,
        window_counting: str = "gensim",
    ):
        self.texts = texts
        self.dictionary = dictionary
        self.measures = measures
        self.n_terms = n_terms
        self.window_sizes = window_sizes
        self.window_counting = window_counting

    def fit(self, models_top_words):
        """Count word statistics once for the union of all models' top words.

        Parameters
        ----------
        models_top_words : list of lists of lists of str
            One entry per model, one word list per topic.
        """
        owner = "CoherenceScorer"
        measures = self._measures()
        windows = self._windows(measures)
        if (
            isinstance(self.n_terms, bool)
            or not isinstance(self.n_terms, int | np.integer)
            or self.n_terms < 1
        ):
            raise param_error(owner, "n_terms", self.n_terms, "an integer >= 1")
        check_choice(owner, "window_counting", self.window_counting, _SCHEMES)
        _check_models(models_top_words)
        if getattr(self, "_index_texts", None) is not self.texts:
            self._index = _cooccurrence.TokenIndex(self.texts)
            self._index_texts = self.texts
        vocab = self._index.vocab if self.dictionary is None else _vocabulary(self.dictionary)
        topics = [_keep(t, vocab, self.n_terms) for model in models_top_words for t in model]
        self.words_ = list(dict.fromkeys(w for t in topics for w in t))
        self._position = {w: i for i, w in enumerate(self.words_)}
        self._vocab = vocab
        word_ids = np.array([self._index.vocab.get(w, -1) for w in self.words_], dtype=np.int64)
        keys = _cooccurrence.pair_keys_of(
            (np.array([self._position[w] for w in t], dtype=np.int64) for t in topics),
            len(self.words_),
        )
        self.counts_ = {
            w: _cooccurrence.count(self._index, word_ids, keys, w, self.window_counting)
            for w in dict.fromkeys(windows.values())
        }
        self._measure_windows = windows
        return self

    def score(self, top_words) -> dict[str, np.ndarray]:
        """Per-topic coherence of one model, by array arithmetic on the counts from :meth:`fit`.

        Returns
        -------
        dict
            Measure name -> array with one value per topic. A topic with no word in
            the dictionary gets NaN (gensim raises instead); one with a single word
            gets NaN for NPMI, UCI and UMass (a mean over no pairs).
        """
        if not hasattr(self, "counts_"):
            msg = "CoherenceScorer.score was called before fit(). Call fit(models_top_words) first."
            raise InputError(msg)
        _check_topics(top_words, "CoherenceScorer.score", "top_words")
        topics = [_keep(t, self._vocab, self.n_terms) for t in top_words]
        unknown = sorted({w for t in topics for w in t} - self._position.keys())
        if unknown:
            raise param_error(
                "CoherenceScorer.score",
                "top_words",
                unknown[:5],
                "word lists whose words were passed to fit()",
                "Pass this model's top words to fit() along with the others.",
            )
        out = {m: np.full(len(topics), np.nan) for m in self._measure_windows}
        for size in sorted({len(t) for t in topics} - {0}):
            rows = [i for i, t in enumerate(topics) if len(t) == size]
            ids = np.array([[self._position[w] for w in topics[i]] for i in rows], dtype=np.int64)
            for measure, window in self._measure_windows.items():
                try:
                    out[measure][rows] = _CONFIRM[measure](ids, self.counts_[window])
                except KeyError:
                    raise param_error(
                        "CoherenceScorer.score",
                        "top_words",
                        "topics not seen by fit()",
                        "the topics of a model passed to fit()",
                        "Pass this model's top words to fit() along with the others.",
                    ) from None
        return out

    def _measures(self) -> list[str]:
        given = [self.measures] if isinstance(self.measures, str) else list(self.measures)
        names = [_ALIASES.get(m, m) for m in given]
        for m in names:
            check_choice("CoherenceScorer", "measures", m, MEASURES + tuple(_ALIASES))
        if not names:
            raise param_error(
                "CoherenceScorer", "measures", self.measures, f"a non-empty subset of {MEASURES}"
            )
        return list(dict.fromkeys(names))

    def _windows(self, measures) -> dict[str, int | None]:
        given = {_ALIASES.get(k, k): v for k, v in (self.window_sizes or {}).items()}
        accepted = "a dict mapping 'npmi', 'uci' or 'c_v' to an integer >= 1 (UMass counts whole documents)"
        for m, w in given.items():
            if (
                m not in ("npmi", "uci", "c_v")
                or isinstance(w, bool)
                or not isinstance(w, int | np.integer)
                or w < 1
            ):
                raise param_error("CoherenceScorer", "window_sizes", self.window_sizes, accepted)
        windows = {m: given.get(m, DEFAULT_WINDOWS[m]) for m in measures}
        return {m: None if w is None else int(w) for m, w in windows.items()}


@renamed_parameters(topn="n_terms")
def coherence(
    texts,
    top_words,
    measure=default("measure"),
    dictionary=None,
    n_terms=default("n_terms"),
    window_size=None,
) -> np.ndarray:
    """Per-topic coherence of one model (see :class:`CoherenceScorer`)."""
    windows = None if window_size is None else {measure: window_size}
    scorer = CoherenceScorer(
        texts, dictionary, measures=(measure,), n_terms=n_terms, window_sizes=windows
    )
    result = scorer.fit([top_words]).score(top_words)
    return next(iter(result.values()))


@renamed_parameters(depth="n_terms")
def average_jaccard(a, b, n_terms=None) -> float:
    """Average Jaccard index of two ranked word lists over their prefixes.

    ``AJ = (1/t) * sum_{d=1..t} |a[:d] & b[:d]| / |a[:d] | b[:d]|`` with the depth
    ``t = n_terms`` (default: the shorter list's length); Greene, O'Callaghan & Cunningham
    2014, eq. 1.
    """
    t = min(len(a), len(b)) if n_terms is None else n_terms
    if (
        isinstance(t, bool)
        or not isinstance(t, int | np.integer)
        or t < 1
        or t > min(len(a), len(b))
    ):
        raise param_error(
            "average_jaccard",
            "n_terms",
            n_terms,
            f"an integer from 1 to {min(len(a), len(b))} (the shorter list's length)",
        )
    total = 0.0
    for d in range(1, t + 1):
        x, y = set(a[:d]), set(b[:d])
        total += len(x & y) / len(x | y)
    return total / t


@renamed_parameters(depth="n_terms")
def match_topics(top_words_a, top_words_b, n_terms=default("n_terms")):
    """Match two runs' topics one-to-one, maximising average Jaccard (Hungarian method).

    ``n_terms`` (the depth of the average Jaccard) is capped at the length of the shortest
    word list.

    Returns
    -------
    pairs : numpy.ndarray, shape (min(k_a, k_b), 2)
        Topic indices ``(i, j)``, sorted by ``i``.
    scores : numpy.ndarray
        Average Jaccard of each matched pair.
    """
    depth = min(n_terms, *(len(t) for t in top_words_a), *(len(t) for t in top_words_b))
    sims = np.array([[average_jaccard(x, y, depth) for y in top_words_b] for x in top_words_a])
    rows, cols = linear_sum_assignment(sims, maximize=True)
    return np.column_stack([rows, cols]), sims[rows, cols]


@renamed_parameters(depth="n_terms")
def stability(top_words_by_seed: Mapping, n_terms=default("n_terms")):
    """Stability of one k across seeds (Greene, O'Callaghan & Cunningham 2014).

    Every pair of seeds is compared: topics matched one-to-one by average Jaccard
    over top-term prefixes of depth 1..``n_terms``, and the pair scored by the mean
    over matched topics.

    Returns
    -------
    per_fit : DataFrame [seed, stability]
        Mean agreement of each seed's run with every other seed's run.
    per_topic : DataFrame [seed, topic, stability]
        How reliably each topic reappears: mean over the other seeds of the average
        Jaccard of its matched topic.
    per_pair : DataFrame [seed_a, seed_b, stability]
        One row per pair of seeds. All stabilities are NaN with a single seed.
    """
    if not isinstance(top_words_by_seed, Mapping) or not top_words_by_seed:
        raise param_error(
            "stability",
            "top_words_by_seed",
            _short(top_words_by_seed),
            "a non-empty dict of seed -> list of topic word lists (one k)",
        )
    seeds = list(top_words_by_seed)
    topic_scores = {(s, i): [] for s in seeds for i in range(len(top_words_by_seed[s]))}
    pair_rows = []
    for sa, sb in combinations(seeds, 2):
        pairs, sims = match_topics(top_words_by_seed[sa], top_words_by_seed[sb], n_terms)
        pair_rows.append((sa, sb, float(sims.mean())))
        for (i, j), value in zip(pairs, sims, strict=True):
            topic_scores[(sa, int(i))].append(value)
            topic_scores[(sb, int(j))].append(value)
    per_pair = pd.DataFrame(pair_rows, columns=["seed_a", "seed_b", "stability"])
    per_pair["stability"] = per_pair["stability"].astype(float)
    per_fit = pd.DataFrame(
        {
            "seed": seeds,
            "stability": [
                np.mean([v for a, b, v in pair_rows if s in (a, b)]) if len(seeds) > 1 else np.nan
                for s in seeds
            ],
        }
    )
    per_topic = pd.DataFrame(
        [(s, i, np.mean(v) if v else np.nan) for (s, i), v in topic_scores.items()],
        columns=["seed", "topic", "stability"],
    )
    return per_fit, per_topic, per_pair


@renamed_parameters(topn="n_terms")
def diversity(top_words, n_terms=DIVERSITY_N_TERMS) -> float:
    """Share of unique words among all topics' top ``n_terms`` words (Dieng, Ruiz & Blei 2020).

    1 means no word is shared between topics. Topics with fewer than ``n_terms``
    words contribute the words they have.
    """
    kept = [list(t)[:n_terms] for t in top_words]
    total = sum(map(len, kept))
    if total == 0:
        raise param_error(
            "diversity", "top_words", _short(top_words), "a list of non-empty word lists"
        )
    return len({w for t in kept for w in t}) / total


# --- confirmation measures: ids is (topics, t) positions into the counted words ---


def _probabilities(ids, counts):
    n = float(counts.num_windows)
    joint = counts.joint(ids[:, :, None], ids[:, None, :]) / n
    single = counts.occurrences[ids] / n
    return single, joint


def _pmi_matrix(ids, counts, normalize):
    single, joint = _probabilities(ids, counts)
    with np.errstate(divide="ignore", invalid="ignore"):
        pmi = np.log((joint + EPSILON) / (single[:, :, None] * single[:, None, :]))
        return pmi / -np.log(joint + EPSILON) if normalize else pmi


def _mean_off_diagonal(values):
    t = values.shape[1]
    if t < 2:
        return np.full(len(values), np.nan)
    return values[:, ~np.eye(t, dtype=bool)].mean(axis=1)


def _npmi(ids, counts):
    return _mean_off_diagonal(_pmi_matrix(ids, counts, normalize=True))


def _uci(ids, counts):
    return _mean_off_diagonal(_pmi_matrix(ids, counts, normalize=False))


def _umass(ids, counts):
    # s_one_pre: each word conditioned on every higher-ranked word; 0 when the
    # conditioning word never occurs (gensim catches the division by zero).
    t = ids.shape[1]
    if t < 2:
        return np.full(len(ids), np.nan)
    later, earlier = np.tril_indices(t, -1)
    single, joint = _probabilities(ids, counts)
    cond = single[:, earlier]
    with np.errstate(divide="ignore", invalid="ignore"):
        values = np.log((joint[:, later, earlier] + EPSILON) / cond)
    return np.where(cond == 0, 0.0, values).mean(axis=1)


def _c_v(ids, counts):
    # s_one_set with indirect cosine: each word's NPMI vector over the topic's words
    # (npmi(w, w) included, gamma 1) against the sum of all of them. Repeated words
    # share one coordinate, as in gensim's context vectors.
    npmi = _pmi_matrix(ids, counts, normalize=True)
    t = ids.shape[1]
    first = (ids[:, :, None] == ids[:, None, :]).argmax(axis=1)  # coordinate of each word
    vectors = np.zeros_like(npmi)
    rows = np.arange(len(ids))[:, None, None]
    np.add.at(vectors, (rows, np.arange(t)[None, :, None], first[:, None, :]), npmi)
    whole = vectors.sum(axis=1)
    with np.errstate(divide="ignore", invalid="ignore"):
        cos = np.einsum("bij,bj->bi", vectors, whole) / (
            np.linalg.norm(vectors, axis=2) * np.linalg.norm(whole, axis=1)[:, None]
        )
    return cos.mean(axis=1)


_CONFIRM = {"npmi": _npmi, "uci": _uci, "umass": _umass, "c_v": _c_v}


def _vocabulary(dictionary):
    return dictionary.token2id if hasattr(dictionary, "token2id") else set(dictionary)


def _keep(topic, vocab, n_terms):
    """Topic words in the vocabulary, then the first ``n_terms`` (gensim's order of steps)."""
    return [w for w in topic if w in vocab][:n_terms]


def _is_list(value) -> bool:
    return isinstance(value, Sequence) and not isinstance(value, str)


def _check_topics(top_words, owner, name, accepted=None, fix="Pass e.g. fit.top_words(10)."):
    """Raise unless ``top_words`` is a non-empty list of word lists (one model)."""
    if not (_is_list(top_words) and top_words and all(_is_list(t) for t in top_words)):
        accepted = accepted or "a non-empty list (one per topic) of word lists"
        raise param_error(owner, name, _short(top_words), accepted, fix)


def _check_models(models_top_words):
    owner, fix = "CoherenceScorer.fit", "For one model pass [top_words]."
    accepted = "a non-empty list (one per model) of non-empty lists (one per topic) of word lists"
    if not (_is_list(models_top_words) and models_top_words):
        raise param_error(owner, "models_top_words", _short(models_top_words), accepted, fix)
    for i, model in enumerate(models_top_words):
        _check_topics(model, owner, f"models_top_words[{i}]", fix=fix)


def _short(value, limit=80):
    text = repr(value)
    return text if len(text) <= limit else text[:limit] + "..."
