"""One fitted LDA model, normalised across engines: :class:`Fit` and :func:`fit_lda`.

A fit is trained on the documents of a prepared corpus that are not held
out. The held-out share is drawn once per corpus with ``holdout_random_state``
(``numpy.random.default_rng(holdout_random_state)``), kept apart from the
engine's ``random_state`` so that every fit of a sweep, for every k and seed,
is judged on the same held-out documents and their perplexities are comparable.
Topic proportions are inferred for every document, held-out ones included, with
the final topics.

Held-out perplexity is per word with natural logarithms: ``exp(-b)``, where
``b`` is the engine's variational lower bound on the log likelihood of the
held-out documents per held-out token, with the document part scaled to the
training corpus' size as the engines do when they evaluate (details in
:mod:`tm_compare.models._engines`). gensim's ``LdaModel.log_perplexity(held,
total_docs=n_train)`` returns ``b`` (natural log, although its log message
calls ``2 ** -b`` the perplexity); scikit-learn's ``perplexity(held,
sub_sampling=True)`` returns ``exp(-b)``. A bound makes this an upper bound on
the true perplexity; compare it between fits of one engine.
"""

from __future__ import annotations

import dataclasses
import inspect
import json
import os
import time
import warnings
import zipfile
from pathlib import Path

import numpy as np
import scipy.sparse as sp

from .._atomic import atomic_path
from .._deprecation import renamed_attribute, renamed_parameters
from .._hashing import fingerprint as _fingerprint
from .._validation import check_choice, check_int, param_error
from ..errors import CorruptArtifactError, InputError
from ..options import default
from . import _engines, _starts

#: Fit settings: the engines' (gensim's names) and ``starts`` (see :mod:`._starts`).
SETTINGS = (*_engines.SETTINGS, "starts")
DEFAULT_SETTINGS = {**_engines.DEFAULT_SETTINGS, "starts": default("starts")}

FILE_FORMAT = "tm_compare fit"
FILE_VERSION = 1
# What a fit file records besides its arrays (and what Fit.load passes back to Fit).
_META = (
    "k",
    "random_state",
    "engine",
    "engine_version",
    "settings",
    "fit_seconds",
    "perplexity",
    "corpus_fingerprint",
    "vocab",
    "doc_ids",
)
# Recorded since fits stop on convergence; files written before have none of them.
_CONVERGENCE = ("passes_used", "converged", "last_change")
# The seed of the start that was fitted (models/_starts.py); files written before have none.
_START = "engine_seed"
# Saved files, fingerprints and sweep state keep the names of the first release, so that a
# fit keeps its fingerprint (labels are stored under it) and older versions read newer files.
_STORED_NAMES = {"random_state": "seed", "holdout_random_state": "holdout_seed", "n_terms": "topn"}


def stored(record: dict) -> dict:
    """``record`` with its keys under their stored names (see ``_STORED_NAMES``)."""
    return {_STORED_NAMES.get(key, key): value for key, value in record.items()}


def from_stored(record: dict) -> dict:
    """``record`` read from storage, with its keys under today's names."""
    names = {old: new for new, old in _STORED_NAMES.items()}
    return {names.get(key, key): value for key, value in record.items()}


class Fit:
    """One LDA model (Blei, Ng & Jordan 2003) fitted on a prepared corpus.

    Attributes
    ----------
    k, random_state, engine, engine_version, settings, fit_seconds
        What was fitted, how, and how long it took (training and inference).
        ``random_state`` seeds the engine; in a sweep it is the fit's seed.
    vocab : list of str
        Terms; the index is the term id of the prepared dictionary.
    doc_ids : list of str
        Every document of the prepared corpus, in its order (rows of ``doc_topic``).
    topic_term : ndarray (k, V)
        Topic-word distributions (posterior mean), rows sum to 1.
    doc_topic : ndarray (D, k)
        Topic proportions of every document, rows sum to 1.
    doc_dirichlet : ndarray (D, k) or None
        Variational Dirichlet parameters (gamma) of each document's topic
        proportions; ``doc_topic`` is gamma normalised. Both engines give them
        (gensim ``LdaModel.inference``, scikit-learn ``transform(normalize=False)``).
    heldout : ndarray of bool (D,)
        Documents left out of training.
    perplexity : float
        Held-out per-word perplexity, natural log (see module notes); nan if none held out.
    corpus_fingerprint : str
        Fingerprint of the prepared corpus the model was fitted on.
    passes_used : int or None
        Passes the engine made over the training documents.
    converged : bool or None
        Whether the topics settled (a pass moved them less than ``tol`` twice in a row,
        see :mod:`tm_compare.models._engines`) before the cap of ``passes``. None when not
        known: fits made elsewhere (:meth:`from_arrays`) or saved by an older version.
    last_change : float
        How much the last pass moved the topics (mean total-variation distance); nan
        when not known.
    engine_seed : int
        The engine seed of the start that was fitted (of the ``starts`` probed, see
        :mod:`tm_compare.models._starts`); ``random_state`` when only one start ran or when
        not known. Inference of new documents starts from it by default, as the fit's own
        shares did.
    """

    seed = renamed_attribute("seed", "random_state")

    @renamed_parameters(seed="random_state")
    def __init__(
        self,
        *,
        k,
        random_state,
        engine,
        engine_version,
        settings,
        fit_seconds,
        vocab,
        doc_ids,
        topic_term,
        doc_dirichlet,
        heldout,
        perplexity,
        corpus_fingerprint,
        doc_topic=None,
        passes_used=None,
        converged=None,
        last_change=None,
        engine_seed=None,
    ):
        self.k = int(k)
        self.random_state = int(random_state)
        self.engine = engine
        self.engine_version = engine_version
        self.settings = dict(settings)
        self.fit_seconds = float(fit_seconds)
        self.vocab = list(vocab)
        self.doc_ids = list(doc_ids)
        self.topic_term = topic_term
        self.doc_dirichlet = doc_dirichlet
        if doc_topic is None:
            doc_topic = doc_dirichlet / doc_dirichlet.sum(axis=1, keepdims=True)
        self.doc_topic = doc_topic
        self.heldout = np.asarray(heldout, dtype=bool)
        self.perplexity = float(perplexity)
        self.corpus_fingerprint = corpus_fingerprint
        self.passes_used = None if passes_used is None else int(passes_used)
        self.converged = None if converged is None else bool(converged)
        self.last_change = np.nan if last_change is None else float(last_change)
        self.engine_seed = self.random_state if engine_seed is None else int(engine_seed)
        self.fingerprint = _fingerprint(
            "fit",
            engine,
            self.k,
            self.random_state,
            stored(self.settings),
            corpus_fingerprint,
            self.heldout,
            self.topic_term,
        )

    def replace(self, **changes) -> Fit:
        """A new Fit with ``changes`` applied to this one's constructor arguments (every other
        argument, including any added later, is carried over)."""
        names = [n for n in inspect.signature(Fit.__init__).parameters if n != "self"]
        unknown = set(changes) - set(names)
        if unknown:
            raise TypeError(f"Fit.replace got unknown arguments {sorted(unknown)}")
        return Fit(**{n: getattr(self, n) for n in names} | changes)

    def __repr__(self) -> str:
        return (
            f"Fit(k={self.k}, random_state={self.random_state}, engine={self.engine!r}, "
            f"perplexity={self.perplexity:.1f}, fingerprint={self.fingerprint!r})"
        )

    @classmethod
    @renamed_parameters(seed="random_state")
    def from_arrays(
        cls,
        prepared,
        topic_term,
        doc_topic=None,
        *,
        doc_dirichlet=None,
        random_state=0,
        engine="planted",
    ) -> Fit:
        """A fit whose topics come from elsewhere: another program's, or planted for a test.

        ``vocab``, ``doc_ids`` and ``corpus_fingerprint`` are those of ``prepared``;
        nothing is held out, so ``perplexity`` is nan. Give ``doc_topic`` (D x k),
        ``doc_dirichlet`` (the gamma it normalises), or both.
        """
        dictionary = prepared.dictionary
        doc_topic, doc_dirichlet = (
            None if a is None else np.asarray(a, dtype=float) for a in (doc_topic, doc_dirichlet)
        )
        return cls(
            k=len(topic_term),
            random_state=random_state,
            engine=engine,
            engine_version="",
            settings={},
            fit_seconds=0.0,
            vocab=[dictionary[i] for i in range(len(dictionary))],
            doc_ids=prepared.doc_ids,
            topic_term=np.asarray(topic_term, dtype=float),
            doc_dirichlet=doc_dirichlet,
            heldout=np.zeros(len(prepared), dtype=bool),
            perplexity=np.nan,
            corpus_fingerprint=prepared.fingerprint,
            doc_topic=doc_topic,
        )

    def transform(self, corpus, prepared, **options):
        """Topic shares of new documents under this fit (:func:`tm_compare.models.inference.infer`)."""
        from .inference import infer

        return infer(self, prepared, corpus, **options)

    @renamed_parameters(n="n_terms")
    def top_words(self, n_terms: int = default("n_terms")) -> list[list[str]]:
        """The ``n_terms`` most probable words of each topic, most probable first (ties by term
        id)."""
        check_int("Fit.top_words", "n_terms", n_terms, minimum=1)
        order = np.argsort(-self.topic_term, axis=1, kind="stable")[:, :n_terms]
        return [[self.vocab[j] for j in row] for row in order]

    def save(self, path: str | os.PathLike) -> Path:
        """Write the fit to one file atomically (a crash leaves no half file)."""
        arrays = {"topic_term": self.topic_term, "heldout": self.heldout}
        arrays["doc_dirichlet" if self.doc_dirichlet is not None else "doc_topic"] = (
            self.doc_dirichlet if self.doc_dirichlet is not None else self.doc_topic
        )
        meta = stored({name: getattr(self, name) for name in _META})
        meta.update({name: getattr(self, name) for name in _CONVERGENCE})
        meta["last_change"] = None if np.isnan(self.last_change) else self.last_change
        meta[_START] = self.engine_seed
        meta.update(
            format=FILE_FORMAT,
            version=FILE_VERSION,
            settings=stored(self.settings),
            fingerprint=self.fingerprint,
        )
        meta_bytes = json.dumps(meta, sort_keys=True).encode("utf-8")
        arrays["meta"] = np.frombuffer(meta_bytes, dtype=np.uint8)
        checksum = _checksum(arrays)
        with atomic_path(path) as tmp:
            with open(tmp, "wb") as fh:
                np.savez(fh, checksum=np.frombuffer(checksum.encode(), dtype=np.uint8), **arrays)
        return Path(path)

    @classmethod
    def load(cls, path: str | os.PathLike) -> Fit:
        """Read a fit written by :meth:`save`; raise CorruptArtifactError if it fails its checksum."""
        path = Path(path)
        try:
            with np.load(path, allow_pickle=False) as npz:
                arrays = {name: npz[name] for name in npz.files}
            stored = arrays.pop("checksum").tobytes().decode()
            ok = stored == _checksum(arrays)
            meta = json.loads(arrays["meta"].tobytes()) if ok else {}
        except FileNotFoundError:
            raise
        except (OSError, ValueError, KeyError, EOFError, zipfile.BadZipFile, UnicodeError) as exc:
            msg = (
                f"The saved fit {str(path)!r} cannot be read ({type(exc).__name__}: {exc}); "
                "it is corrupt or truncated. Delete it, or rerun the sweep, which refits it."
            )
            raise CorruptArtifactError(msg) from exc
        if not ok or meta.get("format") != FILE_FORMAT:
            msg = (
                f"The saved fit {str(path)!r} fails its integrity check (its contents do not "
                "match the checksum written with it). Delete it, or rerun the sweep, which "
                "refits it."
            )
            raise CorruptArtifactError(msg)
        meta = from_stored(meta)
        meta["settings"] = from_stored(meta["settings"])
        return cls(
            **{name: meta[name] for name in _META},
            **{name: meta.get(name) for name in (*_CONVERGENCE, _START)},
            topic_term=arrays["topic_term"],
            doc_dirichlet=arrays.get("doc_dirichlet"),
            doc_topic=arrays.get("doc_topic"),
            heldout=arrays["heldout"],
        )


def _checksum(arrays: dict[str, np.ndarray]) -> str:
    return _fingerprint(
        *(part for name in sorted(arrays) for part in (name, arrays[name])), length=64
    )


@dataclasses.dataclass
class TrainingData:
    """A prepared corpus as a document-term count matrix, with its held-out mask.

    This is what fitting needs, in a form that is written once and read by every
    worker (memory-mapped on one machine, sent once to a Dask cluster).
    """

    matrix: sp.csr_matrix
    vocab: list[str]
    doc_ids: list[str]
    heldout: np.ndarray
    corpus_fingerprint: str

    @classmethod
    def from_prepared(
        cls,
        prepared,
        holdout: float = default("holdout"),
        holdout_random_state: int = default("holdout_random_state"),
        owner: str = "fit_lda",
    ) -> TrainingData:
        if not 0 <= holdout < 1:
            raise param_error(
                owner,
                "holdout",
                holdout,
                "a share of documents in [0, 1)",
                "Use e.g. 0.1 to hold out 10% of documents, or 0 for none.",
            )
        dictionary = prepared.dictionary
        n_docs = len(prepared.bow)
        if len(dictionary) == 0 or n_docs == 0:
            msg = (
                f"The prepared corpus has {len(dictionary)} terms in its vocabulary and "
                f"{n_docs} documents; LDA needs at least one term and two documents. "
                "Prepare the corpus with looser filters (e.g. a lower minimum document "
                "frequency) or add documents."
            )
            raise InputError(msg)
        matrix = prepared.bow.to_csr(len(dictionary))
        n_held = max(1, round(holdout * n_docs)) if holdout > 0 else 0
        heldout = np.zeros(n_docs, dtype=bool)
        check_int(owner, "holdout_random_state", holdout_random_state, minimum=0)
        rng = np.random.default_rng(holdout_random_state)
        heldout[rng.permutation(n_docs)[:n_held]] = True
        vocab = [dictionary[i] for i in range(len(dictionary))]
        return cls(matrix, vocab, list(prepared.doc_ids), heldout, prepared.fingerprint)

    @property
    def n_train(self) -> int:
        return int((~self.heldout).sum())

    def save(self, folder: Path) -> Path:
        """Write the matrix as .npy files (memory-mappable) and the rest as JSON."""
        folder.mkdir(parents=True, exist_ok=True)
        for name in ("indptr", "indices", "data"):
            np.save(folder / f"{name}.npy", getattr(self.matrix, name))
        np.save(folder / "heldout.npy", self.heldout)
        (folder / "meta.json").write_text(
            json.dumps(
                {
                    "shape": self.matrix.shape,
                    "vocab": self.vocab,
                    "doc_ids": self.doc_ids,
                    "corpus_fingerprint": self.corpus_fingerprint,
                }
            ),
            encoding="utf-8",
        )
        return folder

    @classmethod
    def load(cls, folder: Path) -> TrainingData:
        parts = {
            n: np.load(folder / f"{n}.npy", mmap_mode="r") for n in ("indptr", "indices", "data")
        }
        meta = json.loads((folder / "meta.json").read_text(encoding="utf-8"))
        matrix = sp.csr_matrix(
            (parts["data"], parts["indices"], parts["indptr"]),
            shape=tuple(meta["shape"]),
            copy=False,
        )
        return cls(
            matrix,
            meta["vocab"],
            meta["doc_ids"],
            np.load(folder / "heldout.npy"),
            meta["corpus_fingerprint"],
        )


def check_settings(owner: str, settings: dict) -> dict:
    """Validate fit settings (gensim's names, see :mod:`tm_compare.models._engines`); return
    them complete."""
    for name in settings:
        check_choice(owner, "settings", name, DEFAULT_SETTINGS)
    full = {**DEFAULT_SETTINGS, **settings}
    for name in ("passes", "iterations", "chunksize", "starts"):
        value = full[name]
        if name == "chunksize" and value == "auto":
            continue
        if isinstance(value, bool) or not isinstance(value, int | np.integer) or value < 1:
            accepted = "'auto' or an integer >= 1" if name == "chunksize" else "an integer >= 1"
            raise param_error(owner, name, value, accepted)
    for name in ("alpha", "eta"):
        value = full[name]
        if value != "symmetric" and not (
            isinstance(value, float | int) and not isinstance(value, bool) and 0 < value < np.inf
        ):
            raise param_error(owner, name, value, "'symmetric' (1/k) or a number > 0")
    if not (isinstance(full["decay"], float | int) and 0.5 <= full["decay"] <= 1):
        # Hoffman et al. (2010) prove convergence for (0.5, 1]; 0.5 is gensim's default.
        raise param_error(owner, "decay", full["decay"], "a number in [0.5, 1]")
    for name in ("offset", "gamma_threshold"):
        if not (isinstance(full[name], float | int) and 0 < full[name] < np.inf):
            raise param_error(owner, name, full[name], "a number > 0")
    tol = full["tol"]
    if isinstance(tol, bool) or not isinstance(tol, int | float) or not 0 <= tol < 1:
        raise param_error(owner, "tol", tol, "a number in [0, 1)", "Use 0 to run every pass.")
    return {
        name: (
            int(v) if name in ("passes", "iterations", "chunksize", "starts") and v != "auto" else v
        )
        for name, v in full.items()
    }


def check_pair(owner: str, fit, prepared) -> None:
    """Refuse a fit and a prepared corpus that do not belong together: the fit records the
    fingerprint of the prepared corpus it was trained on."""
    recorded = getattr(fit, "corpus_fingerprint", None)
    given = getattr(prepared, "fingerprint", None)
    if prepared is not None and recorded and given and recorded != given:
        msg = (
            f"{owner} got a fit trained on the prepared corpus {recorded} with the prepared "
            f"corpus {given}: its topics and documents would be paired with the wrong texts. "
            "Pass the prepared corpus the fit was trained on (load_prepared(project, "
            "fit.corpus_fingerprint)), or fit again on this one."
        )
        raise InputError(msg)


#: Documents and vocabulary terms per topic below which a k draws a warning (common practice).
SUPPORT_PER_TOPIC = 10


def check_k(owner: str, k, data: TrainingData) -> int:
    if isinstance(k, bool) or not isinstance(k, int | np.integer) or not 2 <= k <= data.n_train:
        raise param_error(
            owner,
            "k",
            k,
            f"integers from 2 to the number of training documents ({data.n_train})",
            f"The corpus has {len(data.doc_ids)} documents, {int(data.heldout.sum())} of them "
            "held out; choose fewer topics or add documents.",
        )
    # Common practice (no single source): a topic needs a few documents of its own and its own
    # top words; below 10 of each per topic, expect duplicated or junk topics.
    per_doc, per_term = data.n_train / k, len(data.vocab) / k
    if min(per_doc, per_term) < SUPPORT_PER_TOPIC:
        warnings.warn(
            f"k={int(k)} topics is more than this corpus can support ({data.n_train} training "
            f"documents and {len(data.vocab)} terms: {per_doc:.1f} documents and "
            f"{per_term:.1f} terms per topic, below {SUPPORT_PER_TOPIC} of each). Expect "
            f"duplicated or junk topics; choose k <= "
            f"{max(2, int(min(data.n_train, len(data.vocab)) // SUPPORT_PER_TOPIC))} or add "
            "documents.",
            UserWarning,
            stacklevel=3,
        )
    return int(k)


def train(data: TrainingData, k: int, random_state: int, engine: str, settings: dict) -> Fit:
    """Fit one model on ``data`` (validated already), single-threaded for reproducibility."""
    from threadpoolctl import threadpool_limits

    start = time.perf_counter()
    # One math-library thread: results then do not depend on where or beside what a fit runs.
    with threadpool_limits(limits=1):
        seed, state = _starts.best_start(data, k, random_state, engine, settings)
        engine_settings = {n: v for n, v in settings.items() if n != "starts"}
        result = _engines.run(
            engine, data.matrix, data.heldout, k, seed, engine_settings, data.vocab, state
        )
    seconds = time.perf_counter() - start
    perplexity = float(np.exp(-result.word_bound))
    return Fit(
        k=k,
        random_state=random_state,
        engine=engine,
        engine_version=result.version,
        settings=settings,
        fit_seconds=seconds,
        vocab=data.vocab,
        doc_ids=data.doc_ids,
        topic_term=result.topic_term,
        doc_dirichlet=result.gamma,
        heldout=data.heldout,
        perplexity=perplexity,
        corpus_fingerprint=data.corpus_fingerprint,
        passes_used=result.passes_used,
        converged=result.converged,
        last_change=result.last_change,
        engine_seed=seed,
    )


@renamed_parameters(seed="random_state", holdout_seed="holdout_random_state")
def fit_lda(
    prepared,
    k: int,
    *,
    random_state: int = default("random_state"),
    engine: str = default("engine"),
    holdout: float = default("holdout"),
    holdout_random_state: int = default("holdout_random_state"),
    **settings,
) -> Fit:
    """Fit one LDA model with ``k`` topics on a prepared corpus.

    Parameters
    ----------
    prepared : PreparedCorpus
    k : int
        Number of topics, from 2 to the number of training documents.
    random_state : int
        Seed of the engine (formerly ``seed``). A sweep's fit of seed s is ``random_state=s``.
    engine : {"compiled", "gensim", "sklearn"}
    holdout, holdout_random_state
        Share of documents held out for perplexity, and the seed of the draw that picks them
        (formerly ``holdout_seed``). It is separate from ``random_state`` so that fits with
        different seeds are judged on the same held-out documents.
    **settings
        Fit settings with gensim's names: ``passes`` (the most passes), ``iterations``,
        ``chunksize`` (``"auto"``: ten updates per pass), ``alpha``, ``eta``, ``decay``,
        ``offset``, ``gamma_threshold``, and ``tol``, the topic change below which a fit
        stops early (``0`` runs every pass); see :mod:`tm_compare.models._engines`; and
        ``starts``, the random starts probed before the best is fitted (``1``: the start of
        ``random_state`` alone; see :mod:`tm_compare.models._starts`). Defaults in
        :mod:`tm_compare.options`.
    """
    check_choice("fit_lda", "engine", engine, _engines.ENGINES)
    settings = check_settings("fit_lda", settings)
    data = TrainingData.from_prepared(prepared, holdout, holdout_random_state)
    settings = {**settings, "holdout": holdout, "holdout_random_state": holdout_random_state}
    return train(data, check_k("fit_lda", k, data), random_state, engine, settings)
