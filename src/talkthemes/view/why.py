"""The data behind "Why this call": the terms that pulled a call to each of its top themes.

A call's share of theme *k* comes from its words: the more often it says a term the theme
weighs heavily, the more it is pulled to that theme. For each of the call's top themes
(largest share first, at most :data:`TOP_THEMES`, each with a share of at least
:data:`MIN_SHARE`) the **pull** of term *w* is its count in the call times its weight in
the theme, normalised over the call's terms:

    pull_k(w) = n_w φ_kw / Σ_v n_v φ_kv,

so the pulls of a theme sum to 1 over all the call's terms and the chart shows the
:data:`TERMS` largest. The counts are the call's terms as the version's prep counted them
(:func:`talkthemes.versions.call_terms.call_counts`).
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd

from talkthemes.errors import InputError
from talkthemes.versions.load import Version

__all__ = ["MIN_SHARE", "TERMS", "TOP_THEMES", "why_frame"]

#: Themes shown per call.
TOP_THEMES = 3
#: A theme is shown when the call's share of it reaches this.
MIN_SHARE = 0.05
#: Terms shown per theme.
TERMS = 8


def why_frame(
    version: Version,
    counts: np.ndarray,
    shares: np.ndarray,
    *,
    names: list[str] | None = None,
    top_themes: int = TOP_THEMES,
    min_share: float = MIN_SHARE,
    terms: int = TERMS,
) -> pd.DataFrame:
    """The terms that pulled a call to each of its top themes (see the module notes).

    Parameters
    ----------
    version : Version
    counts : ndarray (V,)
        The call's term counts (:func:`talkthemes.versions.call_terms.call_counts`).
    shares : ndarray (K,)
        The call's theme shares (its row of ``version.doc_topics``).
    names : list of str, optional
        Display names of the themes (default ``version.names()``).
    top_themes, min_share, terms
        How many themes, the least share shown, terms per theme.

    Returns
    -------
    DataFrame
        ``theme_id, name, share, theme_rank, term, count, weight, pull, rank``: one row per
        (theme, term), themes by share, terms by pull (largest first); empty when no theme
        reaches ``min_share`` or the call holds none of their terms.
    """
    n = np.asarray(counts, dtype=np.float64).ravel()
    theta = np.asarray(shares, dtype=np.float64).ravel()
    phi = np.asarray(version.topic_terms, dtype=np.float64)
    if n.size != phi.shape[1] or theta.size != phi.shape[0]:
        raise InputError(
            f"why this call: {n.size} counts and {theta.size} shares for a version of "
            f"{phi.shape[0]} themes over {phi.shape[1]} terms"
        )
    names = names if names is not None else version.names()
    order = [int(k) for k in np.lexsort((np.arange(theta.size), -theta))[:top_themes]]
    rows: list[dict[str, Any]] = []
    for rank, k in enumerate(o for o in order if theta[o] >= min_share):
        mass = n * phi[k]
        total = mass.sum()
        if total <= 0:
            continue
        pull = mass / total
        best = [int(w) for w in np.lexsort((np.arange(pull.size), -pull))[:terms] if pull[w] > 0]
        for r, w in enumerate(best, start=1):
            rows.append(
                {
                    "theme_id": version.themes[k].theme_id,
                    "name": names[k],
                    "share": float(theta[k]),
                    "theme_rank": rank + 1,
                    "term": version.vocabulary[w],
                    "count": int(n[w]),
                    "weight": float(phi[k, w]),
                    "pull": float(pull[w]),
                    "rank": r,
                }
            )
    columns = ["theme_id", "name", "share", "theme_rank", "term", "count", "weight", "pull", "rank"]
    return pd.DataFrame(rows, columns=columns)
