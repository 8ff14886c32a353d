"""Checks of talkthemes.models.lda_infer and lda_state against gensim 4.4.0's own LdaModel.

Reference: gensim 4.4.0, ``gensim/models/ldamodel.py`` (``LdaModel.inference``, ``bound``,
``log_perplexity``, ``LdaState``). The corpus is invented test data; the reference is the
library's own computation on it.
"""

from __future__ import annotations

import copy

import gensim
import numpy as np
import pytest
import scipy.sparse as sp
from gensim.matutils import Sparse2Corpus
from gensim.models import LdaModel

from talkthemes.models.lda import LdaTopics
from talkthemes.models.lda_infer import heldout_perplexity, variational_bound
from talkthemes.models.lda_state import lda_state_arrays, lda_state_params, restore_lda

pytestmark = pytest.mark.skipif(
    gensim.__version__ != "4.4.0", reason="pins the behaviour of gensim 4.4.0"
)


def invented_counts(n_docs: int, seed: int) -> sp.csr_matrix:
    """Invented data: 4 topics over 30 terms, Dirichlet(0.3) mixtures, 30–60 tokens a document."""
    rng = np.random.default_rng(seed)
    topics = rng.dirichlet(np.full(30, 0.1), size=4)
    rows = []
    for _ in range(n_docs):
        theta = rng.dirichlet(np.full(4, 0.3))
        rows.append(rng.multinomial(rng.integers(30, 61), theta @ topics))
    return sp.csr_matrix(np.array(rows, dtype=np.float64))


@pytest.fixture(scope="module")
def fitted() -> LdaTopics:
    return LdaTopics(k=4, seed=11, passes=4, chunksize=40, alpha="auto", eta="auto").fit(
        invented_counts(160, seed=1)
    )


def test_restored_model_infers_exactly_like_the_original(fitted) -> None:
    """gensim 4.4.0 ``LdaModel.inference``: same state + same random state ⇒ same γ."""
    original = fitted.model_
    restored = restore_lda(lda_state_arrays(original), lda_state_params(original), seed=5)
    chunk = list(Sparse2Corpus(invented_counts(25, seed=2), documents_columns=False))
    original_twin = copy.copy(original)
    original_twin.random_state = np.random.RandomState(5)
    gamma_original, sstats_original = original_twin.inference(chunk, collect_sstats=True)
    gamma_restored, sstats_restored = restored.inference(chunk, collect_sstats=True)
    np.testing.assert_array_equal(gamma_restored, gamma_original)
    np.testing.assert_array_equal(sstats_restored, sstats_original)
    # gensim's own (uncompiled) E-step on the same state and random state: equal up to
    # floating-point summation order
    gensim_twin = LdaModel.__new__(LdaModel)
    gensim_twin.__dict__.update(original.__dict__)
    gensim_twin.random_state = np.random.RandomState(5)
    gamma_gensim, sstats_gensim = gensim_twin.inference(chunk, collect_sstats=True)
    np.testing.assert_allclose(gamma_restored, gamma_gensim, rtol=1e-9, atol=0)
    np.testing.assert_allclose(sstats_restored, sstats_gensim, rtol=1e-9, atol=1e-12)
    np.testing.assert_array_equal(restored.get_topics(), original.get_topics())
    np.testing.assert_array_equal(restored.alpha, original.alpha)


def test_heldout_perplexity_is_exp_of_gensims_log_perplexity(fitted) -> None:
    """gensim 4.4.0 ``log_perplexity(chunk, total_docs)`` returns the per-word bound in nats;
    our perplexity is exp(−that). gensim's ``bound`` infers each document in turn with
    ``inference([doc])``, drawing the same Gamma(100, 1/100) starting points from the random
    state as one draw for the whole chunk, so a fresh RandomState(seed) gives the same γ."""
    model = fitted.model_
    heldout = invented_counts(30, seed=3)
    twin = LdaModel.__new__(LdaModel)
    twin.__dict__.update(model.__dict__)
    twin.random_state = np.random.RandomState(8)
    chunk = list(Sparse2Corpus(heldout, documents_columns=False))
    per_word = twin.log_perplexity(chunk, total_docs=160)
    ours = heldout_perplexity(model, heldout, total_docs=160, seed=8)
    assert ours == pytest.approx(np.exp(-per_word), rel=1e-10)
    assert fitted.heldout_perplexity(heldout, total_docs=160) == pytest.approx(
        heldout_perplexity(model, heldout, total_docs=160, seed=11), rel=0
    )


def test_vectorised_bound_equals_gensims_bound(fitted) -> None:
    """gensim 4.4.0 ``LdaModel.bound(corpus, gamma, subsample_ratio)``. gensim indexes ``gamma[d]``
    and its Cython ``logsumexp`` wants a 2-D row, so γ is passed to it as shape (D, 1, K)."""
    model = fitted.model_
    heldout = invented_counts(20, seed=4)
    chunk = list(Sparse2Corpus(heldout, documents_columns=False))
    gamma, _ = model.inference(chunk)
    reference = model.bound(chunk, gamma=gamma[:, np.newaxis, :], subsample_ratio=2.5)
    ours = variational_bound(
        heldout,
        gamma,
        lambda_=model.state.get_lambda(),
        alpha=model.alpha,
        eta=model.eta,
        subsample_ratio=2.5,
    )
    assert ours == pytest.approx(reference, rel=1e-12)


def test_gensim_learns_eta_outside_the_topics() -> None:
    """gensim 4.4.0: with eta='auto' the model's ``eta`` is updated, the state's copy (which alone
    forms λ = η + sstats, hence the topics) is not, so the topics equal those of eta='symmetric'.
    This is why the state keeps both (``eta`` and ``state_eta``). If this test fails, gensim
    changed and the eta default and the saved state must be revisited."""
    counts = invented_counts(120, seed=6)
    corpus = Sparse2Corpus(counts, documents_columns=False)
    settings = {
        "num_topics": 3,
        "id2word": {i: str(i) for i in range(30)},
        "passes": 3,
        "chunksize": 40,
        "random_state": 2,
        "dtype": np.float64,
        "eval_every": None,
    }
    learned = LdaModel(corpus, eta="auto", **settings)
    fixed = LdaModel(corpus, eta="symmetric", **settings)
    assert not np.allclose(learned.eta, learned.state.eta)
    np.testing.assert_array_equal(learned.state.eta, np.full(30, 1 / 3))
    np.testing.assert_array_equal(learned.get_topics(), fixed.get_topics())
    arrays = lda_state_arrays(learned)
    np.testing.assert_array_equal(arrays["eta"], learned.eta)
    np.testing.assert_array_equal(arrays["state_eta"], learned.state.eta)
