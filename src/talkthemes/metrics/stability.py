"""Topic stability: agreement of ranked top-term lists between models.

Greene, O'Callaghan & Cunningham (2014) compare ranked term lists with the average
Jaccard index over list prefixes, match the topics of two models one to one so that the
total is largest (Hungarian assignment), and average the matched scores. Their procedure
compares a reference model with models fitted on random subsamples of the documents.

**Our variant:** :func:`seed_stability` compares the models of different random seeds,
averaging the agreement over every pair of seeds, at no extra fitting cost in a sweep that
already fits several seeds per K. The sweep fits each seed on its own random subsample of
the documents, so the figure also reflects robustness to a change of documents, as in
Greene et al.; on the same documents it measures reproducibility alone (see
docs/methods_metrics.md, "Stability across seeds").

References
----------
Greene, D., O'Callaghan, D., Cunningham, P. (2014). How Many Topics? Stability Analysis
for Topic Models. ECML PKDD 2014; arXiv:1404.4606.
"""

from __future__ import annotations

from collections.abc import Sequence
from itertools import combinations

import numpy as np

from talkthemes.errors import InputError
from talkthemes.metrics.matching import optimal_assignment

__all__ = [
    "agreement",
    "average_jaccard",
    "average_jaccard_matrix",
    "pairwise_agreement",
    "seed_stability",
]


def _ranked_lists(topics: np.ndarray, t: int | None, what: str) -> np.ndarray:
    top = np.asarray(topics)
    if top.ndim == 1:
        top = top[None, :]
    if top.ndim != 2 or top.shape[0] == 0 or top.shape[1] == 0:
        raise InputError(f"{what}: expected a non-empty 2-D array of term ids (topics × rank)")
    if not np.issubdtype(top.dtype, np.integer):
        raise InputError(f"{what}: term ids must be integers")
    if t is not None:
        if t < 1:
            raise InputError(f"{what}: t must be at least 1, got {t}")
        if top.shape[1] < t:
            raise InputError(f"{what}: lists hold {top.shape[1]} terms, fewer than t={t}")
        top = top[:, :t]
    srt = np.sort(top, axis=1)
    dup = np.flatnonzero((srt[:, 1:] == srt[:, :-1]).any(axis=1))
    if dup.size:
        raise InputError(f"{what}: list {int(dup[0])} repeats a term")
    return top.astype(np.int64)


def average_jaccard_matrix(first: np.ndarray, second: np.ndarray) -> np.ndarray:
    """Average Jaccard between every ranked list of one set and every list of another.

    AJ(R_i, R_j) = (1/t) Σ_{d=1..t} |R_i,d ∩ R_j,d| / |R_i,d ∪ R_j,d|, where R_d is the
    top-d prefix; agreement near the top of the lists counts most.

    Parameters
    ----------
    first : ndarray of int, shape (K1, t)
        Ranked term ids, best first (no repeats within a list).
    second : ndarray of int, shape (K2, t)
        Same depth t.

    Returns
    -------
    ndarray of float64, shape (K1, K2)

    References
    ----------
    Greene, O'Callaghan & Cunningham (2014), ECML PKDD; arXiv:1404.4606.
    """
    a = _ranked_lists(first, None, "average Jaccard")
    b = _ranked_lists(second, None, "average Jaccard")
    if a.shape[1] != b.shape[1]:
        raise InputError(
            f"average Jaccard: lists of depth {a.shape[1]} and {b.shape[1]}; use the same t"
        )
    t = a.shape[1]
    depth = np.arange(1, t + 1, dtype=np.float64)
    out = np.empty((a.shape[0], b.shape[0]), dtype=np.float64)
    for i, row in enumerate(a):
        # equal[j, p, q]: term at rank p of row i equals term at rank q of list j
        equal = row[None, :, None] == b[:, None, :]
        # |prefix_d ∩ prefix_d| = number of matches with both ranks below d
        inter = np.cumsum(np.cumsum(equal, axis=1), axis=2)[:, np.arange(t), np.arange(t)]
        out[i] = (inter / (2 * depth - inter)).mean(axis=1)
    return out


def average_jaccard(first: np.ndarray, second: np.ndarray) -> float:
    """Average Jaccard of two ranked lists of the same length (see
    :func:`average_jaccard_matrix`)."""
    a = np.asarray(first)
    b = np.asarray(second)
    if a.ndim != 1 or b.ndim != 1:
        raise InputError("average Jaccard: expected two 1-D ranked lists")
    return float(average_jaccard_matrix(a[None, :], b[None, :])[0, 0])


def agreement(first: np.ndarray, second: np.ndarray, t: int | None = None) -> float:
    """Agreement of two topic sets: mean average Jaccard under the best 1-to-1 matching.

    agree(S_x, S_y) = (1/K) Σ_i AJ(R_x,i, R_y,π(i)), with π the one-to-one matching that
    maximises the total (Hungarian assignment).

    Parameters
    ----------
    first, second : ndarray of int, shape (K, ≥t)
        Ranked top-term ids of each topic of two models with the same K.
    t : int, optional
        List depth compared (all columns when omitted).

    Returns
    -------
    float
        In [0, 1]; 1 when both models have the same ranked lists.

    References
    ----------
    Greene, O'Callaghan & Cunningham (2014), ECML PKDD; arXiv:1404.4606.
    """
    a = _ranked_lists(first, t, "topic agreement")
    b = _ranked_lists(second, t, "topic agreement")
    if a.shape[0] != b.shape[0]:
        raise InputError(
            f"topic agreement: the two models have {a.shape[0]} and {b.shape[0]} topics"
        )
    aj = average_jaccard_matrix(a, b)
    pairs = optimal_assignment(aj, maximize=True)
    return float(aj[pairs[:, 0], pairs[:, 1]].mean())


def pairwise_agreement(topic_sets: Sequence[np.ndarray], t: int = 20) -> np.ndarray:
    """Agreement between every pair of topic sets (1 on the diagonal).

    Parameters
    ----------
    topic_sets : sequence of ndarray of int, each of shape (K, ≥t)
        Ranked top-term ids of models with the same K (e.g. one per seed).
    t : int, optional
        List depth compared (20 in Greene et al. 2014).

    Returns
    -------
    ndarray of float64, shape (S, S)
    """
    n = len(topic_sets)
    out = np.eye(n, dtype=np.float64)
    for i, j in combinations(range(n), 2):
        out[i, j] = out[j, i] = agreement(topic_sets[i], topic_sets[j], t)
    return out


def seed_stability(topic_sets: Sequence[np.ndarray], t: int = 20) -> float:
    """Stability of a topic count across seeds: mean pairwise agreement of the seeds.

    A variant of Greene, O'Callaghan & Cunningham (2014): instead of comparing a
    reference model with models fitted on document subsamples, it compares the models of
    different random seeds (in a sweep, each fitted on its own subsample), over all pairs.

    Parameters
    ----------
    topic_sets : sequence of ndarray of int, each of shape (K, ≥t)
        Ranked top-term ids of two or more models with the same K.
    t : int, optional
        List depth compared (20 in Greene et al. 2014).

    Returns
    -------
    float
        In [0, 1].

    References
    ----------
    Greene, D., O'Callaghan, D., Cunningham, P. (2014). How Many Topics? Stability
    Analysis for Topic Models. ECML PKDD 2014; arXiv:1404.4606.
    """
    if len(topic_sets) < 2:
        raise InputError(f"seed stability: needs at least 2 topic sets, got {len(topic_sets)}")
    matrix = pairwise_agreement(topic_sets, t)
    upper = np.triu_indices(len(topic_sets), k=1)
    return float(matrix[upper].mean())
