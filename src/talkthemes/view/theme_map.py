"""Where the theme map places each theme, which themes it links, and how each is moving.

Classical MDS (Torgerson 1952; Gower 1966) on the base-2 Jensen–Shannon distances between
the themes' word distributions; see docs/methods_metrics.md, "Theme map: Jensen–Shannon
distance and classical MDS". The map's tiles and links are explained in docs/viewer.md,
"Theme map".
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from talkthemes.metrics.layout import classical_mds, js_distance_matrix

__all__ = [
    "LINKS_PER_THEME",
    "LINK_QUANTILE",
    "ThemeLayout",
    "default_cutoff",
    "theme_layout",
    "theme_links",
]

#: Links join pairs of themes closer than this quantile of all pairwise distances.
LINK_QUANTILE = 0.2
#: Each theme links to at most this many of its nearest themes (under the cut-off).
LINKS_PER_THEME = 2


@dataclass(frozen=True, eq=False)
class ThemeLayout:
    """Map coordinates of a version's themes (by row), the share of structure kept, and
    the Jensen–Shannon distances between themes (K × K, base 2, in [0, 1])."""

    x: np.ndarray
    y: np.ndarray
    explained: float
    distances: np.ndarray | None = None


def theme_layout(topic_terms: np.ndarray) -> ThemeLayout:
    """Classical MDS (Torgerson 1952; Gower 1966) on base-2 Jensen–Shannon distances.

    Parameters
    ----------
    topic_terms : ndarray (K, V)

    Returns
    -------
    ThemeLayout
        ``explained`` is the share of the distance structure the two axes keep;
        ``distances`` the distance matrix the layout was made from.
    """
    distances = js_distance_matrix(topic_terms)
    result = classical_mds(distances, 2)
    return ThemeLayout(
        result.coordinates[:, 0], result.coordinates[:, 1], result.explained, distances
    )


def default_cutoff(distances: np.ndarray, quantile: float = LINK_QUANTILE) -> float:
    """Half-way between the closest ``quantile`` of theme pairs and the next pair.

    With P pairs (each unordered pair once), the ``ceil(quantile × P)`` closest pairs are
    under the cut-off and the rest at or above it (0 with fewer than two themes).
    """
    d = np.asarray(distances, dtype=np.float64)
    pairs = np.sort(d[np.triu_indices(d.shape[0], k=1)])
    if pairs.size == 0:
        return 0.0
    n = min(max(1, int(np.ceil(quantile * pairs.size))), pairs.size)
    if n == pairs.size:
        return float(pairs[-1]) + 1.0
    return float(pairs[n - 1] + pairs[n]) / 2.0


def theme_links(
    distances: np.ndarray,
    theme_ids: list[int],
    *,
    cutoff: float | None = None,
    per_theme: int = LINKS_PER_THEME,
) -> tuple[pd.DataFrame, float]:
    """The links the map draws: each theme to its nearest themes, under a distance cut-off.

    Parameters
    ----------
    distances : ndarray (K, K)
        Jensen–Shannon distances between themes (symmetric, zero diagonal).
    theme_ids : list of int
        The themes' ids, by row.
    cutoff : float, optional
        Links span distances strictly below it. Default: half-way between the distance
        of the closest :data:`LINK_QUANTILE` of all pairs of themes and the next pair's,
        so the closest pairs may be linked whatever the model (NMF themes of call centre
        talk sit 0.8–0.9 apart, LDA themes of a small corpus nearer).
    per_theme : int
        Each theme links to at most this many nearest themes.

    Returns
    -------
    links : DataFrame
        ``theme_a, theme_b, distance``, one row per unordered pair, closest first; every
        distance is strictly below ``cutoff``.
    cutoff : float
    """
    d = np.asarray(distances, dtype=np.float64)
    k = d.shape[0]
    if d.shape != (k, k) or len(theme_ids) != k:
        raise ValueError(
            f"theme_links: distances {d.shape} must be K × K for {len(theme_ids)} themes"
        )
    if cutoff is None:
        cutoff = default_cutoff(d)
    pairs: dict[tuple[int, int], float] = {}
    for i in range(k):
        order = [j for j in np.argsort(d[i], kind="stable") if j != i]
        for j in order[: max(0, int(per_theme))]:
            if d[i, j] < cutoff:
                pairs[(min(i, j), max(i, j))] = float(d[i, j])
    rows = sorted(pairs.items(), key=lambda kv: (kv[1], kv[0]))
    links = pd.DataFrame(
        [
            {"theme_a": int(theme_ids[a]), "theme_b": int(theme_ids[b]), "distance": dist}
            for (a, b), dist in rows
        ],
        columns=["theme_a", "theme_b", "distance"],
    )
    return links, float(cutoff)
