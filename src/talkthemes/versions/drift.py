"""The drift report of a refresh: what moved, what is new, what retired.

Pure functions: arrays in, a JSON-ready dict out (:func:`drift_report`), and the frame the
drift chart draws (:func:`drift_frame`); the readable Markdown page is rendered by
:mod:`talkthemes.versions.drift_markdown`. The refresh writes them as
``versions/<n>/drift.json``, ``drift.md`` and ``drift.png``.

Per theme of the new version:

* **distance moved** — the Jensen–Shannon distance (base 2, over the union vocabulary)
  between the theme and the previous version's theme it continues (docs/methods_metrics.md,
  "Theme map: Jensen–Shannon distance and classical MDS");
* **terms gained / lost** — the set differences of the two top-``n_terms`` lists (terms
  ranked by probability in the theme), each kept in rank order;
* **coverage before / after** — the share of transcripts the theme leads in the previous
  version and in the new one;
* **coverage in the new transcripts versus the earlier ones** — in the new version, the
  share of the transcripts added since the previous version that the theme leads, and
  the same share among the earlier transcripts, each with a bootstrap percentile interval
  (Efron & Tibshirani 1993; :func:`talkthemes.trends.lead_share_by_segment`);
* for a **new** theme, the closest previous theme and its distance, and the new
  transcripts that show it best (largest share of it);
* near-ties as possible splits and merges.

Each **retired** theme is listed with its terms, the coverage it had, and the closest new
theme with its distance.

References
----------
Efron, B. & Tibshirani, R. J. (1993). *An Introduction to the Bootstrap.* Chapman & Hall.
Chapter 13.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from talkthemes.errors import InputError
from talkthemes.trends import lead_share_by_segment
from talkthemes.versions.align import Alignment
from talkthemes.versions.naming import display_name, theme_name

__all__ = [
    "ThemeSide",
    "best_examples",
    "drift_frame",
    "drift_report",
]

_SEGMENT_NEW, _SEGMENT_EARLIER = "new", "earlier"


@dataclass(frozen=True, eq=False)
class ThemeSide:
    """One version's themes as the drift report needs them.

    Attributes
    ----------
    theme_ids : list of int
        Theme id of each row.
    labels : list of str
        Label of each row ("" when not labelled).
    topic_terms : ndarray (K, V)
    vocabulary : list of str
    coverage : ndarray (K,)
        Share of the version's transcripts each theme leads.
    suggested : list of str, optional
        Each row's suggested name (docs/methods.md, "Suggested names"); without them a
        theme is named by its three top terms until labelled.
    """

    theme_ids: list[int]
    labels: list[str]
    topic_terms: np.ndarray
    vocabulary: list[str]
    coverage: np.ndarray
    suggested: list[str] | None = None

    def __post_init__(self) -> None:
        k = len(self.theme_ids)
        if (
            self.topic_terms.ndim != 2
            or self.topic_terms.shape[0] != k
            or len(self.labels) != k
            or len(self.coverage) != k
            or self.topic_terms.shape[1] != len(self.vocabulary)
            or (self.suggested is not None and len(self.suggested) != k)
        ):
            raise InputError(
                f"drift: a version side has {k} theme ids, {len(self.labels)} labels, "
                f"{len(self.coverage)} coverages and topic_terms of shape "
                f"{self.topic_terms.shape} over {len(self.vocabulary)} terms"
            )

    def top_terms(self, row: int, n: int) -> list[str]:
        """The ``n`` most probable terms of a row (ties by term order)."""
        phi = np.asarray(self.topic_terms[row], dtype=np.float64)
        order = np.lexsort((np.arange(phi.size), -phi))[:n]
        return [self.vocabulary[i] for i in order]

    def name(self, row: int) -> str:
        """The name screens show: the label, else the suggested name (else three top terms)."""
        if self.suggested is not None:
            return display_name(self.labels[row], self.suggested[row])
        return theme_name(self.labels[row], self.top_terms(row, 3))


def _interval(frame: pd.DataFrame, segment: str, theme_id: int) -> dict[str, Any]:
    hit = frame[(frame["segment"] == segment) & (frame["theme_id"] == theme_id)]
    if hit.empty:
        return {"share": None, "lo": None, "hi": None, "n": 0}
    row = hit.iloc[0]

    def num(x: Any) -> float | None:
        return None if pd.isna(x) else round(float(x), 6)

    return {
        "share": num(row["share"]),
        "lo": num(row["lo"]),
        "hi": num(row["hi"]),
        "n": int(row["n"]),
    }


def drift_report(
    old: ThemeSide,
    new: ThemeSide,
    alignment: Alignment,
    *,
    doc_topics: np.ndarray,
    doc_ids: Sequence[str],
    is_new: np.ndarray,
    version: int | None,
    previous_version: int,
    calibration: Mapping[str, Any] | None = None,
    n_terms: int = 10,
    n_examples: int = 5,
    n_boot: int = 500,
    seed: int = 0,
    snippets: Mapping[str, str] | None = None,
    created_at: str | None = None,
) -> dict[str, Any]:
    """The drift report of a new version against the previous one (see the module notes).

    Parameters
    ----------
    old, new : ThemeSide
        The previous and the new version. ``new.theme_ids`` are the ids after alignment
        (carried themes keep the old id).
    alignment : Alignment
        From :func:`talkthemes.versions.align.align_themes` (rows = ``old``, columns = ``new``).
    doc_topics : ndarray (D, K_new)
        The new version's shares per transcript.
    doc_ids : sequence of str
        The D transcript ids.
    is_new : ndarray of bool (D,)
        Transcripts added since the previous version.
    version : int or None
        The new version's number (None until it is known).
    previous_version : int
    calibration : mapping, optional
        How the same-theme cut-off was found (stored as is).
    n_terms : int
        Length of the top-term lists compared for terms gained and lost.
    n_examples : int
        New transcripts listed per new theme.
    n_boot, seed : int
        Bootstrap replicates and seed of the coverage intervals.
    snippets : mapping, optional
        Transcript id → a short excerpt, shown with the examples.
    created_at : str, optional
        When the refresh ran (the caller's clock).

    Returns
    -------
    dict
        JSON-ready: ``version``, ``previous_version``, ``created_at``, ``transcripts``
        (``total``, ``new``, ``earlier``), ``threshold``, ``counts`` (carried, new,
        retired), ``themes`` (one per new-version theme), ``retired``, ``splits``,
        ``merges``.
    """
    k_new = len(new.theme_ids)
    theta = np.asarray(doc_topics, dtype=np.float64)
    is_new = np.asarray(is_new, dtype=bool)
    if theta.shape != (len(doc_ids), k_new) or is_new.shape != (len(doc_ids),):
        raise InputError(
            f"drift: doc_topics {theta.shape}, {len(doc_ids)} ids and {is_new.shape[0]} "
            f"new-flags do not fit {k_new} themes"
        )
    if alignment.distance.shape != (len(old.theme_ids), k_new):
        raise InputError(
            f"drift: alignment is {alignment.distance.shape} for {len(old.theme_ids)} old and "
            f"{k_new} new themes"
        )
    lead = np.argmax(theta, axis=1) if len(doc_ids) else np.zeros(0, dtype=np.int64)
    segments = pd.Series(np.where(is_new, _SEGMENT_NEW, _SEGMENT_EARLIER))
    names = [new.name(j) for j in range(k_new)]
    shares = (
        lead_share_by_segment(
            lead, segments, k_new, n_boot=n_boot, seed=seed, theme_ids=new.theme_ids, names=names
        )
        if len(doc_ids)
        else pd.DataFrame(columns=["segment", "theme_id", "share", "lo", "hi", "n"])
    )
    split_of: dict[int, list[int]] = {}
    for i, cols in alignment.splits:
        for j in cols:
            split_of.setdefault(j, []).append(old.theme_ids[i])
    merge_of = {j: [old.theme_ids[i] for i in rows] for j, rows in alignment.merges}
    snippets = snippets or {}
    themes = []
    for j in range(k_new):
        tid = int(new.theme_ids[j])
        i = int(alignment.matched_old[j])
        top = new.top_terms(j, n_terms)
        entry: dict[str, Any] = {
            "theme_id": tid,
            "name": names[j],
            "label": new.labels[j],
            "status": "carried" if i >= 0 else "new",
            "top_terms": top,
            "coverage_after": round(float(new.coverage[j]), 6),
            "coverage_new_transcripts": _interval(shares, _SEGMENT_NEW, tid),
            "coverage_earlier_transcripts": _interval(shares, _SEGMENT_EARLIER, tid),
        }
        if i >= 0:
            before = old.top_terms(i, n_terms)
            entry.update(
                previous_theme_id=int(old.theme_ids[i]),
                distance=round(float(alignment.matched_distance[j]), 6),
                coverage_before=round(float(old.coverage[i]), 6),
                terms_gained=[t for t in top if t not in set(before)],
                terms_lost=[t for t in before if t not in set(top)],
            )
        else:
            near, dist = alignment.nearest_old(j)
            entry.update(
                distance=None,
                coverage_before=None,
                nearest_previous={
                    "theme_id": int(old.theme_ids[near]),
                    "name": old.name(near),
                    "distance": round(dist, 6),
                },
                examples=best_examples(theta[:, j], is_new, doc_ids, n_examples, snippets),
            )
        if j in split_of:
            entry["possible_split_of"] = split_of[j]
        if j in merge_of:
            entry["possible_merge_of"] = merge_of[j]
        themes.append(entry)
    retired = []
    for i in alignment.retired.tolist():
        near, dist = alignment.nearest_new(i)
        retired.append(
            {
                "theme_id": int(old.theme_ids[i]),
                "name": old.name(i),
                "label": old.labels[i],
                "status": "retired",
                "top_terms": old.top_terms(i, n_terms),
                "coverage_before": round(float(old.coverage[i]), 6),
                "nearest_new": {
                    "theme_id": int(new.theme_ids[near]),
                    "name": names[near],
                    "distance": round(dist, 6),
                },
            }
        )
    counts = {
        "carried": sum(t["status"] == "carried" for t in themes),
        "new": sum(t["status"] == "new" for t in themes),
        "retired": len(retired),
    }
    return {
        "version": None if version is None else int(version),
        "previous_version": int(previous_version),
        "created_at": created_at,
        "transcripts": {
            "total": len(doc_ids),
            "new": int(is_new.sum()),
            "earlier": int((~is_new).sum()),
        },
        "threshold": {
            "same_theme_cutoff": round(float(alignment.threshold), 6),
            "tie_margin": float(alignment.margin),
            **dict(calibration or {}),
        },
        "counts": counts,
        "themes": themes,
        "retired": retired,
        "splits": [
            {
                "previous_theme_id": int(old.theme_ids[i]),
                "theme_ids": [int(new.theme_ids[j]) for j in cols],
            }
            for i, cols in alignment.splits
        ],
        "merges": [
            {
                "theme_id": int(new.theme_ids[j]),
                "previous_theme_ids": [int(old.theme_ids[i]) for i in rows],
            }
            for j, rows in alignment.merges
        ],
    }


def best_examples(
    share: np.ndarray,
    is_new: np.ndarray,
    doc_ids: Sequence[str],
    n: int = 5,
    snippets: Mapping[str, str] | None = None,
) -> list[dict[str, Any]]:
    """The ``n`` new transcripts with the largest share of a theme (ties by position).

    Returns
    -------
    list of dict
        ``transcript_id``, ``share`` and, when ``snippets`` has one, ``excerpt``.
    """
    snippets = snippets or {}
    rows = np.flatnonzero(is_new & (share > 0))
    order = rows[np.lexsort((rows, -share[rows]))][:n]
    return [
        {
            "transcript_id": doc_ids[d],
            "share": round(float(share[d]), 6),
            **({"excerpt": snippets[doc_ids[d]]} if doc_ids[d] in snippets else {}),
        }
        for d in order.tolist()
    ]


def drift_frame(report: Mapping[str, Any]) -> pd.DataFrame:
    """The frame the drift chart draws, from a drift report.

    Returns
    -------
    DataFrame
        ``theme_id, name, status, distance, coverage_before, coverage_after``: one row per
        theme of the new version and per retired theme (NaN where a value does not apply).
    """
    rows = []
    for t in [*report["themes"], *report["retired"]]:
        rows.append(
            {
                "theme_id": int(t["theme_id"]),
                "name": t["name"],
                "status": t["status"],
                "distance": _nan(t.get("distance")),
                "coverage_before": _nan(t.get("coverage_before")),
                "coverage_after": _nan(t.get("coverage_after")),
            }
        )
    return pd.DataFrame(
        rows,
        columns=["theme_id", "name", "status", "distance", "coverage_before", "coverage_after"],
    )


def _nan(x: Any) -> float:
    return float("nan") if x is None else float(x)
