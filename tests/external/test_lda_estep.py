"""The compiled LDA E-step against gensim 4.4.0's own ``LdaModel`` and scipy's digamma.

References:
- gensim 4.4.0, ``gensim/models/ldamodel.py``: ``LdaModel.inference`` (the per-document
  fixed-point iteration of Hoffman, Blei & Bach 2010) and ``LdaModel.update`` (online training).
- scipy ``scipy.special.psi`` (Cephes) for the digamma function, ``scipy.special.logsumexp``
  for the word part of the bound.

The corpora are invented test data drawn from the LDA generative process; the references are
the libraries' own computations on them.
"""

from __future__ import annotations

import copy

import gensim
import numpy as np
import pytest
import scipy.sparse as sp
from gensim.matutils import Sparse2Corpus
from gensim.models import LdaModel
from scipy.special import logsumexp, psi

from talkthemes.models.csr_lda import CsrLdaModel, RowCorpus
from talkthemes.models.estep import bound_words, digamma
from talkthemes.models.lda import LdaTopics

pytestmark = pytest.mark.skipif(
    gensim.__version__ != "4.4.0", reason="pins the behaviour of gensim 4.4.0"
)


def _lda_counts(n_docs: int, n_terms: int, k: int, seed: int) -> sp.csr_matrix:
    rng = np.random.default_rng(seed)
    topics = rng.dirichlet(np.full(n_terms, 0.05), size=k)
    rows = []
    for d in range(n_docs):
        length = 0 if d == 0 else int(rng.integers(1, 120))
        rows.append(rng.multinomial(length, rng.dirichlet(np.full(k, 0.2)) @ topics))
    return sp.csr_matrix(np.array(rows, dtype=np.float64))


def _gensim_twin(model: LdaModel, seed: int) -> LdaModel:
    twin = LdaModel.__new__(LdaModel)
    twin.__dict__.update(model.__dict__)
    twin.random_state = np.random.RandomState(seed)
    return twin


def test_digamma_matches_scipy() -> None:
    """scipy.special.psi as the reference, over the range γ takes (from tiny to large)."""
    xs = np.concatenate([np.geomspace(1e-6, 1e6, 400), np.linspace(0.5, 12, 200)])
    ours = np.array([digamma(float(x)) for x in xs])
    np.testing.assert_allclose(ours, psi(xs), rtol=1e-12, atol=1e-12)
    assert all(np.isnan(digamma(x)) for x in (0.0, -1.5, float("nan"), float("-inf")))


@pytest.mark.parametrize(
    ("k", "alpha", "iterations"), [(3, "symmetric", 50), (12, "asymmetric", 50), (7, "auto", 4)]
)
def test_compiled_inference_equals_gensim(k: int, alpha: str, iterations: int) -> None:
    """gensim 4.4.0 ``LdaModel.inference`` on the same state and random state: same γ and
    sufficient statistics up to summation order (iterations=4 makes most documents stop at
    the cap rather than converge; empty documents are included)."""
    counts = _lda_counts(300, 80, k, seed=k)
    fitted = LdaTopics(k=k, seed=3, passes=2, chunksize=60, alpha=alpha, iterations=iterations)
    model = fitted.fit(counts).model_
    assert isinstance(model, CsrLdaModel)
    new = _lda_counts(90, 80, k, seed=100 + k)
    assert (np.diff(new.indptr) == 0).any()  # an empty document is among them
    chunk = list(Sparse2Corpus(new, documents_columns=False))
    ours = copy.copy(model)
    ours.random_state = np.random.RandomState(7)
    gamma, sstats = ours.inference(chunk, collect_sstats=True)
    gamma_ref, sstats_ref = _gensim_twin(model, 7).inference(chunk, collect_sstats=True)
    # summation order can move a document's stopping point by one iteration (a change below
    # gamma_threshold), hence 1e-6 rather than machine precision
    np.testing.assert_allclose(gamma, gamma_ref, rtol=1e-6, atol=1e-9)
    np.testing.assert_allclose(sstats, sstats_ref, rtol=1e-6, atol=1e-9)
    # the row-reference path (used in training) gives the same as bag-of-words chunks
    ours.random_state = np.random.RandomState(7)
    refs = list(RowCorpus(new))
    gamma_rows, sstats_rows = ours.inference(refs, collect_sstats=True)
    np.testing.assert_array_equal(gamma_rows, gamma)
    np.testing.assert_array_equal(sstats_rows, sstats)


def test_training_with_the_compiled_step_follows_gensims_training() -> None:
    """gensim 4.4.0 ``LdaModel(corpus, ...)`` trained on the same corpus with the same seed
    and settings: the topics agree to 1e-6 (the two differ only in summation order)."""
    counts = _lda_counts(400, 60, 5, seed=42)
    settings = dict(
        num_topics=5,
        chunksize=80,
        passes=3,
        alpha="auto",
        eta="symmetric",
        iterations=50,
        random_state=11,
        dtype=np.float64,
        eval_every=None,
        id2word={i: f"t{i}" for i in range(counts.shape[1])},
    )
    ours = CsrLdaModel(corpus=None, **settings)
    ours.update(RowCorpus(counts))
    reference = LdaModel(corpus=Sparse2Corpus(counts, documents_columns=False), **settings)
    np.testing.assert_allclose(ours.get_topics(), reference.get_topics(), rtol=0, atol=1e-6)
    np.testing.assert_allclose(ours.alpha, reference.alpha, rtol=1e-6)


def test_word_part_of_the_bound_matches_scipy_logsumexp() -> None:
    """scipy ``scipy.special.logsumexp`` as the reference for Σ n_dw ln Σ_k exp(a_dk + b_kw),
    on ordinary values and on ones so far apart that the factored sum underflows (the
    compiled loop then falls back to the plain log-sum-exp)."""
    rng = np.random.default_rng(3)
    dense = rng.poisson(0.7, size=(40, 25)).astype(np.float64)
    e_log_theta = rng.normal(-3.0, 2.0, size=(40, 6))
    e_log_beta_t = rng.normal(-6.0, 3.0, size=(25, 6))
    # document 0 and term 0: each one's best topic is 800 nats down in the other, so every
    # product of the factored sum underflows to 0 (exp(−745) is the last positive double)
    e_log_theta[0] = [0.0, -800.0, -800.0, -800.0, -800.0, -800.0]
    e_log_beta_t[0] = [-800.0, 0.0, -1600.0, -1600.0, -1600.0, -1600.0]
    dense[0, 0] = 2.0
    counts = sp.csr_matrix(dense)
    joint = logsumexp(e_log_theta[:, None, :] + e_log_beta_t[None, :, :], axis=2)
    expected = float(np.sum(dense * joint))
    ours = bound_words(
        counts.indptr.astype(np.int64),
        counts.indices.astype(np.int64),
        counts.data,
        np.ascontiguousarray(e_log_theta),
        np.ascontiguousarray(e_log_beta_t),
    )
    assert ours == pytest.approx(expected, rel=1e-12)
    assert joint[0, 0] == pytest.approx(-800.0 + np.log(2.0), rel=1e-12)
