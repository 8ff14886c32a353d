"""The alerts of a drift report as Markdown: each alert explains itself.

Every text that came from a transcript or a user (theme names, terms, the evidence
sentences, which name terms, example sentences, transcript ids) goes through
:func:`talkthemes.text.md_file_inline`; shares through :func:`talkthemes.text.percent`.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

from talkthemes.text import md_file_inline, percent

__all__ = ["alert_lines", "verdict_line"]

VERDICT_TEXT = {
    "new": "alerted as new",
    "not_a_theme": "not alerted: marked not a theme",
    "split": "not alerted: a split",
    "small": "not alerted: too small",
    "familiar": "not alerted: its words are not new",
}


def _ids(ids: Sequence[int]) -> str:
    return ", ".join(str(int(i)) for i in ids) or "none"


#: Fewer calls than this in either period: no ratio is shown (it would be mostly noise).
MIN_CALLS_FOR_RATIO = 5


def _enough(g: Mapping[str, Any]) -> bool:
    return g.get("ratio") is not None and min(g["calls_new"], g["calls_earlier"]) >= (
        MIN_CALLS_FOR_RATIO
    )


def _size(g: Mapping[str, Any]) -> str:
    text = (
        f"leads {g['calls_new']:,} of {g['new_transcripts']:,} new transcripts "
        f"({percent(g['share_new'])}"
    )
    if g.get("share_new_lo") is not None:
        text += f" [{percent(g['share_new_lo'])}–{percent(g['share_new_hi'])}]"
    return text + ")"


def _growth(g: Mapping[str, Any]) -> str:
    text = (
        f"{percent(g['share_new'])} of new transcripts against {percent(g['share_earlier'])} "
        f"of {g['earlier_transcripts']:,} earlier ones"
    )
    if _enough(g):
        text += f": ×{g['ratio']:.2f} [{g['ratio_lo']:.2f}–{g['ratio_hi']:.2f}]"
    if g.get("difference") is not None:
        text += (
            f", {100 * g['difference']:+.1f} points "
            f"[{100 * g['difference_lo']:+.1f} to {100 * g['difference_hi']:+.1f}]"
        )
    if g.get("ratio") is not None and not _enough(g):
        text += f" ({g['calls_earlier']:,} earlier calls: too few for a ratio)"
    return text


def _examples(entry: Mapping[str, Any]) -> list[str]:
    examples = entry.get("examples") or []
    if not examples:
        return ["- Example sentences: none found in its new transcripts."]
    lines = ["- Example sentences:"]
    for e in examples:
        lines.append(
            f"  - “{md_file_inline(e['sentence'])}” ({md_file_inline(e['transcript_id'])})"
        )
    return lines


def _terms(terms: Sequence[str]) -> str:
    return ", ".join(md_file_inline(t) for t in terms) or "–"


def verdict_line(entry: Mapping[str, Any]) -> str | None:
    """One line for a new theme in the New themes section: its verdict and why."""
    verdict = entry.get("verdict")
    if verdict is None:
        return None
    text = VERDICT_TEXT.get(verdict, md_file_inline(verdict))
    if verdict == "split" and entry.get("split_of") is not None:
        text = f"not alerted: split of theme {int(entry['split_of'])}"
    return f"- Alert: **{text}** (see Alerts)."


def _new_alert(t: Mapping[str, Any]) -> list[str]:
    lines = [
        f"### New theme {t['theme_id']}: {md_file_inline(t['name'])}",
        "",
        f"- Size: {_size(t['growth'])}.",
        f"- Growth: {_growth(t['growth'])}.",
        f"- Top terms: {_terms(t['top_terms'])}",
        "- Evidence (every piece held):",
    ]
    lines += [
        f"  - {'held' if e['held'] else 'failed'}: {md_file_inline(e['text'])}"
        for e in t["evidence"]
    ]
    return [*lines, *_examples(t), ""]


def _change(t: Mapping[str, Any], kind: str, fdr: float, min_ratio: float) -> list[str]:
    g = t["growth"]
    lines = [
        f"### {kind} {t['theme_id']}: {md_file_inline(t['name'])}",
        "",
        f"- Size: {_size(g)}; {g['calls_earlier']:,} of {g['earlier_transcripts']:,} earlier.",
        f"- Growth: {_growth(g)}.",
        f"- Top terms: {_terms(t['top_terms'])}",
        f"- Evidence: two-proportion z = {t['z']:.2f}, p = {t['p_value']:.2g}, q = "
        f"{t['q_value']:.2g} (Benjamini–Hochberg), at most the false discovery rate {fdr:g}; "
        f"the ratio is {'at least' if kind == 'Riser' else 'at most 1 /'} {min_ratio:g}.",
    ]
    if t.get("includes"):
        lines.append(f"- Counted with its split themes {_ids(t['includes'])}.")
    return [*lines, *_examples(t), ""]


def alert_lines(report: Mapping[str, Any]) -> list[str]:
    """The Alerts section of ``drift.md``: a summary, then each alert explained (size,
    growth, top terms, the evidence that held, example sentences)."""
    a = report.get("alerts")
    if not a:
        return []
    rules = a.get("rules") or {}
    fdr, min_ratio = rules.get("change_fdr", 0.0), rules.get("change_min_ratio", 1.0)
    lines = [
        "## Alerts",
        "",
        f"- New themes alerted: {len(a['new'])} ({_ids(a['new'])}); "
        f"risers: {len(a['rise'])} ({_ids(a['rise'])}); "
        f"fallers: {len(a['fall'])} ({_ids(a['fall'])}).",
    ]
    skipped = [t for t in a.get("new_themes", []) if not t["alert"]]
    for t in skipped:
        failed = "; ".join(md_file_inline(e["text"]) for e in t["evidence"] if not e["held"])
        lines.append(
            f"- Theme {t['theme_id']} ({md_file_inline(t['name'])}) is new but not alerted: "
            f"{failed}."
        )
    if a.get("not_a_theme"):
        lines.append(f"- Marked not a theme (never alerted): {_ids(a['not_a_theme'])}.")
    lines.append("")
    for t in a.get("new_themes", []):
        if t["alert"]:
            lines += _new_alert(t)
    by_id = {t["theme_id"]: t for t in a.get("changes", [])}
    for tid in a["rise"]:
        lines += _change(by_id[tid], "Riser", fdr, min_ratio)
    for tid in a["fall"]:
        lines += _change(by_id[tid], "Faller", fdr, min_ratio)
    return lines
