"""Ranking a topic's terms: top terms by probability, relevance with λ, topic shares.

References
----------
Sievert, C., Shirley, K. E. (2014). Proc. Workshop on Interactive Language Learning,
Visualization, and Interfaces (ACL 2014), pp. 63–70.
"""

from __future__ import annotations

import numpy as np

from talkthemes.errors import InputError

__all__ = ["relevance", "term_marginal", "top_relevant_terms", "top_terms", "topic_shares"]


def _check_topic_terms(topic_terms: np.ndarray) -> np.ndarray:
    phi = np.asarray(topic_terms, dtype=np.float64)
    if phi.ndim != 2 or phi.shape[0] == 0 or phi.shape[1] == 0:
        raise InputError("topic terms: expected a non-empty 2-D matrix (topics × terms)")
    bad = ~np.isfinite(phi) | (phi < 0)
    if bad.any():
        raise InputError(f"topic terms: topic {int(np.nonzero(bad)[0][0])} has a bad weight")
    return phi


def _rank(score: np.ndarray, tie: np.ndarray, n: int) -> np.ndarray:
    """Column indices of the n largest scores per row; ties by ``tie`` (desc), then id."""
    n = min(n, score.shape[1])
    ids = np.broadcast_to(np.arange(score.shape[1]), score.shape)
    out = np.empty((score.shape[0], n), dtype=np.int64)
    for k in range(score.shape[0]):
        out[k] = np.lexsort((ids[k], -tie[k], -score[k]))[:n]
    return out


def top_terms(topic_terms: np.ndarray, n: int) -> np.ndarray:
    """Term ids of each topic's ``n`` most probable terms, most probable first.

    Ties are broken by the lower term id, so the result is deterministic.

    Parameters
    ----------
    topic_terms : ndarray of float, shape (K, V)
    n : int

    Returns
    -------
    ndarray of int64, shape (K, min(n, V))
    """
    phi = _check_topic_terms(topic_terms)
    if n < 1:
        raise InputError(f"top terms: n must be at least 1, got {n}")
    return _rank(phi, np.zeros_like(phi), n)


def topic_shares(doc_topics: np.ndarray, doc_weights: np.ndarray) -> np.ndarray:
    """Topic shares P(k) of the corpus: Σ_d n_d θ_dk / Σ_d n_d.

    With ``doc_weights`` the token counts n_d this is each topic's share of corpus tokens
    (Sievert & Shirley 2014). For NMF with θ_dk ∝ W_dk Σ_v H_kv, weights Σ_v (WH)_dv give
    P(k) = Σ_d W_dk Σ_v H_kv / Σ(WH).

    Parameters
    ----------
    doc_topics : ndarray of float, shape (D, K)
        Document–topic distributions θ (rows sum to 1).
    doc_weights : ndarray of float, shape (D,)
        Non-negative document weights, usually token counts.

    Returns
    -------
    ndarray of float64, shape (K,)
        Sums to 1.
    """
    theta = np.asarray(doc_topics, dtype=np.float64)
    w = np.asarray(doc_weights, dtype=np.float64)
    if theta.ndim != 2 or w.ndim != 1 or theta.shape[0] != w.size:
        raise InputError(
            f"topic shares: doc_topics {theta.shape} and doc_weights {w.shape} do not match"
        )
    if (
        not (np.isfinite(theta).all() and np.isfinite(w).all())
        or (theta < 0).any()
        or (w < 0).any()
    ):
        raise InputError("topic shares: negative or non-finite values")
    mass = w @ theta
    total = mass.sum()
    if total <= 0:
        raise InputError("topic shares: the documents carry no weight")
    return mass / total


def term_marginal(topic_terms: np.ndarray, shares: np.ndarray) -> np.ndarray:
    """Corpus term distribution implied by the model: p(w) = Σ_k P(k) φ_kw.

    Parameters
    ----------
    topic_terms : ndarray of float, shape (K, V)
        Topic–term distributions φ.
    shares : ndarray of float, shape (K,)
        Topic shares P(k) (see :func:`topic_shares`).

    Returns
    -------
    ndarray of float64, shape (V,)
    """
    phi = _check_topic_terms(topic_terms)
    p = np.asarray(shares, dtype=np.float64)
    if p.shape != (phi.shape[0],):
        raise InputError(f"term marginal: {p.size} shares for {phi.shape[0]} topics")
    return p @ phi


def relevance(topic_terms: np.ndarray, marginal: np.ndarray, lam: float) -> np.ndarray:
    """Relevance of every term to every topic (Sievert & Shirley 2014).

    relevance(w, k | λ) = λ ln φ_kw + (1 − λ) ln(φ_kw / p(w)). λ = 1 ranks by topic
    probability, λ = 0 by lift. A term with φ_kw = 0 gets −inf.

    Parameters
    ----------
    topic_terms : ndarray of float, shape (K, V)
        Topic–term distributions φ.
    marginal : ndarray of float, shape (V,)
        Corpus term distribution p(w) (see :func:`term_marginal`).
    lam : float
        λ in [0, 1].

    Returns
    -------
    ndarray of float64, shape (K, V)

    References
    ----------
    Sievert, C., Shirley, K. E. (2014). Proc. ACL 2014 Workshop on Interactive Language
    Learning, Visualization, and Interfaces, pp. 63–70.
    """
    phi = _check_topic_terms(topic_terms)
    p = np.asarray(marginal, dtype=np.float64)
    if p.shape != (phi.shape[1],):
        raise InputError(f"relevance: marginal has {p.size} terms, topics have {phi.shape[1]}")
    if not 0.0 <= lam <= 1.0:
        raise InputError(f"relevance: lambda must lie in [0, 1], got {lam}")
    zero = phi == 0
    if ((p <= 0) & ~zero).any():
        raise InputError("relevance: a term with topic weight has zero corpus probability")
    with np.errstate(divide="ignore", invalid="ignore"):
        log_phi = np.log(phi)
        out = lam * log_phi + (1.0 - lam) * (log_phi - np.log(p))
    out[zero] = -np.inf
    return out


def top_relevant_terms(
    topic_terms: np.ndarray, marginal: np.ndarray, lam: float, n: int
) -> np.ndarray:
    """Term ids of each topic's ``n`` most relevant terms, most relevant first.

    Ties are broken by the higher topic probability, then the lower term id.

    Parameters
    ----------
    topic_terms : ndarray of float, shape (K, V)
    marginal : ndarray of float, shape (V,)
    lam : float
        λ in [0, 1].
    n : int

    Returns
    -------
    ndarray of int64, shape (K, min(n, V))
    """
    if n < 1:
        raise InputError(f"top relevant terms: n must be at least 1, got {n}")
    score = relevance(topic_terms, marginal, lam)
    return _rank(score, np.asarray(topic_terms, dtype=np.float64), n)
