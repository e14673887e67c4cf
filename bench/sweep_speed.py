"""End to end on the demo corpus: our sweep (fit + score) against the plain notebook loop.

Configurations, all on the same prepared Quillhaven demo corpus (nine planted themes) and the
same 10% of documents held out:

- ``ours, new defaults``: ``sweep(prepared, k=GRID, seeds=3)`` with the default engine
  ("compiled") and fit settings (the best of ``starts`` probed random starts, ten online
  updates per pass, stop once the topics settle, at most ``passes``);
- ``ours, old defaults``: the same sweep with the former engine and fixed settings
  (``engine="gensim", passes=10, chunksize=2000, tol=0, starts=1``);
- ``loop, same settings``: what a notebook does by hand, one process::

      for k in grid:
          for seed in seeds:
              lda = LdaModel(train, id2word=dictionary, num_topics=k, random_state=seed,
                             passes=10, chunksize=2000)
              CoherenceModel(model=lda, texts=texts, dictionary=dictionary,
                             coherence="c_v").get_coherence_per_topic()

- ``loop, gensim defaults``: the same loop with gensim's own defaults (``passes=1``,
  ``chunksize=2000``, ``eval_every=10``), as a user would write it.

The loops are slow (gensim recounts co-occurrences for every model), so they run the fits at
k = 9 (the planted number) for every seed and are SCALED linearly to the whole grid (the
output says so). Reported for each: wall time (min and median over ``--runs``), the share of
fits that converged (ours only: the loops do not check), and planted-theme recovery: NMI
(scikit-learn) between each document's most probable topic and its planted dominant theme,
mean over the seeds at k = 9, plus the k our rule suggests and its fit's NMI.

``python bench/sweep_speed.py --docs 3000 --runs 1`` for a quicker run; the default is the
20,000-document demo.
"""

from __future__ import annotations

import argparse
import shutil
import tempfile
import time

import numpy as np

PLANTED = 9
SHORT = {
    "new": "ours, new defaults",
    "old": "ours, old defaults",
    "loop": "loop, same settings",
    "loop-defaults": "loop, gensim defaults",
}
OLD = {"passes": 10, "chunksize": 2000, "tol": 0, "starts": 1, "engine": "gensim"}


def demo_corpus(n_docs: int):
    from tm_compare.demo import quillhaven as demo
    from tm_compare.text.corpus import Corpus
    from tm_compare.text.prepared import prepare

    frame, truth = demo.scenario(n_docs, 0)
    prepared = prepare(Corpus.from_frame(frame, **demo.CORPUS_COLUMNS), progress=False)
    themes = truth.docs.set_index("id").loc[prepared.doc_ids, "theme"].to_numpy()
    return prepared, themes


def nmi(themes, doc_topic) -> float:
    from sklearn.metrics import normalized_mutual_info_score

    return float(normalized_mutual_info_score(themes, np.asarray(doc_topic).argmax(axis=1)))


def run_ours(prepared, themes, grid, seeds, jobs, settings):
    from tm_compare.models.sweeps import sweep

    project = tempfile.mkdtemp(prefix="tm_compare-bench-")  # fits saved as in real use
    try:
        start = time.perf_counter()
        result = sweep(
            prepared, k=grid, seeds=seeds, project=project, n_jobs=jobs, progress=False, **settings
        )
        seconds = time.perf_counter() - start
        rec = result.recommend()
        at_planted = [nmi(themes, result.get_fit(PLANTED, s).doc_topic) for s in range(seeds)]
        return {
            "seconds": seconds,
            "fitting": float(result.scores_["fit_seconds"].sum()),
            "converged": float(result.scores_["converged"].astype(float).mean()),
            "passes": float(result.scores_["passes"].astype(float).mean()),
            "nmi": float(np.mean(at_planted)),
            "suggested": rec.k,
            "suggested_nmi": nmi(themes, result.get_fit(rec.k, rec.seed).doc_topic),
        }
    finally:
        shutil.rmtree(project)


def run_loop(prepared, themes, heldout, seeds, n_models, fit_settings):
    """The notebook loop on the k = 9 fits, scaled to ``n_models``."""
    from gensim.models import CoherenceModel, LdaModel

    train = [doc for doc, held in zip(prepared.bow, heldout, strict=True) if not held]
    per_model, fitting, scores = [], [], []
    for seed in range(seeds):
        start = time.perf_counter()
        lda = LdaModel(
            train,
            id2word=prepared.dictionary,
            num_topics=PLANTED,
            random_state=seed,
            **fit_settings,
        )
        fitting.append(time.perf_counter() - start)
        CoherenceModel(
            model=lda, texts=prepared.texts, dictionary=prepared.dictionary, coherence="c_v"
        ).get_coherence_per_topic()
        per_model.append(time.perf_counter() - start)
        shares = np.zeros((len(prepared.bow), PLANTED))
        for i, doc in enumerate(prepared.bow):
            for topic, share in lda.get_document_topics(doc, minimum_probability=0):
                shares[i, topic] = share
        scores.append(nmi(themes, shares))
    return {
        "seconds": float(np.mean(per_model)) * n_models,
        "fitting": float(np.mean(fitting)) * n_models,
        "nmi": float(np.mean(scores)),
    }


def main(argv=None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--docs", type=int, default=20_000, help="demo documents [20000]")
    parser.add_argument("--k", default="6,8,9,10,12", help="grid [6,8,9,10,12]")
    parser.add_argument("--seeds", type=int, default=3)
    parser.add_argument("--jobs", type=int, default=2, help="worker processes of our sweep")
    parser.add_argument("--runs", type=int, default=3, help="runs of each configuration [3]")
    parser.add_argument(
        "--only",
        default=",".join(SHORT),
        help=f"configurations to run, among {','.join(SHORT)} (ours, new defaults always runs)",
    )
    args = parser.parse_args(argv)

    from tm_compare.cli._sweep import k_grid
    from tm_compare.models.fits import TrainingData

    grid = k_grid(args.k)
    if PLANTED not in grid:
        parser.error(f"--k must include {PLANTED}, the number of planted themes")
    prepared, themes = demo_corpus(args.docs)
    heldout = TrainingData.from_prepared(prepared).heldout
    n_models = len(grid) * args.seeds
    print(
        f"Quillhaven demo: {args.docs} generated rows, {len(prepared)} prepared documents, "
        f"{len(prepared.dictionary)} terms, {PLANTED} planted themes. Grid k = {grid}, "
        f"{args.seeds} seeds = {n_models} fits; ours in {args.jobs} processes; {args.runs} run(s)."
    )
    configs = {
        "ours, new defaults": lambda: run_ours(prepared, themes, grid, args.seeds, args.jobs, {}),
        "ours, old defaults": lambda: run_ours(prepared, themes, grid, args.seeds, args.jobs, OLD),
        "loop, same settings": lambda: run_loop(
            prepared,
            themes,
            heldout,
            args.seeds,
            n_models,
            {"passes": 10, "chunksize": 2000, "eval_every": None},
        ),
        "loop, gensim defaults": lambda: run_loop(
            prepared, themes, heldout, args.seeds, n_models, {}
        ),
    }
    chosen = {SHORT[key] for key in args.only.split(",")} | {"ours, new defaults"}
    configs = {name: run for name, run in configs.items() if name in chosen}
    results = {}
    for name, run in configs.items():
        runs = [run() for _ in range(args.runs)]
        times = [r["seconds"] for r in runs]
        results[name] = {**runs[0], "min": min(times), "median": float(np.median(times))}
        print(
            f"  done: {name}: {', '.join(f'{t:.0f}' for t in times)} s; fitting "
            f"{runs[0]['fitting']:.0f} s (summed over fits, first run); NMI {runs[0]['nmi']:.3f}",
            flush=True,
        )
    print(f"\n{'configuration':<24}{'min s':>9}{'median s':>10}{'converged':>13}{'NMI k=9':>9}")
    for name, r in results.items():
        conv = f"{r['converged']:.0%}" if "converged" in r else "not checked"
        print(f"{name:<24}{r['min']:>9.0f}{r['median']:>10.0f}{conv:>13}{r['nmi']:>9.3f}")
    new = results["ours, new defaults"]
    print(
        f"\nOurs, new defaults: {new['passes']:.1f} passes per fit on average; suggested "
        f"k = {new['suggested']} (NMI {new['suggested_nmi']:.3f})."
    )
    print("Loops ran the k = 9 fits only and are SCALED linearly to the grid.")
    for name in [name for name in results if name != "ours, new defaults"]:
        print(
            f"Ratio {name} / ours, new defaults (median): {results[name]['median'] / new['median']:.1f}x"
        )


if __name__ == "__main__":
    main()
