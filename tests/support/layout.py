"""The share of the themes' differences a 2-D map keeps, worked out independently.

Classical MDS (Torgerson 1952; Gower 1966) on base-2 Jensen–Shannon distances, done here
with scipy and numpy only: the map's two axes keep Σx² + Σy² of the positive eigenvalue
mass of the double-centred squared distances (docs/methods_metrics.md, "Theme map").
"""

from __future__ import annotations

import numpy as np
from scipy.spatial.distance import jensenshannon, pdist, squareform


def retained_share(topic_terms: np.ndarray, x: np.ndarray, y: np.ndarray) -> float:
    """Share of the distance structure kept by map coordinates ``x``, ``y`` of the themes."""
    d = squareform(pdist(np.asarray(topic_terms, float), lambda p, q: jensenshannon(p, q, base=2)))
    n = len(d)
    centre = np.eye(n) - 1.0 / n
    eig = np.linalg.eigvalsh(-0.5 * centre @ (d**2) @ centre)
    kept = float(np.square(x).sum() + np.square(y).sum())
    return kept / float(eig[eig > 0].sum())
