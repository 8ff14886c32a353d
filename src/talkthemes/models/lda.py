"""LDA topics with gensim's online variational Bayes (Hoffman, Blei & Bach 2010).

:class:`LdaTopics` is a thin estimator around gensim's ``LdaModel``: it trains a
:class:`~talkthemes.models.csr_lda.CsrLdaModel` (gensim's model with a compiled E-step) on the
CSR count matrix, then infers the document–topic distributions of the training documents with
the fitted model. The pieces live next to it:

* :mod:`talkthemes.models.csr_lda`: the gensim subclass and the CSR corpus it trains on;
* :mod:`talkthemes.models.lda_infer`: shares of (new) documents, the bound, perplexity;
* :mod:`talkthemes.models.lda_state`: the fitted state as arrays and JSON, and back.

References
----------
Blei, D. M., Ng, A. Y., Jordan, M. I. (2003). Latent Dirichlet Allocation. JMLR 3: 993–1022.
Hoffman, M. D., Blei, D. M., Bach, F. (2010). Online Learning for Latent Dirichlet
Allocation. Advances in Neural Information Processing Systems 23.
"""

from __future__ import annotations

import logging
import time
from collections.abc import Sequence
from typing import Any

import gensim
import numpy as np
import scipy.sparse as sp
from gensim.models import LdaModel

from talkthemes.config import SweepSettings
from talkthemes.errors import NotReadyError
from talkthemes.models.base import (
    FittedTopics,
    _Rule,
    check_counts,
    check_params,
    check_vocabulary,
    choice_rule,
    int_rule,
    plain_value,
    real_rule,
    vocabulary_rule,
)
from talkthemes.models.csr_lda import CsrLdaModel
from talkthemes.models.lda_infer import (
    auto_chunksize,
    heldout_perplexity,
    infer_doc_topics,
)
from talkthemes.models.lda_state import lda_state_arrays, lda_state_params
from talkthemes.models.lda_train import train_to_convergence

__all__ = [
    "LdaTopics",
]

logger = logging.getLogger(__name__)

_DEFAULTS = SweepSettings()
_DTYPE = np.float64
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
    "bound_tol": real_rule(0.0, 1.0),
    "starts": int_rule(1),
    "start_passes": int_rule(1),
    "vocabulary": vocabulary_rule(),
}


class LdaTopics:
    """Latent Dirichlet allocation fitted by gensim's online variational Bayes.

    Parameters
    ----------
    k : int
        Number of topics.
    seed : int
        Seed of gensim's random state (topic initialisation and E-step starting points) of
        start 0; further starts use seeds derived from it. The same seed on the same input
        gives the same result.
    passes : int
        Most passes over the corpus. Training stops earlier once the per-word bound
        converges (``bound_tol``); with ``bound_tol=0`` it runs exactly this many.
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
    bound_tol : float
        Training stops after a pass in which the per-word bound of the training corpus
        changed by less than this share of its value (Hoffman, Blei & Bach 2010); 0 never
        stops before ``passes``. See :mod:`talkthemes.models.lda_train`.
    starts : int
        Random starts; each runs ``start_passes`` passes and only the one with the highest
        per-word bound is trained on. Start 0 uses ``seed``.
    start_passes : int
        Passes each start runs before the best is kept.
    vocabulary : list of str, optional
        Term for each column, used only in gensim's log lines.

    Attributes
    ----------
    model_ : gensim.models.LdaModel
        The fitted gensim model.
    result_ : FittedTopics
        Topic–term matrix (gensim's posterior mean, λ row-normalised), document–topic matrix
        of the training documents, parameters and fit time. ``result_.params["convergence"]``
        is the convergence trace (:meth:`ConvergenceTrace.as_dict
        <talkthemes.models.lda_train.ConvergenceTrace.as_dict>`): ``per_word_bound`` (one
        float per pass), ``passes``, ``converged``, ``bound_tol``, ``max_passes``,
        ``estep_converged``, ``start_bounds``, ``start_passes``, ``kept_start``, ``seconds``.
    convergence_ : ConvergenceTrace
        The same trace as an object.
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
        bound_tol: float = _DEFAULTS.lda_bound_tol,
        starts: int = _DEFAULTS.lda_starts,
        start_passes: int = _DEFAULTS.lda_start_passes,
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
        self.bound_tol = bound_tol
        self.starts = starts
        self.start_passes = start_passes
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
        chunksize = self._chunksize(n_docs)

        def build(random_seed: int) -> CsrLdaModel:
            return CsrLdaModel(
                corpus=None,
                num_topics=self.k,
                id2word=id2word,
                chunksize=chunksize,
                passes=self.passes,
                alpha=self.alpha,
                eta=self.eta,
                decay=self.decay,
                offset=self.offset,
                eval_every=None,
                iterations=self.iterations,
                gamma_threshold=self.gamma_threshold,
                random_state=random_seed,
                dtype=_DTYPE,
            )

        model, trace = train_to_convergence(
            build,
            counts,
            seed=self.seed,
            passes=self.passes,
            bound_tol=self.bound_tol,
            starts=self.starts,
            start_passes=self.start_passes,
        )
        train_seconds = time.perf_counter() - start
        doc_topics = (
            infer_doc_topics(model, counts, seed=self.seed, chunksize=self._chunksize(n_docs))
            if shares
            else np.zeros((0, self.k), dtype=np.float64)
        )
        fit_seconds = time.perf_counter() - start
        logger.info(
            "LDA k=%d seed=%d on %d documents x %d terms: %d passes (%s), per-word bound %.4f; "
            "trained in %.1fs, inferred in %.1fs",
            self.k,
            self.seed,
            n_docs,
            n_terms,
            trace.passes,
            "converged" if trace.converged else "at the cap",
            trace.per_word_bound[-1],
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
            "convergence": trace.as_dict(),
        }
        self.model_ = model
        self.convergence_ = trace
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
