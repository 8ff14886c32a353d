"""One-to-one matching of topics between two models (Hungarian assignment).

Used to measure stability across seeds and to align themes between versions: an
optimal assignment on a cost matrix (e.g. Jensen–Shannon distance between topic–term
rows), with a threshold above which an assigned pair is not accepted, and near-ties
that point at topics that split or merged.

References
----------
Kuhn, H. W. (1955). The Hungarian Method for the Assignment Problem. Naval Research
Logistics Quarterly 2(1–2): 83–97.
Crouse, D. F. (2016). On Implementing 2D Rectangular Assignment Algorithms. IEEE
Transactions on Aerospace and Electronic Systems 52(4): 1679–1696 (the algorithm behind
``scipy.optimize.linear_sum_assignment``).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from scipy.optimize import linear_sum_assignment

from talkthemes.errors import InputError
from talkthemes.metrics.layout import js_distance_matrix

__all__ = [
    "Matching",
    "NearTie",
    "js_distance_matrix",
    "match_topics",
    "optimal_assignment",
    "reindex_topics",
    "union_vocabulary",
]


@dataclass(frozen=True, eq=False)
class NearTie:
    """A topic close to two or more topics of the other model.

    Attributes
    ----------
    index : int
        The topic (row or column index) with several close partners.
    candidates : ndarray of int
        Indices on the other side whose cost is within the margin of the best one,
        best first.
    """

    index: int
    candidates: np.ndarray


@dataclass(frozen=True, eq=False)
class Matching:
    """Result of :func:`match_topics` on a rows × columns cost matrix.

    Attributes
    ----------
    pairs : ndarray of int, shape (M, 2)
        Accepted (row, column) pairs, sorted by row.
    costs : ndarray of float, shape (M,)
        Cost of each accepted pair.
    rejected : ndarray of int, shape (R, 2)
        Pairs the assignment chose but whose cost is above the threshold.
    unmatched_rows : ndarray of int
        Rows without an accepted partner (left over, or in a rejected pair).
    unmatched_cols : ndarray of int
        Columns without an accepted partner.
    row_ties : tuple of NearTie
        Rows close to two or more columns (a row topic that may have split).
    col_ties : tuple of NearTie
        Columns close to two or more rows (row topics that may have merged).
    """

    pairs: np.ndarray
    costs: np.ndarray
    rejected: np.ndarray
    unmatched_rows: np.ndarray
    unmatched_cols: np.ndarray
    row_ties: tuple[NearTie, ...]
    col_ties: tuple[NearTie, ...]


def _check_matrix(matrix: np.ndarray, what: str) -> np.ndarray:
    m = np.asarray(matrix, dtype=np.float64)
    if m.ndim != 2:
        raise InputError(f"{what}: expected a 2-D matrix, got {m.ndim} dimensions")
    if not np.isfinite(m).all():
        r, c = (int(x[0]) for x in np.nonzero(~np.isfinite(m)))
        raise InputError(f"{what}: entry ({r}, {c}) is not a finite number")
    return m


def optimal_assignment(score: np.ndarray, *, maximize: bool = False) -> np.ndarray:
    """Optimal one-to-one assignment of rows to columns.

    Parameters
    ----------
    score : ndarray of float, shape (R, C)
        Costs (or similarities with ``maximize=True``); rectangular is allowed, and then
        min(R, C) pairs are assigned.
    maximize : bool, optional
        Maximise the total instead of minimising it.

    Returns
    -------
    ndarray of int, shape (min(R, C), 2)
        (row, column) pairs, sorted by row.

    References
    ----------
    Kuhn (1955); Crouse (2016), via ``scipy.optimize.linear_sum_assignment``.
    """
    m = _check_matrix(score, "assignment")
    rows, cols = linear_sum_assignment(m, maximize=maximize)
    return np.column_stack([rows, cols]).astype(np.int64)


def _ties(cost: np.ndarray, margin: float, threshold: float | None) -> tuple[NearTie, ...]:
    """Rows of ``cost`` with at least two columns within ``margin`` of the row's best."""
    out = []
    if cost.shape[1] < 2:
        return ()
    best = cost.min(axis=1, keepdims=True)
    close = cost <= best + margin
    if threshold is not None:
        close &= cost <= threshold
    for r in np.flatnonzero(close.sum(axis=1) >= 2):
        cand = np.flatnonzero(close[r])
        cand = cand[np.argsort(cost[r, cand], kind="stable")]
        out.append(NearTie(int(r), cand.astype(np.int64)))
    return tuple(out)


def match_topics(
    cost: np.ndarray, threshold: float | None = None, *, margin: float = 0.05
) -> Matching:
    """Match topics of two models one to one, minimising the total cost.

    Parameters
    ----------
    cost : ndarray of float, shape (R, C)
        Cost between row topic r (e.g. the older model) and column topic c (the newer),
        such as :func:`js_distance_matrix`.
    threshold : float or None, optional
        An assigned pair costing more than this is rejected: both its row and its column
        count as unmatched. ``None`` accepts every assigned pair.
    margin : float, optional
        A row whose costs to two or more columns lie within ``margin`` of its best cost
        (and, with a threshold, not above it) is a near-tie: a possible split. Likewise a
        column close to two or more rows: a possible merge.

    Returns
    -------
    Matching

    References
    ----------
    Kuhn (1955); Crouse (2016), via ``scipy.optimize.linear_sum_assignment``.
    """
    c = _check_matrix(cost, "topic matching cost")
    if margin < 0:
        raise InputError(f"topic matching: margin must be non-negative, got {margin}")
    n_rows, n_cols = c.shape
    assigned = optimal_assignment(c) if c.size else np.zeros((0, 2), dtype=np.int64)
    pair_cost = c[assigned[:, 0], assigned[:, 1]]
    ok = np.ones(pair_cost.size, dtype=bool) if threshold is None else pair_cost <= threshold
    pairs = assigned[ok]
    return Matching(
        pairs=pairs,
        costs=pair_cost[ok],
        rejected=assigned[~ok],
        unmatched_rows=np.setdiff1d(np.arange(n_rows), pairs[:, 0]).astype(np.int64),
        unmatched_cols=np.setdiff1d(np.arange(n_cols), pairs[:, 1]).astype(np.int64),
        row_ties=_ties(c, margin, threshold),
        col_ties=_ties(c.T, margin, threshold),
    )


def union_vocabulary(first: Sequence[str], second: Sequence[str]) -> list[str]:
    """Union of two vocabularies: ``first`` in order, then the new terms of ``second``.

    Raises
    ------
    InputError
        If either vocabulary lists a term twice.
    """
    for name, vocab in (("first", first), ("second", second)):
        if len(set(vocab)) != len(vocab):
            raise InputError(f"union vocabulary: the {name} vocabulary lists a term twice")
    known = set(first)
    return list(first) + [t for t in second if t not in known]


def reindex_topics(
    topic_terms: np.ndarray, vocab_from: Sequence[str], vocab_to: Sequence[str]
) -> np.ndarray:
    """Re-express topic–term rows over another vocabulary and renormalise them.

    Terms of ``vocab_to`` missing from ``vocab_from`` get probability 0; mass on terms
    missing from ``vocab_to`` is dropped and each row is rescaled to sum to 1.

    Parameters
    ----------
    topic_terms : ndarray of float, shape (K, len(vocab_from))
        Non-negative topic–term weights.
    vocab_from : sequence of str
        Term of each column of ``topic_terms``.
    vocab_to : sequence of str
        Target vocabulary (e.g. :func:`union_vocabulary` of two models).

    Returns
    -------
    ndarray of float64, shape (K, len(vocab_to))
        Rows summing to 1.

    Raises
    ------
    InputError
        On a shape mismatch, a duplicated term, a negative weight, or a topic left with
        no mass on the target vocabulary.
    """
    phi = _check_matrix(topic_terms, "reindex topics")
    if phi.shape[1] != len(vocab_from):
        raise InputError(
            f"reindex topics: {phi.shape[1]} columns but the vocabulary has {len(vocab_from)} terms"
        )
    if (phi < 0).any():
        k = int(np.nonzero(phi < 0)[0][0])
        raise InputError(f"reindex topics: topic {k} has a negative weight")
    position = {t: i for i, t in enumerate(vocab_from)}
    if len(position) != len(vocab_from) or len(set(vocab_to)) != len(vocab_to):
        raise InputError("reindex topics: a vocabulary lists a term twice")
    dst = np.array([j for j, t in enumerate(vocab_to) if t in position], dtype=np.int64)
    src = np.array([position[vocab_to[j]] for j in dst], dtype=np.int64)
    out = np.zeros((phi.shape[0], len(vocab_to)), dtype=np.float64)
    out[:, dst] = phi[:, src]
    mass = out.sum(axis=1)
    empty = np.flatnonzero(mass <= 0)
    if empty.size:
        raise InputError(
            f"reindex topics: topic {int(empty[0])} has no weight on the target vocabulary"
        )
    return out / mass[:, None]
