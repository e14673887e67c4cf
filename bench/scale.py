"""How far one machine goes: preparing the demo articles, and one fit from a memory-mapped matrix.

Two measurements, each in a fresh child process so its peak resident memory
(``ru_maxrss``) is its own:

``prepare``: the Quillhaven demo generator writes ``--prepare-docs`` articles and
``tm_compare.prepare`` (defaults) prepares them; prints articles/s and peak RSS.

``fit``: a document-term matrix of ``--fit-docs`` documents, drawn from an LDA
generative process (``--topics`` planted topics over ``--vocab`` words), is written
chunk by chunk to disk in the layout of ``TrainingData.save`` (``.npy`` files), then
one fit (gensim, k = ``--topics``, ``--passes``) runs from it memory-mapped: the rows
are streamed to gensim one chunk at a time, so resident memory stays near the model
and one chunk, not the corpus. Prints documents/s of writing and fitting, and the
fit's peak RSS next to the matrix size on disk.

    python bench/scale.py --prepare-docs 20000 --fit-docs 1000000
"""

from __future__ import annotations

import argparse
import json
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np


def _rss_mib() -> float:
    """Peak resident memory of this process (VmHWM; ru_maxrss would carry the parent's over)."""
    for line in Path("/proc/self/status").read_text().splitlines():
        if line.startswith("VmHWM:"):
            return int(line.split()[1]) / 1024
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024  # Linux: KiB


def child_prepare(n_docs: int) -> dict:
    from tm_compare.demo import quillhaven
    from tm_compare.text.prepared import prepare

    t0 = time.perf_counter()
    corpus = quillhaven.make_corpus(n_docs)
    made = time.perf_counter() - t0
    t0 = time.perf_counter()
    prepared = prepare(corpus, progress=False)
    seconds = time.perf_counter() - t0
    return {
        "articles": n_docs,
        "kept": len(prepared),
        "generate_s": made,
        "prepare_s": seconds,
        "docs_per_s": n_docs / seconds,
        "peak_rss_mib": _rss_mib(),
    }


def write_matrix(folder: Path, n_docs, vocab, k, doc_length, seed=0, chunk=20_000) -> dict:
    """Write an LDA-drawn count matrix as indptr/indices/data .npy files, chunk by chunk."""
    rng = np.random.default_rng(seed)
    topics = rng.dirichlet(np.full(vocab, 0.05), size=k)
    cdf = np.cumsum(topics, axis=1)
    folder.mkdir(parents=True, exist_ok=True)
    raw = {n: open(folder / f"{n}.bin", "wb") for n in ("indices", "data")}  # noqa: SIM115
    row_nnz = np.zeros(n_docs, dtype=np.int64)
    t0 = time.perf_counter()
    for lo in range(0, n_docs, chunk):
        hi = min(n_docs, lo + chunk)
        theta = rng.dirichlet(np.full(k, 0.1), size=hi - lo)
        lengths = np.maximum(1, rng.poisson(doc_length, size=hi - lo))
        doc = np.repeat(np.arange(hi - lo), lengths)
        # Inverse-CDF draws: each token's topic from its document's mixture, then its word.
        shifted = (np.cumsum(theta, axis=1) + np.arange(hi - lo)[:, None]).ravel()
        topic = np.searchsorted(shifted, doc + rng.random(len(doc)) * 0.999999) - doc * k
        topic = np.clip(topic, 0, k - 1)
        word = np.empty(len(doc), dtype=np.int64)
        for t in range(k):
            at = np.flatnonzero(topic == t)
            word[at] = np.minimum(np.searchsorted(cdf[t], rng.random(len(at))), vocab - 1)
        keys, counts = np.unique(doc * vocab + word, return_counts=True)
        rows, cols = np.divmod(keys, vocab)
        row_nnz[lo:hi] = np.bincount(rows, minlength=hi - lo)
        cols.astype(np.int32).tofile(raw["indices"])
        counts.astype(np.float64).tofile(raw["data"])
    for fh in raw.values():
        fh.close()
    seconds = time.perf_counter() - t0
    indptr = np.concatenate(([0], np.cumsum(row_nnz)))
    # 32-bit offsets when they fit, like scipy's own: matching index types keep scipy from
    # copying the memory-mapped arrays.
    np.save(folder / "indptr.npy", indptr.astype(np.int32 if indptr[-1] < 2**31 else np.int64))
    for name, dtype in (("indices", np.int32), ("data", np.float64)):
        src = np.memmap(folder / f"{name}.bin", dtype=dtype, mode="r")
        out = np.lib.format.open_memmap(folder / f"{name}.npy", "w+", dtype, src.shape)
        for start in range(0, len(src), 1 << 24):
            out[start : start + (1 << 24)] = src[start : start + (1 << 24)]
        out.flush()
        del out, src
        (folder / f"{name}.bin").unlink()
    heldout = np.zeros(n_docs, dtype=bool)
    heldout[rng.permutation(n_docs)[: n_docs // 10]] = True
    np.save(folder / "heldout.npy", heldout)
    meta = {
        "shape": [n_docs, vocab],
        "vocab": [f"w{i}" for i in range(vocab)],
        "doc_ids": [f"d{i}" for i in range(n_docs)],
        "corpus_fingerprint": "bench-scale",
    }
    (folder / "meta.json").write_text(json.dumps(meta), encoding="utf-8")
    size = sum(f.stat().st_size for f in folder.glob("*.npy"))
    return {"write_s": seconds, "nnz": int(row_nnz.sum()), "disk_mib": size / 2**20}


def child_fit(folder: str, k: int, passes: int) -> dict:
    from tm_compare.models.fits import TrainingData, train

    data = TrainingData.load(Path(folder))
    base, mapped = data.matrix.indices, False
    while base is not None and not mapped:  # scipy keeps a view of the memory map
        mapped, base = isinstance(base, np.memmap), getattr(base, "base", None)
    before = _rss_mib()
    t0 = time.perf_counter()
    fit = train(data, k, 0, "gensim", {"passes": passes, "chunksize": 2000})
    seconds = time.perf_counter() - t0
    return {
        "memory_mapped": bool(mapped),
        "fit_s": seconds,
        "docs_per_s_per_pass": data.n_train * passes / seconds,
        "rss_before_fit_mib": before,
        "peak_rss_mib": _rss_mib(),
        "perplexity": fit.perplexity,
    }


def _in_child(*args: str) -> dict:
    out = subprocess.run(
        [sys.executable, __file__, *args], check=True, capture_output=True, text=True
    ).stdout
    return json.loads(out.strip().splitlines()[-1])


def main(argv=None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--prepare-docs", type=int, default=20_000, help="0 skips")
    parser.add_argument("--fit-docs", type=int, default=1_000_000, help="0 skips")
    parser.add_argument("--topics", type=int, default=20)
    parser.add_argument("--vocab", type=int, default=5000)
    parser.add_argument("--doc-length", type=int, default=150)
    parser.add_argument("--passes", type=int, default=1)
    parser.add_argument("--child", nargs="+", help=argparse.SUPPRESS)
    args = parser.parse_args(argv)
    if args.child:
        kind, *rest = args.child
        result = (
            child_prepare(int(rest[0]))
            if kind == "prepare"
            else child_fit(rest[0], int(rest[1]), int(rest[2]))
        )
        print(json.dumps(result))
        return
    if args.prepare_docs:
        r = _in_child("--child", "prepare", str(args.prepare_docs))
        print(
            f"prepare: {r['articles']:,} demo articles ({r['kept']:,} kept) in {r['prepare_s']:.1f} s "
            f"= {r['docs_per_s']:,.0f} articles/s; generating them took {r['generate_s']:.1f} s; "
            f"peak RSS {r['peak_rss_mib']:,.0f} MiB"
        )
    if args.fit_docs:
        with tempfile.TemporaryDirectory(prefix="tm_compare_scale_") as tmp:
            folder = Path(tmp) / "training"
            w = write_matrix(folder, args.fit_docs, args.vocab, args.topics, args.doc_length)
            print(
                f"matrix: {args.fit_docs:,} documents x {args.vocab:,} terms, {w['nnz']:,} non-zeros, "
                f"{w['disk_mib']:,.0f} MiB on disk; written at {args.fit_docs / w['write_s']:,.0f} documents/s"
            )
            r = _in_child("--child", "fit", str(folder), str(args.topics), str(args.passes))
            print(
                f"fit from the memory-mapped matrix (memory-mapped: {r['memory_mapped']}): "
                f"k = {args.topics}, {args.passes} pass(es), {r['fit_s']:.0f} s = "
                f"{r['docs_per_s_per_pass']:,.0f} training documents/s per pass; peak RSS "
                f"{r['peak_rss_mib']:,.0f} MiB (after loading {r['rss_before_fit_mib']:,.0f} MiB) "
                f"for {w['disk_mib']:,.0f} MiB of matrix on disk"
            )


if __name__ == "__main__":
    main()
