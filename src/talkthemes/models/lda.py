"""LDA topics with gensim's online variational Bayes (Hoffman, Blei & Bach 2010).

:class:`LdaTopics` is a thin estimator around gensim's ``LdaModel``: it streams the CSR count
matrix into gensim (``Sparse2Corpus``, one chunk of bag-of-words lists at a time), then infers
the document–topic distributions of the training documents with the fitted model.

The module also holds what the rest of the product needs from a fitted model without
pickle: :func:`lda_state_arrays` / :func:`lda_state_params` to save a model's state as named
arrays and JSON, :func:`restore_lda` to rebuild an ``LdaModel`` from them,
:func:`infer_doc_topics` to give shares to (new) documents, and :func:`heldout_perplexity`.

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
import logging
import time
from collections.abc import Iterator, Mapping, Sequence
from typing import Any

import gensim
import numpy as np
import scipy.sparse as sp
from gensim.matutils import Sparse2Corpus
from gensim.models import LdaModel
from scipy.special import gammaln, psi

from talkthemes.config import SweepSettings
from talkthemes.errors import InputError, NotReadyError
from talkthemes.models.base import (
    FittedTopics,
    StateParts,
    _Rule,
    check_counts,
    check_params,
    check_vocabulary,
    choice_rule,
    int_rule,
    normalise_rows,
    plain_value,
    real_rule,
    vocabulary_rule,
)
from talkthemes.models.estep import CsrLdaModel, RowCorpus, bound_words

__all__ = [
    "LdaTopics",
    "heldout_perplexity",
    "infer_doc_topics",
    "lda_state_arrays",
    "lda_state_params",
    "restore_lda",
    "variational_bound",
]

logger = logging.getLogger(__name__)

_DEFAULTS = SweepSettings()
_DTYPE = np.float64
_STATE_ARRAYS = ("alpha", "eta", "state_eta", "sstats", "expElogbeta")
_STATE_PARAMS = (
    "num_topics",
    "num_terms",
    "dtype",
    "iterations",
    "gamma_threshold",
    "chunksize",
    "decay",
    "offset",
    "passes",
    "update_every",
    "num_updates",
    "numdocs",
    "optimize_alpha",
    "optimize_eta",
    "gensim_version",
)

_RULES: dict[str, _Rule] = {
    "k": int_rule(1),
    "seed": int_rule(0),
    "passes": int_rule(1),
    "iterations": int_rule(1),
    "chunksize": int_rule(0),
    "alpha": choice_rule(("symmetric", "asymmetric", "auto")),
    "eta": choice_rule(("symmetric", "auto")),
    "decay": real_rule(0.5, 1.0),
    "offset": real_rule(0.0, 1e9),
    "gamma_threshold": real_rule(0.0, 1.0, low_open=True),
    "eval_every": _Rule(lambda v: v is None or (int_rule(1).check(v)), "None or an integer >= 1"),
    "vocabulary": vocabulary_rule(),
}


class LdaTopics:
    """Latent Dirichlet allocation fitted by gensim's online variational Bayes.

    Parameters
    ----------
    k : int
        Number of topics.
    seed : int
        Seed of gensim's random state (topic initialisation and E-step starting points).
        The same seed on the same input gives the same result.
    passes : int
        Passes over the corpus.
    iterations : int
        Most E-step iterations per document.
    chunksize : int
        Documents per online update (the minibatch size S).
    alpha : {'symmetric', 'asymmetric', 'auto'}
        Document–topic prior: 1/K for every topic, gensim's fixed asymmetric prior, or learned
        from the data starting at 1/K.
    eta : {'symmetric', 'auto'}
        Topic–term prior: 1/K for every term (gensim's convention, not 1/V), or learned.
    decay : float
        κ in (0.5, 1]: how fast old sufficient statistics are forgotten.
    offset : float
        τ₀ ≥ 0: slows down the first updates.
    gamma_threshold : float
        An E-step stops once the mean absolute change of γ is below this.
    eval_every : int or None
        Log gensim's perplexity estimate every that many updates; ``None`` (default) never
        does, since it costs about as much as an extra pass.
    vocabulary : list of str, optional
        Term for each column, used only in gensim's log lines.

    Attributes
    ----------
    model_ : gensim.models.LdaModel
        The fitted gensim model.
    result_ : FittedTopics
        Topic–term matrix (gensim's posterior mean, λ row-normalised), document–topic matrix
        of the training documents, parameters and fit time.
    n_documents_ : int
        Training documents.
    n_terms_ : int
        Vocabulary size V.

    References
    ----------
    Hoffman, M. D., Blei, D. M., Bach, F. (2010). Online Learning for Latent Dirichlet
    Allocation. NIPS 23.
    """

    def __init__(
        self,
        *,
        k: int = 10,
        seed: int = 0,
        passes: int = _DEFAULTS.lda_passes,
        iterations: int = _DEFAULTS.lda_iterations,
        chunksize: int = _DEFAULTS.lda_chunksize,
        alpha: str = _DEFAULTS.lda_alpha,
        eta: str = _DEFAULTS.lda_eta,
        decay: float = 0.5,
        offset: float = 1.0,
        gamma_threshold: float = 0.001,
        eval_every: int | None = None,
        vocabulary: Sequence[str] | None = None,
    ) -> None:
        self.k = k
        self.seed = seed
        self.passes = passes
        self.iterations = iterations
        self.chunksize = chunksize
        self.alpha = alpha
        self.eta = eta
        self.decay = decay
        self.offset = offset
        self.gamma_threshold = gamma_threshold
        self.eval_every = eval_every
        self.vocabulary = vocabulary

    def get_params(self) -> dict[str, Any]:
        """The constructor parameters (vocabulary excluded), as JSON values."""
        return {name: plain_value(getattr(self, name)) for name in _RULES if name != "vocabulary"}

    def fit(self, counts: sp.csr_matrix, *, shares: bool = True) -> LdaTopics:
        """Fit the model to a document × term count matrix.

        Parameters
        ----------
        counts : scipy.sparse.csr_matrix of shape (D, V)
            Term counts per document. Empty rows are allowed (their θ is the prior mean).
        shares : bool
            Infer the training documents' θ after training (one more E-step pass). Sweep
            cells, which only score the topics, pass ``False``; ``result_.doc_topics`` then
            has no rows.

        Returns
        -------
        LdaTopics
            ``self``, with ``model_``, ``result_``, ``n_documents_`` and ``n_terms_`` set.

        Raises
        ------
        ConfigError
            When a parameter is not allowed.
        InputError
            When the counts or the vocabulary cannot be used.
        """
        check_params("LdaTopics", {**self.get_params(), "vocabulary": self.vocabulary}, _RULES)
        counts = check_counts(counts)
        n_docs, n_terms = counts.shape
        id2word = check_vocabulary("LdaTopics", self.vocabulary, n_terms)
        start = time.perf_counter()
        model = CsrLdaModel(
            corpus=None,
            num_topics=self.k,
            id2word=id2word,
            chunksize=self._chunksize(n_docs),
            passes=self.passes,
            alpha=self.alpha,
            eta=self.eta,
            decay=self.decay,
            offset=self.offset,
            eval_every=self.eval_every,
            iterations=self.iterations,
            gamma_threshold=self.gamma_threshold,
            random_state=self.seed,
            dtype=_DTYPE,
        )
        model.update(RowCorpus(counts))
        train_seconds = time.perf_counter() - start
        doc_topics = (
            infer_doc_topics(model, counts, seed=self.seed, chunksize=self._chunksize(n_docs))
            if shares
            else np.zeros((0, self.k), dtype=np.float64)
        )
        fit_seconds = time.perf_counter() - start
        logger.info(
            "LDA k=%d seed=%d on %d documents x %d terms: trained in %.1fs, inferred in %.1fs",
            self.k,
            self.seed,
            n_docs,
            n_terms,
            train_seconds,
            fit_seconds - train_seconds,
        )
        params = {
            "family": "lda",
            **self.get_params(),
            "n_documents": n_docs,
            "n_terms": n_terms,
            "alpha_fitted": [float(a) for a in model.alpha],
            "library": f"gensim {gensim.__version__}",
        }
        self.model_ = model
        self.n_documents_ = n_docs
        self.n_terms_ = n_terms
        self.result_ = FittedTopics(
            topic_terms=np.asarray(model.get_topics(), dtype=np.float64),
            doc_topics=doc_topics,
            params=params,
            fit_seconds=fit_seconds,
        )
        return self

    def transform(self, counts: sp.csr_matrix, *, seed: int | None = None) -> np.ndarray:
        """Document–topic distributions of (new) documents; see :func:`infer_doc_topics`.

        ``seed`` defaults to the estimator's seed.
        """
        model = self._fitted_model()
        return infer_doc_topics(
            model,
            counts,
            seed=self.seed if seed is None else seed,
            chunksize=self._chunksize(counts.shape[0]),
        )

    def heldout_perplexity(self, counts_heldout: sp.csr_matrix, total_docs: int) -> float:
        """Per-word perplexity of held-out documents; see :func:`heldout_perplexity`."""
        return heldout_perplexity(
            self._fitted_model(),
            counts_heldout,
            total_docs=total_docs,
            seed=self.seed,
            chunksize=self._chunksize(counts_heldout.shape[0]),
        )

    def state(self) -> tuple[dict[str, np.ndarray], dict[str, Any]]:
        """The fitted model's state as ``(arrays, params)``; see :func:`lda_state_arrays`."""
        model = self._fitted_model()
        return lda_state_arrays(model), lda_state_params(model)

    def _chunksize(self, n_docs: int) -> int:
        """The chunk size in use: the parameter, or for 0 about ten updates per pass."""
        return self.chunksize or auto_chunksize(n_docs)

    def _fitted_model(self) -> LdaModel:
        model = getattr(self, "model_", None)
        if model is None:
            raise NotReadyError("LdaTopics: call fit() before using the model")
        return model


# --------------------------------------------------------------------------- inference


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


# ------------------------------------------------------------------------------- state


def lda_state_arrays(model: LdaModel) -> dict[str, np.ndarray]:
    """The arrays that define a fitted gensim ``LdaModel`` for inference and further updates.

    Parameters
    ----------
    model : gensim.models.LdaModel

    Returns
    -------
    dict of str to numpy.ndarray
        Copies, in the model's dtype, of ``alpha`` (K,); ``eta`` (V,), the model's η;
        ``state_eta`` (V,), the η inside the sufficient-statistics state, which forms
        λ = η + sstats; ``sstats`` (K, V); and ``expElogbeta`` (K, V), exp E[ln β] as gensim
        last computed it.

    Notes
    -----
    In gensim 4.4.0 ``eta='auto'`` updates the model's ``eta`` after each M-step but not the
    state's copy, which alone enters λ, the topics and ``expElogbeta``; the model's ``eta``
    only enters :meth:`~gensim.models.LdaModel.bound`. Both are saved so that a restored
    model behaves exactly like the original.
    """
    if np.ndim(model.eta) != 1 or np.ndim(model.state.eta) != 1:
        raise InputError("LDA state: only a per-term eta vector can be saved")
    return {
        "alpha": np.array(model.alpha, copy=True),
        "eta": np.array(model.eta, copy=True),
        "state_eta": np.array(model.state.eta, copy=True),
        "sstats": np.array(model.state.sstats, copy=True),
        "expElogbeta": np.array(model.expElogbeta, copy=True),
    }


def lda_state_params(model: LdaModel) -> dict[str, Any]:
    """JSON-serialisable settings and counters that go with :func:`lda_state_arrays`."""
    return {
        "num_topics": int(model.num_topics),
        "num_terms": int(model.num_terms),
        "dtype": np.dtype(model.dtype).name,
        "iterations": int(model.iterations),
        "gamma_threshold": float(model.gamma_threshold),
        "chunksize": int(model.chunksize),
        "decay": float(model.decay),
        "offset": float(model.offset),
        "passes": int(model.passes),
        "update_every": int(model.update_every),
        "num_updates": int(model.num_updates),
        "numdocs": int(model.state.numdocs),
        "optimize_alpha": bool(model.optimize_alpha),
        "optimize_eta": bool(model.optimize_eta),
        "gensim_version": gensim.__version__,
    }


def restore_lda(
    arrays: Mapping[str, np.ndarray],
    params: Mapping[str, Any],
    *,
    seed: int = 0,
    vocabulary: Sequence[str] | None = None,
) -> LdaModel:
    """Rebuild a gensim ``LdaModel`` from :func:`lda_state_arrays` and :func:`lda_state_params`.

    The rebuilt model's ``inference`` gives exactly the original model's result when both
    random states are seeded alike; ``get_topics``, ``bound`` and ``update`` work as on the
    original.

    Parameters
    ----------
    arrays : mapping of str to numpy.ndarray
    params : mapping of str to JSON values
    seed : int
        Seed of the rebuilt model's random state.
    vocabulary : list of str, optional
        Terms, for gensim's log lines.

    Returns
    -------
    gensim.models.LdaModel

    Raises
    ------
    InputError
        When a part is missing or an array has the wrong shape or dtype.
    """
    missing = [name for name in _STATE_ARRAYS if name not in arrays]
    missing += [name for name in _STATE_PARAMS if name not in params]
    if missing:
        raise InputError(f"LDA state: missing {', '.join(missing)}")
    n_topics, n_terms = int(params["num_topics"]), int(params["num_terms"])
    dtype = np.dtype(str(params["dtype"]))
    expected = {
        "alpha": (n_topics,),
        "eta": (n_terms,),
        "state_eta": (n_terms,),
        "sstats": (n_topics, n_terms),
        "expElogbeta": (n_topics, n_terms),
    }
    for name, shape in expected.items():
        arr = np.asarray(arrays[name])
        if arr.shape != shape:
            raise InputError(f"LDA state: array {name!r} has shape {arr.shape}, expected {shape}")
        if arr.dtype != dtype:
            raise InputError(f"LDA state: array {name!r} has dtype {arr.dtype}, expected {dtype}")
        if not np.all(np.isfinite(arr)):
            raise InputError(f"LDA state: array {name!r} holds values that are not finite")
    if params["gensim_version"] != gensim.__version__:
        logger.warning(
            "LDA state was saved with gensim %s and is loaded with gensim %s",
            params["gensim_version"],
            gensim.__version__,
        )
    model = CsrLdaModel(
        corpus=None,
        num_topics=n_topics,
        id2word=check_vocabulary("LDA state", vocabulary, n_terms),
        chunksize=int(params["chunksize"]),
        passes=int(params["passes"]),
        update_every=int(params["update_every"]),
        alpha=np.array(arrays["alpha"], copy=True),
        eta=np.array(arrays["eta"], copy=True),
        decay=float(params["decay"]),
        offset=float(params["offset"]),
        eval_every=None,
        iterations=int(params["iterations"]),
        gamma_threshold=float(params["gamma_threshold"]),
        random_state=seed,
        dtype=dtype.type,
    )
    model.state.eta = np.array(arrays["state_eta"], copy=True)
    model.state.sstats = np.array(arrays["sstats"], copy=True)
    model.state.numdocs = int(params["numdocs"])
    model.num_updates = int(params["num_updates"])
    model.expElogbeta = np.array(arrays["expElogbeta"], copy=True)
    model.optimize_alpha = bool(params["optimize_alpha"])
    model.optimize_eta = bool(params["optimize_eta"])
    # the constructor drew a random starting state from the generator: start it afresh
    model.random_state = np.random.RandomState(seed)
    return model
