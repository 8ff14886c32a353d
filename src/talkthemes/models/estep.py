"""A compiled LDA E-step over CSR rows, the same fixed-point iteration as gensim's.

gensim's ``LdaModel.inference`` runs the variational E-step of Hoffman, Blei & Bach (2010)
one document at a time in Python, with a handful of small numpy calls per iteration; for
transcripts of a few dozen distinct terms that interpreter overhead is most of the fit time.
:func:`estep` runs the same iteration, in the same order, for every row of a CSR count
matrix in one numba-compiled loop:

    γ_d ← α + exp(E[log θ_d]) ⊙ (n_d / φnorm_d) · exp(E[log β])ᵀ
    φnorm_dw = Σ_k exp(E[log θ_dk]) exp(E[log β_kw]) + ε

stopping a document when the mean absolute change of γ_d falls below ``gamma_threshold`` or
after ``iterations`` updates, and collecting the sufficient statistics
``sstats[k, w] = Σ_d n_dw exp(E[log θ_dk]) / φnorm_dw`` (the caller multiplies by
exp(E[log β]) as gensim does). Starting points γ⁰ are drawn by the caller, so the result
equals gensim's for the same random state up to floating-point summation order; the test
``tests/external/test_lda_estep.py`` checks that against gensim itself. The gensim model that
runs it is :class:`talkthemes.models.csr_lda.CsrLdaModel`.

E[log θ_dk] = ψ(γ_dk) − ψ(Σ_j γ_dj) needs the digamma function ψ, which numba cannot take
from scipy; :func:`digamma` evaluates it with the recurrence ψ(x) = ψ(x + 1) − 1/x up to
x ≥ 10 and the asymptotic series there (Abramowitz & Stegun 1964, 6.3.5 and 6.3.18), accurate
to about 1e-12 relative for the positive arguments γ takes (tested against scipy).

References
----------
Hoffman, M. D., Blei, D. M., Bach, F. (2010). Online Learning for Latent Dirichlet
Allocation. Advances in Neural Information Processing Systems 23.
Abramowitz, M., Stegun, I. A. (1964). Handbook of Mathematical Functions, §6.3.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

__all__ = ["bound_words", "digamma", "estep"]

# Reassociation lets LLVM vectorise the sums over topics; no flag assumes away NaN or inf.
_FAST = {"reassoc", "contract", "arcp", "nsz"}


@njit(cache=True, nogil=True, fastmath=_FAST)
def digamma(x: float) -> float:  # pragma: no cover - compiled
    """ψ(x) for x > 0 (recurrence to x ≥ 10, then the asymptotic series to x⁻¹²); NaN
    for x ≤ 0, NaN or infinite x (γ is always positive and finite)."""
    if not (0.0 < x < math.inf):
        return math.nan
    result = 0.0
    while x < 10.0:
        result -= 1.0 / x
        x += 1.0
    inv = 1.0 / x
    inv2 = inv * inv
    series = inv2 * (
        1.0 / 12.0
        - inv2
        * (
            1.0 / 120.0
            - inv2
            * (1.0 / 252.0 - inv2 * (1.0 / 240.0 - inv2 * (1.0 / 132.0 - inv2 * (691.0 / 32760.0))))
        )
    )
    return result + math.log(x) - 0.5 * inv - series


@njit(cache=True, nogil=True, fastmath=_FAST)
def _exp_e_log_theta(gamma: np.ndarray, out: np.ndarray) -> None:  # pragma: no cover
    total = 0.0
    for k in range(gamma.shape[0]):
        total += gamma[k]
    psi_total = digamma(total)
    for k in range(gamma.shape[0]):
        out[k] = math.exp(digamma(gamma[k]) - psi_total)


@njit(cache=True, nogil=True, fastmath=_FAST)
def estep(
    indptr: np.ndarray,
    indices: np.ndarray,
    data: np.ndarray,
    exp_e_log_beta: np.ndarray,
    alpha: np.ndarray,
    gamma: np.ndarray,
    iterations: int,
    gamma_threshold: float,
    sstats: np.ndarray,
    collect: bool,
) -> int:  # pragma: no cover - compiled; tested through the Python wrappers
    """Run the E-step in place on ``gamma`` (D × K, holding the starting points).

    Parameters
    ----------
    indptr, indices, data : ndarray
        The CSR arrays of the D × V count matrix (data as float64).
    exp_e_log_beta : ndarray of shape (K, V)
        exp(E[log β]) of the current topics.
    alpha : ndarray of shape (K,)
        Document–topic prior.
    gamma : ndarray of shape (D, K)
        Starting points on entry, the variational parameters on return.
    iterations : int
        Most updates per document.
    gamma_threshold : float
        A document stops once the mean absolute change of γ_d is below this.
    sstats : ndarray of shape (K, V)
        Sufficient statistics are added here when ``collect`` (before the final
        multiplication by exp(E[log β]), which the caller does).
    collect : bool
        Whether to collect sufficient statistics.

    Returns
    -------
    int
        Documents that converged within ``iterations``.
    """
    n_docs, k_topics = gamma.shape
    eps = np.finfo(np.float64).eps
    converged = 0
    exp_theta = np.empty(k_topics)
    last = np.empty(k_topics)
    acc = np.empty(k_topics)
    for d in range(n_docs):
        lo = indptr[d]
        hi = indptr[d + 1]
        n = hi - lo
        beta_d = np.empty((n, k_topics))
        for j in range(n):
            w = indices[lo + j]
            for k in range(k_topics):
                beta_d[j, k] = exp_e_log_beta[k, w]
        gamma_d = gamma[d]
        _exp_e_log_theta(gamma_d, exp_theta)
        phinorm = np.empty(n)
        for j in range(n):
            s = 0.0
            for k in range(k_topics):
                s += exp_theta[k] * beta_d[j, k]
            phinorm[j] = s + eps
        for _ in range(iterations):
            for k in range(k_topics):
                last[k] = gamma_d[k]
                acc[k] = 0.0
            for j in range(n):
                ratio = data[lo + j] / phinorm[j]
                for k in range(k_topics):
                    acc[k] += ratio * beta_d[j, k]
            for k in range(k_topics):
                gamma_d[k] = alpha[k] + exp_theta[k] * acc[k]
            _exp_e_log_theta(gamma_d, exp_theta)
            for j in range(n):
                s = 0.0
                for k in range(k_topics):
                    s += exp_theta[k] * beta_d[j, k]
                phinorm[j] = s + eps
            change = 0.0
            for k in range(k_topics):
                change += abs(gamma_d[k] - last[k])
            if change / k_topics < gamma_threshold:
                converged += 1
                break
        if collect:
            for j in range(n):
                w = indices[lo + j]
                ratio = data[lo + j] / phinorm[j]
                for k in range(k_topics):
                    sstats[k, w] += exp_theta[k] * ratio
    return converged


@njit(cache=True, nogil=True, fastmath=_FAST)
def bound_words(
    indptr: np.ndarray,
    indices: np.ndarray,
    data: np.ndarray,
    e_log_theta: np.ndarray,
    e_log_beta_t: np.ndarray,
) -> float:  # pragma: no cover - compiled; tested through variational_bound
    """Σ_d Σ_w n_dw · ln Σ_k exp(E[log θ_dk] + E[log β_kw]): the word part of the LDA bound.

    The sum over k is factored as e^(m_d + c_w) Σ_k e^(E[log θ_dk] − m_d) e^(E[log β_kw] − c_w)
    with m_d, c_w the largest E[log θ_dk] of the document and E[log β_kw] of the term, so the
    exponentials are taken once per document and once per term rather than K times per
    non-zero count (the same factoring as the E-step's φnorm). Both factors are at most 1
    and each has an entry equal to 1; in the (practically unreachable) case that the sum still
    falls below 1e-280 the entry is recomputed with the plain log-sum-exp.

    Parameters
    ----------
    indptr, indices, data : ndarray
        CSR arrays of the D × V counts (data as float64).
    e_log_theta : ndarray of shape (D, K)
    e_log_beta_t : ndarray of shape (V, K)
        E[log β] transposed, so each term's K values are contiguous.
    """
    n_docs, k_topics = e_log_theta.shape
    n_terms = e_log_beta_t.shape[0]
    beta_top = np.empty(n_terms)
    beta_exp = np.empty((n_terms, k_topics))
    for w in range(n_terms):
        top = -math.inf
        for k in range(k_topics):
            if e_log_beta_t[w, k] > top:
                top = e_log_beta_t[w, k]
        beta_top[w] = top
        for k in range(k_topics):
            beta_exp[w, k] = math.exp(e_log_beta_t[w, k] - top)
    theta_exp = np.empty(k_topics)
    total = 0.0
    for d in range(n_docs):
        theta_top = -math.inf
        for k in range(k_topics):
            if e_log_theta[d, k] > theta_top:
                theta_top = e_log_theta[d, k]
        for k in range(k_topics):
            theta_exp[k] = math.exp(e_log_theta[d, k] - theta_top)
        for j in range(indptr[d], indptr[d + 1]):
            w = indices[j]
            s = 0.0
            for k in range(k_topics):
                s += theta_exp[k] * beta_exp[w, k]
            if s > 1e-280:
                total += data[j] * (theta_top + beta_top[w] + math.log(s))
                continue
            top = -math.inf
            for k in range(k_topics):
                v = e_log_theta[d, k] + e_log_beta_t[w, k]
                if v > top:
                    top = v
            s = 0.0
            for k in range(k_topics):
                s += math.exp(e_log_theta[d, k] + e_log_beta_t[w, k] - top)
            total += data[j] * (top + math.log(s))
    return total
