"""Curation across versions: merged themes shown as one, and what a refresh carried.

**Merges** belong to theme ids, like labels (docs/operations.md, "Curation across
refreshes"): theme *b* merged into theme *a* is stored once (``b → a``), and every version
holding *a* or *b* shows them as one theme with id *a* — its share of a transcript is the
sum of theme *a*'s and *b*'s shares, its word distribution their mix weighted by their
shares of all words, Σ P(k) φ_k / Σ P(k). The version's files are never changed, so a
merge can be undone (``label --unmerge``) and nothing is lost.

A refresh aligns the new themes to the previous version's themes *as fitted* (unmerged),
so each carries its own id; rows carrying *a* and *b* are then shown as one again. A
curated theme (label, note, *not a theme*, merge) is **carried** when some row of the new
version carries its id or the id of a theme merged into it; otherwise the refresh could
not carry it — its theme changed too much — and the drift report says so. The curation
stays with the id and comes back if a later version carries the id again.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np

from talkthemes.store.curation import merge_root
from talkthemes.text import md_file_inline
from talkthemes.workspace import Workspace

__all__ = [
    "Group",
    "carry_report",
    "curation_markdown",
    "curation_of",
    "fold_columns",
    "fold_rows",
    "merge_groups",
]

#: One theme as shown: the id it keeps and the rows of the version folded into it.
Group = tuple[int, list[int]]


def merge_groups(theme_ids: Sequence[int], merges: Mapping[int, int]) -> list[Group] | None:
    """A version's rows grouped by the theme id each is shown as.

    Parameters
    ----------
    theme_ids : sequence of int
        Theme id of each row, as fitted.
    merges : mapping of int to int
        ``theme_id → into_id`` (the store's merges).

    Returns
    -------
    list of (int, list of int) or None
        ``(kept id, rows)`` ordered by each group's first row; None when no two rows are
        one theme and no row is shown under another id (nothing to fold).
    """
    order: dict[int, list[int]] = {}
    for row, tid in enumerate(theme_ids):
        order.setdefault(merge_root(merges, int(tid)), []).append(row)
    groups = list(order.items())
    if all(len(rows) == 1 and int(theme_ids[rows[0]]) == root for root, rows in groups):
        return None
    return groups


def fold_rows(
    topic_terms: np.ndarray, weights: np.ndarray, groups: Sequence[Group]
) -> tuple[np.ndarray, np.ndarray]:
    """Topic–term rows and topic weights of the groups.

    Each group's row is the mix of its rows weighted by their topic weights P(k) (a plain
    mean when they weigh nothing); its weight is their sum.

    Returns
    -------
    topic_terms : ndarray (G, V)
    weights : ndarray (G,)
    """
    phi = np.asarray(topic_terms, dtype=np.float64)
    w = np.asarray(weights, dtype=np.float64)
    rows, out_w = [], []
    for _, members in groups:
        mass = w[members]
        total = float(mass.sum())
        mix = (mass @ phi[members]) / total if total > 0 else phi[members].mean(axis=0)
        rows.append(mix / mix.sum() if mix.sum() > 0 else mix)
        out_w.append(total)
    return np.vstack(rows), np.asarray(out_w)


def fold_columns(matrix: np.ndarray, groups: Sequence[Group] | None) -> np.ndarray:
    """Per-transcript shares (D × K) as the groups: each group's column is the sum of its
    members' columns. Unchanged when ``groups`` is None."""
    if groups is None:
        return matrix
    m = np.asarray(matrix)
    out = np.zeros((m.shape[0], len(groups)), dtype=np.result_type(m.dtype, np.float32))
    for g, (_, members) in enumerate(groups):
        out[:, g] = m[:, members].sum(axis=1)
    return out


def carry_report(
    previous_ids: Sequence[int],
    new_ids: Sequence[int],
    labels: Mapping[int, Mapping[str, Any]],
    merges: Mapping[int, int],
    retired: Sequence[Mapping[str, Any]] = (),
) -> dict[str, Any]:
    """Which curated themes of the previous version a refresh carried (module notes).

    Parameters
    ----------
    previous_ids : sequence of int
        Theme ids of the previous version's rows, as fitted.
    new_ids : sequence of int
        Theme ids of the new version's rows after alignment.
    labels : mapping of int to mapping
        ``label``, ``note`` and ``hidden`` of (at least) every id the previous version
        shows.
    merges : mapping of int to int
        ``theme_id → into_id``.
    retired : sequence of mapping
        The drift report's retired themes (``theme_id``, ``nearest_new``), to name the
        closest new theme of a curated theme that was not carried.

    Returns
    -------
    dict
        ``carried`` and ``not_carried``: one entry per curated theme (``theme_id``,
        ``label``, ``curation`` — what was curated — , ``merged`` ids, ``continued_by``
        new-version rows' ids, and for a theme not carried ``nearest_new``), and
        ``counts``.
    """
    members: dict[int, list[int]] = {}
    for t in merges:
        members.setdefault(merge_root(merges, t), []).append(int(t))
    nearest = {int(r["theme_id"]): r.get("nearest_new") for r in retired}
    shown = list(dict.fromkeys(merge_root(merges, int(t)) for t in previous_ids))
    carried, lost = [], []
    for root in shown:
        lab = labels.get(root, {})
        kinds = [k for k in ("label", "note") if str(lab.get(k) or "").strip()]
        if lab.get("hidden"):
            kinds.append("not_a_theme")
        merged = sorted(members.get(root, []))
        if merged:
            kinds.append("merge")
        if not kinds:
            continue
        group = {root, *merged}
        continued = [int(t) for t in new_ids if int(t) in group]
        entry: dict[str, Any] = {
            "theme_id": root,
            "label": str(lab.get("label") or ""),
            "curation": kinds,
            "merged": merged,
            "continued_by": continued,
        }
        if continued:
            carried.append(entry)
            continue
        near = [nearest[t] for t in sorted(group) if nearest.get(t)]
        if near:
            entry["nearest_new"] = min(near, key=lambda n: n["distance"])
        lost.append(entry)
    return {
        "carried": carried,
        "not_carried": lost,
        "counts": {"carried": len(carried), "not_carried": len(lost)},
    }


def curation_of(
    ws: Workspace,
    previous_ids: Sequence[int],
    new_ids: Sequence[int],
    retired: Sequence[Mapping[str, Any]] = (),
) -> dict[str, Any]:
    """:func:`carry_report` of a refresh, with the labels and merges read from the store."""
    with ws.store() as store:
        merges = store.theme_merges()
        roots = {merge_root(merges, int(t)) for t in previous_ids}
        labels = {t: lab.to_json() for t, lab in store.labels_for(sorted(roots)).items()}
    return carry_report(previous_ids, new_ids, labels, merges, retired)


_KIND_WORDS = {"label": "label", "note": "note", "not_a_theme": "not a theme", "merge": "merge"}


def curation_markdown(report: Mapping[str, Any]) -> str:
    """The drift report's section on curation (empty when nothing was curated).

    ``report`` is a drift report holding ``curation`` (:func:`carry_report`). Labels are
    escaped (:func:`talkthemes.text.md_file_inline`).
    """
    cur = report.get("curation")
    if not cur or not (cur["carried"] or cur["not_carried"]):
        return ""
    lines = ["", "## Curation", ""]
    n_ok, n_lost = len(cur["carried"]), len(cur["not_carried"])
    lines.append(
        f"{n_ok} curated theme{'s' if n_ok != 1 else ''} carried (labels, notes, "
        "*not a theme* marks and merges keep to their theme ids)."
    )
    again = [e for e in cur["carried"] if len(e["continued_by"]) > 1]
    if again:
        lines.append("")
    for e in again:
        ids = ", ".join(map(str, e["continued_by"]))
        lines.append(f"- Theme {e['theme_id']} is shown as one again (themes {ids} merged).")
    if n_lost:
        lines += [
            "",
            f"**Could not be carried ({n_lost}):** the themes changed too much, so no theme "
            "of this version continues them. Their curation stays with their ids and comes "
            "back if a later version carries them.",
            "",
        ]
        for e in cur["not_carried"]:
            what = ", ".join(_KIND_WORDS.get(k, k) for k in e["curation"])
            name = f" “{md_file_inline(e['label'])}”" if e["label"] else ""
            merged = (
                f" (with {', '.join(f'theme {t}' for t in e['merged'])} merged into it)"
                if e["merged"]
                else ""
            )
            near = e.get("nearest_new")
            close = (
                f"; the closest new theme is theme {near['theme_id']} at distance "
                f"{near['distance']:.3f}"
                if near
                else ""
            )
            lines.append(f"- Theme {e['theme_id']}{name}{merged}: {what}{close}.")
    return "\n".join(lines) + "\n"
