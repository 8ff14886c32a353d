"""Which themes look like boilerplate: a large average share but almost never the lead.

A theme that describes why people call leads the calls about it, so the share of calls it
leads (its coverage) is of the order of its average share. A theme made of what is said
in every call — an agent's courtesy phrases, hold messages, verification — takes a slice
of nearly every call and leads almost none: its average share is large, its coverage
tiny. Such a theme is suggested for hiding as noise. The rule is our own; its reasons and
thresholds are in docs/viewer.md, "Themes that look like boilerplate".
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike, NDArray

__all__ = [
    "BOILERPLATE_MAX_LEAD_RATIO",
    "BOILERPLATE_MIN_MEAN_SHARE",
    "boilerplate_like",
    "lead_ratio",
]

#: A theme is boilerplate-like when it leads at most this fraction of its average share.
BOILERPLATE_MAX_LEAD_RATIO = 0.2

#: Smallest average share of a boilerplate-like theme (unless half an even share is less).
BOILERPLATE_MIN_MEAN_SHARE = 0.02


def lead_ratio(coverage: ArrayLike, mean_share: ArrayLike) -> NDArray[np.float64]:
    """Coverage over average share, per theme (``inf`` where the average share is 0).

    Parameters
    ----------
    coverage : array-like of shape (K,)
        Share of transcripts each theme leads (0–1).
    mean_share : array-like of shape (K,)
        Each theme's average share over the transcripts (0–1).

    Returns
    -------
    numpy.ndarray of shape (K,)
        About 1 for a theme that leads as much as it weighs; near 0 for one that weighs
        in every transcript and leads none.
    """
    cov = np.asarray(coverage, dtype=np.float64)
    mean = np.asarray(mean_share, dtype=np.float64)
    if cov.shape != mean.shape or cov.ndim != 1:
        raise ValueError(
            f"lead_ratio: coverage {cov.shape} and mean_share {mean.shape} must be two "
            "vectors of the same length"
        )
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = np.where(mean > 0, cov / np.where(mean > 0, mean, 1.0), np.inf)
    return ratio


def boilerplate_like(
    coverage: ArrayLike,
    mean_share: ArrayLike,
    *,
    max_lead_ratio: float = BOILERPLATE_MAX_LEAD_RATIO,
    min_mean_share: float | None = None,
) -> NDArray[np.bool_]:
    """Themes with a large average share that almost never lead a transcript.

    Parameters
    ----------
    coverage, mean_share : array-like of shape (K,)
        As in :func:`lead_ratio`.
    max_lead_ratio : float
        Largest coverage / average share of a boilerplate-like theme.
    min_mean_share : float, optional
        Smallest average share worth a suggestion (default: 2%, or half of an even
        share, ``0.5 / K``, when that is less): a small theme that rarely leads is a
        small theme, not boilerplate.

    Returns
    -------
    numpy.ndarray of bool, shape (K,)
        True for each theme to suggest hiding as noise.

    Examples
    --------
    A courtesy theme taking 6.6% of every call on average and leading 0.1% of calls is
    flagged; a reason theme leading 12% with an average share of 10% is not:

    >>> boilerplate_like([0.001, 0.12], [0.066, 0.10]).tolist()
    [True, False]
    """
    mean = np.asarray(mean_share, dtype=np.float64)
    ratio = lead_ratio(coverage, mean)
    k = mean.size
    if min_mean_share is None:
        floor = min(BOILERPLATE_MIN_MEAN_SHARE, 0.5 / k) if k else 0.0
    else:
        floor = float(min_mean_share)
    return (mean >= floor) & (ratio <= float(max_lead_ratio))
