"""The "bars" corpus of Griffiths & Steyvers (2004), for tests that need a known topic structure.

Source: Griffiths, T. L., Steyvers, M. (2004). Finding Scientific Topics. PNAS 101(suppl. 1):
5228–5235. The set-up below is recalled from memory (marked as such: not
re-checked against the paper: a vocabulary of V = 25 "pixels" on a 5×5 grid; K = 10 topics, the
5 horizontal and the 5 vertical bars, each uniform (1/5) over its 5 pixels; documents of 100
tokens drawn from the LDA generative process with θ_d ~ Dirichlet(α = 1). The paper used 2,000
documents; callers here pass fewer to keep tests fast.

Pixel (row r, column c) is term id 5·r + c and is written ``"p{r}{c}"`` ("p00" … "p44").
"""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp

__all__ = ["GRID", "N_BARS", "TOKENS_PER_DOC", "bar_topics", "make_bars_corpus", "pixel_names"]

GRID = 5
N_BARS = 2 * GRID
TOKENS_PER_DOC = 100
ALPHA = 1.0


def pixel_names() -> list[str]:
    """Term names in id order: ``p{row}{column}``."""
    return [f"p{r}{c}" for r in range(GRID) for c in range(GRID)]


def bar_topics() -> np.ndarray:
    """The 10 true topics, shape (10, 25): rows 0–4 horizontal bars, rows 5–9 vertical bars."""
    topics = np.zeros((N_BARS, GRID * GRID))
    for i in range(GRID):
        topics[i, [GRID * i + c for c in range(GRID)]] = 1.0 / GRID  # row i
        topics[GRID + i, [GRID * r + i for r in range(GRID)]] = 1.0 / GRID  # column i
    return topics


def _bar_pixels() -> np.ndarray:
    """Pixel ids of each bar, shape (10, 5)."""
    return np.array([np.flatnonzero(row) for row in bar_topics()])


def make_bars_corpus(n_docs: int, seed: int) -> tuple[sp.csr_matrix, np.ndarray, list[list[str]]]:
    """Draw a bars corpus from the LDA generative process.

    For each document: θ ~ Dirichlet(1, …, 1) over the 10 bars; for each of its 100 tokens, a
    bar z ~ θ, then a pixel uniformly among the bar's 5.

    Parameters
    ----------
    n_docs : int
        Number of documents.
    seed : int
        Seed of ``numpy.random.default_rng``.

    Returns
    -------
    counts : scipy.sparse.csr_matrix of shape (n_docs, 25), float64
        Pixel counts per document.
    true_topic_terms : numpy.ndarray of shape (10, 25)
        The bar topics, see :func:`bar_topics`.
    token_lists : list of list of str
        Each document's tokens in the order drawn, as pixel names (for coherence windows).
    """
    rng = np.random.default_rng(seed)
    pixels = _bar_pixels()
    theta = rng.dirichlet(np.full(N_BARS, ALPHA), size=n_docs)
    # inverse-CDF draw of each token's bar, then a uniform pixel of that bar
    cdf = np.cumsum(theta, axis=1)
    cdf[:, -1] = 1.0
    u = rng.random((n_docs, TOKENS_PER_DOC))
    bars = np.array([np.searchsorted(cdf[d], u[d], side="right") for d in range(n_docs)])
    tokens = pixels[bars, rng.integers(0, GRID, size=(n_docs, TOKENS_PER_DOC))]
    rows = np.repeat(np.arange(n_docs), TOKENS_PER_DOC)
    counts = sp.csr_matrix(
        (np.ones(rows.size), (rows, tokens.ravel())), shape=(n_docs, GRID * GRID)
    )
    counts.sum_duplicates()
    names = pixel_names()
    token_lists = [[names[t] for t in doc] for doc in tokens]
    return counts, bar_topics(), token_lists
