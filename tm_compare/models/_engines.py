"""LDA engines behind :class:`tm_compare.models.fits.Fit`: compiled, gensim and scikit-learn.

All three engines fit online variational Bayes LDA (Hoffman, Blei & Bach 2010,
"Online learning for latent Dirichlet allocation") on the training rows of a
document-term count matrix and give back the same normalised outputs:

- ``topic_term``: the variational topic-word parameters (lambda) scaled so
  each row sums to 1, i.e. the posterior mean of each topic's word
  distribution;
- ``gamma``: the variational Dirichlet parameters of every document (training
  and held-out), inferred with the final topics;
- ``word_bound``: the engine's own per-word variational lower bound on the
  log likelihood of the held-out documents, natural log, with the
  document-level part scaled to the size of the training corpus (the
  engines' evaluation convention: gensim's ``log_perplexity(chunk,
  total_docs=N)`` as its training loop calls it, scikit-learn's
  ``perplexity(X, sub_sampling=True)`` with ``total_samples=N``). The scaling
  spreads the topic-level Dirichlet terms of the bound over a training
  corpus' worth of words instead of over the few held-out ones.

"compiled" (the default, :mod:`tm_compare.models._vb`) is gensim's algorithm in numba
kernels that read the CSR matrix directly: the same random draws in the same order, so the
same results as the "gensim" engine up to rounding (tested to 1e-8), several times faster.

Fit settings use gensim's names; scikit-learn receives the same values under
its own names (``passes`` -> ``max_iter``, ``iterations`` ->
``max_doc_update_iter``, ``chunksize`` -> ``batch_size``, ``decay`` ->
``learning_decay``, ``offset`` -> ``learning_offset``, ``gamma_threshold`` ->
``mean_change_tol``) so both run the same algorithm with the same schedule.

Passes and when to stop
-----------------------
The engines run one pass over the training documents at a time (gensim
``LdaModel.update`` with the learning-rate offset moved on by one per pass and
documents counted towards the rate in the first pass only, which is exactly
``LdaModel(passes=n)``; scikit-learn ``partial_fit``, exactly
``fit(max_iter=n)``). After each pass the *change* of the topics is measured: the
total-variation distance between each topic's word distribution before and after
the pass, averaged over topics (0 = unchanged, 1 = disjoint). A fit has
*converged* when the change stays below ``tol`` for two passes in a row; it then
stops, and otherwise stops after ``passes`` passes (the cap) and is marked
unconverged. ``tol=0`` runs all ``passes`` passes, as fixed settings did before, and
judges convergence with the default tolerance.

``chunksize="auto"`` (the default) makes ten online updates per pass: the
training documents split into ten chunks, at most 2000 documents each (gensim's
default chunk). A fixed chunk of 2000 gives a corpus of 1,800 documents one
update per pass, whose topics are still moving after ten passes.
"""

from __future__ import annotations

import dataclasses
from importlib import metadata

import numpy as np
import scipy.sparse as sp

from ..options import choices, default

ENGINES = choices("engine")
#: Fit settings, with gensim's names (``tol`` is ours); their defaults (in
#: :mod:`tm_compare.options`) are gensim's except ``passes`` (a cap, 20), ``chunksize``
#: ("auto") and ``tol``: see "Passes and when to stop" above.
SETTINGS = (
    "passes",
    "iterations",
    "chunksize",
    "alpha",
    "eta",
    "decay",
    "offset",
    "gamma_threshold",
    "tol",
)
DEFAULT_SETTINGS = {name: default(name) for name in SETTINGS}


@dataclasses.dataclass
class EngineResult:
    topic_term: np.ndarray  # k x V, rows sum to 1
    gamma: np.ndarray  # D x k variational Dirichlet parameters
    word_bound: float  # per-word natural-log bound on the held-out documents (nan if none)
    version: str
    passes_used: int
    converged: bool
    last_change: float  # topic change of the last pass (nan after a single pass)


AUTO_UPDATES = 10  # online updates per pass with chunksize="auto"
MAX_CHUNK = 2000  # gensim's default chunksize: the largest chunk "auto" makes
STABLE_PASSES = 2  # passes in a row with a change below tol before a fit stops


def resolve_chunksize(value, n_train: int) -> int:
    """Documents per online update: ``value``, or for ``"auto"`` a tenth of the training
    documents (rounded up), at most 2000."""
    if value == "auto":
        return max(1, min(MAX_CHUNK, -(-n_train // AUTO_UPDATES)))
    return int(value)


def topic_change(before: np.ndarray, after: np.ndarray) -> float:
    """Mean total-variation distance between matching rows of two topic-word matrices."""
    a = before / before.sum(axis=1, keepdims=True)
    b = after / after.sum(axis=1, keepdims=True)
    return float(0.5 * np.abs(a - b).sum(axis=1).mean())


class Stopper:
    """Counts passes and says when to stop (see module notes).

    With ``tol=0`` every pass runs, and ``converged`` is judged with the default tolerance.
    """

    def __init__(self, passes: int, tol: float):
        self.passes, self.tol = passes, tol
        self.judge = tol if tol > 0 else default("tol")
        self.done, self.calm, self.change, self.before = 0, 0, np.nan, None

    def after_pass(self, topics: np.ndarray) -> bool:
        """Record a pass that left ``topics``; True when the fit should stop."""
        self.done += 1
        if self.before is not None:
            self.change = topic_change(self.before, topics)
            self.calm = self.calm + 1 if self.change < self.judge else 0
        self.before = np.array(topics, dtype=np.float64)
        return (self.tol > 0 and self.converged) or self.done >= self.passes

    @property
    def converged(self) -> bool:
        return self.calm >= STABLE_PASSES


def engine_version(engine: str) -> str:
    """The version of the code that ran the fit: the library, or tm_compare for "compiled"."""
    return metadata.version(
        {"sklearn": "scikit-learn", "compiled": "tm_compare"}.get(engine, engine)
    )


def prior(value, k: int) -> float:
    """A symmetric Dirichlet prior: ``"symmetric"`` means 1/k (both engines' default)."""
    return 1.0 / k if value == "symmetric" else float(value)


class RowStream:
    """Rows of a CSR matrix as gensim bag-of-words lists, built one at a time.

    Keeps memory flat: the matrix (possibly memory-mapped) is the only copy.
    """

    def __init__(self, matrix: sp.csr_matrix, rows: np.ndarray):
        self.matrix = matrix
        self.rows = rows

    def __len__(self) -> int:
        return len(self.rows)

    def __iter__(self):
        indptr, indices, data = self.matrix.indptr, self.matrix.indices, self.matrix.data
        for r in self.rows:
            s, e = indptr[r], indptr[r + 1]
            yield list(zip(indices[s:e].tolist(), data[s:e].tolist(), strict=True))


def run(
    engine: str,
    matrix: sp.csr_matrix,
    heldout: np.ndarray,
    k: int,
    random_state: int,
    settings: dict,
    vocab: list[str],
    start=None,
) -> EngineResult:
    """Fit one LDA model on the rows of ``matrix`` not marked ``heldout``; ``start``: a
    :func:`probe` of this very fit (same data, k, ``random_state`` and settings) to continue
    from, which gives the same fit as none."""
    fitter = {"compiled": _compiled, "gensim": _gensim, "sklearn": _sklearn}[engine]
    train = np.flatnonzero(~heldout)
    held = np.flatnonzero(heldout)
    s = _resolved(settings, len(train))
    stopper = Stopper(s["passes"], s["tol"])
    extra = {} if start is None else {"model": start}
    topic_term, gamma, word_bound = fitter(
        matrix, train, held, k, random_state, s, vocab, stopper, **extra
    )
    topic_term = np.asarray(topic_term, dtype=np.float64)
    topic_term /= topic_term.sum(axis=1, keepdims=True)
    return EngineResult(
        topic_term,
        np.asarray(gamma, dtype=np.float64),
        float(word_bound),
        engine_version(engine),
        stopper.done,
        stopper.converged,
        stopper.change,
    )


def _resolved(settings: dict, n_train: int) -> dict:
    s = {**DEFAULT_SETTINGS, **settings}
    s["chunksize"] = resolve_chunksize(s["chunksize"], n_train)
    return s


def can_probe(engine: str, settings: dict, n_train: int, updates: int) -> bool:
    """Whether :func:`probe` serves: the compiled or gensim engine, more than ``updates``
    chunks a pass."""
    size = resolve_chunksize({**DEFAULT_SETTINGS, **settings}["chunksize"], n_train)
    return engine in ("compiled", "gensim") and updates * size < n_train


def probe(engine, matrix, heldout, k: int, random_state: int, settings: dict, vocab, updates):
    """The fit from ``random_state`` stopped after ``updates`` online updates and the E-step
    of its next chunk: (state, that chunk's rows, their gamma from that E-step, lambda).
    The compiled engine's state continues with ``run(..., start=state)`` (see
    :func:`tm_compare.models._vb.probe`); gensim's is None (its probe draws the same numbers,
    so both engines rank starts alike)."""
    train = np.flatnonzero(~heldout)
    s = _resolved(settings, len(train))
    alpha, eta = prior(s["alpha"], k), prior(s["eta"], k)
    if engine == "compiled":
        from . import _vb

        state, rows, gamma = _vb.probe(matrix, train, k, random_state, s, alpha, eta, updates)
        return state, rows, gamma, state.lam
    model = _gensim_model(k, random_state, s, vocab)
    size = s["chunksize"]
    # The fit's first updates: the statistics scaled to all training documents, as in the fit
    # (update() adds the documents it is given to numdocs).
    model.state.numdocs = len(train) - updates * size
    model.update(RowStream(matrix, train[: updates * size]), passes=1, eval_every=None)
    rows = train[updates * size : (updates + 1) * size]
    gamma = model.inference(list(RowStream(matrix, rows)))[0]  # the next E-step's draws
    return None, rows, gamma, model.state.get_lambda()


def _compiled(matrix, train, held, k, random_state, s, vocab, stopper, model=None):
    from . import _vb

    alpha, eta = prior(s["alpha"], k), prior(s["eta"], k)
    return _vb.fit(matrix, train, held, k, random_state, s, alpha, eta, stopper, model)


def _gensim_model(k, random_state, s, vocab):
    from gensim.models import LdaModel

    class OnePassAtATime(LdaModel):
        """gensim's own pass loop counts the documents once: towards the learning rate in the
        first pass only (``do_mstep(..., extra_pass=pass_ > 0)``) and in ``state.numdocs``
        (the size the topic statistics are scaled to) once per ``update`` call; so does
        this one."""

        later_pass = False

        def do_mstep(self, rho, other, extra_pass=False):
            return super().do_mstep(rho, other, extra_pass or self.later_pass)

    return OnePassAtATime(
        id2word=dict(enumerate(vocab)),
        num_topics=k,
        chunksize=s["chunksize"],
        passes=1,
        iterations=s["iterations"],
        alpha=prior(s["alpha"], k),
        eta=prior(s["eta"], k),
        decay=s["decay"],
        offset=s["offset"],
        gamma_threshold=s["gamma_threshold"],
        eval_every=None,
        random_state=random_state,
        dtype=np.float64,
    )


def _gensim(matrix, train, held, k, random_state, s, vocab, stopper):
    model = _gensim_model(k, random_state, s, vocab)
    stream = RowStream(matrix, train)
    while True:
        # gensim's own pass loop raises the offset by one per pass; so does this one.
        if model.later_pass:
            model.state.numdocs -= len(stream)  # update() adds them again
        model.update(stream, offset=s["offset"] + stopper.done, passes=1, eval_every=None)
        model.later_pass = True
        if stopper.after_pass(model.state.get_lambda()):
            break
    # Chunk by chunk, so only one chunk of documents is ever held as Python lists.
    n_docs, size = matrix.shape[0], s["chunksize"]
    gamma = np.concatenate(
        [
            model.inference(list(RowStream(matrix, np.arange(start, min(start + size, n_docs)))))[0]
            for start in range(0, n_docs, size)
        ]
    )
    word_bound = np.nan
    if len(held) and matrix[held].sum() > 0:
        # log_perplexity(chunk, total_docs) without its fresh random inference: bound() is given
        # the gamma inferred above, each as a 1 x k row as inference([doc]) returns it.
        ratio = len(train) / len(held)
        bound = model.bound(
            RowStream(matrix, held), gamma=gamma[held][:, None, :], subsample_ratio=ratio
        )
        word_bound = bound / (ratio * matrix[held].sum())
    return model.get_topics(), gamma, word_bound


def _sklearn(matrix, train, held, k, random_state, s, vocab, stopper):
    from sklearn.decomposition import LatentDirichletAllocation

    lda = LatentDirichletAllocation(
        n_components=k,
        doc_topic_prior=prior(s["alpha"], k),
        topic_word_prior=prior(s["eta"], k),
        learning_method="online",
        learning_decay=s["decay"],
        learning_offset=s["offset"],
        max_iter=s["passes"],
        batch_size=s["chunksize"],
        total_samples=len(train),
        max_doc_update_iter=s["iterations"],
        mean_change_tol=s["gamma_threshold"],
        evaluate_every=-1,
        n_jobs=1,
        random_state=random_state,
    )
    x = matrix.astype(np.float64)
    # partial_fit once per pass is fit(max_iter=passes) pass by pass.
    while not stopper.after_pass(lda.partial_fit(x[train]).components_):
        pass
    # transform(normalize=False) is the E-step's gamma: the variational Dirichlet parameters.
    gamma = lda.transform(x, normalize=False)
    word_bound = np.nan
    if len(held) and x[held].sum() > 0:
        word_bound = -np.log(lda.perplexity(x[held], sub_sampling=True))
    return lda.components_, gamma, word_bound
