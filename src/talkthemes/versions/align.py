"""Aligning the themes of two versions: who is the same theme, who is new, who retired.

Pure functions over arrays (docs/operations.md, "What a refresh does", step 7;
docs/methods_metrics.md, "Matching themes between models"):

1. Both versions' topic–term rows are re-expressed over the union of their vocabularies
   and renormalised (:func:`~talkthemes.metrics.matching.reindex_topics`); a term one
   model never saw has probability 0 there.
2. The cost of pairing old theme *i* with new theme *j* is the Jensen–Shannon distance
   √JSD(φ_i^old ‖ φ_j^new) with base-2 logarithms, in [0, 1]
   (:func:`~talkthemes.metrics.layout.js_distance_matrix`).
3. The pairing minimising the total cost is found with the Hungarian method (Kuhn 1955;
   scipy's ``linear_sum_assignment``, Crouse 2016). A pair whose distance is above the
   *same-theme cut-off* is not accepted.
4. A new theme in an accepted pair carries the old theme's id (and so its label and
   note); a new theme left unpaired is new; an old theme left unpaired is retired.
5. Near-ties: an old theme within ``margin`` of its best distance to two or more new
   themes (all under the cut-off) may have split; a new theme close to two or more old
   themes may be a merge. The full distance matrix is kept for the drift report.

**The same-theme cut-off is calibrated, not guessed** (:func:`calibrate_threshold`). No
value from the literature can be cited with confidence, so the cut-off
comes from how far themes move between fits of the *same* configuration: the published
family at the published K, fitted with several random seeds (each on its own random
subsample of the transcripts, as the sweep's stability does). Every pair of fits is
matched with the Hungarian method on the same distance, which gives two samples:

* **same-theme distances**: the distances of the matched pairs;
* **different-theme distances**: the distances of every pair the matching did not join.

With ``p`` = ``[refresh] match_percentile`` (5 by default), let *s* be the (100 − p)th
percentile of the same-theme distances — a low percentile of matched-pair similarities,
stated for distances — and *d* the p-th percentile of the different-theme
distances. The cut-off is their midpoint (*s* + *d*) / 2: all but p % of seed-to-seed
moves of one theme stay below *s*, all but p % of pairs of distinct themes lie above *d*,
and the midpoint leaves the same room on both sides. The room matters: a refresh changes
more than a seed does (new transcripts, a rebuilt vocabulary and phrase list), so on our
demo corpus carried themes move about twice as far between versions as between seeds,
while a genuinely new theme is as far from every old theme as distinct themes are from
each other. (*s* alone flagged most carried themes as new there.) When *s* ≥ *d* the two
samples overlap — the seeds do not reproduce every theme at this K — and the calibration
says so (``overlap``), which the drift report passes on as a caution. Numpy's linear
interpolation gives the percentiles.

References
----------
Kuhn, H. W. (1955). The Hungarian Method for the Assignment Problem. Naval Research
Logistics Quarterly 2(1–2): 83–97.
Crouse, D. F. (2016). On Implementing 2D Rectangular Assignment Algorithms. IEEE
Transactions on Aerospace and Electronic Systems 52(4): 1679–1696.
Endres, D. M., Schindelin, J. E. (2003). A new metric for probability distributions. IEEE
Transactions on Information Theory 49(7): 1858–1860.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from itertools import combinations
from typing import Any

import numpy as np

from talkthemes.errors import InputError
from talkthemes.metrics.matching import (
    js_distance_matrix,
    match_topics,
    optimal_assignment,
    reindex_topics,
    union_vocabulary,
)

__all__ = ["Alignment", "Calibration", "align_themes", "calibrate_threshold"]


@dataclass(frozen=True, eq=False)
class Calibration:
    """The calibrated same-theme cut-off (see the module notes).

    Attributes
    ----------
    threshold : float
        The cut-off: JS distance (base 2) above which two themes are different; the
        midpoint of ``same_upper`` and ``different_lower``.
    match_percentile : float
        ``p``: the share (%) of each sample allowed beyond its percentile.
    same_upper : float
        The (100 − p)th percentile of the matched (same-theme) distances.
    different_lower : float
        The p-th percentile of the unmatched (different-theme) distances.
    same : ndarray of float
        Every matched seed-to-seed distance.
    different : ndarray of float
        Every distance between themes the matching did not pair.
    n_models : int
        Fits compared (every pair of them was matched).
    """

    threshold: float
    match_percentile: float
    same_upper: float
    different_lower: float
    same: np.ndarray
    different: np.ndarray
    n_models: int

    @property
    def overlap(self) -> bool:
        """True when same-theme and different-theme distances overlap (s ≥ d)."""
        return bool(self.same_upper >= self.different_lower)

    def to_json(self) -> dict[str, Any]:
        p = self.match_percentile
        return {
            "threshold": round(float(self.threshold), 6),
            "match_percentile": float(p),
            "same_theme_upper": round(float(self.same_upper), 6),
            "different_theme_lower": round(float(self.different_lower), 6),
            "overlap": self.overlap,
            "rule": (
                f"midpoint of the {100 - p:g}th percentile of Jensen–Shannon distances between "
                f"Hungarian-matched themes ({self.same_upper:.3f}) and the {p:g}th percentile "
                f"of distances between unmatched themes ({self.different_lower:.3f}), over "
                f"{self.n_models} fits of the same family and K with different seeds"
            ),
            "n_models": int(self.n_models),
            "n_same": int(self.same.size),
            "n_different": int(self.different.size),
            "median_same": round(float(np.median(self.same)), 6),
        }


def calibrate_threshold(
    topic_sets: Sequence[np.ndarray], match_percentile: float = 5.0
) -> Calibration:
    """Same-theme cut-off from seed-to-seed agreement at one K (see the module notes).

    Parameters
    ----------
    topic_sets : sequence of ndarray, each (K, V)
        Topic–term rows of two or more fits of one configuration with different seeds,
        over one vocabulary; K ≥ 2.
    match_percentile : float
        ``[refresh] match_percentile`` ``p``, in (0, 50).

    Returns
    -------
    Calibration

    Raises
    ------
    InputError
        With fewer than two fits, shapes that disagree, K < 2, or ``p`` out of range.
    """
    if len(topic_sets) < 2:
        raise InputError("calibrating the same-theme cut-off needs at least two fits")
    if not 0 < match_percentile < 50:
        raise InputError(f"match_percentile must lie in (0, 50), got {match_percentile}")
    sets = [np.asarray(t, dtype=np.float64) for t in topic_sets]
    shape = sets[0].shape
    for i, t in enumerate(sets):
        if t.ndim != 2 or t.shape != shape:
            raise InputError(f"calibration: fit {i} has shape {t.shape}, fit 0 has {shape}")
    if shape[0] < 2:
        raise InputError("calibration: fits need at least two themes")
    same, different = [], []
    for a, b in combinations(sets, 2):
        cost = js_distance_matrix(a, b)
        pairs = optimal_assignment(cost)
        paired = np.zeros(cost.shape, dtype=bool)
        paired[pairs[:, 0], pairs[:, 1]] = True
        same.append(cost[paired])
        different.append(cost[~paired])
    s_all, d_all = np.concatenate(same), np.concatenate(different)
    p = float(match_percentile)
    s = float(np.percentile(s_all, 100.0 - p))
    d = float(np.percentile(d_all, p))
    return Calibration((s + d) / 2.0, p, s, d, s_all, d_all, len(sets))


@dataclass(frozen=True, eq=False)
class Alignment:
    """How the themes of a new version line up with the previous version's.

    Attributes
    ----------
    distance : ndarray of float, shape (K_old, K_new)
        JS distance (base 2) between every old and new theme, over the union vocabulary.
    threshold : float
        The same-theme cut-off used.
    margin : float
        The near-tie margin used.
    matched_old : ndarray of int, shape (K_new,)
        Per new theme: the row of the old theme it continues, or -1 when it is new.
    matched_distance : ndarray of float, shape (K_new,)
        Per new theme: the distance to that old theme (NaN when new).
    retired : ndarray of int
        Rows of old themes no new theme continues.
    splits : list of (int, list of int)
        ``(old row, new columns)``: an old theme close to two or more new ones.
    merges : list of (int, list of int)
        ``(new column, old rows)``: a new theme close to two or more old ones.
    """

    distance: np.ndarray
    threshold: float
    margin: float
    matched_old: np.ndarray
    matched_distance: np.ndarray
    retired: np.ndarray
    splits: list[tuple[int, list[int]]]
    merges: list[tuple[int, list[int]]]

    @property
    def new(self) -> np.ndarray:
        """Columns of new themes that continue no old theme."""
        return np.flatnonzero(self.matched_old < 0)

    def nearest_new(self, old_row: int) -> tuple[int, float]:
        """The new theme closest to an old one, and its distance."""
        j = int(np.argmin(self.distance[old_row]))
        return j, float(self.distance[old_row, j])

    def nearest_old(self, new_col: int) -> tuple[int, float]:
        """The old theme closest to a new one, and its distance."""
        i = int(np.argmin(self.distance[:, new_col]))
        return i, float(self.distance[i, new_col])


def align_themes(
    old_topic_terms: np.ndarray,
    old_vocabulary: Sequence[str],
    new_topic_terms: np.ndarray,
    new_vocabulary: Sequence[str],
    *,
    threshold: float,
    margin: float = 0.05,
) -> Alignment:
    """Align a new version's themes to the previous version's (see the module notes).

    Parameters
    ----------
    old_topic_terms : ndarray (K_old, V_old)
    old_vocabulary : sequence of str
    new_topic_terms : ndarray (K_new, V_new)
    new_vocabulary : sequence of str
    threshold : float
        Same-theme cut-off (JS distance, base 2), e.g. from :func:`calibrate_threshold`.
    margin : float
        Near-tie margin on the distance.

    Returns
    -------
    Alignment

    Raises
    ------
    InputError
        When a vocabulary does not fit its matrix, or the threshold is not in [0, 1].
    """
    if not 0.0 <= threshold <= 1.0:
        raise InputError(f"same-theme cut-off must lie in [0, 1], got {threshold}")
    union = union_vocabulary(old_vocabulary, new_vocabulary)
    old = reindex_topics(old_topic_terms, old_vocabulary, union)
    new = reindex_topics(new_topic_terms, new_vocabulary, union)
    cost = js_distance_matrix(old, new)
    m = match_topics(cost, threshold, margin=margin)
    matched_old = np.full(cost.shape[1], -1, dtype=np.int64)
    matched_distance = np.full(cost.shape[1], np.nan)
    for (i, j), c in zip(m.pairs.tolist(), m.costs.tolist(), strict=True):
        matched_old[j] = i
        matched_distance[j] = c
    return Alignment(
        distance=cost,
        threshold=float(threshold),
        margin=float(margin),
        matched_old=matched_old,
        matched_distance=matched_distance,
        retired=m.unmatched_rows.astype(np.int64),
        splits=[(t.index, t.candidates.tolist()) for t in m.row_ties],
        merges=[(t.index, t.candidates.tolist()) for t in m.col_ties],
    )
