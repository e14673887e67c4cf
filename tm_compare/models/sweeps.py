"""The sweep: LDA over a grid of topic counts and seeds, scored for choosing k.

:func:`sweep` fits one model per (k, seed), in parallel processes or on a Dask
cluster, saves each finished fit in the project folder as soon as it ends
(so a stopped sweep resumes where it stopped), then scores every fit with the
statistics of :mod:`tm_compare.models.scores`, counted once for the whole grid.

Results do not depend on where fits run: every fit is single-threaded and
reads the same document-term matrix, so a sweep run sequentially, with
``n_jobs``, on a Dask cluster, or resumed after a crash gives the same
numbers.
"""

from __future__ import annotations

import os
import tempfile
import warnings
from collections.abc import Iterable, Iterator, Mapping
from pathlib import Path

import numpy as np
import pandas as pd

from .._atomic import atomic_path, atomic_write_json
from .._csv import to_csv
from .._deprecation import renamed_attribute, renamed_parameters, warn_renamed
from .._hashing import fingerprint as _fingerprint
from .._validation import (
    check_choice,
    check_limit,
    check_n_jobs,
    check_scheduler,
    param_error,
    require,
)
from ..errors import ClusterUnavailableError, CorruptArtifactError, ProjectError, SweepError
from ..options import choices, default
from ..project import Project
from . import _engines, _saved, quality
from ._parallel import clean_stop
from .choice import recommend
from .fits import SETTINGS as FIT_SETTINGS
from .fits import Fit, TrainingData, check_k, check_settings, from_stored, stored, train
from .scores import DIVERSITY_N_TERMS, CoherenceScorer, diversity, stability

CONNECT_TIMEOUT = 10  # seconds to wait for a Dask scheduler
_STATE = "sweep.json"


class Sweep:
    """LDA fits over a grid of topic counts and seeds, with their scores.

    Parameters
    ----------
    k : int or iterable of int
        Topic counts, each from 2 to the number of training documents.
    seeds : int or iterable of int
        ``3`` means seeds 0, 1, 2; a list gives the seeds themselves. The fit of seed s has
        ``random_state=s``.
    engine : {"compiled", "gensim", "sklearn"}
    project : Project or path, optional
        Where fits (``fits/``) and score tables (``scores/``) are saved. With a
        project, finished fits are kept and a rerun skips them.
    n_jobs : int, optional
        Worker processes on this machine (joblib convention: None is 1, -1 all cores).
    client, scheduler : dask.distributed.Client or address, optional
        Run the fits on a Dask cluster instead.
    holdout, holdout_random_state
        Share of documents held out for perplexity, drawn once with
        ``holdout_random_state`` (formerly ``holdout_seed``): the same documents for every
        fit of the sweep.
    n_terms : int
        Top words per topic for coherence and stability (formerly ``topn``; diversity
        uses 25).
    measures : tuple of str
        Coherence measures, from ``("npmi", "c_v", "uci", "umass")``.
    passes, iterations, chunksize, alpha, eta, decay, offset, gamma_threshold, tol, starts
        Fit settings (gensim's names, see :func:`tm_compare.models.fits.fit_lda`): by
        default each fit probes ``starts`` random starts and fits the best
        (:mod:`tm_compare.models._starts`), makes ten online updates per pass and stops once
        its topics settle (``tol``), after at most ``passes`` passes.
    progress : bool
        Show a progress bar of fits done and time left.
    fallback_local : bool
        If the scheduler does not answer, warn and run locally instead of raising.

    Defaults are those of :mod:`tm_compare.options`.

    Attributes
    ----------
    fits_ : Mapping
        ``{(k, seed): Fit}``; fits saved in a project are read from disk when asked for.
    scores_ : DataFrame
        One row per fit: ``k``, ``seed``, ``engine``, ``fit_seconds``, ``passes`` (made),
        ``converged`` (whether the topics settled before the cap; missing for fits saved
        by older versions), ``last_change``, mean of each coherence measure,
        ``perplexity``, ``near_empty`` and ``rarely_dominant`` (topics) and
        ``near_duplicate`` (pairs, see :mod:`tm_compare.models.quality`), ``stability``, ``diversity``, ``fingerprint``.
    topic_scores_ : DataFrame
        One row per topic of each fit: ``k``, ``seed``, ``topic``, ``top_words``,
        each coherence measure, ``prevalence``, ``near_empty``, ``dominant_share``,
        ``rarely_dominant``, ``duplicate_of`` (-1 for none) and ``stability``.
    settings_ : dict
        The fit settings every fit was made with.
    corpus_fingerprint_ : str
        Fingerprint of the prepared corpus the sweep was fitted on.

    Learned state ends in ``_`` (scikit-learn's convention); ``fits``, ``scores`` and
    ``topic_scores`` are the names of earlier releases.
    """

    fits = renamed_attribute("fits", "fits_")
    scores = renamed_attribute("scores", "scores_")
    topic_scores = renamed_attribute("topic_scores", "topic_scores_")
    holdout_seed = renamed_attribute("holdout_seed", "holdout_random_state")
    topn = renamed_attribute("topn", "n_terms")

    @renamed_parameters(holdout_seed="holdout_random_state", topn="n_terms")
    def __init__(
        self,
        k=default("k"),
        seeds=default("seeds"),
        engine=default("engine"),
        *,
        project=None,
        n_jobs=default("n_jobs"),
        client=None,
        scheduler=None,
        holdout=default("holdout"),
        holdout_random_state=default("holdout_random_state"),
        n_terms=default("n_terms"),
        measures=choices("measure"),
        passes=default("passes"),
        iterations=default("iterations"),
        chunksize=default("chunksize"),
        alpha=default("alpha"),
        eta=default("eta"),
        decay=default("decay"),
        offset=default("offset"),
        gamma_threshold=default("gamma_threshold"),
        tol=default("tol"),
        starts=default("starts"),
        progress=True,
        fallback_local=False,
    ):
        self.k = k
        self.seeds = seeds
        self.engine = engine
        self.project = project
        self.n_jobs = n_jobs
        self.client = client
        self.scheduler = scheduler
        self.holdout = holdout
        self.holdout_random_state = holdout_random_state
        self.n_terms = n_terms
        self.measures = measures
        self.passes = passes
        self.iterations = iterations
        self.chunksize = chunksize
        self.alpha = alpha
        self.eta = eta
        self.decay = decay
        self.offset = offset
        self.gamma_threshold = gamma_threshold
        self.tol = tol
        self.starts = starts
        self.progress = progress
        self.fallback_local = fallback_local

    def __repr__(self) -> str:
        n = len(getattr(self, "fits_", ()))
        return f"Sweep(engine={self.engine!r}, fits={n})"

    # -- fitting -----------------------------------------------------------------------------
    def fit(self, prepared) -> Sweep:
        """Fit (or reload) every model of the grid on ``prepared``, then score them all."""
        ks, seeds, measures, settings = self._checked_options()
        data = TrainingData.from_prepared(
            prepared, self.holdout, self.holdout_random_state, "sweep"
        )
        for k in ks:
            check_k("sweep", k, data)
        project = self.project
        if project is not None and not isinstance(project, Project):
            project = Project.create(project)
        grid = [(k, seed) for k in ks for seed in seeds]
        files = {}
        if project is not None:
            folder = project.folder("fits")
            for k, seed in grid:
                files[(k, seed)] = _fit_file(
                    folder, data.corpus_fingerprint, self.engine, k, seed, settings
                )
        summaries, kept, todo = {}, {}, []
        for key in grid:
            fit = _load_finished(files[key]) if files else None
            if fit is None:
                todo.append(key)
            else:
                summaries[key], kept[key] = _summary(fit, self.n_terms), files[key]

        from tqdm.auto import tqdm

        bar = tqdm(
            total=len(grid),
            initial=len(kept),
            desc=f"LDA fits ({self.engine})",
            unit="fit",
            disable=not self.progress,
        )
        try:
            for fit in self._run(data, todo, settings):
                key = (fit.k, fit.random_state)
                summaries[key] = _summary(fit, self.n_terms)
                kept[key] = _save(fit, files[key]) if files else fit
                bar.update(1)
        finally:
            bar.close()

        self.fits_ = FitShelf({key: kept[key] for key in grid})
        self.scores_, self.topic_scores_ = _score(
            {key: summaries[key] for key in grid}, prepared, measures, self.n_terms, self.engine
        )
        self.settings_ = settings
        self.corpus_fingerprint_ = data.corpus_fingerprint
        if project is not None:
            self._save_tables(project, files)
        return self

    def _checked_options(self):
        """The grid, measures and fit settings, validated (nothing runs before this passes)."""
        check_choice("sweep", "engine", self.engine, _engines.ENGINES)
        check_n_jobs("sweep", self.n_jobs)
        check_scheduler("sweep", self.scheduler)
        ks = _grid("k", self.k, minimum=2)
        n_seeds = self.seeds if _is_int(self.seeds) else _size(self.seeds)
        check_limit("sweep", "grid of fits (k x seeds)", len(ks) * max(n_seeds, 1), "fits")
        if _is_int(self.seeds) and self.seeds < 1:
            raise param_error(
                "sweep",
                "seeds",
                self.seeds,
                "a number of seeds >= 1 or a non-empty list of seeds >= 0",
                "The grid of fits would be empty.",
            )
        seeds = (
            list(range(self.seeds))
            if _is_int(self.seeds)
            else _grid("seeds", self.seeds, minimum=0)
        )
        measures = [check_choice("sweep", "measures", m, choices("measure")) for m in self.measures]
        if not _is_int(self.n_terms) or self.n_terms < 2:
            raise param_error("sweep", "n_terms", self.n_terms, "an integer >= 2")
        settings = check_settings("sweep", {name: getattr(self, name) for name in FIT_SETTINGS})
        settings.update(holdout=self.holdout, holdout_random_state=self.holdout_random_state)
        return ks, seeds, measures, settings

    def _run(self, data: TrainingData, todo: list, settings: dict) -> Iterator[Fit]:
        """Yield fits as they finish, on a Dask cluster, in worker processes, or here."""
        if not todo:
            return
        if self.client is not None or self.scheduler is not None:
            client, own = _connect(self.client, self.scheduler, self.fallback_local)
            if client is not None:
                with clean_stop():  # SIGTERM/SIGINT: futures cancelled, own client closed
                    yield from _run_dask(client, own, data, todo, self.engine, settings)
                return
        import joblib

        n_jobs = min(joblib.effective_n_jobs(self.n_jobs), len(todo))
        if n_jobs == 1:
            for k, seed in todo:
                yield train(data, k, seed, self.engine, settings)
            return
        # Workers memory-map one copy of the matrix instead of receiving it with every task.
        # SIGTERM/SIGINT: workers killed and the folder removed (see _parallel).
        with tempfile.TemporaryDirectory(prefix="tm_compare-sweep-") as tmp, clean_stop():
            shared = str(data.save(Path(tmp)))
            tasks = (
                joblib.delayed(_train_shared)(shared, k, seed, self.engine, settings)
                for k, seed in todo
            )
            yield from joblib.Parallel(
                n_jobs=n_jobs, backend="loky", return_as="generator_unordered"
            )(tasks)

    # -- results -----------------------------------------------------------------------------
    def get_fit(self, k: int, seed: int = 0) -> Fit:
        """The fit with ``k`` topics and seed ``seed`` (its ``random_state``)."""
        if (k, seed) not in self.fits_:
            listed = ", ".join(f"(k={a}, seed={b})" for a, b in self.fits_)
            msg = f"This sweep has no fit with k={k!r} and seed={seed!r}. Existing fits are: {listed}."
            raise SweepError(msg)
        return self.fits_[(k, seed)]

    def model(self, k: int, seed: int = 0) -> Fit:
        """Deprecated: use :meth:`get_fit`."""
        warn_renamed("Sweep.model(k, seed)", "Sweep.get_fit(k, seed)")
        return self.get_fit(k, seed)

    def recommend(self, measure: str = default("measure")):
        """Propose a k with the rule spelled out (see :func:`.choice.recommend`)."""
        return recommend(self.scores_, measure=measure)

    def _save_tables(self, project: Project, files: dict) -> None:
        folder = project.folder("scores")
        for name, table in (("scores", self.scores_), ("topic_scores", self.topic_scores_)):
            with atomic_path(folder / f"{name}.parquet") as tmp:
                table.to_parquet(tmp, index=False)
            flat = table.copy()
            if "top_words" in flat:  # CSV cells hold the words separated by spaces
                flat["top_words"] = flat["top_words"].map(" ".join)
            with atomic_path(folder / f"{name}.csv") as tmp:
                to_csv(flat, tmp)  # text cells safe to open in a spreadsheet
        state = {
            "checksums": {n: _saved.sha256(folder / n) for n in _saved.TABLES},
            "engine": self.engine,
            "settings": stored(self.settings_),
            "n_terms": self.n_terms,
            "corpus_fingerprint": self.corpus_fingerprint_,
            "fits": [{"k": k, "seed": s, "file": files[(k, s)].name} for k, s in self.fits_],
        }
        atomic_write_json(folder / _STATE, stored(state))

    @classmethod
    def load(cls, project) -> Sweep:
        """Reopen the last sweep saved in ``project`` (its fits load from disk when asked for)."""
        project = project if isinstance(project, Project) else Project.open(project)
        folder = project.path / "scores"
        try:
            state = _saved.read_state(folder)
            changed = [
                n
                for n in _saved.TABLES
                if _saved.sha256(folder / n) != state.get("checksums", {}).get(n)
            ]
            if changed:
                return cls._rescored(project, state, folder / changed[0])
            scores = pd.read_parquet(folder / "scores.parquet")
            topic_scores = pd.read_parquet(folder / "topic_scores.parquet")
        except FileNotFoundError as exc:
            msg = (
                f"The project {str(project.path)!r} has no saved sweep ({exc.filename} is "
                "missing). Run `tm-compare sweep PROJECT` or sweep(prepared, project=...) first."
            )
            raise ProjectError(msg) from exc
        except (OSError, ValueError) as exc:  # a damaged score table or sweep.json
            msg = (
                f"The sweep saved in {str(folder)!r} cannot be read ({type(exc).__name__}: "
                f"{exc}). Run the sweep again (`tm-compare sweep {project.path}` with the same "
                "grid): finished fits are reused."
            )
            raise CorruptArtifactError(msg) from exc
        topic_scores["top_words"] = topic_scores["top_words"].map(list)
        settings = from_stored(state["settings"])
        self = cls(
            *_saved.grid_of(state),
            state["engine"],
            project=project,
            n_terms=state["n_terms"],
            **settings,
        )
        self.fits_ = FitShelf(
            {(f["k"], f["seed"]): project.path / "fits" / f["file"] for f in state["fits"]},
            state["corpus_fingerprint"],
        )
        self.scores_, self.topic_scores_ = scores, topic_scores
        self.settings_, self.corpus_fingerprint_ = settings, state["corpus_fingerprint"]
        return self

    @classmethod
    def _rescored(cls, project, state: dict, changed: Path) -> Sweep:
        """The sweep of ``state`` with its score tables recomputed from the saved fits (a table
        that fails its checksum is never used)."""
        from ..text.prepared import load_prepared

        warnings.warn(
            f"The score table {str(changed)!r} was edited or damaged since the sweep wrote it "
            "(its sha256 differs from the one recorded in sweep.json); it is not used. "
            "Recomputing the score tables from the saved fits.",
            UserWarning,
            stacklevel=3,
        )
        prepared = load_prepared(project, state["corpus_fingerprint"])
        settings = from_stored(state["settings"])
        again = cls(
            *_saved.grid_of(state), state["engine"], project=project, n_terms=state["n_terms"]
        )
        for name, value in settings.items():
            setattr(again, name, value)
        again.progress = False
        return again.fit(prepared)


def sweep(
    prepared, k=default("k"), seeds=default("seeds"), engine=default("engine"), **options
) -> Sweep:
    """Fit and score LDA over a grid of topic counts and seeds; see :class:`Sweep`.

    >>> result = sweep(prepared, k=range(5, 41, 5), seeds=3, project="study")  # doctest: +SKIP
    >>> result.scores_                # one row per fit                            # doctest: +SKIP
    >>> result.recommend().rule       # the k proposed, and why, in words          # doctest: +SKIP
    """
    return Sweep(k, seeds, engine, **options).fit(prepared)


class FitShelf(Mapping):
    """Fits of a sweep by ``(k, seed)``; those saved in a project are read when asked for, and
    checked to be the fit their name says (a file copied over another's name is refused)."""

    def __init__(self, entries: dict, corpus_fingerprint: str | None = None):
        self._entries = entries
        self._corpus = corpus_fingerprint

    def __getitem__(self, key) -> Fit:
        entry = self._entries[key]
        if not isinstance(entry, Path):
            return entry
        fit = Fit.load(entry)
        found = (fit.k, fit.random_state)
        if found != tuple(key) or self._corpus not in (None, fit.corpus_fingerprint):
            msg = (
                f"The fit file {str(entry)!r} holds the fit k={fit.k}, seed={fit.random_state} "
                f"of corpus {fit.corpus_fingerprint}, but the sweep saved it as k={key[0]}, "
                f"seed={key[1]} of corpus {self._corpus}: it was copied or renamed. Delete it "
                "and run the same sweep again, which refits it."
            )
            raise CorruptArtifactError(msg)
        return fit

    def __contains__(self, key) -> bool:  # without reading the file
        return key in self._entries

    def __iter__(self):
        return iter(self._entries)

    def __len__(self) -> int:
        return len(self._entries)


# -- grid and storage helpers --------------------------------------------------------------------
def _is_int(value) -> bool:
    return isinstance(value, int | np.integer) and not isinstance(value, bool)


def _size(values) -> int:
    try:
        return len(values)
    except TypeError:
        return 1


def _grid(name: str, values, minimum: int) -> list[int]:
    if not _is_int(values):
        check_limit("sweep", name, _size(values), "fits")  # before listing a huge range
    items = [values] if _is_int(values) else list(values) if isinstance(values, Iterable) else None
    accepted = f"an integer or a non-empty list of integers >= {minimum}"
    if not items:
        raise param_error("sweep", name, values, accepted, "The grid of fits would be empty.")
    for item in items:
        if not _is_int(item) or item < minimum:
            raise param_error("sweep", name, item, accepted)
    return sorted({int(item) for item in items})


def _fit_file(folder: Path, corpus: str, engine: str, k: int, seed: int, settings: dict) -> Path:
    # Keyed by everything that changes the model: other settings make other files.
    key = _fingerprint("sweep fit", corpus, engine, k, seed, stored(settings))
    return folder / f"{engine}-k{k}-seed{seed}-{key}.npz"


def _load_finished(path: Path) -> Fit | None:
    if not path.exists():
        return None
    try:
        return Fit.load(path)
    except CorruptArtifactError as exc:
        aside = path.with_name(path.name + ".corrupt")
        os.replace(path, aside)
        warnings.warn(f"{exc} It was moved to {str(aside)!r} and will be refit.", stacklevel=3)
        return None


def _save(fit: Fit, path: Path) -> Path:
    try:
        return fit.save(path)
    except OSError as exc:
        msg = (
            f"Could not save the fit k={fit.k}, seed={fit.random_state} to {str(path)!r}: {exc}. "
            f"Fits finished before it are kept in {str(path.parent)!r}; free disk space and "
            "run the same sweep again to resume."
        )
        raise SweepError(msg) from exc


def _summary(fit: Fit, n_terms: int) -> dict:
    per_topic = quality.topic_quality(fit)
    return {
        "fit_seconds": fit.fit_seconds,
        "passes": fit.passes_used,
        "converged": fit.converged,
        "last_change": fit.last_change,
        "perplexity": fit.perplexity,
        **quality.fit_quality(fit),
        "topic_quality": per_topic[
            ["prevalence", "near_empty", "dominant_share", "rarely_dominant", "duplicate_of"]
        ],
        "fingerprint": fit.fingerprint,
        "top": fit.top_words(max(n_terms, DIVERSITY_N_TERMS)),
    }


# -- running fits elsewhere ----------------------------------------------------------------------
_SHARED: dict[str, TrainingData] = {}


def _train_shared(shared, k, seed, engine, settings) -> Fit:
    """Worker side: ``shared`` is a folder written by TrainingData.save (read once per process)."""
    if isinstance(shared, TrainingData):  # held by Dask workers
        return train(shared, k, seed, engine, settings)
    if shared not in _SHARED:
        _SHARED.clear()
        _SHARED[shared] = TrainingData.load(Path(shared))
    return train(_SHARED[shared], k, seed, engine, settings)


def _hold(data):
    """Worker side: the training data as a task result, so Dask can recompute it."""
    return data


def _connect(client, scheduler, fallback_local: bool):
    """Return (client, owned) or (None, False) when falling back to local fits."""
    if client is not None:
        return client, False
    distributed = require("distributed", "dask")
    try:
        return distributed.Client(scheduler, timeout=CONNECT_TIMEOUT, set_as_default=False), True
    except (OSError, TimeoutError) as exc:
        msg = (
            f"The Dask scheduler at {scheduler!r} did not answer within {CONNECT_TIMEOUT} s "
            f"({type(exc).__name__}). Check the address (e.g. 'tcp://HOST:8786') and that the "
            "scheduler is running, or pass fallback_local=True to fit on this machine instead."
        )
        if not fallback_local:
            raise ClusterUnavailableError(msg) from exc
        warnings.warn(f"{msg} Fitting on this machine.", stacklevel=4)
        return None, False


def _run_dask(client, own: bool, data: TrainingData, todo: list, engine: str, settings: dict):
    from distributed import as_completed

    futures = []
    try:
        # Sent once, held as a task result: when a worker holding it is lost, the scheduler
        # recomputes it from the task (scattered data would be lost with that worker).
        shared = client.submit(_hold, data, pure=False)
        futures = [
            client.submit(_train_shared, shared, k, seed, engine, settings, pure=False)
            for k, seed in todo
        ]
        # This client's loop: as_completed would otherwise take the process's default client,
        # which is none (set_as_default=False) or another client with a loop of its own.
        for future in as_completed(futures, loop=client.loop):
            yield future.result()
    finally:
        client.cancel(futures)
        if own:
            client.close()


# -- scoring -------------------------------------------------------------------------------------
def _score(summaries: dict, prepared, measures: list[str], n_terms: int, engine: str):
    """Score tables for the fits; word statistics are counted once for the whole grid."""
    keys = list(summaries)
    top = {key: [words[:n_terms] for words in summaries[key]["top"]] for key in keys}
    scorer = CoherenceScorer(
        prepared.texts, prepared.dictionary, measures=tuple(measures), n_terms=n_terms
    ).fit([top[key] for key in keys])
    rows, topic_rows = [], []
    for key in keys:
        k, seed = key
        per_topic = scorer.score(top[key])
        frame = pd.DataFrame(
            {
                "k": k,
                "seed": seed,
                "topic": np.arange(k),
                "top_words": top[key],
                **{m: per_topic[m] for m in measures},
            }
        )
        frame = pd.concat([frame, summaries[key]["topic_quality"].reset_index(drop=True)], axis=1)
        topic_rows.append(frame)
        rows.append(
            {
                "k": k,
                "seed": seed,
                "engine": engine,
                "fit_seconds": summaries[key]["fit_seconds"],
                "passes": summaries[key]["passes"],
                "converged": summaries[key]["converged"],
                "last_change": summaries[key]["last_change"],
                **{m: float(np.mean(per_topic[m])) for m in measures},
                "perplexity": summaries[key]["perplexity"],
                "near_empty": summaries[key]["near_empty"],
                "rarely_dominant": summaries[key]["rarely_dominant"],
                "near_duplicate": summaries[key]["near_duplicate"],
                "diversity": diversity(summaries[key]["top"], n_terms=DIVERSITY_N_TERMS),
                "fingerprint": summaries[key]["fingerprint"],
            }
        )
    fit_stability, topic_stability = {}, {}
    for k in sorted({k for k, _ in keys}):
        by_seed = {seed: top[(kk, seed)] for kk, seed in keys if kk == k}
        fit_table, topic_table, _ = stability(by_seed, n_terms=n_terms)  # NaN with one seed
        for row in fit_table.itertuples():
            fit_stability[(k, row.seed)] = row.stability
        for row in topic_table.itertuples():
            topic_stability[(k, row.seed, row.topic)] = row.stability
    scores = pd.DataFrame(rows)
    scores.insert(len(scores.columns) - 2, "stability", [float(fit_stability[key]) for key in keys])
    scores["passes"] = scores["passes"].astype("Int64")  # unknown for fits saved before 0.x
    scores["converged"] = scores["converged"].astype("boolean")
    topic_scores = pd.concat(topic_rows, ignore_index=True)
    topic_scores["stability"] = [
        float(topic_stability[key])
        for key in zip(topic_scores["k"], topic_scores["seed"], topic_scores["topic"], strict=True)
    ]
    return scores, topic_scores


def load_sweep(project) -> Sweep:
    """The sweep saved in ``project`` (its fits load from disk when asked for)."""
    return Sweep.load(project)


def load_fit(project, k: int | None = None, seed: int | None = None) -> Fit:
    """One fit of ``project``'s saved sweep; by default the one the sweep recommends."""
    result = Sweep.load(project)
    if k is None:
        pick = result.recommend()
        k, seed = pick.k, pick.seed if seed is None else seed
    return result.get_fit(k, 0 if seed is None else seed)
