"""The drift report of a refresh: what moved, what is new, what retired.

Pure functions: arrays in, a JSON-ready dict out (:func:`drift_report`), and renderers of
that dict — a readable Markdown page (:func:`render_markdown`) and the frame the chart
draws (:func:`drift_frame`, for :func:`talkthemes.charts.drift_chart`). The refresh
writes them as ``versions/<n>/drift.json``, ``drift.md`` and ``drift.png``.

Per theme of the new version:

* **distance moved** — the Jensen–Shannon distance (base 2, over the union vocabulary)
  between the theme and the previous version's theme it continues (METHODS.md §6.1);
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

import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from talkthemes.align import Alignment
from talkthemes.charts import theme_name
from talkthemes.errors import InputError

__all__ = [
    "ThemeSide",
    "best_examples",
    "drift_frame",
    "drift_report",
    "md_escape",
    "render_markdown",
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
    """

    theme_ids: list[int]
    labels: list[str]
    topic_terms: np.ndarray
    vocabulary: list[str]
    coverage: np.ndarray

    def __post_init__(self) -> None:
        k = len(self.theme_ids)
        if (
            self.topic_terms.ndim != 2
            or self.topic_terms.shape[0] != k
            or len(self.labels) != k
            or len(self.coverage) != k
            or self.topic_terms.shape[1] != len(self.vocabulary)
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
        """Label, or the three top terms."""
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
        From :func:`talkthemes.align.align_themes` (rows = ``old``, columns = ``new``).
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
    from talkthemes.trends import lead_share_by_segment

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
    """The frame :func:`talkthemes.charts.drift_chart` draws, from a drift report.

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


# -- Markdown -----------------------------------------------------------------------------
_MD_SPECIAL = re.compile(r"([\\`*_\[\]<>#|])")


def md_escape(text: Any) -> str:
    """Text made safe for Markdown: one line, every markup character escaped.

    Transcript text and labels are untrusted; escaping keeps them from becoming links,
    images, HTML or table cells.
    """
    one_line = " ".join(str(text).split())
    return _MD_SPECIAL.sub(r"\\\1", one_line)


def _pct(x: float | None) -> str:
    return "–" if x is None else f"{100 * x:.1f}%"


def _with_interval(cov: Mapping[str, Any]) -> str:
    if not cov or cov.get("share") is None:
        return "– (no transcripts)"
    return f"{_pct(cov['share'])} [{_pct(cov['lo'])}–{_pct(cov['hi'])}] of {cov['n']:,}"


def _terms(terms: Sequence[str]) -> str:
    return ", ".join(md_escape(t) for t in terms) or "–"


def render_markdown(report: Mapping[str, Any]) -> str:
    """A readable Markdown page of a drift report (every user or transcript text escaped)."""
    r = report
    c, tr, th = r["counts"], r["transcripts"], r["threshold"]
    lines = [
        f"# Drift report: version {r['version']} against version {r['previous_version']}",
        "",
    ]
    if r.get("created_at"):
        lines += [f"Refreshed at {md_escape(r['created_at'])}.", ""]
    lines += [
        f"- Transcripts: {tr['total']:,} in this version, {tr['new']:,} of them new since "
        f"version {r['previous_version']}.",
        f"- Themes: {c['carried']} carried, {c['new']} new, {c['retired']} retired.",
        f"- Same-theme cut-off: Jensen–Shannon distance {th['same_theme_cutoff']:.3f} "
        "(a theme that moved further than this from its best match is a different theme).",
    ]
    if th.get("rule"):
        lines.append(f"- How the cut-off was found: {md_escape(th['rule'])}.")
    if th.get("overlap"):
        lines.append(
            "- Caution: at this K, fits with different seeds do not reproduce every theme "
            "(same-theme and different-theme distances overlap), so new and retired calls "
            "are less certain."
        )
    lines.append("")
    new = [t for t in r["themes"] if t["status"] == "new"]
    lines += ["## New themes", ""]
    if not new:
        lines += ["None.", ""]
    for t in new:
        near = t["nearest_previous"]
        lines += [
            f"### Theme {t['theme_id']}: {md_escape(t['name'])}",
            "",
            f"- Top terms: {_terms(t['top_terms'])}",
            f"- Leads {_pct(t['coverage_after'])} of all transcripts; "
            f"{_with_interval(t['coverage_new_transcripts'])} new transcripts, "
            f"{_with_interval(t['coverage_earlier_transcripts'])} earlier ones.",
            f"- Closest previous theme: {near['theme_id']} ({md_escape(near['name'])}) at "
            f"distance {near['distance']:.3f}.",
        ]
        if t.get("possible_merge_of"):
            lines.append(
                "- Possibly a merge of previous themes "
                + ", ".join(map(str, t["possible_merge_of"]))
                + "."
            )
        if t.get("possible_split_of"):
            lines.append(
                "- Possibly split from previous theme "
                + ", ".join(map(str, t["possible_split_of"]))
                + "."
            )
        lines.append("")
        if t["examples"]:
            lines += ["New transcripts that show it best:", "", "| transcript | share | excerpt |"]
            lines.append("|---|---:|---|")
            for e in t["examples"]:
                lines.append(
                    f"| {md_escape(e['transcript_id'])} | {_pct(e['share'])} | "
                    f"{md_escape(e.get('excerpt', ''))} |"
                )
            lines.append("")
    carried = sorted(
        (t for t in r["themes"] if t["status"] == "carried"), key=lambda t: -t["distance"]
    )
    lines += ["## Carried themes", ""]
    if not carried:
        lines += ["None.", ""]
    else:
        lines += [
            "Largest move first. Distance: Jensen–Shannon distance between the theme's word "
            "distributions before and after (0 = same words, 1 = none shared).",
            "",
            "| id | theme | moved | terms gained | terms lost | leads before → after "
            "| new transcripts | earlier transcripts |",
            "|---:|---|---:|---|---|---|---|---|",
        ]
        for t in carried:
            flags = []
            if t.get("possible_split_of"):
                flags.append("possible split of " + ", ".join(map(str, t["possible_split_of"])))
            if t.get("possible_merge_of"):
                flags.append("possible merge of " + ", ".join(map(str, t["possible_merge_of"])))
            name = md_escape(t["name"]) + (f" ({'; '.join(flags)})" if flags else "")
            lines.append(
                f"| {t['theme_id']} | {name} | {t['distance']:.3f} | "
                f"{_terms(t['terms_gained'])} | {_terms(t['terms_lost'])} | "
                f"{_pct(t['coverage_before'])} → {_pct(t['coverage_after'])} | "
                f"{_with_interval(t['coverage_new_transcripts'])} | "
                f"{_with_interval(t['coverage_earlier_transcripts'])} |"
            )
        lines.append("")
    lines += ["## Retired themes", ""]
    if not r["retired"]:
        lines += ["None.", ""]
    else:
        lines += [
            "| id | theme | top terms | led before | closest new theme |",
            "|---:|---|---|---:|---|",
        ]
        for t in r["retired"]:
            near = t["nearest_new"]
            lines.append(
                f"| {t['theme_id']} | {md_escape(t['name'])} | {_terms(t['top_terms'][:6])} | "
                f"{_pct(t['coverage_before'])} | {near['theme_id']} "
                f"({md_escape(near['name'])}) at {near['distance']:.3f} |"
            )
        lines.append("")
    if r["splits"] or r["merges"]:
        lines += ["## Possible splits and merges", ""]
        for s in r["splits"]:
            lines.append(
                f"- Previous theme {s['previous_theme_id']} is close to themes "
                + ", ".join(map(str, s["theme_ids"]))
                + ": it may have split."
            )
        for m in r["merges"]:
            lines.append(
                f"- Theme {m['theme_id']} is close to previous themes "
                + ", ".join(map(str, m["previous_theme_ids"]))
                + ": they may have merged."
            )
        lines.append("")
    return "\n".join(lines)
