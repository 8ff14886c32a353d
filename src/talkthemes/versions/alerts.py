"""Refresh alerts: which new themes are really new, which carried themes rose or fell.

Pure functions over the arrays a refresh already holds (docs/methods_alerts.md, "A new theme
alerts only when four pieces of evidence hold" and "Risers and fallers"). Shares are
lead shares: the fraction of a group of transcripts whose lead theme (largest share) a
theme is, all under the *new* version, so the new transcripts and the earlier ones are
compared by one model.

**A new theme is alerted only when four pieces of evidence hold** (:func:`judge_new_themes`):

(a) *mass*: it leads at least ``new_min_calls`` of the new transcripts and at least
    ``new_min_share`` of them;
(b) *not a split*: it is reported as a **split of** an old theme when at least
    ``split_lead_share`` of the transcripts it leads had that old theme as their lead under
    the previous version (new transcripts are given the previous version's shares by its
    saved model) **and** at least ``split_term_overlap`` of its ``n_terms`` top terms are
    among that theme's top terms;
(c) *new words*: the share of its top-term weight (φ over its ``n_terms`` top terms) that
    lies on terms whose rate in the new transcripts is at least ``novel_term_ratio`` times
    their rate in the earlier ones, with Dunning's (1993) log-likelihood ratio
    G² ≥ ``novel_term_llr`` (p < 0.001 at 10.83), is at least ``novel_min_score``;
(d) *curation*: it is not marked "not a theme".

**Risers and fallers** (:func:`judge_changes`): for every carried theme not marked "not a
theme" — together with the new themes judged splits of it, which took part of its
transcripts — the share of new transcripts it leads is compared with the share of earlier
ones by the pooled two-proportion z-test; the p-values of all tested themes are adjusted by
Benjamini–Hochberg (1995). A theme rose (fell) when its q-value is at most
``change_fdr`` and the ratio of its shares is at least ``change_min_ratio`` (at most its
inverse). Each carries the ratio with the Katz log interval and the difference with
Newcombe's hybrid score interval (:mod:`talkthemes.versions.alert_stats`). The rules, the two
periods and that share comparison are in :mod:`talkthemes.versions.alert_rules`.

References
----------
Benjamini, Y. & Hochberg, Y. (1995). Controlling the false discovery rate. *JRSS B* 57(1).
Dunning, T. (1993). Accurate methods for the statistics of surprise and coincidence.
*Computational Linguistics* 19(1): 61–74.
"""

from __future__ import annotations

from collections.abc import Collection, Mapping, Sequence
from typing import Any

import numpy as np

from talkthemes.versions.alert_rules import AlertRules, Periods, percent, rounded, share_growth
from talkthemes.versions.alert_stats import (
    benjamini_hochberg,
    log_likelihood_ratio,
    rate_ratio,
    two_proportion_test,
)
from talkthemes.versions.align import Alignment
from talkthemes.versions.drift import ThemeSide

__all__ = [
    "judge_alerts",
    "judge_changes",
    "judge_new_themes",
    "with_alerts",
]

#: Verdicts of a new theme, the first failed test in this order naming it.
VERDICTS = ("new", "not_a_theme", "split", "small", "familiar")


def _term_novelty(
    phi: np.ndarray, top: np.ndarray, periods: Periods, vocabulary: Sequence[str], rules: AlertRules
) -> dict[str, Any]:
    n_a, n_b = float(periods.term_new.sum()), float(periods.term_earlier.sum())
    a, b = periods.term_new[top].astype(float), periods.term_earlier[top].astype(float)
    if n_a <= 0 or n_b <= 0:
        ratio, llr = np.ones(top.size), np.zeros(top.size)
    else:
        ratio, llr = rate_ratio(a, b, n_a, n_b), log_likelihood_ratio(a, b, n_a, n_b)
    novel = (ratio >= rules.novel_term_ratio) & (llr >= rules.novel_term_llr)
    weight = phi[top]
    score = float(weight[novel].sum() / weight.sum()) if weight.sum() > 0 else 0.0
    return {
        "score": round(score, 6),
        "novel_terms": [vocabulary[t] for t in top[novel].tolist()],
        "terms": [
            {
                "term": vocabulary[t],
                "new": int(x),
                "earlier": int(y),
                "ratio": rounded(r, 3),
                "llr": rounded(g, 3),
                "novel": bool(v),
            }
            for t, x, y, r, g, v in zip(top.tolist(), a, b, ratio, llr, novel, strict=True)
        ],
    }


def _top(phi: np.ndarray, n: int) -> np.ndarray:
    phi = np.asarray(phi, dtype=np.float64)
    return np.lexsort((np.arange(phi.size), -phi))[:n]


def judge_new_themes(
    old: ThemeSide,
    new: ThemeSide,
    alignment: Alignment,
    periods: Periods,
    rules: AlertRules,
    not_a_theme: Collection[int] = (),
) -> list[dict[str, Any]]:
    """The four pieces of evidence for each new theme, and whether it is alerted.

    Returns
    -------
    list of dict
        One per new theme (column order): ``theme_id``, ``name``, ``top_terms``,
        ``verdict`` (``new`` when alerted, else the first failed test: ``not_a_theme``,
        ``split``, ``small`` or ``familiar``), ``alert``, ``split_of`` (old theme id or
        None), ``growth`` (shares among new and earlier transcripts, ratio, difference,
        intervals) and ``evidence``: one dict per test (``test``, ``held``, ``text`` and its
        numbers).
    """
    blocked = {int(t) for t in not_a_theme}
    n_new, n_old = periods.n_new, periods.n_earlier
    lead, is_new, prev = periods.lead, periods.is_new, periods.previous_lead
    n = rules.n_terms
    old_tops = [set(old.top_terms(i, n)) for i in range(len(old.theme_ids))]
    out = []
    for j in alignment.new.tolist():
        tid = int(new.theme_ids[j])
        led = lead == j
        x_new, x_old = int(np.count_nonzero(led & is_new)), int(np.count_nonzero(led & ~is_new))
        share = x_new / n_new if n_new else 0.0
        top_idx = _top(new.topic_terms[j], n)
        top = [new.vocabulary[t] for t in top_idx.tolist()]
        # (a) mass
        mass_ok = x_new >= rules.new_min_calls and share >= rules.new_min_share
        mass = {
            "test": "mass",
            "held": bool(mass_ok),
            "calls": x_new,
            "share": rounded(share),
            "text": (
                f"leads {x_new:,} of {n_new:,} new transcripts ({percent(share)}): "
                + ("at or above" if mass_ok else "below")
                + f" the floor of {rules.new_min_calls} calls and {percent(rules.new_min_share)}"
            ),
        }
        # (b) split
        known = prev[led & (prev >= 0)]
        parent_id, parent_share, overlap, shared = None, 0.0, 0.0, []
        if known.size:
            counts = np.bincount(known, minlength=len(old.theme_ids))
            p = int(np.argmax(counts))
            parent_id, parent_share = int(old.theme_ids[p]), float(counts[p] / known.size)
            shared = [t for t in top if t in old_tops[p]]
            overlap = len(shared) / max(1, len(top))
        is_split = (
            parent_id is not None
            and parent_share >= rules.split_lead_share
            and overlap >= rules.split_term_overlap
        )
        where = (
            f"{percent(parent_share)} of the {known.size:,} transcripts it leads had theme "
            f"{parent_id} as their lead under the previous version, and {len(shared)} of its "
            f"{len(top)} top terms are theme {parent_id}'s"
            if parent_id is not None
            else "none of the transcripts it leads had a lead theme under the previous version"
        )
        if is_split and parent_id in blocked:
            where += f" (theme {parent_id} is marked not a theme)"
        split = {
            "test": "not_split",
            "held": not is_split,
            "previous_theme_id": parent_id,
            "lead_share": rounded(parent_share),
            "term_overlap": rounded(overlap),
            "shared_terms": shared,
            "text": (f"split of theme {parent_id}: " if is_split else "not a split: ") + where,
        }
        # (c) new words
        nov = _term_novelty(new.topic_terms[j], top_idx, periods, new.vocabulary, rules)
        novel_ok = nov["score"] >= rules.novel_min_score
        novelty = {
            "test": "new_words",
            "held": bool(novel_ok),
            **nov,
            "text": (
                f"{percent(nov['score'])} of its top-term weight is on terms at least "
                f"{rules.novel_term_ratio:g}× more frequent in the new transcripts "
                f"(G² ≥ {rules.novel_term_llr:g})"
                + (": " + ", ".join(nov["novel_terms"]) if nov["novel_terms"] else "")
                + ("" if novel_ok else f"; below {percent(rules.novel_min_score)}")
            ),
        }
        # (d) curation
        cur_ok = tid not in blocked
        curation = {
            "test": "curation",
            "held": cur_ok,
            "text": "not marked not a theme" if cur_ok else "marked not a theme",
        }
        evidence = [mass, split, novelty, curation]
        alert = all(e["held"] for e in evidence)
        if alert:
            verdict = "new"
        elif not cur_ok:
            verdict = "not_a_theme"
        elif is_split:
            verdict = "split"
        elif not mass_ok:
            verdict = "small"
        else:
            verdict = "familiar"
        out.append(
            {
                "theme_id": tid,
                "name": new.name(j),
                "top_terms": top,
                "verdict": verdict,
                "alert": bool(alert),
                "split_of": parent_id if is_split else None,
                "growth": share_growth(x_new, n_new, x_old, n_old, rules.level),
                "evidence": evidence,
            }
        )
    return out


def judge_changes(
    new: ThemeSide,
    alignment: Alignment,
    periods: Periods,
    rules: AlertRules,
    split_of: Mapping[int, int] | None = None,
    not_a_theme: Collection[int] = (),
) -> list[dict[str, Any]]:
    """Test every carried theme's share of new against earlier transcripts (module notes).

    Parameters
    ----------
    split_of : mapping of int to int, optional
        New theme id → the carried theme id it is a split of; its transcripts count with
        that theme's.
    not_a_theme : collection of int
        Theme ids marked not a theme: listed, not tested.

    Returns
    -------
    list of dict
        One per carried theme (column order): ``theme_id``, ``name``, ``top_terms``,
        ``includes`` (split theme ids counted with it), ``tested``, ``growth`` (counts,
        shares, ratio and difference with intervals), ``z``, ``p_value``, ``q_value``,
        ``direction`` (``rise``, ``fall`` or ``none``), ``alert`` and ``text``.
    """
    blocked = {int(t) for t in not_a_theme}
    split_of = dict(split_of or {})
    n_new, n_old = periods.n_new, periods.n_earlier
    col_of = {int(t): j for j, t in enumerate(new.theme_ids)}
    carried = [j for j in range(len(new.theme_ids)) if alignment.matched_old[j] >= 0]
    rows = []
    for j in carried:
        tid = int(new.theme_ids[j])
        cols = [j] + [col_of[c] for c, parent in split_of.items() if parent == tid and c in col_of]
        led = np.isin(periods.lead, cols)
        x_new = int(np.count_nonzero(led & periods.is_new))
        x_old = int(np.count_nonzero(led & ~periods.is_new))
        rows.append((j, tid, cols, x_new, x_old))
    testable = [r for r in rows if r[1] not in blocked and n_new and n_old]
    q_of: dict[int, tuple[float, float, float]] = {}
    if testable:
        x1 = np.array([r[3] for r in testable])
        x2 = np.array([r[4] for r in testable])
        z, p = two_proportion_test(x1, n_new, x2, n_old)
        q = benjamini_hochberg(p)
        q_of = {
            r[1]: (float(a), float(b), float(c))
            for r, a, b, c in zip(testable, z, p, q, strict=True)
        }
    out = []
    for j, tid, cols, x_new, x_old in rows:
        growth = share_growth(x_new, n_new, x_old, n_old, rules.level)
        entry: dict[str, Any] = {
            "theme_id": tid,
            "name": new.name(j),
            "top_terms": new.top_terms(j, rules.n_terms),
            "includes": [int(new.theme_ids[c]) for c in cols[1:]],
            "tested": tid in q_of,
            "growth": growth,
            "z": None,
            "p_value": None,
            "q_value": None,
            "direction": "none",
            "alert": False,
        }
        if tid in blocked:
            entry["text"] = "marked not a theme: not tested"
        elif tid not in q_of:
            entry["text"] = "not tested: no new or no earlier transcripts"
        else:
            z, p, q = q_of[tid]
            ratio = growth["ratio"] or 1.0
            significant = q <= rules.change_fdr
            if significant and ratio >= rules.change_min_ratio:
                direction = "rise"
            elif significant and ratio <= 1 / rules.change_min_ratio:
                direction = "fall"
            else:
                direction = "none"
            entry.update(z=rounded(z), p_value=rounded(p, 10), q_value=rounded(q, 10),
                         direction=direction, alert=direction != "none")  # fmt: skip
            entry["text"] = (
                f"leads {percent(growth['share_new'])} of new transcripts against "
                f"{percent(growth['share_earlier'])} of earlier ones: ×{ratio:.2f} "
                f"[{growth['ratio_lo']:.2f}–{growth['ratio_hi']:.2f}], "
                f"q = {q:.2g} (Benjamini–Hochberg over {len(q_of)} themes)"
            )
        out.append(entry)
    return out


def judge_alerts(
    old: ThemeSide,
    new: ThemeSide,
    alignment: Alignment,
    periods: Periods,
    rules: AlertRules,
    not_a_theme: Collection[int] = (),
) -> dict[str, Any]:
    """New themes judged, carried themes tested; the JSON block a drift report keeps.

    Returns
    -------
    dict
        ``rules``, ``new_themes`` (:func:`judge_new_themes`), ``changes``
        (:func:`judge_changes`), ``not_a_theme`` (sorted ids), and the alerted ids:
        ``new`` (new themes alerted), ``rise`` and ``fall``.
    """
    judged = judge_new_themes(old, new, alignment, periods, rules, not_a_theme)
    split_of = {t["theme_id"]: t["split_of"] for t in judged if t["split_of"] is not None}
    changes = judge_changes(new, alignment, periods, rules, split_of, not_a_theme)
    return {
        "rules": rules.to_json(),
        "not_a_theme": sorted(int(t) for t in not_a_theme),
        "new_themes": judged,
        "changes": changes,
        "new": [t["theme_id"] for t in judged if t["alert"]],
        "rise": [t["theme_id"] for t in changes if t["alert"] and t["direction"] == "rise"],
        "fall": [t["theme_id"] for t in changes if t["alert"] and t["direction"] == "fall"],
    }


def with_alerts(report: Mapping[str, Any], alerts: Mapping[str, Any]) -> dict[str, Any]:
    """A drift report with its alert block (``alerts``) and, on each theme entry, what the
    alerts said of it: ``verdict``, ``alert`` and ``split_of`` for a new theme, ``change``
    (``rise``, ``fall`` or ``none``) and ``alert`` for a carried one."""
    out = dict(report)
    out["alerts"] = dict(alerts)
    judged = {t["theme_id"]: t for t in alerts.get("new_themes", [])}
    changes = {t["theme_id"]: t for t in alerts.get("changes", [])}
    themes = []
    for entry in report.get("themes", []):
        entry = dict(entry)
        tid = entry["theme_id"]
        if tid in judged:
            entry.update(
                verdict=judged[tid]["verdict"],
                alert=judged[tid]["alert"],
                split_of=judged[tid]["split_of"],
            )
        elif tid in changes:
            entry.update(change=changes[tid]["direction"], alert=changes[tid]["alert"])
        themes.append(entry)
    out["themes"] = themes
    return out
