"""The drift report as a readable Markdown page (``versions/<n>/drift.md``).

Every text that came from a user or a transcript (theme names and labels, terms, transcript
ids, excerpts, the refresh time and the calibration rule) goes through
:func:`talkthemes.text.md_file_inline`, the escaping every face uses, so none of it can become a
link, an image, HTML or a table cell; shares are formatted by :func:`talkthemes.text.percent`.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

from talkthemes.text import md_file_inline, percent
from talkthemes.versions.alerts_markdown import alert_lines, verdict_line

__all__ = ["render_markdown"]


def _with_interval(cov: Mapping[str, Any]) -> str:
    if not cov or cov.get("share") is None:
        return "– (no transcripts)"
    return f"{percent(cov['share'])} [{percent(cov['lo'])}–{percent(cov['hi'])}] of {cov['n']:,}"


def _terms(terms: Sequence[str]) -> str:
    return ", ".join(md_file_inline(t) for t in terms) or "–"


def render_markdown(report: Mapping[str, Any]) -> str:
    """A readable Markdown page of a drift report (every user or transcript text escaped)."""
    r = report
    c, tr, th = r["counts"], r["transcripts"], r["threshold"]
    lines = [
        f"# Drift report: version {r['version']} against version {r['previous_version']}",
        "",
    ]
    if r.get("created_at"):
        lines += [f"Refreshed at {md_file_inline(r['created_at'])}.", ""]
    lines += [
        f"- Transcripts: {tr['total']:,} in this version, {tr['new']:,} of them new since "
        f"version {r['previous_version']}.",
        f"- Themes: {c['carried']} carried, {c['new']} new, {c['retired']} retired.",
        f"- Same-theme cut-off: Jensen–Shannon distance {th['same_theme_cutoff']:.3f} "
        "(a theme that moved further than this from its best match is a different theme).",
    ]
    if th.get("rule"):
        lines.append(f"- How the cut-off was found: {md_file_inline(th['rule'])}.")
    room = r.get("room") or {}
    if room.get("text"):
        lines.append(f"- Room for a new theme: {md_file_inline(room['text'])}.")
    if th.get("overlap"):
        lines.append(
            "- Caution: at this K, fits with different seeds do not reproduce every theme "
            "(same-theme and different-theme distances overlap), so new and retired calls "
            "are less certain."
        )
    lines.append("")
    lines += alert_lines(r)
    new = [t for t in r["themes"] if t["status"] == "new"]
    lines += ["## New themes", ""]
    if not new:
        lines += ["None.", ""]
    for t in new:
        near = t["nearest_previous"]
        lines += [
            f"### Theme {t['theme_id']}: {md_file_inline(t['name'])}",
            "",
            f"- Top terms: {_terms(t['top_terms'])}",
            f"- Leads {percent(t['coverage_after'])} of all transcripts; "
            f"{_with_interval(t['coverage_new_transcripts'])} new transcripts, "
            f"{_with_interval(t['coverage_earlier_transcripts'])} earlier ones.",
            f"- Closest previous theme: {near['theme_id']} ({md_file_inline(near['name'])}) at "
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
        verdict = verdict_line(t)
        if verdict:
            lines.append(verdict)
        lines.append("")
        if t["examples"]:
            lines += ["New transcripts that show it best:", "", "| transcript | share | excerpt |"]
            lines.append("|---|---:|---|")
            for e in t["examples"]:
                lines.append(
                    f"| {md_file_inline(e['transcript_id'])} | {percent(e['share'])} | "
                    f"{md_file_inline(e.get('excerpt', ''))} |"
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
            if t.get("alert") and t.get("change") in ("rise", "fall"):
                flags.append("riser" if t["change"] == "rise" else "faller")
            if t.get("possible_split_of"):
                flags.append("possible split of " + ", ".join(map(str, t["possible_split_of"])))
            if t.get("possible_merge_of"):
                flags.append("possible merge of " + ", ".join(map(str, t["possible_merge_of"])))
            name = md_file_inline(t["name"]) + (f" ({'; '.join(flags)})" if flags else "")
            lines.append(
                f"| {t['theme_id']} | {name} | {t['distance']:.3f} | "
                f"{_terms(t['terms_gained'])} | {_terms(t['terms_lost'])} | "
                f"{percent(t['coverage_before'])} → {percent(t['coverage_after'])} | "
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
                f"| {t['theme_id']} | {md_file_inline(t['name'])} | {_terms(t['top_terms'][:6])} | "
                f"{percent(t['coverage_before'])} | {near['theme_id']} "
                f"({md_file_inline(near['name'])}) at {near['distance']:.3f} |"
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
