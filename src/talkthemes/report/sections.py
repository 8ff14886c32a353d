"""The report's sections, each a piece of HTML built only from escaped text.

Untrusted text — transcript excerpts, labels, notes, metadata, recommendation reasons —
reaches the page only through :func:`talkthemes.text.html_text` (or the escaped pieces of
:func:`talkthemes.view.transcript.segments_html`). A section that draws a chart adds it to
the :class:`~talkthemes.report.page.Report` under the id of its ``<div>``.
"""

from __future__ import annotations

import datetime as dt
import logging

import pandas as pd

from talkthemes import __version__
from talkthemes.charts.style import FAMILY_NAMES
from talkthemes.charts.sweep import sweep_chart
from talkthemes.charts.terms import term_chart
from talkthemes.charts.theme_map import theme_map_caption, theme_map_chart
from talkthemes.charts.trends import trend_chart
from talkthemes.errors import TalkthemesError
from talkthemes.report.page import Report, chart_div
from talkthemes.text import html_text, percent
from talkthemes.versions.evidence_shown import EvidenceMasker, masked_by_default
from talkthemes.versions.load import Version
from talkthemes.versions.unthemed import UnthemedGroup
from talkthemes.view.calls import CallFilter, calls_table
from talkthemes.view.choose_k import load_sweep, measure_text, scalar_columns
from talkthemes.view.counts import CallCounts, version_unthemed
from talkthemes.view.metadata import MetaTable
from talkthemes.view.over_time import trend_frame
from talkthemes.view.theme_evidence import evidence_html, evidence_note, evidence_views
from talkthemes.view.theme_map import ThemeLayout, theme_links
from talkthemes.view.themes import boilerplate_advice, map_frame, term_rows
from talkthemes.view.transcript import (
    TermHighlighter,
    excerpt,
    load_transcript,
    segments_html,
    version_lemmas,
)
from talkthemes.workspace import Workspace

__all__ = [
    "EVIDENCE_IN_REPORT",
    "evidence_block",
    "footer",
    "header",
    "map_section",
    "sweep_section",
    "themes_section",
    "trend_section",
]

log = logging.getLogger(__name__)

#: Evidence sentences per theme card.
EVIDENCE_IN_REPORT = 5
MAP_WIDTH = 940  # the report's text column (984 px) less the chart's padding


def header(
    report: Report,
    version: Version,
    meta: MetaTable,
    table: pd.DataFrame,
    counts: CallCounts | None = None,
) -> str:
    """Title, what the version is, how many themes are labelled, how many transcripts were
    left out and why, and the page's contents."""
    info = version.info
    family = str(info.get("family"))
    parts = [
        f"<header><h1>{html_text(report.title)}</h1>",
        f'<p class="lead">{html_text(FAMILY_NAMES.get(family, info.get("family")))} '
        f"with {version.k} themes over {len(version.doc_ids):,} transcripts",
    ]
    if meta.dates is not None and meta.dates.notna().any():
        parts.append(f", {meta.dates.min():%d %b %Y} to {meta.dates.max():%d %b %Y}")
    labelled = int((table["label"] != "").sum())
    parts.append(
        f". {labelled} of {version.k} themes labelled"
        + (f", {int(table['hidden'].sum())} hidden as noise" if table["hidden"].any() else "")
        + ".</p>"
    )
    if counts is not None:
        parts.append(f'<p class="caption">{html_text(counts.sentence())}</p>')
    parts.append(
        '<nav><a href="#choose-k">Choosing K</a><a href="#map">Theme map</a>'
        '<a href="#themes">Themes</a><a href="#over-time">Over time</a></nav></header>'
    )
    return "".join(parts)


def sweep_section(ws: Workspace, sweep_id: int | None, report: Report) -> str:
    """How K was chosen: the sweep chart, the recommendation, its reasons, the runners-up.

    Empty when the version's sweep is gone (a version outlives its sweep's files).
    """
    try:
        sweep = load_sweep(ws, sweep_id)
    except TalkthemesError as exc:
        log.info("report without a sweep: %s", exc)
        return ""
    report.charts["sweep"] = sweep_chart(scalar_columns(sweep.cells), sweep.recommended or None)
    parts = [
        '<section id="choose-k"><h2>Choosing the number of themes</h2>',
        f'<p class="lead">Sweep {sweep.sweep_id}: {len(sweep.cells)} models fitted for '
        + html_text(
            ", ".join(
                f"{FAMILY_NAMES.get(f, f)} K = {', '.join(map(str, sweep.ks(f)))}"
                for f in sweep.families
            )
        )
        + ". Lines are averages over random seeds; bands show how much the seeds disagreed."
        "</p>",
        chart_div("sweep"),
        '<div class="recs">',
    ]
    for family, rec in sweep.recommendations.items():
        parts.append(
            f'<div class="rec"><h3>{html_text(FAMILY_NAMES.get(family, family))}: '
            f"K = {int(rec['k'])} recommended</h3>"
        )
        if rec.get("weak"):
            parts.append(
                '<p class="weak">A weak recommendation: no K gave themes that come back '
                "with other random seeds often enough.</p>"
            )
        parts.append(
            f'<p class="caption">Rule: {html_text(measure_text(rec.get("rule", "")))}</p><ul>'
        )
        parts.extend(f"<li>{html_text(measure_text(r))}</li>" for r in rec.get("reasons", []))
        parts.append("</ul>")
        runners = rec.get("runners_up") or []
        if runners:
            parts.append("<table><tr><th>Runner-up K</th><th>Why not</th></tr>")
            parts.extend(
                f"<tr><td>{int(r['k'])}</td>"
                f"<td>{html_text(measure_text(r.get('why_not', '')))}</td></tr>"
                for r in runners
            )
            parts.append("</table>")
        parts.append("</div>")
    parts.append("</div></section>")
    return "".join(parts)


def map_section(
    table: pd.DataFrame,
    layout: ThemeLayout,
    report: Report,
    trends: pd.DataFrame | None = None,
) -> str:
    """The theme map and its caption (the share of the differences the map keeps)."""
    links, cutoff = theme_links(layout.distances, table["theme_id"].astype(int).tolist())
    report.charts["theme-map"] = theme_map_chart(
        map_frame(table, trends), links, width=MAP_WIDTH, interactive=False
    )
    return (
        '<section id="map"><h2>Theme map</h2>'
        + chart_div(
            "theme-map",
            theme_map_caption(layout.explained)
            + " Closeness is the Jensen–Shannon distance between the themes' word "
            f"distributions; a line joins a theme to its closest themes under {cutoff:.3f} "
            "apart. Rising and falling compare the last full period with the ones before.",
        )
        + "</section>"
    )


def _card(
    ws: Workspace,
    version: Version,
    meta: MetaTable,
    row: pd.Series,
    *,
    lam: float,
    n_excerpts: int,
    lemmas: dict[str, str],
    report: Report,
    masker: EvidenceMasker | None = None,
) -> str:
    pos, tid = int(row["position"]), int(row["theme_id"])
    terms = term_rows(version, pos, n=15, lam=lam)
    chart_id = f"theme-{tid}-terms"
    report.charts[chart_id] = term_chart(terms, str(row["name"]), width=520)
    coherence = (version.info.get("coherence") or {}).get("c_npmi")
    facts = [
        (percent(row["coverage"]), "of transcripts it leads"),
        (percent(row["mean_share"]), "average share per transcript"),
    ]
    if coherence and coherence[pos] is not None:  # None: a merged theme (not scored)
        facts.append((f"{coherence[pos]:.3f}", "coherence (C_NPMI)"))
    parts = [
        f'<article class="card" id="theme-{tid}"><h3>{html_text(row["name"])}</h3>',
        f'<div class="meta">Theme #{tid}'
        + (" · suggested name, not labelled yet" if not row["label"] else "")
        + (
            " · merged: " + html_text(", ".join(f"#{m}" for m in merged))
            if (merged := version.themes[pos].merged)
            else ""
        )
        + "</div>",
        '<div class="facts">'
        + "".join(
            f'<div class="fact"><b>{html_text(v)}</b><span>{html_text(t)}</span></div>'
            for v, t in facts
        )
        + "</div>",
    ]
    if row.get("boilerplate_like") and not row["hidden"]:
        parts.append(f'<p class="suggest">{html_text(boilerplate_advice(row))}</p>')
    if row["note"]:
        parts.append(f'<div class="note">{html_text(row["note"])}</div>')
    parts.append(
        '<p class="terms">Top words by relevance: '
        + html_text(", ".join(t.replace("_", " ") for t in terms["term"]))
        + "</p>"
    )
    parts.append(chart_div(chart_id))
    parts.append(evidence_block(version, pos, lemmas, masker))
    calls = calls_table(version, meta, pos, CallFilter(lead_only=True))
    if n_excerpts and not calls.empty:
        highlighter = TermHighlighter(version.top_terms(pos, 20, lam), lemmas=lemmas)
        parts.append("<h4>From the calls it leads most strongly</h4>")
        for _, call in calls.head(n_excerpts).iterrows():
            turns = load_transcript(ws, str(call["transcript_id"]), highlighter)
            speaker, segments = excerpt(turns)
            source = [
                f"transcript {call['transcript_id']}",
                f"{percent(call['share'], 0)} this theme",
            ]
            if meta.date_field and pd.notna(call.get(meta.date_field)):
                source.append(str(call[meta.date_field]))
            parts.append(
                f'<blockquote><span class="who">{html_text(speaker)}</span>'
                f"{segments_html(segments)}"
                f'<span class="src">{html_text(" · ".join(source))}</span></blockquote>'
            )
    parts.append("</article>")
    return "".join(parts)


def evidence_block(
    version: Version,
    pos: int,
    lemmas: dict[str, str],
    masker: EvidenceMasker | None = None,
) -> str:
    """A card's evidence sentences (stored with the version), its top words marked and
    personal data masked by ``masker`` (None: as stored, where the original is allowed)."""
    note = evidence_note(version, pos)
    if note is not None:
        return f'<h4>Evidence sentences</h4><p class="caption">{html_text(note)}</p>'
    views = evidence_views(version, pos, lemmas, limit=EVIDENCE_IN_REPORT, masker=masker)
    return (
        '<h4>Evidence sentences</h4><p class="caption">The sentences of the calls it leads '
        "that carry its words most, customers first, one per call.</p>" + evidence_html(views)
    )


def themes_section(
    ws: Workspace,
    version: Version,
    meta: MetaTable,
    table: pd.DataFrame,
    *,
    lam: float,
    n_excerpts: int,
    report: Report,
) -> str:
    """A card per theme, largest first; themes hidden as noise folded at the end.

    A card holds the theme's name (suggested until labelled), coverage, average share and
    coherence, its note, its words ranked by relevance at ``lam`` (and their chart), its
    evidence sentences, and ``n_excerpts`` excerpts from the calls it leads most strongly,
    its top words marked.
    """
    lemmas = version_lemmas(version)
    masker = EvidenceMasker(ws) if masked_by_default(ws) else None
    ordered = table.sort_values(["coverage", "theme_id"], ascending=[False, True])
    cards = {
        hidden: [
            _card(
                ws,
                version,
                meta,
                row,
                lam=lam,
                n_excerpts=n_excerpts,
                lemmas=lemmas,
                report=report,
                masker=masker,
            )
            for _, row in ordered[ordered["hidden"] == hidden].iterrows()
        ]
        for hidden in (False, True)
    }
    parts = [
        '<section id="themes"><h2>Themes</h2><p class="caption">'
        + html_text(
            f"Largest first. Each theme's words are ranked by relevance (λ = {lam:g}): how "
            "much more often the theme uses a word than all transcripts do, weighed with how "
            "often it uses it; each chart says how to read its dots. Marked words in the "
            "excerpts are the theme's top words."
        )
        + "</p>"
        + "".join(cards[False])
    ]
    if cards[True]:
        parts.append(
            f"<details><summary>Hidden as noise ({len(cards[True])})</summary>"
            + "".join(cards[True])
            + "</details>"
        )
    parts.append(unthemed_card(version_unthemed(version)))
    parts.append("</section>")
    return "".join(parts)


def unthemed_card(group: UnthemedGroup) -> str:
    """The unthemed group after the themes: its count, share and the reasons."""
    rows = "".join(
        f"<tr><td>{html_text(why)}</td><td>{n:,}</td></tr>" for why, n in group.by_reason.items()
    )
    return (
        '<article class="card" id="unthemed"><h3>Unthemed</h3>'
        f'<div class="meta">{html_text(group.sentence())} Transcripts with too few words to '
        "say what they are about (hang-ups, wrong numbers, greetings only) are in no theme; "
        "the themes' shares are out of the others.</div>"
        + (f"<table><tr><th>Why</th><th>Transcripts</th></tr>{rows}</table>" if rows else "")
        + "</article>"
    )


def trend_section(version: Version, meta: MetaTable, report: Report) -> str:
    """Each shown theme's share per week (a span up to about a year) or month."""
    parts = ['<section id="over-time"><h2>Over time</h2>']
    if meta.dates is None:
        parts.append('<p class="caption">The transcripts have no date, so there is no trend.</p>')
    else:
        span = (meta.dates.max() - meta.dates.min()).days
        freq = "week" if span <= 370 else "month"
        trend = trend_frame(version, meta, freq)
        trend = trend[~trend["hidden"]]
        if trend.empty:
            parts.append('<p class="caption">Every theme is hidden as noise.</p>')
        else:
            report.charts["trend"] = trend_chart(trend, freq=freq)
            parts.append(
                chart_div(
                    "trend",
                    f"For each {freq}, the share of its transcripts whose lead theme it is, "
                    "with a 95% bootstrap interval; bars below count the transcripts. "
                    "Themes hidden as noise are left out. Click the legend to pick themes.",
                )
            )
    parts.append("</section>")
    return "".join(parts)


def footer(version: Version) -> str:
    """Which talkthemes made the report, when, and from which version (and model)."""
    info = version.info
    model = [
        str(FAMILY_NAMES.get(str(info.get("family")), info.get("family") or "")).strip(),
        f"K = {version.k}",
    ]
    if info.get("seed") is not None:
        model.append(f"seed {info['seed']}")
    cell = str(info.get("cell") or "").strip()
    if cell:
        model.append(f"cell {cell}")
    described = ", ".join(m for m in model if m)
    return (
        f"<footer>Made by talkthemes {html_text(__version__)} on "
        f"{dt.date.today():%d %B %Y} from version {version.n} "
        f"({html_text(described)}).</footer>"
    )
