"""NMF topics with scikit-learn, on TF-IDF weights of the counts.

:class:`NmfTopics` weights the count matrix with TF-IDF, factorises it as X ≈ WH with
scikit-learn's ``NMF`` (``init="nndsvda"``), and turns W and H into probability
distributions the scale-consistent way (the PLSA mapping):

* topic–term φ_k = H_k / Σ_v H_kv;
* document–topic θ_dk ∝ W_dk · Σ_v H_kv, normalised over k. A document whose row of W is all
  zero (for instance a document with no token in the vocabulary) gets the uniform row 1/K.

TF-IDF settings (fixed, recorded in the parameters):

* raw term frequency (``sublinear_tf=False``). NMF models a document as an additive mixture
  of topics; 1 + ln(tf) bends that mixture. On the bars corpus of Griffiths & Steyvers (2004)
  (``tests/external/test_bars.py``) sublinear tf lost a bar in 3 of 20 fits, raw tf in none.
* ``smooth_idf``: idf = ln((1 + D) / (1 + df)) + 1, scikit-learn's default; finite for every
  term and never zero, so a term found in every document still counts a little.
* ``norm='l2'``: every document row has unit length, so long calls do not dominate the
  Frobenius objective just by being long (the same job sublinear tf would do for repeats).

These are scikit-learn's ``TfidfTransformer(sublinear_tf=False, norm='l2', smooth_idf=True)``;
the weighting is done here with the stored idf so new documents are weighted exactly like the
training ones.

References
----------
Lee, D. D., Seung, H. S. (2001). Algorithms for Non-negative Matrix Factorization. NIPS 13.
Cichocki, A., Phan, A.-H. (2009). Fast Local Algorithms for Large Scale Nonnegative Matrix and
Tensor Factorizations. IEICE Trans. Fundamentals E92-A(3): 708–721.
Boutsidis, C., Gallopoulos, E. (2008). SVD Based Initialization: A Head Start for Nonnegative
Matrix Factorization. Pattern Recognition 41(4).
Gaussier, É., Goutte, C. (2005). Relation between PLSA and NMF and Implications. SIGIR 2005.
"""

from __future__ import annotations

import logging
import time
import warnings
from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np
import scipy.sparse as sp
import sklearn
from sklearn.decomposition import NMF, non_negative_factorization
from sklearn.exceptions import ConvergenceWarning
from sklearn.preprocessing import normalize

from talkthemes.config import SweepSettings
from talkthemes.errors import ConfigError, InputError, NotReadyError
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

__all__ = [
    "NmfTopics",
    "nmf_distributions",
    "smooth_idf",
    "tfidf_weights",
    "transform_counts",
]

logger = logging.getLogger(__name__)

_DEFAULTS = SweepSettings()
_SOLVER_FOR_LOSS = {"frobenius": "cd", "kullback-leibler": "mu"}
_TFIDF = {"sublinear_tf": False, "smooth_idf": True, "norm": "l2"}
_STATE_ARRAYS = ("idf", "components")
_STATE_PARAMS = ("k", "loss", "solver", "max_iter", "tol", "n_terms", "sklearn_version")

_RULES: dict[str, _Rule] = {
    "k": int_rule(1),
    "seed": int_rule(0),
    "loss": choice_rule(tuple(_SOLVER_FOR_LOSS)),
    "solver": choice_rule(("auto", "cd", "mu")),
    "max_iter": int_rule(1),
    "tol": real_rule(0.0, 1.0),
    "dtype": choice_rule(("float64", "float32")),
    "vocabulary": vocabulary_rule(),
}


def _resolve_solver(owner: str, loss: str, solver: str) -> str:
    if solver == "auto":
        return _SOLVER_FOR_LOSS[loss]
    if solver == "cd" and loss != "frobenius":
        raise ConfigError(
            f"{owner}: solver='cd' does not handle loss={loss!r}; use solver='mu' "
            "(or 'auto', which picks it)"
        )
    return solver


class NmfTopics:
    """Non-negative matrix factorisation of TF-IDF weights, as topic distributions.

    Parameters
    ----------
    k : int
        Number of topics.
    seed : int
        Random state of scikit-learn's NMF (the randomised SVD behind ``nndsvda``).
    loss : {'frobenius', 'kullback-leibler'}
        β-divergence minimised: squared Frobenius norm or generalised Kullback–Leibler
        (the PLSA objective; Gaussier & Goutte 2005).
    solver : {'auto', 'cd', 'mu'}
        'auto' picks coordinate descent for Frobenius and multiplicative updates for KL;
        'cd' with KL raises :class:`~talkthemes.errors.ConfigError` (scikit-learn's 'cd'
        handles Frobenius only).
    max_iter : int
        Iteration limit.
    tol : float
        Tolerance of scikit-learn's stopping rule.
    dtype : {'float64', 'float32'}
        Precision of the TF-IDF matrix and of the factors while fitting (scikit-learn keeps
        the input's). float32 is about 1.3–1.5× faster; the results (φ, θ) are float64
        either way.
    vocabulary : list of str, optional
        Term for each column, used only in log lines.

    Attributes
    ----------
    result_ : FittedTopics
        φ and θ from the scale-consistent mapping, parameters and fit time.
    idf_ : numpy.ndarray of shape (V,)
        Smoothed idf of the training documents.
    components_ : numpy.ndarray of shape (K, V)
        H, as fitted.
    reconstruction_err_ : float
        scikit-learn's ``reconstruction_err_``: sqrt(2 · D_β(X ‖ WH)); ‖X − WH‖_F for
        Frobenius.
    n_iter_ : int
        Iterations run.

    References
    ----------
    Lee, D. D., Seung, H. S. (2001). NIPS 13. Cichocki, A., Phan, A.-H. (2009). IEICE Trans.
    Fundamentals E92-A(3). Boutsidis, C., Gallopoulos, E. (2008). Pattern Recognition 41(4).
    """

    def __init__(
        self,
        *,
        k: int = 10,
        seed: int = 0,
        loss: str = _DEFAULTS.nmf_loss,
        solver: str = "auto",
        max_iter: int = _DEFAULTS.nmf_max_iter,
        tol: float = 1e-4,
        dtype: str = "float64",
        vocabulary: Sequence[str] | None = None,
    ) -> None:
        self.k = k
        self.seed = seed
        self.loss = loss
        self.solver = solver
        self.max_iter = max_iter
        self.tol = tol
        self.dtype = dtype
        self.vocabulary = vocabulary

    def get_params(self) -> dict[str, Any]:
        """The constructor parameters (vocabulary excluded), as JSON values."""
        return {name: plain_value(getattr(self, name)) for name in _RULES if name != "vocabulary"}

    def fit(self, counts: sp.csr_matrix, *, shares: bool = True) -> NmfTopics:
        """Fit the factorisation to a document × term count matrix.

        Parameters
        ----------
        counts : scipy.sparse.csr_matrix of shape (D, V)
        shares : bool
            Accepted for the same signature as :meth:`LdaTopics.fit`; the shares come from
            W at no extra cost, so they are always kept.

        Returns
        -------
        NmfTopics
            ``self``, with ``result_``, ``idf_``, ``components_``, ``reconstruction_err_`` and
            ``n_iter_`` set.

        Raises
        ------
        ConfigError
            When a parameter is not allowed, or 'cd' is asked for with the KL loss.
        InputError
            When the counts cannot be used, or K exceeds min(D, V) (``nndsvda`` needs K ≤
            min(D, V)).
        """
        check_params("NmfTopics", {**self.get_params(), "vocabulary": self.vocabulary}, _RULES)
        solver = _resolve_solver("NmfTopics", self.loss, self.solver)
        counts = check_counts(counts)
        n_docs, n_terms = counts.shape
        check_vocabulary("NmfTopics", self.vocabulary, n_terms)
        if self.k > min(n_docs, n_terms):
            raise InputError(
                f"NmfTopics: k={self.k} exceeds min(documents={n_docs}, terms={n_terms}); "
                "the nndsvda start needs k <= min(documents, terms)"
            )
        start = time.perf_counter()
        idf = smooth_idf(counts)
        weights = tfidf_weights(counts, idf).astype(self.dtype, copy=False)
        nmf = NMF(
            n_components=self.k,
            init="nndsvda",
            solver=solver,
            beta_loss=self.loss,
            tol=self.tol,
            max_iter=self.max_iter,
            random_state=self.seed,
            alpha_W=0.0,
            alpha_H=0.0,
            l1_ratio=0.0,
            shuffle=False,
        )
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always", ConvergenceWarning)
            W = nmf.fit_transform(weights)
        converged = not any(issubclass(w.category, ConvergenceWarning) for w in caught)
        H = nmf.components_
        topic_terms, doc_topics = nmf_distributions(W, H)
        fit_seconds = time.perf_counter() - start
        if not converged:
            logger.warning(
                "NMF k=%d seed=%d did not converge within max_iter=%d iterations",
                self.k,
                self.seed,
                self.max_iter,
            )
        logger.info(
            "NMF k=%d seed=%d loss=%s on %d documents x %d terms: %d iterations, error %.4g, %.1fs",
            self.k,
            self.seed,
            self.loss,
            n_docs,
            n_terms,
            nmf.n_iter_,
            nmf.reconstruction_err_,
            fit_seconds,
        )
        params = {
            "family": "nmf",
            **self.get_params(),
            "solver": solver,
            "init": "nndsvda",
            "tfidf": dict(_TFIDF),
            "n_documents": n_docs,
            "n_terms": n_terms,
            "n_iter": int(nmf.n_iter_),
            "converged": converged,
            "reconstruction_err": float(nmf.reconstruction_err_),
            "library": f"scikit-learn {sklearn.__version__}",
        }
        self.idf_ = idf
        self.components_ = np.asarray(H, dtype=np.float64)
        self.reconstruction_err_ = float(nmf.reconstruction_err_)
        self.n_iter_ = int(nmf.n_iter_)
        self.n_documents_ = n_docs
        self.n_terms_ = n_terms
        self.result_ = FittedTopics(
            topic_terms=topic_terms, doc_topics=doc_topics, params=params, fit_seconds=fit_seconds
        )
        return self

    def state(self) -> tuple[dict[str, np.ndarray], dict[str, Any]]:
        """What :func:`transform_counts` needs, as ``(arrays, params)``.

        ``arrays``: ``idf`` (V,) and ``components`` (K, V), float64 copies. ``params``: k,
        loss, solver, max_iter, tol, n_terms and the scikit-learn version.
        """
        if getattr(self, "components_", None) is None:
            raise NotReadyError("NmfTopics: call fit() before using the model")
        arrays = {"idf": self.idf_.copy(), "components": self.components_.copy()}
        params = {
            "k": int(self.k),
            "loss": self.loss,
            "solver": _resolve_solver("NmfTopics", self.loss, self.solver),
            "max_iter": int(self.max_iter),
            "tol": float(self.tol),
            "n_terms": int(self.n_terms_),
            "sklearn_version": sklearn.__version__,
        }
        return arrays, params

    def transform(self, counts: sp.csr_matrix) -> np.ndarray:
        """Document–topic distributions of (new) documents; see :func:`transform_counts`."""
        return transform_counts(counts, self.state())


def smooth_idf(counts: sp.csr_matrix) -> np.ndarray:
    """Smoothed inverse document frequency, idf_v = ln((1 + D) / (1 + df_v)) + 1.

    Parameters
    ----------
    counts : scipy.sparse.csr_matrix of shape (D, V), explicit zeros removed

    Returns
    -------
    numpy.ndarray of shape (V,), float64
    """
    n_docs = counts.shape[0]
    df = np.bincount(counts.indices, minlength=counts.shape[1]).astype(np.float64)
    return np.log((1.0 + n_docs) / (1.0 + df)) + 1.0


def tfidf_weights(counts: sp.csr_matrix, idf: np.ndarray) -> sp.csr_matrix:
    """TF-IDF rows, tf_dv · idf_v scaled to unit L2 norm (all-zero rows stay zero).

    Equal to scikit-learn's ``TfidfTransformer(sublinear_tf=False, norm='l2',
    smooth_idf=True)`` fitted on the same documents that gave ``idf``.

    Parameters
    ----------
    counts : scipy.sparse.csr_matrix of shape (D, V), explicit zeros removed
    idf : numpy.ndarray of shape (V,)

    Returns
    -------
    scipy.sparse.csr_matrix of shape (D, V), float64
    """
    weights = sp.csr_matrix(counts, dtype=np.float64, copy=True)
    weights.data *= idf[weights.indices]
    return normalize(weights, norm="l2", copy=False)


def nmf_distributions(W: np.ndarray, H: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Topic–term and document–topic distributions from NMF factors (the PLSA mapping).

    φ_k = H_k / Σ_v H_kv (a topic whose row of H is all zero becomes uniform);
    θ_dk ∝ W_dk · Σ_v H_kv, normalised over k (an all-zero row becomes uniform, 1/K).
    The result does not change under the rescaling W → WΛ, H → Λ⁻¹H.

    Parameters
    ----------
    W : numpy.ndarray of shape (D, K)
    H : numpy.ndarray of shape (K, V)

    Returns
    -------
    topic_terms : numpy.ndarray of shape (K, V)
    doc_topics : numpy.ndarray of shape (D, K)

    References
    ----------
    Gaussier, É., Goutte, C. (2005). Relation between PLSA and NMF and Implications. SIGIR.
    Ding, C., Li, T., Peng, W. (2008). Computational Statistics & Data Analysis 52(8).
    """
    W = np.asarray(W, dtype=np.float64)
    H = np.asarray(H, dtype=np.float64)
    scale = H.sum(axis=1)
    return normalise_rows(H), normalise_rows(W * scale[np.newaxis, :])


def transform_counts(counts: sp.csr_matrix, state: StateParts) -> np.ndarray:
    """Document–topic distributions of new documents, with the topics H held fixed.

    The counts are TF-IDF weighted with the stored idf, W is solved by scikit-learn's
    ``non_negative_factorization(..., update_H=False)`` with the fitted loss, solver, tol
    and max_iter (deterministic: W starts from zeros for 'cd' and from a constant for 'mu'),
    then mapped as in :func:`nmf_distributions`.

    Parameters
    ----------
    counts : scipy.sparse.csr_matrix of shape (D, V)
    state : (arrays, params)
        From :meth:`NmfTopics.state`.

    Returns
    -------
    numpy.ndarray of shape (D, K), float64, rows summing to 1.

    Raises
    ------
    InputError
        When the state is incomplete or does not match the counts.
    """
    arrays, params = _checked_state(state)
    idf = np.asarray(arrays["idf"], dtype=np.float64)
    H = np.asarray(arrays["components"], dtype=np.float64)
    counts = check_counts(counts, n_terms=idf.shape[0])
    solver = _resolve_solver("NMF state", str(params["loss"]), str(params["solver"]))
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", ConvergenceWarning)
        W, _, _ = non_negative_factorization(
            tfidf_weights(counts, idf),
            H=H,
            n_components=H.shape[0],
            update_H=False,
            solver=solver,
            beta_loss=params["loss"],
            tol=float(params["tol"]),
            max_iter=int(params["max_iter"]),
            alpha_W=0.0,
            alpha_H=0.0,
            l1_ratio=0.0,
        )
    if any(issubclass(w.category, ConvergenceWarning) for w in caught):
        logger.warning("NMF transform did not converge within max_iter=%s", params["max_iter"])
    return nmf_distributions(W, H)[1]


def _checked_state(state: StateParts) -> tuple[Mapping[str, np.ndarray], Mapping[str, Any]]:
    if not (isinstance(state, tuple) and len(state) == 2):
        raise InputError(f"NMF state: expected (arrays, params), got {type(state).__name__}")
    arrays, params = state
    missing = [n for n in _STATE_ARRAYS if n not in arrays]
    missing += [n for n in _STATE_PARAMS if n not in params]
    if missing:
        raise InputError(f"NMF state: missing {', '.join(missing)}")
    k, n_terms = int(params["k"]), int(params["n_terms"])
    for name, shape in {"idf": (n_terms,), "components": (k, n_terms)}.items():
        arr = np.asarray(arrays[name])
        if arr.shape != shape:
            raise InputError(f"NMF state: array {name!r} has shape {arr.shape}, expected {shape}")
        if not np.all(np.isfinite(arr)) or np.any(arr < 0):
            raise InputError(f"NMF state: array {name!r} must be finite and non-negative")
    if params["sklearn_version"] != sklearn.__version__:
        logger.warning(
            "NMF state was saved with scikit-learn %s and is used with scikit-learn %s",
            params["sklearn_version"],
            sklearn.__version__,
        )
    return arrays, params
