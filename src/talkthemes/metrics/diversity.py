"""Topic diversity: the share of unique words among all topics' top words.

References
----------
Dieng, A. B., Ruiz, F. J. R., Blei, D. M. (2020). Topic Modeling in Embedding Spaces.
Transactions of the Association for Computational Linguistics 8: 439–453.
"""

from __future__ import annotations

import numpy as np

from talkthemes.errors import InputError

__all__ = ["topic_diversity"]


def topic_diversity(topics: np.ndarray, topn: int = 25) -> float:
    """Topic diversity TD = |⋃_k top_n(k)| / (n · K) (Dieng, Ruiz & Blei 2020).

    1 means the topics' top-n lists are disjoint; 1/K means every topic lists the same
    words. The paper uses n = 25; report the cut-off with the value.

    Parameters
    ----------
    topics : ndarray of int, shape (K, N)
        Term ids of each topic's top words, most probable first, with N ≥ ``topn``.
    topn : int, optional
        How many top words of each topic to compare.

    Returns
    -------
    float
        TD in [1/K, 1].

    Raises
    ------
    InputError
        If ``topics`` is not a non-empty 2-D integer array with at least ``topn`` columns.

    References
    ----------
    Dieng, A. B., Ruiz, F. J. R., Blei, D. M. (2020). Topic Modeling in Embedding
    Spaces. TACL 8: 439–453.
    """
    top = np.asarray(topics)
    if top.ndim != 2 or top.shape[0] == 0 or not np.issubdtype(top.dtype, np.integer):
        raise InputError("topic diversity: expected a non-empty 2-D integer array of term ids")
    if topn < 1:
        raise InputError(f"topic diversity: topn must be at least 1, got {topn}")
    if top.shape[1] < topn:
        raise InputError(
            f"topic diversity: topics list {top.shape[1]} words each, fewer than topn={topn}"
        )
    head = top[:, :topn]
    return float(np.unique(head).size / head.size)
