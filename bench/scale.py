"""How far one machine goes: the demo articles generated, prepared, and one fit from the
memory-mapped document-term matrix.

Each step runs in a fresh child process, so its peak resident memory (``VmHWM``) is its own:

``generate``: the Quillhaven demo generator writes ``--docs`` articles to a Parquet file
(``TM_COMPARE_MAX_DEMO_DOCS`` is raised for this child when ``--docs`` is above the limit).

``prepare``: ``Corpus.read`` reads the file (intake), ``tm_compare.prepare`` (defaults)
prepares it a chunk of rows at a time and saves it to a cache folder, and the document-term
matrix is written in the layout of ``TrainingData.save`` (``.npy`` files). Prints
documents/s and the peak RSS of reading, preparing and saving together.

``fit``: one fit (engine ``--engine``, k = ``--topics``, ``--passes``, one random start,
every other setting at its default) runs from that matrix memory-mapped: gensim is handed one chunk of rows at a
time, so resident memory stays near the model and one chunk, not the corpus. Prints
training documents/s per pass (the time includes the final inference of every document's
topic mixture and the held-out bound) and peak RSS next to the matrix size on disk.

    python bench/scale.py --docs 1000000
"""

from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

GOAL_MIB = 6 * 1024  # preparation's memory goal at a million documents


def _rss_mib() -> float:
    """Peak resident memory of this process (VmHWM of /proc/self/status, Linux)."""
    for line in Path("/proc/self/status").read_text().splitlines():
        if line.startswith("VmHWM:"):
            return int(line.split()[1]) / 1024
    return float("nan")


def child_generate(n_docs: int, path: str) -> dict:
    from tm_compare.demo import quillhaven

    t0 = time.perf_counter()
    frame = quillhaven.make_frame(n_docs)
    frame.to_parquet(path, index=False)
    return {"generate_s": time.perf_counter() - t0, "peak_rss_mib": _rss_mib()}


def child_prepare(path: str, folder: str) -> dict:
    from tm_compare.demo import quillhaven
    from tm_compare.models.fits import TrainingData
    from tm_compare.text.corpus import Corpus
    from tm_compare.text.prepared import prepare

    t0 = time.perf_counter()
    corpus = Corpus.read(path, **quillhaven.CORPUS_COLUMNS)
    read_s = time.perf_counter() - t0
    peak_read = _rss_mib()
    t0 = time.perf_counter()
    prepared = prepare(corpus, cache_dir=Path(folder) / "prepared", progress=False)
    prepare_s = time.perf_counter() - t0
    n_corpus = len(corpus)
    del corpus
    TrainingData.from_prepared(prepared).save(Path(folder) / "training")
    return {
        "rows": n_corpus,
        "kept": len(prepared),
        "terms": len(prepared.dictionary),
        "tokens": int(prepared.dictionary.num_pos),
        "read_s": read_s,
        "prepare_s": prepare_s,
        "docs_per_s": n_corpus / prepare_s,
        "peak_read_mib": peak_read,
        "peak_rss_mib": _rss_mib(),
    }


def child_fit(folder: str, k: int, passes: int, engine: str) -> dict:
    import numpy as np

    from tm_compare.models.fits import TrainingData, train

    data = TrainingData.load(Path(folder) / "training")
    base, mapped = data.matrix.indices, False
    while base is not None and not mapped:  # scipy keeps a view of the memory map
        mapped, base = isinstance(base, np.memmap), getattr(base, "base", None)
    before = _rss_mib()
    t0 = time.perf_counter()
    fit = train(data, k, 0, engine, {"passes": passes, "starts": 1})  # one start: one fit's cost
    seconds = time.perf_counter() - t0
    disk = sum(f.stat().st_size for f in (Path(folder) / "training").glob("*.npy"))
    return {
        "memory_mapped": bool(mapped),
        "n_train": data.n_train,
        "fit_s": seconds,
        "docs_per_s_per_pass": data.n_train * fit.passes_used / seconds,
        "passes_used": fit.passes_used,
        "rss_before_fit_mib": before,
        "peak_rss_mib": _rss_mib(),
        "matrix_mib": disk / 2**20,
        "perplexity": fit.perplexity,
    }


def _in_child(*args: str, env: dict | None = None) -> dict:
    out = subprocess.run(
        [sys.executable, __file__, "--child", *args],
        check=True,
        capture_output=True,
        text=True,
        env={**os.environ, **(env or {})},
    ).stdout
    return json.loads(out.strip().splitlines()[-1])


def main(argv=None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--docs", type=int, default=100_000, help="demo articles")
    parser.add_argument("--topics", type=int, default=20)
    parser.add_argument("--passes", type=int, default=1)
    parser.add_argument("--engine", default=None, help="default: the default engine")
    parser.add_argument("--no-fit", action="store_true", help="stop after preparing")
    parser.add_argument("--child", nargs="+", help=argparse.SUPPRESS)
    args = parser.parse_args(argv)
    if args.child:
        kind, *rest = args.child
        run = {"generate": child_generate, "prepare": child_prepare, "fit": child_fit}[kind]
        typed = [int(v) if v.isdigit() else v for v in rest]
        print(json.dumps(run(*typed)))
        return
    from tm_compare.options import default

    engine = args.engine or default("engine")
    with tempfile.TemporaryDirectory(prefix="tm_compare_scale_") as tmp:
        path = str(Path(tmp) / "demo.parquet")
        g = _in_child(
            "generate",
            str(args.docs),
            path,
            env={"TM_COMPARE_MAX_DEMO_DOCS": str(max(args.docs, 200_000))},
        )
        print(
            f"generate: {args.docs:,} demo articles in {g['generate_s']:.0f} s, "
            f"{Path(path).stat().st_size / 2**20:,.0f} MiB of Parquet; peak RSS "
            f"{g['peak_rss_mib']:,.0f} MiB",
            flush=True,
        )
        p = _in_child("prepare", path, tmp)
        print(
            f"prepare: {p['rows']:,} documents after intake ({p['kept']:,} kept, "
            f"{p['terms']:,} terms, {p['tokens']:,} tokens) in {p['prepare_s']:.0f} s = "
            f"{p['docs_per_s']:,.0f} documents/s (reading and intake {p['read_s']:.0f} s); "
            f"peak RSS {p['peak_rss_mib']:,.0f} MiB ({p['peak_read_mib']:,.0f} MiB of it by "
            "the end of reading the corpus)",
            flush=True,
        )
        verdict = "met" if p["peak_rss_mib"] < GOAL_MIB else "NOT met"
        print(f"goal: peak RSS under {GOAL_MIB:,} MiB (6 GiB) at a million documents: {verdict}")
        if args.no_fit:
            return
        f = _in_child("fit", tmp, str(args.topics), str(args.passes), engine)
        print(
            f"fit from the memory-mapped matrix (memory-mapped: {f['memory_mapped']}): engine "
            f"{engine}, k = {args.topics}, {f['passes_used']} pass(es) over {f['n_train']:,} "
            f"training documents in {f['fit_s']:.0f} s = {f['docs_per_s_per_pass']:,.0f} "
            f"documents/s per pass; peak RSS {f['peak_rss_mib']:,.0f} MiB (after loading "
            f"{f['rss_before_fit_mib']:,.0f} MiB) for {f['matrix_mib']:,.0f} MiB of matrix on disk",
            flush=True,
        )


if __name__ == "__main__":
    main()
