"""How evenly the lead themes split a corpus: the largest lead share, and the catch-all test.

A transcript's *lead theme* is the theme with its largest share. When the themes describe
distinct reasons for calling, each leads a slice of the corpus of the order of 1/K; a
*catch-all* theme (a few words common to many calls, such as a greeting or a place name
that survived preparation) leads a share out of all proportion to 1/K. The test is our own;
its thresholds and the figures behind them are in docs/methods.md, "The recommendation".
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

from talkthemes.errors import InputError

__all__ = ["catch_all_threshold", "is_catch_all", "largest_lead_share"]


def largest_lead_share(doc_topics: ArrayLike) -> float:
    """The largest share of transcripts that one theme leads.

    Parameters
    ----------
    doc_topics : array-like of shape (D, K)
        Theme shares of each transcript (rows need not be normalised). Ties go to the
        lower theme index, as ``numpy.argmax`` breaks them.

    Returns
    -------
    float
        In [1/K, 1]; NaN when there are no transcripts.

    Raises
    ------
    InputError
        When ``doc_topics`` is not a 2-D array with at least one column.
    """
    theta = np.asarray(doc_topics, dtype=np.float64)
    if theta.ndim != 2 or theta.shape[1] == 0:
        raise InputError("largest lead share: expected a 2-D array of theme shares")
    if theta.shape[0] == 0:
        return float("nan")
    leads = np.bincount(np.argmax(theta, axis=1), minlength=theta.shape[1])
    return float(leads.max() / theta.shape[0])


def catch_all_threshold(k: int, ratio: float, min_share: float = 0.0) -> float:
    """The lead share above which a theme is a catch-all at ``k`` themes:
    ``max(ratio / k, min_share)``; infinite when ``ratio`` is 0 (the check is off).

    ``ratio / k`` compares the share with an even split; ``min_share`` keeps the test from
    firing at a large K, where an even split is small and the largest true reason alone
    leads many times it.
    """
    if ratio <= 0:
        return float("inf")
    return max(ratio / k, min_share)


def is_catch_all(share: float, k: int, ratio: float, min_share: float = 0.0) -> bool:
    """Whether one theme leading ``share`` of the transcripts at ``k`` themes is a catch-all.

    True when ``share`` exceeds :func:`catch_all_threshold`; never when ``ratio`` is 0 or
    the share is unknown (NaN: a sweep recorded before the share was kept).
    """
    if not np.isfinite(share):
        return False
    return bool(share > catch_all_threshold(k, ratio, min_share))
