"""Where the theme map places each theme.

Classical MDS (Torgerson 1952; Gower 1966) on the base-2 Jensen–Shannon distances between
the themes' word distributions; see docs/methods_metrics.md, "Theme map: Jensen–Shannon
distance and classical MDS".
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from talkthemes.metrics.layout import classical_mds, js_distance_matrix

__all__ = ["ThemeLayout", "theme_layout"]


@dataclass(frozen=True, eq=False)
class ThemeLayout:
    """Map coordinates of a version's themes (by row) and the share of structure kept."""

    x: np.ndarray
    y: np.ndarray
    explained: float


def theme_layout(topic_terms: np.ndarray) -> ThemeLayout:
    """Classical MDS (Torgerson 1952; Gower 1966) on base-2 Jensen–Shannon distances.

    Parameters
    ----------
    topic_terms : ndarray (K, V)

    Returns
    -------
    ThemeLayout
        ``explained`` is the share of the distance structure the two axes keep.
    """
    result = classical_mds(js_distance_matrix(topic_terms), 2)
    return ThemeLayout(result.coordinates[:, 0], result.coordinates[:, 1], result.explained)
