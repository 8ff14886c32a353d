"""Invented block corpora with known topics, shared by the model tests."""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp
from scipy.optimize import linear_sum_assignment
from scipy.spatial.distance import jensenshannon

N_BLOCKS = 3
BLOCK_TERMS = 8


def block_corpus(n_docs: int, seed: int) -> tuple[sp.csr_matrix, np.ndarray, np.ndarray]:
    """Invented test data: 3 topics, each uniform over its own block of 8 terms.

    Document d belongs to block d mod 3; each of its 40 tokens comes from its own block with
    probability 0.8 and otherwise from one other block (drawn once per document). Returns the
    counts, the true topic–term matrix and each document's own block.
    """
    rng = np.random.default_rng(seed)
    n_terms = N_BLOCKS * BLOCK_TERMS
    blocks = np.arange(n_docs) % N_BLOCKS
    counts = np.zeros((n_docs, n_terms))
    for d, own in enumerate(blocks):
        other = (own + 1 + rng.integers(0, N_BLOCKS - 1)) % N_BLOCKS
        topic = np.where(rng.random(40) < 0.8, own, other)
        terms = topic * BLOCK_TERMS + rng.integers(0, BLOCK_TERMS, size=40)
        np.add.at(counts[d], terms, 1)
    truth = np.kron(np.eye(N_BLOCKS), np.full((1, BLOCK_TERMS), 1 / BLOCK_TERMS))
    return sp.csr_matrix(counts), truth, blocks


def matched_distances(truth: np.ndarray, found: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Hungarian matching on base-2 Jensen–Shannon distance: (distances, found index per truth)."""
    cost = np.array([[jensenshannon(t, f, base=2) for f in found] for t in truth])
    rows, cols = linear_sum_assignment(cost)
    return cost[rows, cols], cols
