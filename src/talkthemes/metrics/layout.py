"""A 2-D map of topics: Jensen–Shannon distances laid out by classical MDS.

References
----------
Endres, D. M., Schindelin, J. E. (2003). A New Metric for Probability Distributions.
IEEE Transactions on Information Theory 49(7): 1858–1860.
Torgerson, W. S. (1952). Multidimensional Scaling: I. Theory and Method.
Psychometrika 17(4): 401–419.
Gower, J. C. (1966). Some Distance Properties of Latent Root and Vector Methods Used in
Multivariate Analysis. Biometrika 53(3/4): 325–338.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.linalg import eigh
from scipy.special import rel_entr

from talkthemes.errors import InputError

__all__ = ["MdsResult", "classical_mds", "js_distance_matrix", "topic_layout"]


def _distributions(matrix: np.ndarray, what: str) -> np.ndarray:
    m = np.asarray(matrix, dtype=np.float64)
    if m.ndim != 2 or m.shape[0] == 0 or m.shape[1] == 0:
        raise InputError(f"{what}: expected a non-empty 2-D matrix (topics × terms)")
    bad = ~np.isfinite(m) | (m < 0)
    if bad.any():
        k = int(np.nonzero(bad)[0][0])
        raise InputError(f"{what}: row {k} has a negative or non-finite weight")
    total = m.sum(axis=1)
    if (total <= 0).any():
        k = int(np.flatnonzero(total <= 0)[0])
        raise InputError(f"{what}: row {k} has no weight")
    return m / total[:, None]


def js_distance_matrix(
    P: np.ndarray, Q: np.ndarray | None = None, *, base: float = 2.0
) -> np.ndarray:
    """Jensen–Shannon distances √JSD between the rows of two sets of distributions.

    Rows are normalised to sum to 1 first (as ``scipy.spatial.distance.jensenshannon``
    does). With ``base=2`` the distance lies in [0, 1]; it is a metric (Endres &
    Schindelin 2003).

    Parameters
    ----------
    P : ndarray of float, shape (K, V)
        Non-negative rows (e.g. topic–term distributions).
    Q : ndarray of float, shape (L, V), optional
        A second set over the same vocabulary; ``P`` itself when omitted.
    base : float, optional
        Logarithm base of the divergence (2 gives bits).

    Returns
    -------
    ndarray of float64, shape (K, L)
        ``out[i, j]`` = sqrt(JSD(P_i ‖ Q_j)); exactly 0 between identical rows.
    """
    p = _distributions(P, "JS distance")
    q = p if Q is None else _distributions(Q, "JS distance")
    if q.shape[1] != p.shape[1]:
        raise InputError(
            f"JS distance: the two sets have {p.shape[1]} and {q.shape[1]} terms; reindex "
            "them to one vocabulary first"
        )
    out = np.empty((p.shape[0], q.shape[0]), dtype=np.float64)
    for i, row in enumerate(p):
        mid = 0.5 * (row[None, :] + q)
        div = 0.5 * rel_entr(row[None, :], mid).sum(axis=1) + 0.5 * rel_entr(q, mid).sum(axis=1)
        out[i] = np.sqrt(np.maximum(div / np.log(base), 0.0))
    if Q is None:  # exact symmetry and zero diagonal for one set
        out = np.minimum(out, out.T)
        np.fill_diagonal(out, 0.0)
    return out


@dataclass(frozen=True, eq=False)
class MdsResult:
    """Classical MDS of a distance matrix.

    Attributes
    ----------
    coordinates : ndarray of float64, shape (K, n_components)
        Point coordinates; in each axis the entry of largest magnitude is positive.
    eigenvalues : ndarray of float64, shape (K,)
        All eigenvalues of the double-centred matrix, largest first (negative ones mean
        the distances are not exactly Euclidean).
    explained : float
        Share of the positive eigenvalue mass kept by the shown axes,
        Σ_{shown} max(λ, 0) / Σ_{λ>0} λ; 1.0 when all points coincide.
    """

    coordinates: np.ndarray
    eigenvalues: np.ndarray
    explained: float


def classical_mds(distances: np.ndarray, n_components: int = 2) -> MdsResult:
    """Classical (Torgerson) multidimensional scaling, also called PCoA.

    B = −½ J D∘² J with J = I − 11ᵀ/K; B = UΛUᵀ; coordinates U_k Λ_k^{1/2} from the
    top ``n_components`` eigenpairs (negative eigenvalues give a zero axis). The sign of
    each axis is fixed so that its entry of largest magnitude is positive (the first one
    on ties), as scikit-learn's ``svd_flip`` does, so the map is deterministic.

    Parameters
    ----------
    distances : ndarray of float, shape (K, K)
        Symmetric distance matrix with a zero diagonal.
    n_components : int, optional
        Number of axes.

    Returns
    -------
    MdsResult

    References
    ----------
    Torgerson, W. S. (1952). Psychometrika 17(4): 401–419.
    Gower, J. C. (1966). Biometrika 53(3/4): 325–338.
    """
    d = np.asarray(distances, dtype=np.float64)
    if d.ndim != 2 or d.shape[0] != d.shape[1] or d.shape[0] == 0:
        raise InputError("classical MDS: expected a non-empty square distance matrix")
    if not np.isfinite(d).all() or not np.allclose(d, d.T, rtol=0, atol=1e-10):
        raise InputError("classical MDS: the distance matrix must be finite and symmetric")
    if n_components < 1:
        raise InputError(f"classical MDS: n_components must be at least 1, got {n_components}")
    k = d.shape[0]
    b = d**2
    b = b - b.mean(axis=0, keepdims=True)
    b = b - b.mean(axis=1, keepdims=True)
    b *= -0.5
    values, vectors = eigh(b)
    values, vectors = values[::-1], vectors[:, ::-1]
    m = min(n_components, k)
    axes = vectors[:, :m].copy()
    lead = np.argmax(np.abs(axes), axis=0)
    axes *= np.where(axes[lead, np.arange(m)] < 0, -1.0, 1.0)
    coords = np.zeros((k, n_components), dtype=np.float64)
    coords[:, :m] = axes * np.sqrt(np.maximum(values[:m], 0.0))
    positive = values[values > 0].sum()
    explained = float(np.maximum(values[:m], 0.0).sum() / positive) if positive > 0 else 1.0
    return MdsResult(coords, values, explained)


def topic_layout(topic_terms: np.ndarray) -> MdsResult:
    """2-D map of topics: classical MDS on base-2 Jensen–Shannon distances.

    Parameters
    ----------
    topic_terms : ndarray of float, shape (K, V)
        Topic–term distributions.

    Returns
    -------
    MdsResult
        Two coordinates per topic.
    """
    return classical_mds(js_distance_matrix(topic_terms), 2)
