"""LDA inference with a fitted model: document shares, the variational bound, perplexity.

:func:`infer_doc_topics` gives the document–topic distributions of (new) documents from
gensim's E-step (compiled, :class:`~talkthemes.models.csr_lda.CsrLdaModel`);
:func:`variational_bound` evaluates gensim's LDA lower bound in bulk and
:func:`heldout_perplexity` turns it into a per-word perplexity. See docs/methods_models.md,
"Document shares" and "Held-out perplexity".

Randomness. gensim draws the starting point of every document's variational parameter γ from
Gamma(100, 1/100) with the model's ``random_state``. All functions here that infer take a
``seed`` and use a fresh ``numpy.random.RandomState(seed)`` on a shallow copy of the model,
so results are the same on every call for the same seed, chunk size and document order, and
the caller's model is never changed. The starting point only moves the result within the
E-step's stopping tolerance (``gamma_threshold``).

References
----------
Blei, D. M., Ng, A. Y., Jordan, M. I. (2003). Latent Dirichlet Allocation. JMLR 3: 993–1022.
Hoffman, M. D., Blei, D. M., Bach, F. (2010). Online Learning for Latent Dirichlet
Allocation. Advances in Neural Information Processing Systems 23.
"""

from __future__ import annotations

import copy
from collections.abc import Iterator

import numpy as np
import scipy.sparse as sp
from gensim.matutils import Sparse2Corpus
from gensim.models import LdaModel
from scipy.special import gammaln, psi

from talkthemes.errors import InputError
from talkthemes.models.base import StateParts, check_counts, check_params, int_rule, normalise_rows
from talkthemes.models.csr_lda import CsrLdaModel
from talkthemes.models.estep import bound_words
from talkthemes.models.lda_state import restore_lda

__all__ = [
    "auto_chunksize",
    "heldout_perplexity",
    "infer_doc_topics",
    "variational_bound",
]


def auto_chunksize(n_docs: int) -> int:
    """Documents per online update when ``chunksize=0``: about ten updates per pass,
    between 200 and 2,000 documents (Hoffman, Blei & Bach 2010 found larger minibatches help
    until updates become too rare; ten per pass keeps small corpora learning)."""
    return int(min(2000, max(200, -(-n_docs // 10))))


def _rows_as_chunks(counts: sp.csr_matrix, chunksize: int) -> Iterator[list[list[tuple]]]:
    """Yield gensim bag-of-words chunks of at most ``chunksize`` CSR rows."""
    for lo in range(0, counts.shape[0], chunksize):
        yield list(Sparse2Corpus(counts[lo : lo + chunksize], documents_columns=False))


def _seeded_copy(model: LdaModel, seed: int) -> LdaModel:
    """A shallow copy of ``model`` with its own fresh random state (the original is untouched)."""
    twin = copy.copy(model)
    twin.random_state = np.random.RandomState(seed)
    return twin


def _as_model(model_or_state: LdaModel | StateParts) -> LdaModel:
    if isinstance(model_or_state, LdaModel):
        return model_or_state
    if isinstance(model_or_state, tuple) and len(model_or_state) == 2:
        arrays, params = model_or_state
        return restore_lda(arrays, params)
    raise InputError(
        "LDA inference: expected a gensim LdaModel or an (arrays, params) state, got "
        f"{type(model_or_state).__name__}"
    )


def _infer_gamma(model: LdaModel, counts: sp.csr_matrix, seed: int, chunksize: int) -> np.ndarray:
    twin = _seeded_copy(model, seed)
    if not isinstance(twin, CsrLdaModel) or twin.dtype != np.float64:
        blocks = [twin.inference(chunk)[0] for chunk in _rows_as_chunks(counts, chunksize)]
        return np.vstack(blocks).astype(np.float64, copy=False)
    out = np.empty((counts.shape[0], twin.num_topics), dtype=np.float64)
    for lo in range(0, counts.shape[0], chunksize):
        out[lo : lo + chunksize] = twin.csr_inference(counts[lo : lo + chunksize])[0]
    return out


def infer_doc_topics(
    model_or_state: LdaModel | StateParts,
    counts: sp.csr_matrix,
    *,
    seed: int,
    chunksize: int = 2000,
) -> np.ndarray:
    """Document–topic distributions θ_d = γ_d / Σ_k γ_dk from gensim's E-step.

    Runs ``LdaModel.inference`` on chunks of CSR rows (no per-document Python calls into
    ``get_document_topics``) and keeps all K topics (no ``minimum_probability`` cut).

    Parameters
    ----------
    model_or_state : gensim.models.LdaModel or (arrays, params)
        A fitted model, or a state from :func:`lda_state_arrays` / :func:`lda_state_params`.
    counts : scipy.sparse.csr_matrix of shape (D, V)
        Term counts over the model's vocabulary.
    seed : int
        Seed of the E-step starting points; the result is the same for the same seed,
        chunk size and row order.
    chunksize : int
        Documents per call to ``inference`` (memory bound; also fixes how the random
        starting points are drawn).

    Returns
    -------
    numpy.ndarray of shape (D, K), float64, rows summing to 1.
    """
    model = _as_model(model_or_state)
    counts = check_counts(counts, n_terms=model.num_terms)
    check_params("LDA inference", {"chunksize": chunksize}, {"chunksize": int_rule(1)})
    gamma = _infer_gamma(model, counts, seed, chunksize)
    return normalise_rows(gamma)


def heldout_perplexity(
    model_or_state: LdaModel | StateParts,
    counts_heldout: sp.csr_matrix,
    *,
    total_docs: int,
    seed: int,
    chunksize: int = 2000,
) -> float:
    """Per-word perplexity exp(−bound / N) of held-out documents.

    The bound is gensim's variational lower bound (``LdaModel.bound``), evaluated here with
    numpy and a compiled loop (:func:`~talkthemes.models.estep.bound_words`) on γ inferred
    by :func:`infer_doc_topics`'s E-step; it equals
    ``exp(-model.log_perplexity(chunk, total_docs))`` for the same γ. The logarithms are
    natural, so this is the conventional per-word perplexity (gensim's own log line prints
    2^(−bound) instead).

    Convention for ``total_docs``: the document part of the bound is scaled by
    ``total_docs / D_heldout`` and the topic part (the Dirichlet terms of λ) is added once,
    then the sum is divided by ``total_docs / D_heldout × N_heldout`` (Hoffman et al. 2010;
    gensim's ``log_perplexity``). Pass the number of documents the model was trained on, and
    the same number for every model you compare.

    Parameters
    ----------
    model_or_state : gensim.models.LdaModel or (arrays, params)
    counts_heldout : scipy.sparse.csr_matrix of shape (D_heldout, V)
    total_docs : int
        Size of the corpus the model represents (see above).
    seed : int
        Seed of the E-step starting points.
    chunksize : int
        Documents per inference call.

    Returns
    -------
    float
        Perplexity; lower is better.

    Raises
    ------
    InputError
        When the held-out documents hold no tokens.
    """
    model = _as_model(model_or_state)
    counts = check_counts(counts_heldout, name="held-out counts", n_terms=model.num_terms)
    check_params("heldout_perplexity", {"total_docs": total_docs}, {"total_docs": int_rule(1)})
    n_words = float(counts.sum())
    if n_words <= 0:
        raise InputError("held-out counts: the held-out documents hold no tokens")
    gamma = _infer_gamma(model, counts, seed, chunksize)
    ratio = total_docs / counts.shape[0]
    score = variational_bound(
        counts,
        gamma,
        lambda_=np.asarray(model.state.get_lambda(), dtype=np.float64),
        alpha=np.asarray(model.alpha, dtype=np.float64),
        eta=np.asarray(model.eta, dtype=np.float64),
        subsample_ratio=ratio,
    )
    per_word = score / (ratio * n_words)
    return float(np.exp(-per_word))


def _dirichlet_expectation_rows(values: np.ndarray) -> np.ndarray:
    return psi(values) - psi(values.sum(axis=1, keepdims=True))


def variational_bound(
    counts: sp.csr_matrix,
    gamma: np.ndarray,
    *,
    lambda_: np.ndarray,
    alpha: np.ndarray,
    eta: np.ndarray,
    subsample_ratio: float = 1.0,
) -> float:
    """gensim's LDA variational lower bound E_q[ln p(w, θ, β)] − E_q[ln q(θ, β)], in bulk.

    Same terms, in the same arrangement, as ``gensim.models.LdaModel.bound`` (4.4): the
    per-document part (word likelihood and the θ Dirichlet terms) times ``subsample_ratio``,
    plus the β Dirichlet terms once.

    Parameters
    ----------
    counts : scipy.sparse.csr_matrix of shape (D, V)
    gamma : numpy.ndarray of shape (D, K)
        Variational Dirichlet parameters of the documents.
    lambda_ : numpy.ndarray of shape (K, V)
        Variational Dirichlet parameters of the topics (η + sufficient statistics).
    alpha : numpy.ndarray of shape (K,)
    eta : numpy.ndarray of shape (V,)
    subsample_ratio : float
        Corpus size divided by D.

    Returns
    -------
    float
        The bound, in nats.
    """
    counts = sp.csr_matrix(counts)
    e_log_beta = _dirichlet_expectation_rows(lambda_)
    e_log_theta = _dirichlet_expectation_rows(gamma)
    words = bound_words(
        counts.indptr.astype(np.int64, copy=False),
        counts.indices.astype(np.int64, copy=False),
        counts.data.astype(np.float64, copy=False),
        np.ascontiguousarray(e_log_theta, dtype=np.float64),
        np.ascontiguousarray(e_log_beta.T, dtype=np.float64),
    )
    docs = float(np.sum((alpha - gamma) * e_log_theta))
    docs += float(np.sum(gammaln(gamma)) - gamma.shape[0] * np.sum(gammaln(alpha)))
    docs += float(gamma.shape[0] * gammaln(np.sum(alpha)) - np.sum(gammaln(gamma.sum(axis=1))))
    score = (words + docs) * subsample_ratio
    n_topics = lambda_.shape[0]
    score += float(np.sum((eta - lambda_) * e_log_beta))
    score += float(np.sum(gammaln(lambda_)) - n_topics * np.sum(gammaln(eta)))
    score += float(n_topics * gammaln(np.sum(eta)) - np.sum(gammaln(lambda_.sum(axis=1))))
    return score
