"""Online variational Bayes LDA compiled with numba: the "compiled" engine.

The algorithm is gensim's ``LdaModel`` (Hoffman, Blei & Bach 2010, "Online learning for
latent Dirichlet allocation") as :func:`tm_compare.models._engines._gensim` drives it, one
pass at a time, step for step:

- lambda starts as ``eta`` plus a draw ``RandomState(seed).gamma(100, 1/100, (k, V))``, and
  the first E-step uses ``exp(E[log beta])`` of that draw alone (gensim's ``__init__``);
- each chunk of training rows draws its documents' starting gamma from the same generator,
  then iterates gamma and phi per document until the mean absolute change of gamma falls
  below ``gamma_threshold`` or ``iterations`` run out (gensim's ``inference``);
- the M-step blends the chunk's statistics, scaled to the training corpus, with weight
  ``rho = (offset + passes_done + n / chunksize) ** -decay``, where ``n`` counts the
  documents of the first pass seen before this chunk (gensim's ``update``/``do_mstep``);
  after it gensim's ``print_topics(5)`` draws ``k`` uniforms when ``k > 5``, so this does too;
- afterwards every row is inferred chunk by chunk (fresh gamma draws), and the held-out
  bound is gensim's ``bound`` with those gamma.

Consuming the same random numbers in the same order, it gives gensim's results up to
floating-point rounding (tests/test_vb.py). :func:`probe` runs the start of a fit (its first
updates and the next chunk's E-step) for :mod:`tm_compare.models._starts`; ``fit(...,
model=state)`` continues from it and equals a fresh fit (tests/test_starts.py). Each
document's k x n block of ``exp_beta`` columns is C-contiguous, so numba vectorises the loops
over its words (1.6-1.9 times faster E-steps than a strided block, measured at k = 9 on the
20k demo). The kernels read the CSR arrays
(``indptr``, ``indices``, ``data``) directly, so a memory-mapped matrix is never copied
and no per-document Python objects are made. The digamma function is gensim's own series
(AS 103 with de Moivre's expansion from 8.5 on) carried two terms further, so it agrees
with ``scipy.special.psi`` to ~1e-15 where gensim's is off by up to ~1.5e-13.

Compiled code is cached on disk (numba ``cache=True``) next to this module or in the
user's cache folder; where neither is writable the kernels are compiled in memory at
first use of each process.
"""

from __future__ import annotations

import math

import numba
import numpy as np
from scipy.special import gammaln

EPS = np.finfo(np.float64).eps  # added to phi's normaliser, as gensim does
JITTER_TOPICS = 5  # gensim's do_mstep logs print_topics(5), drawing k uniforms when k > 5


def _jit(function=None, **options):
    if function is None:
        return lambda f: _jit(f, **options)
    try:
        return numba.njit(cache=True, nogil=True, **options)(function)
    except RuntimeError:  # numba found no writable cache folder: compile in memory
        return numba.njit(nogil=True, **options)(function)


@_jit
def digamma(x):
    """psi(x) for x > 0: gensim's ``_matutils._digamma`` (AS 103: the recurrence up to 8.5,
    then de Moivre's expansion) with two more terms of the expansion (Bernoulli numbers B12
    and B14), which take its error from ~1.5e-13 to rounding (~1e-15)."""
    if x <= 0.000001:
        return -0.57721566490153286060 - 1.0 / x + 1.6449340668482264365 * x
    value = 0.0
    while x < 8.5:
        value -= 1.0 / x
        x += 1.0
    r = 1.0 / x
    value = value + math.log(x) - 0.5 * r
    r = r * r
    return value - r * (
        1.0 / 12.0
        - r
        * (
            1.0 / 120.0
            - r
            * (
                1.0 / 252.0
                - r * (1.0 / 240.0 - r * (1.0 / 132.0 - r * (691.0 / 32760.0 - r / 12.0)))
            )
        )
    )


@_jit
def dirichlet_expectation(a):
    """E[log theta] for each row of ``a`` (rows are Dirichlet parameters)."""
    out = np.empty_like(a)
    for i in range(a.shape[0]):
        total = 0.0
        for j in range(a.shape[1]):
            total += a[i, j]
        psi_total = digamma(total)
        for j in range(a.shape[1]):
            out[i, j] = digamma(a[i, j]) - psi_total
    return out


@_jit
def _exp_elog_theta(gammad, out):
    total = 0.0
    for t in range(gammad.shape[0]):
        total += gammad[t]
    psi_total = digamma(total)
    for t in range(gammad.shape[0]):
        out[t] = math.exp(digamma(gammad[t]) - psi_total)


@_jit
def _phinorm(exp_theta, beta_d, phinorm):
    """phinorm_w = sum_t exp_theta_t * beta_d[t, w] + eps (gensim's ``np.dot(...) + epsilon``)."""
    phinorm[:] = 0.0
    for t in range(beta_d.shape[0]):
        for w in range(beta_d.shape[1]):
            phinorm[w] += exp_theta[t] * beta_d[t, w]
    phinorm += EPS


@_jit(fastmath={"reassoc"})
def _weighted(beta_d, ratio, weighted):
    """weighted_t = sum_w ratio_w * beta_d[t, w] (summed in any order, as BLAS does)."""
    for t in range(beta_d.shape[0]):
        s = 0.0
        for w in range(beta_d.shape[1]):
            s += ratio[w] * beta_d[t, w]
        weighted[t] = s


@_jit
def e_step(indptr, indices, data, rows, exp_beta, gamma, alpha, iterations, threshold, sstats):
    """gensim's ``inference`` on the CSR ``rows``: updates ``gamma`` (one row per entry of
    ``rows``, holding the starting draws) in place, given ``exp_beta`` = exp(E[log beta]).
    When ``sstats`` has columns, adds each document's ``outer(exp_theta, cts / phinorm)`` to
    its words' columns (the statistics before the final product with ``exp_beta``)."""
    k = gamma.shape[1]
    collect = sstats.shape[1] > 0
    longest = 0
    for r in rows:
        longest = max(longest, indptr[r + 1] - indptr[r])
    buffer = np.empty(k * longest)  # one contiguous k x n block per document (see below)
    cts_all = np.empty(longest)
    phinorm_all = np.empty(longest)
    ratio_all = np.empty(longest)
    exp_theta = np.empty(k)
    gammad = np.empty(k)
    weighted = np.empty(k)
    for d in range(rows.shape[0]):
        start, end = indptr[rows[d]], indptr[rows[d] + 1]
        n = end - start
        ids = indices[start:end]
        # A C-contiguous view (reshape of a 1-D slice), not buffer[:, :n]: numba vectorises
        # the loops over words only for contiguous rows (measured: E-step 1.6-1.9 times faster).
        beta_d, cts = buffer[: k * n].reshape((k, n)), cts_all[:n]
        phinorm, ratio = phinorm_all[:n], ratio_all[:n]
        for w in range(n):
            cts[w] = data[start + w]
            for t in range(k):
                beta_d[t, w] = exp_beta[t, ids[w]]
        gammad[:] = gamma[d]
        _exp_elog_theta(gammad, exp_theta)
        _phinorm(exp_theta, beta_d, phinorm)
        for _ in range(iterations):
            ratio[:] = cts / phinorm
            _weighted(beta_d, ratio, weighted)
            change = 0.0
            for t in range(k):
                last = gammad[t]
                gammad[t] = alpha[t] + exp_theta[t] * weighted[t]
                change += abs(gammad[t] - last)
            _exp_elog_theta(gammad, exp_theta)
            _phinorm(exp_theta, beta_d, phinorm)
            if change / k < threshold:
                break
        gamma[d] = gammad
        if collect:
            for w in range(n):
                c = cts[w] / phinorm[w]
                for t in range(k):
                    sstats[t, ids[w]] += exp_theta[t] * c


@_jit
def doc_bound(indptr, indices, data, rows, gamma, elog_beta_t, alpha):
    """The document part of gensim's ``bound``: E[log p(doc | theta, beta)] plus
    E[log p(theta | alpha) - log q(theta | gamma)], summed over ``rows``."""
    k = gamma.shape[1]
    elog_theta = np.empty(k)
    x = np.empty(k)
    sum_alpha = 0.0
    for t in range(k):
        sum_alpha += alpha[t]
    score = 0.0
    for d in range(rows.shape[0]):
        gammad = gamma[d]
        total = 0.0
        for t in range(k):
            total += gammad[t]
        psi_total = digamma(total)
        for t in range(k):
            elog_theta[t] = digamma(gammad[t]) - psi_total
        words = 0.0
        for j in range(indptr[rows[d]], indptr[rows[d] + 1]):
            top = -np.inf
            for t in range(k):
                x[t] = elog_theta[t] + elog_beta_t[indices[j], t]
                top = max(top, x[t])
            s = 0.0
            for t in range(k):
                s += math.exp(x[t] - top)
            words += data[j] * (math.log(s) + top)
        prior = 0.0
        lgammas = 0.0
        for t in range(k):
            prior += (alpha[t] - gammad[t]) * elog_theta[t]
            lgammas += math.lgamma(gammad[t]) - math.lgamma(alpha[t])
        score += words + prior + lgammas + math.lgamma(sum_alpha) - math.lgamma(total)
    return score


def csr_arrays(matrix):
    """``indptr, indices, data`` as read-only views (no copy): numba compiles one version of a
    kernel for read-only and one for writable arrays, and memory-mapped matrices are read-only,
    so in-memory ones are passed the same way to need one compiled version, not two."""
    views = []
    for array in (matrix.indptr, matrix.indices, matrix.data):
        view = array.view()
        view.flags.writeable = False
        views.append(view)
    return views


def _expectations(lam):
    elog = dirichlet_expectation(lam)
    return elog, np.exp(elog)


class OnlineLDA:
    """The state of one fit: lambda = ``eta + sstats`` and ``exp(E[log beta])``."""

    def __init__(self, n_terms, k, random_state, s, alpha, eta):
        self.k, self.s = k, s
        self.alpha = np.full(k, alpha)
        self.eta = np.full(n_terms, eta)
        self.rng = np.random.RandomState(random_state)
        self.sstats = self.rng.gamma(100.0, 1.0 / 100.0, (k, n_terms))
        self.exp_beta = _expectations(self.sstats)[1]
        self.seen = 0  # documents of the first pass, for the learning rate
        self.ahead = None  # (chunks updated, statistics of the next chunk) after a probe

    @property
    def lam(self) -> np.ndarray:
        return self.eta + self.sstats

    def infer(self, matrix, rows, sstats):
        gamma = self.rng.gamma(100.0, 1.0 / 100.0, (len(rows), self.k))
        e_step(
            *csr_arrays(matrix),
            np.asarray(rows, dtype=np.int64),
            self.exp_beta,
            gamma,
            self.alpha,
            self.s["iterations"],
            self.s["gamma_threshold"],
            sstats,
        )
        return gamma

    def e_chunk(self, matrix, rows):
        """The E-step of one chunk of training rows: its documents' gamma and the chunk's
        statistics (gensim's ``do_estep``: ``sstats * exp_beta``)."""
        chunk = np.zeros_like(self.sstats)
        gamma = self.infer(matrix, rows, chunk)
        chunk *= self.exp_beta
        return gamma, chunk

    def m_chunk(self, chunk, n_rows, n_train, size, passes_done):
        """The M-step of a chunk of ``n_rows`` documents (gensim's ``do_mstep``)."""
        s = self.s
        rho = pow(s["offset"] + passes_done + self.seen / size, -s["decay"])
        # LdaState.blend: this state already counts n_train documents; the chunk is
        # scaled up to them.
        scale = 1.0 if n_rows == n_train else n_train / n_rows
        self.sstats *= 1.0 - rho
        self.sstats += rho * scale * chunk
        self.exp_beta = _expectations(self.lam)[1]
        if self.k > JITTER_TOPICS:
            self.rng.rand(self.k)
        if passes_done == 0:
            self.seen += n_rows

    def one_pass(self, matrix, train, passes_done):
        n_train = len(train)
        size = min(n_train, self.s["chunksize"])
        first, ahead = 0, None
        if self.ahead is not None:  # a probe's state: its updates made, the next E-step done
            (first, ahead), self.ahead = self.ahead, None
        for c, start in enumerate(range(first * size, n_train, size)):
            rows = train[start : start + size]
            chunk = ahead if c == 0 and ahead is not None else self.e_chunk(matrix, rows)[1]
            self.m_chunk(chunk, len(rows), n_train, size, passes_done)

    def bound(self, matrix, rows, gamma, ratio) -> float:
        """gensim's ``bound(held, gamma, subsample_ratio=ratio)``."""
        lam = self.lam
        elog_beta, _ = _expectations(lam)
        docs = doc_bound(
            *csr_arrays(matrix),
            np.asarray(rows, dtype=np.int64),
            np.ascontiguousarray(gamma),
            np.ascontiguousarray(elog_beta.T),
            self.alpha,
        )
        score = docs * ratio
        score += np.sum((self.eta - lam) * elog_beta)
        score += np.sum(gammaln(lam) - gammaln(self.eta))
        score += np.sum(gammaln(np.sum(self.eta)) - gammaln(np.sum(lam, 1)))
        return float(score)


def probe(matrix, train, k, random_state, s, alpha, eta, updates):
    """The start of a fit: its first ``updates`` online updates, then the E-step of its next
    chunk, exactly as :func:`fit` makes them (same draws, same order). Returns the model,
    the rows of that chunk and their gamma; ``fit(..., model=model)`` continues from there
    and equals a fresh fit from ``random_state``. Needs more than ``updates`` chunks in a
    pass."""
    model = OnlineLDA(matrix.shape[1], k, random_state, s, alpha, eta)
    train = np.asarray(train, dtype=np.int64)
    n_train = len(train)
    size = min(n_train, s["chunksize"])
    if updates * size >= n_train:
        msg = f"a probe of {updates} updates needs more than {updates} chunks in a pass"
        raise ValueError(msg)
    for c in range(updates):
        rows = train[c * size : (c + 1) * size]
        model.m_chunk(model.e_chunk(matrix, rows)[1], len(rows), n_train, size, 0)
    rows = train[updates * size : (updates + 1) * size]
    gamma, chunk = model.e_chunk(matrix, rows)
    model.ahead = (updates, chunk)
    return model, rows, gamma


def fit(matrix, train, held, k, random_state, s, alpha, eta, stopper, model=None):
    """Fit on the CSR rows ``train``; return (lambda, gamma of every row, held-out per-word
    bound), the engines' contract in :mod:`tm_compare.models._engines`. ``model``: a
    :func:`probe` of this fit to continue from (``random_state`` is then its own)."""
    if model is None:
        model = OnlineLDA(matrix.shape[1], k, random_state, s, alpha, eta)
    train = np.asarray(train, dtype=np.int64)
    while True:
        model.one_pass(matrix, train, stopper.done)
        if stopper.after_pass(model.lam):
            break
    n_docs, size = matrix.shape[0], s["chunksize"]
    empty = np.zeros((k, 0))
    gamma = np.concatenate(
        [
            model.infer(matrix, np.arange(start, min(start + size, n_docs)), empty)
            for start in range(0, n_docs, size)
        ]
    )
    word_bound = np.nan
    words = matrix[held].sum() if len(held) else 0
    if words > 0:
        ratio = len(train) / len(held)
        word_bound = model.bound(matrix, held, gamma[held], ratio) / (ratio * words)
    return model.lam, gamma, word_bound
