"""The LDA stopping rule against gensim 4.4.0's own bound and training loop.

References:
- gensim 4.4.0, ``gensim/models/ldamodel.py``: ``LdaModel.bound(corpus, gamma)`` (the
  variational lower bound of Hoffman, Blei & Bach 2010), ``LdaModel.log_perplexity`` (the
  per-word bound with a fresh E-step) and ``LdaModel.update`` (online training over passes).
- Hoffman, M. D., Blei, D. M., Bach, F. (2010). Online Learning for Latent Dirichlet
  Allocation. NIPS 23 — the stopping rule on the relative change of the bound.

The corpus is invented test data drawn from the LDA generative process; the references are the
library's own computations on it.
"""

from __future__ import annotations

import gensim
import numpy as np
import pytest
import scipy.sparse as sp
from gensim.matutils import Sparse2Corpus
from gensim.models import LdaModel

from talkthemes.models.csr_lda import CsrLdaModel
from talkthemes.models.lda_train import OnlineRun, relative_change, train_to_convergence

pytestmark = pytest.mark.skipif(
    gensim.__version__ != "4.4.0", reason="pins the behaviour of gensim 4.4.0"
)

TOL = 3e-4


def invented_counts(n_docs: int, seed: int) -> sp.csr_matrix:
    """Invented data: 4 topics over 30 terms, Dirichlet(0.3) mixtures, 30–60 tokens a document."""
    rng = np.random.default_rng(seed)
    topics = rng.dirichlet(np.full(30, 0.1), size=4)
    rows = [
        rng.multinomial(int(rng.integers(30, 61)), rng.dirichlet(np.full(4, 0.3)) @ topics)
        for _ in range(n_docs)
    ]
    return sp.csr_matrix(np.array(rows, dtype=np.float64))


SETTINGS = {
    "num_topics": 4,
    "id2word": {i: str(i) for i in range(30)},
    "chunksize": 40,
    "alpha": "auto",
    "eta": "symmetric",
    "eval_every": None,
    "dtype": np.float64,
}


def gensim_twin(model: LdaModel, seed: int) -> LdaModel:
    """A plain gensim ``LdaModel`` holding the same state (gensim's own methods, uncompiled)."""
    twin = LdaModel.__new__(LdaModel)
    twin.__dict__.update(model.__dict__)
    twin.random_state = np.random.RandomState(seed)
    return twin


def test_trace_is_gensims_bound_and_stops_where_the_rule_says() -> None:
    """gensim 4.4.0 ``LdaModel.bound(corpus, gamma)`` on the model after each pass, with the γ of
    that pass, divided by the tokens: equal to our trace; the rule applied to gensim's numbers
    stops at the same pass. (gensim indexes ``gamma[d]`` and its Cython ``logsumexp`` wants a
    2-D row, so γ goes in as shape (D, 1, K); it must be writable.)"""
    counts = invented_counts(200, seed=1)
    corpus = list(Sparse2Corpus(counts, documents_columns=False))
    n_words = float(counts.sum())
    run = OnlineRun(CsrLdaModel(corpus=None, random_state=3, **SETTINGS), counts)
    reference: list[float] = []
    stopped_at = None
    while run.passes_done < 60:
        run.run_pass()
        gamma = np.array(run.gamma)[:, np.newaxis, :]
        reference.append(gensim_twin(run.model, 0).bound(corpus, gamma=gamma) / n_words)
        if len(reference) > 1 and relative_change(reference[-2], reference[-1]) < TOL:
            stopped_at = len(reference)
            break
    np.testing.assert_allclose(run.bounds, reference, rtol=1e-12)
    assert stopped_at is not None and stopped_at == run.passes_done
    # the same run through train_to_convergence stops at that pass too
    _, trace = train_to_convergence(
        lambda s: CsrLdaModel(corpus=None, random_state=s, **SETTINGS),
        counts,
        seed=3,
        passes=60,
        bound_tol=TOL,
    )
    assert trace.converged and trace.passes == stopped_at
    np.testing.assert_allclose(trace.per_word_bound, reference, rtol=1e-12)


def test_stopped_bound_agrees_with_gensims_log_perplexity() -> None:
    """gensim 4.4.0 ``log_perplexity(corpus, total_docs=D)`` re-infers every γ with the final
    topics (a fresh E-step) and returns the per-word bound. Our trace reuses each document's γ
    from its E-step in the last pass; once the rule has stopped, the two differ by less than the
    rule's own tolerance (relative), so the stale γ does not change the decision's meaning."""
    counts = invented_counts(200, seed=1)
    corpus = list(Sparse2Corpus(counts, documents_columns=False))
    model, trace = train_to_convergence(
        lambda s: CsrLdaModel(corpus=None, random_state=s, **SETTINGS),
        counts,
        seed=3,
        passes=60,
        bound_tol=TOL,
    )
    assert trace.converged
    fresh = gensim_twin(model, 9).log_perplexity(corpus, total_docs=counts.shape[0])
    ours = trace.per_word_bound[-1]
    assert abs(fresh - ours) / abs(ours) < TOL


def test_pass_loop_follows_gensims_own_training() -> None:
    """gensim 4.4.0 ``LdaModel(corpus, passes=5)`` with its own (uncompiled) E-step and the same
    seed: the topics and α of our pass-by-pass loop with the rule switched off agree to 1e-6
    (the two differ only in floating-point summation order inside the E-step)."""
    counts = invented_counts(240, seed=5)
    model, trace = train_to_convergence(
        lambda s: CsrLdaModel(corpus=None, random_state=s, **SETTINGS),
        counts,
        seed=11,
        passes=5,
        bound_tol=0.0,
    )
    assert trace.passes == 5
    reference = LdaModel(
        corpus=Sparse2Corpus(counts, documents_columns=False),
        passes=5,
        random_state=11,
        **SETTINGS,
    )
    np.testing.assert_allclose(model.get_topics(), reference.get_topics(), rtol=0, atol=1e-6)
    np.testing.assert_allclose(model.alpha, reference.alpha, rtol=1e-6)
    assert model.num_updates == reference.num_updates
