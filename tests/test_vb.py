"""The compiled engine (tm_compare.models._vb) against gensim's engine, gensim and scipy.

References: the "gensim" engine, which drives gensim's own ``LdaModel`` (and is itself checked
against a plain ``LdaModel`` in tests/test_fits.py); ``scipy.special.psi``. Corpus: the first
120 documents of gensim's bundled ``gensim/test/test_data/lee_background.cor``.

Tolerance 1e-8 (relative): both run the same arithmetic on the same random draws, but sum in
different orders (BLAS against plain loops) and the compiled digamma is more accurate than
gensim's (~1.5e-13); observed differences on this corpus are below 1e-9.
"""

from __future__ import annotations

import mmap

import gensim
import numba
import numpy as np
import pytest
from gensim.models import LdaModel
from scipy.special import psi
from test_fits import lee_corpus

from tm_compare.models import _engines, _vb
from tm_compare.models.fits import TrainingData, fit_lda

RTOL = 1e-8


@pytest.fixture(scope="module")
def lee():
    return lee_corpus(120)


def test_digamma_matches_scipy():
    x = np.concatenate([np.logspace(-9, 6, 30001), [0.5, 1.0, 1.4616321449683623, 8.5, 8.5001]])
    ours = np.array([_vb.digamma(v) for v in x])
    # Reference: scipy.special.psi. Error measured relative to max(1, |psi|) (absolute near the
    # root at 1.46...); observed <= 1.5e-15.
    error = np.abs(ours - psi(x)) / np.maximum(1.0, np.abs(psi(x)))
    assert error.max() < 1e-14, x[error.argmax()]


def test_dirichlet_expectation_matches_scipy():
    a = np.random.default_rng(0).gamma(0.3, 2.0, (4, 50)) + 1e-3
    # Reference: E[log theta_j] = psi(a_j) - psi(sum a) for theta ~ Dirichlet(a) (textbook).
    expected = psi(a) - psi(a.sum(1))[:, None]
    np.testing.assert_allclose(_vb.dirichlet_expectation(a), expected, rtol=1e-13, atol=1e-13)


CASES = {
    # k > 5: gensim's M-step logs five topics and draws k uniforms doing so.
    "fixed passes, k=7": dict(k=7, random_state=3, passes=4, chunksize=25, tol=0),
    "stops on convergence, k=4": dict(k=4, random_state=11),
    "own priors and schedule, k=6": dict(
        k=6,
        random_state=5,
        alpha=0.3,
        eta=0.05,
        decay=0.7,
        offset=8.0,
        iterations=20,
        gamma_threshold=0.01,
        chunksize=40,
        passes=6,
        tol=0.02,
    ),
}


@pytest.mark.parametrize("case", CASES.values(), ids=CASES.keys())
def test_equals_the_gensim_engine(lee, case):
    case = dict(case)
    k, seed = case.pop("k"), case.pop("random_state")
    ours = fit_lda(lee, k, random_state=seed, engine="compiled", holdout=0.2, **case)
    ref = fit_lda(lee, k, random_state=seed, engine="gensim", holdout=0.2, **case)
    np.testing.assert_allclose(ours.topic_term, ref.topic_term, rtol=RTOL)
    np.testing.assert_allclose(ours.doc_dirichlet, ref.doc_dirichlet, rtol=RTOL)
    assert ours.perplexity == pytest.approx(ref.perplexity, rel=RTOL)
    assert (ours.passes_used, ours.converged) == (ref.passes_used, ref.converged)
    if ours.passes_used > 1:
        assert ours.last_change == pytest.approx(ref.last_change, rel=1e-6)
    assert ours.engine == "compiled" and ref.engine == "gensim"


def test_equals_plain_ldamodel(lee):
    # Reference: gensim's LdaModel called directly (gensim 4.x API), fixed passes, one start.
    fit = fit_lda(
        lee,
        6,
        random_state=2,
        engine="compiled",
        holdout=0,
        passes=3,
        chunksize=50,
        tol=0,
        starts=1,
    )
    model = LdaModel(
        lee.bow,
        id2word=dict(lee.dictionary.items()),
        num_topics=6,
        chunksize=50,
        passes=3,
        eval_every=None,
        random_state=2,
        dtype=np.float64,
    )
    np.testing.assert_allclose(fit.topic_term, model.get_topics(), rtol=RTOL)


def maps_a_file(array) -> bool:
    while array is not None and not isinstance(array, mmap.mmap):
        array = getattr(array, "base", None)
    return array is not None


def test_reads_a_memory_mapped_matrix(lee, tmp_path):
    data = TrainingData.from_prepared(lee, 0.2)
    mapped = TrainingData.load(data.save(tmp_path / "data"))
    for part in (mapped.matrix.data, mapped.matrix.indices, mapped.matrix.indptr):
        assert maps_a_file(part) and not part.flags.writeable
    s = {"passes": 3, "chunksize": 30}
    in_memory = _engines.run("compiled", data.matrix, data.heldout, 5, 1, s, data.vocab)
    on_disk = _engines.run("compiled", mapped.matrix, mapped.heldout, 5, 1, s, mapped.vocab)
    # Same numbers from the same arithmetic: the kernels only read the arrays.
    np.testing.assert_array_equal(on_disk.topic_term, in_memory.topic_term)
    np.testing.assert_array_equal(on_disk.gamma, in_memory.gamma)
    assert on_disk.word_bound == in_memory.word_bound


def test_saved_fit_records_engine_and_version(lee, tmp_path):
    fit = fit_lda(lee, 3, random_state=0, engine="compiled", passes=2)
    assert fit.engine_version == _engines.engine_version("compiled") != gensim.__version__
    from tm_compare.models.fits import Fit

    back = Fit.load(fit.save(tmp_path / "fit.npz"))
    assert (back.engine, back.engine_version) == ("compiled", fit.engine_version)
    np.testing.assert_array_equal(back.topic_term, fit.topic_term)


def test_works_without_a_writable_cache(monkeypatch):
    # numba raises RuntimeError at decoration when no cache folder can be used; the kernels are
    # then compiled in memory. Forced here by allowing only numba's zip-file locator (numba's
    # NUMBA_CACHE_LOCATOR_CLASSES setting), which does not apply to a plain file.
    monkeypatch.setattr(numba.config, "CACHE_LOCATOR_CLASSES", "ZipCacheLocator", raising=False)
    with pytest.raises(RuntimeError, match="no locator"):
        numba.njit(cache=True)(lambda x: x + 1)
    add = _vb._jit(lambda x: x + 1)
    assert add(41) == 42
