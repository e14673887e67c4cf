"""New documents in a chosen model's topics, without refitting: :func:`infer`.

A model chosen on one collection is applied to articles gathered later (a new panel wave, an
archive) so that they land in the same topics:

1. **Preparation with the training corpus's own rules.** The new texts go through the steps of
   :func:`tm_compare.text.prepared.prepare` with the settings stored in ``prepared.settings``:
   the boilerplate lines found in the training corpus (per outlet or source) are removed, the
   same tokenizer, stop words, length and number rules and stemming apply, and the phrases found
   in the training corpus are joined. Nothing is learnt from the new texts: a word outside the
   model's vocabulary is dropped and counted (per document, and in :attr:`NewDocuments.unknown_words`).
   For a corpus prepared elsewhere (``PreparedCorpus.from_texts``) the new texts are taken to be
   space-separated tokens.
2. **Near-duplicates of training documents** are flagged (same shingles and threshold as the
   preparation's near-duplicate step, :mod:`tm_compare.text._neardup`); nothing is merged.
3. **The engine's own inference** with the fit's topics and priors. Fits keep their topics as
   the posterior mean ``topic_term`` (lambda over its row sum); lambda is rebuilt as
   ``topic_term * eta / min(topic_term row)``: both engines' lambda is ``eta`` plus expected
   counts, which are near zero for a topic's rarest term (gensim's first online update has
   weight 1 and replaces the random start; scikit-learn's start decays with the learning rate).
   gensim then runs ``LdaModel.inference`` (its E-step, random start from ``random_state``);
   scikit-learn runs ``LatentDirichletAllocation.transform(normalize=False)`` (deterministic
   start). Fits made with ``Fit.from_arrays`` (engine "planted") use gensim's E-step with
   ``topic_term`` itself as the topics (Blei, Ng & Jordan 2003, section 5.1, beta fixed).
   Inferring the training documents gives back ``fit.doc_topic`` within 5e-3 per share on the
   demo corpus (tests/test_inference.py): the rebuilt lambda is close, not exact, and gensim's
   E-step stops at ``gamma_threshold`` from a random start.

Documents with no word of the model's vocabulary have no topic shares: they are left out of
:attr:`NewDocuments.frame`, listed in :attr:`NewDocuments.report`, and named in a warning;
if every document is so, :func:`infer` raises :class:`~tm_compare.errors.InputError`.

The new documents can join the comparisons as extra documents (an extra source):
:func:`with_new_documents` returns a fit and prepared corpus holding the training documents and
the new ones, which :class:`~tm_compare.results.ModelResults`, ``prevalence`` and
``prevalence_model`` take like any other.
"""

from __future__ import annotations

import warnings
from collections import Counter

import numpy as np
import pandas as pd
import scipy.sparse as sp

from .._validation import check_int, param_error
from ..errors import InputError
from . import _engines

__all__ = ["NewDocuments", "infer", "with_new_documents"]

#: Columns of :attr:`NewDocuments.report`.
REPORT_COLUMNS = (
    "id",
    "source",
    "n_tokens",
    "n_unknown",
    "unknown_share",
    "near_duplicate_of",
    "similarity",
    "status",
)
INFERRED, NO_WORDS = "inferred", "no known words"


class NewDocuments:
    """Topic shares of new documents under a fitted model (what :func:`infer` returns).

    Attributes
    ----------
    frame : DataFrame
        One row per document with topic shares: ``id``, ``source``, ``weight``, ``group``,
        ``date``, the corpus's other metadata columns, ``n_tokens`` (words of the model's
        vocabulary), ``n_unknown`` (words dropped), ``near_duplicate_of`` (id of a training
        document it nearly copies, or None), then ``topic_0`` ... ``topic_{k-1}`` (rows sum to 1).
        Join it to your own table on ``id``.
    report : DataFrame
        Every new document (inferred or not): ``id``, ``source``, ``n_tokens``, ``n_unknown``,
        ``unknown_share``, ``near_duplicate_of``, ``similarity``, ``status``
        (``"inferred"`` or ``"no known words"``).
    unknown_words : Series
        Dropped words (after preparation: stop words and punctuation are not counted) and how
        often they occur in the new documents, most frequent first.
    doc_topic, doc_dirichlet : ndarray
        The rows of ``frame``: shares and the variational Dirichlet parameters (gamma).
    texts : list of list of str
        The modelling tokens of each row of ``frame``.
    random_state : int
    """

    def __init__(
        self, frame, report, unknown_words, doc_topic, doc_dirichlet, texts, random_state, clean
    ):
        self.frame = frame
        self.report = report
        self.unknown_words = unknown_words
        self.doc_topic = doc_topic
        self.doc_dirichlet = doc_dirichlet
        self.texts = texts
        self.random_state = random_state
        self._clean = clean  # the texts after boilerplate removal, for snippets once joined

    def __len__(self) -> int:
        return len(self.frame)

    def __repr__(self) -> str:
        return f"<NewDocuments {self.summary()}>"

    def summary(self) -> str:
        """One line: documents inferred, left out, near-duplicates, words dropped."""
        r = self.report
        tokens, unknown = int(r["n_tokens"].sum()), int(r["n_unknown"].sum())
        share = unknown / (tokens + unknown) if tokens + unknown else 0.0
        return (
            f"{int((r['status'] == INFERRED).sum())} of {len(r)} documents inferred "
            f"({int((r['status'] == NO_WORDS).sum())} with no known words); "
            f"{int(r['near_duplicate_of'].notna().sum())} near-duplicates of training documents; "
            f"{unknown} of {tokens + unknown} words ({share:.1%}) outside the model's vocabulary"
        )


def infer(
    fit, prepared, corpus, *, random_state: int | None = None, near_duplicates: bool = True
) -> NewDocuments:
    """Topic shares of the documents of ``corpus`` under ``fit``, without refitting.

    Parameters
    ----------
    fit : Fit
    prepared : PreparedCorpus
        The prepared corpus ``fit`` was trained on: its settings, boilerplate lines, phrases and
        documents (for near-duplicates) are used.
    corpus : Corpus, DataFrame or path
        The new documents (a frame or file goes through ``Corpus.from_frame``/``Corpus.read``).
    random_state : int, optional
        Seed of gensim's random start of each document's inference (default: the fit's
        ``engine_seed``, the seed its own shares were inferred from).
        The same seed gives the same shares.
    near_duplicates : bool
        Flag copies of training documents (this tokenizes the training texts again: turn it
        off to save time on a large corpus; ``near_duplicate_of`` is then missing).

    Returns
    -------
    NewDocuments
    """
    from ..text.corpus import Corpus

    if fit.corpus_fingerprint != prepared.fingerprint or list(fit.doc_ids) != prepared.doc_ids:
        msg = (
            "infer needs the prepared corpus the fit was trained on (fit.corpus_fingerprint "
            f"{fit.corpus_fingerprint!r}, got a prepared corpus {prepared.fingerprint!r}). "
            "Load it with load_prepared(project, fit.corpus_fingerprint)."
        )
        raise InputError(msg)
    if not isinstance(corpus, Corpus):
        corpus = (
            Corpus.from_frame(corpus) if isinstance(corpus, pd.DataFrame) else Corpus.read(corpus)
        )
    if random_state is not None:  # numpy and gensim take seeds from 0 to 2**32 - 1
        check_int("infer", "random_state", random_state, minimum=0)
        if random_state > 2**32 - 1:
            raise param_error("infer", "random_state", random_state, "an integer below 2**32")
    seed = fit.engine_seed if random_state is None else int(random_state)
    frame = corpus.frame.reset_index(drop=True)
    texts, clean, unknown = _prepare_like(prepared, frame)
    index = {w: i for i, w in enumerate(fit.vocab)}
    known = [[t for t in doc if t in index] for doc in texts]
    n_unknown = np.array([len(a) - len(b) for a, b in zip(texts, known, strict=True)])
    n_tokens = np.array([len(b) for b in known])
    if near_duplicates:
        dup_of, similarity = _near_copies(prepared, clean)
    else:
        dup_of, similarity = np.full(len(clean), None, dtype=object), np.full(len(clean), np.nan)
    ok = n_tokens > 0
    report = pd.DataFrame(
        {
            "id": frame["id"].astype(str).to_numpy(),
            "source": frame["source"].astype(str).to_numpy(),
            "n_tokens": n_tokens,
            "n_unknown": n_unknown,
            "unknown_share": n_unknown / np.maximum(n_tokens + n_unknown, 1),
            "near_duplicate_of": dup_of,
            "similarity": similarity,
            "status": np.where(ok, INFERRED, NO_WORDS),
        }
    )
    words = pd.Series(unknown, dtype="int64").sort_values(ascending=False, kind="stable")
    if not ok.any():
        msg = (
            f"None of the {len(frame)} new documents holds a word of the model's vocabulary "
            f"once prepared as the training corpus was (first words dropped: "
            f"{', '.join(words.index[:5]) or 'none: the texts are empty or only stop words'}). "
            "Check that the file holds the article texts in its text column and that they are "
            "in the language of the training corpus."
        )
        raise InputError(msg)
    if not ok.all():
        ids = report["id"][~ok].tolist()
        warnings.warn(
            f"{len(ids)} new document(s) hold no word of the model's vocabulary and get no topic "
            f"shares (ids: {', '.join(ids[:5])}{' ...' if len(ids) > 5 else ''}); they are "
            "listed in .report with status 'no known words'.",
            UserWarning,
            stacklevel=2,
        )
    rows = np.flatnonzero(ok)
    matrix = _count_matrix([known[i] for i in rows], index)
    gamma = engine_gamma(fit, matrix, seed)
    shares = gamma / gamma.sum(axis=1, keepdims=True)
    meta = frame.iloc[rows].drop(columns=["text"]).reset_index(drop=True)
    meta["id"] = meta["id"].astype(str)
    meta["n_tokens"] = n_tokens[rows]
    meta["n_unknown"] = n_unknown[rows]
    meta["near_duplicate_of"] = dup_of[rows]
    topics = pd.DataFrame(shares, columns=[f"topic_{t}" for t in range(fit.k)])
    out = pd.concat([meta, topics], axis=1)
    kept_texts = [known[i] for i in rows]
    return NewDocuments(
        out, report, words, shares, gamma, kept_texts, seed, [clean[i] for i in rows]
    )


def engine_gamma(fit, matrix: sp.csr_matrix, random_state: int) -> np.ndarray:
    """Variational Dirichlet parameters of the rows of ``matrix`` (documents x ``fit.vocab``)
    by the fit's engine's own E-step with the fit's topics and priors (see module notes)."""
    from threadpoolctl import threadpool_limits

    k = fit.k
    settings = {**_engines.DEFAULT_SETTINGS, **fit.settings}
    alpha = _engines.prior(settings["alpha"], k)
    eta = _engines.prior(settings["eta"], k)
    topic_term = np.asarray(fit.topic_term, dtype=np.float64)
    if fit.engine in _engines.ENGINES:
        lam = topic_term * (eta / topic_term.min(axis=1))[:, None]
    else:
        lam = None  # planted topics: a point estimate, no posterior to rebuild
    with threadpool_limits(limits=1):
        if fit.engine == "sklearn":
            return _sklearn_gamma(matrix, lam, alpha, eta, settings, random_state)
        return _gensim_gamma(matrix, fit.vocab, topic_term, lam, alpha, eta, settings, random_state)


def _gensim_gamma(matrix, vocab, topic_term, lam, alpha, eta, s, random_state):
    from gensim.models import LdaModel

    model = LdaModel(
        id2word=dict(enumerate(vocab)),
        num_topics=len(topic_term),
        alpha=alpha,
        eta=eta,
        iterations=s["iterations"],
        gamma_threshold=s["gamma_threshold"],
        random_state=random_state,
        dtype=np.float64,
    )
    if lam is None:
        model.expElogbeta = topic_term.copy()
    else:
        model.state.sstats = lam - eta
        model.sync_state()
    stream = _engines.RowStream(matrix, np.arange(matrix.shape[0]))
    docs = list(stream)
    size = _engines.resolve_chunksize(s["chunksize"], len(docs))  # "auto" since fits converge
    return np.concatenate(
        [model.inference(docs[start : start + size])[0] for start in range(0, len(docs), size)]
    )


def _sklearn_gamma(matrix, lam, alpha, eta, s, random_state):
    from sklearn.decomposition import LatentDirichletAllocation
    from sklearn.decomposition._online_lda_fast import _dirichlet_expectation_2d

    lda = LatentDirichletAllocation(
        n_components=len(lam),
        doc_topic_prior=alpha,
        topic_word_prior=eta,
        max_doc_update_iter=s["iterations"],
        mean_change_tol=s["gamma_threshold"],
        n_jobs=1,
        random_state=random_state,
    )
    # The fitted state transform() reads (scikit-learn's _lda.py: _e_step, _check_non_neg_array).
    lda.components_ = lam
    lda.exp_dirichlet_component_ = np.exp(_dirichlet_expectation_2d(lam))
    lda.doc_topic_prior_, lda.topic_word_prior_ = alpha, eta
    lda.n_features_in_ = lam.shape[1]
    return lda.transform(matrix.astype(np.float64), normalize=False)


def _count_matrix(docs: list[list[str]], index: dict[str, int]) -> sp.csr_matrix:
    indptr, ids, counts = [0], [], []
    for doc in docs:
        c = Counter(index[t] for t in doc)
        keys = sorted(c)
        ids.extend(keys)
        counts.extend(c[i] for i in keys)
        indptr.append(len(ids))
    return sp.csr_matrix(
        (np.array(counts, dtype=np.float64), np.array(ids, dtype=np.int64), np.array(indptr)),
        shape=(len(docs), len(index)),
    )


# --- preparation with the training corpus's rules ---------------------------------------------


def _prepare_like(prepared, frame: pd.DataFrame):
    """Modelling tokens (before the vocabulary), cleaned texts and unknown-word counts."""
    from ..text import _tokens as tok
    from ..text._boilerplate import BoilerplateStripper, _key
    from ..text._dedupe import labels as _labels
    from ..text._settings import DEFAULTS
    from ..text._settings import stop_set as _stop_set

    raw = frame["text"].fillna("").astype(str).tolist()
    if prepared.settings.get("tokens") == "given":  # PreparedCorpus.from_texts: tokens given
        texts = [t.split() for t in raw]
        vocab = set(prepared.dictionary.token2id)
        return texts, raw, Counter(t for doc in texts for t in doc if t not in vocab)
    s = {**DEFAULTS, **prepared.settings}
    table = prepared.boilerplate
    clean = raw
    if s["boilerplate"] and len(table):
        by = str(table["by"].iloc[0])
        found: dict[str, set[int]] = {}
        for group, line in zip(table["group"], table["line"], strict=True):
            found.setdefault(str(group), set()).add(hash(_key(str(line))))
        groups = _labels(frame[by]) if by in frame.columns else [""] * len(frame)
        strip = BoilerplateStripper(found)
        clean = [strip(t, g) for t, g in zip(raw, groups, strict=True)]
    index = tok.TokenIndex()
    docs = [index.encode(tok.tokenize(t)) for t in clean]
    stop = _stop_set(s)
    from gensim.models.phrases import ENGLISH_CONNECTOR_WORDS

    connectors = frozenset(ENGLISH_CONNECTOR_WORDS & stop)
    stem = None
    if s["stem"] == "snowball":
        import snowballstemmer

        stem = snowballstemmer.stemmer("english").stemWord
    forms, kinds = tok.classify(
        index.strings,
        stop_words=stop,
        connectors=connectors,
        drop_numbers=s["drop_numbers"],
        min_length=s["min_token_length"],
        max_length=s["max_token_length"],
        stem=stem,
    )
    models = _phrase_models(prepared.phrases, s, connectors)
    texts = [tok.apply_phrases(d, forms, kinds, models, connectors) for d in docs]
    vocab = set(prepared.dictionary.token2id)
    unknown = Counter(t for doc in texts for t in doc if t not in vocab)
    return texts, clean, unknown


def _phrase_models(table: pd.DataFrame, s: dict, connectors: frozenset[str]):
    """The training corpus's phrases, once per n-gram order (``ngrams`` - 1 passes).

    The table holds every order's phrases together; each pass may join any of them, as the
    gensim model of that order would join the ones it found.
    """
    from gensim.models.phrases import Phrases

    from ..text._tokens import phrase_parts

    if s["ngrams"] < 2 or not len(table):
        return []
    frozen = Phrases(
        min_count=s["phrase_min_count"],
        threshold=float(s["phrase_threshold"]),
        scoring=s["phrase_scoring"],
        connector_words=connectors,
    ).freeze()
    frozen.phrasegrams = dict(zip(table["phrase"], table["score"].astype(float), strict=True))
    parts = phrase_parts(frozen.phrasegrams)
    return [(frozen, parts)] * (s["ngrams"] - 1)


def _near_copies(prepared, clean: list[str]) -> tuple[np.ndarray, np.ndarray]:
    """For each new text: the training document it nearly copies (most similar), and how much."""
    from ..text import _neardup
    from ..text._dedupe import EXACT_LIMIT
    from ..text._settings import DEFAULTS
    from ..text._tokens import TokenIndex, tokenize

    n_new = len(clean)
    dup = np.full(n_new, None, dtype=object)
    sim = np.full(n_new, np.nan)
    s = {**DEFAULTS, **prepared.settings}
    method = s["near_duplicates"]
    if method is None or prepared.settings.get("tokens") == "given" or not n_new:
        return dup, sim
    index = TokenIndex()
    old = [index.encode(tokenize(t)) for t in prepared.meta["text"].fillna("").astype(str)]
    new = [index.encode(tokenize(t)) for t in clean]
    docs = old + new
    if method == "auto":
        method = "exact" if len(docs) <= EXACT_LIMIT else "minhash"
    if method == "exact":
        pairs, score = _neardup.exact_pairs(docs, s["shingle_size"], s["near_duplicate_threshold"])
    else:
        pairs, score = _neardup.minhash_pairs(
            docs, s["shingle_size"], s["near_duplicate_threshold"], s["num_perm"], s["random_state"]
        )
    n_old = len(old)
    cross = (pairs[:, 0] < n_old) & (pairs[:, 1] >= n_old)
    ids = prepared.meta["id"].astype(str).to_numpy()
    for (i, j), value in zip(pairs[cross].tolist(), score[cross].tolist(), strict=True):
        row = j - n_old
        if not value <= sim[row]:  # nan (none yet) or a closer copy
            dup[row], sim[row] = ids[i], value
    return dup, sim


# --- joining comparisons ----------------------------------------------------------------------


def with_new_documents(fit, prepared, new: NewDocuments, *, source: str | None = None):
    """A fit and prepared corpus holding the training documents and the new ones.

    The new documents keep their own sources unless ``source`` names one for all of them (e.g.
    ``"archive"``), are marked ``heldout`` (not trained on), and carry their metadata; the topics
    are the fit's. Pass the pair to ``ModelResults``, ``prevalence`` or ``prevalence_model`` to
    compare the new documents with the training sources. Ids must differ from the training ids.

    Returns
    -------
    (Fit, PreparedCorpus)
    """
    from ..text.prepared import PreparedCorpus

    meta_new = new.frame.drop(columns=[c for c in new.frame if c.startswith("topic_")])
    clash = sorted(set(meta_new["id"]) & set(prepared.doc_ids))
    if clash:
        msg = (
            f"{len(clash)} new document id(s) are also training document ids (first: "
            f"{clash[0]!r}); with_new_documents needs distinct ids. Give the new documents "
            "other ids (e.g. a suffix) before infer."
        )
        raise InputError(msg)
    if source is not None:
        meta_new = meta_new.assign(source=str(source))
    n = len(meta_new)
    meta_new = meta_new.assign(
        text=new._clean,
        duplicate_ids=[[] for _ in range(n)],
        cross_source_duplicate=False,
        copy_group=-1,
    )
    meta = pd.concat([prepared.meta, meta_new], ignore_index=True)
    meta["weight"] = meta["weight"].fillna(1.0)
    combined = PreparedCorpus.from_texts(
        list(prepared.texts) + list(new.texts), meta, vocab=list(fit.vocab)
    )
    doc_topic = np.vstack([np.asarray(fit.doc_topic, float), new.doc_topic])
    dirichlet = None
    if fit.doc_dirichlet is not None:
        dirichlet = np.vstack([np.asarray(fit.doc_dirichlet, float), new.doc_dirichlet])
    joined = fit.replace(
        doc_ids=combined.doc_ids,
        doc_dirichlet=dirichlet,
        heldout=np.r_[np.asarray(fit.heldout, bool), np.ones(len(new), bool)],
        corpus_fingerprint=combined.fingerprint,
        doc_topic=doc_topic,
    )
    return joined, combined
