"""The shareable report: one self-contained HTML file that opens without a network.

``write_report`` puts the current version's story on one page: how K was chosen (the
sweep chart, the recommendation and its reasons), the theme map, a card per theme (its
words ranked by relevance, label, note, coverage and three excerpts from the calls it
leads, terms marked) and the themes' shares over time.

Charts are the viewer's (:mod:`talkthemes.charts`). They are drawn in the browser by the
Vega, Vega-Lite and Vega-Embed runtimes, bundled once into the file by vl-convert; the
page loads nothing from anywhere (a Content-Security-Policy forbids it), so it works
offline and on an air-gapped machine. Untrusted text — transcript excerpts, labels, notes,
metadata — is escaped with :func:`html.escape`; chart specs are embedded as JSON with
``<``, ``>`` and ``&`` written as ``\\u`` escapes so no text can close the script.

Themes hidden as noise are left out of the trend chart and their cards are listed last,
folded, under "Hidden as noise", so a reader sees what was set aside.
"""

from __future__ import annotations

import datetime as dt
import functools
import html
import json
import logging
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import pandas as pd

from talkthemes import charts
from talkthemes import viewdata as vd
from talkthemes.errors import NotReadyError, TalkthemesError
from talkthemes.workspace import Workspace, atomic_write_bytes, atomic_write_text

__all__ = ["Report", "build_report", "render_report", "write_report"]

log = logging.getLogger(__name__)

FAMILY_NAMES = {"lda": "LDA", "nmf": "NMF"}
#: ``progress(step, done, total)``
ProgressFn = Callable[[str, int, int], None]

_CSP = (
    "default-src 'none'; script-src 'unsafe-inline' 'unsafe-eval'; "
    "style-src 'unsafe-inline'; img-src data:; font-src data:"
)

_CSS = """
body{margin:0;background:#fff;color:#2b2b2b;font:15px/1.55 "Helvetica Neue",Helvetica,Arial,
sans-serif}
main{max-width:1040px;margin:0 auto;padding:32px 28px 64px}
h1{font-weight:500;font-size:30px;margin:0 0 4px}
h2{font-weight:500;font-size:22px;margin:48px 0 8px;padding-top:12px;border-top:1px solid #e4e4e4}
h3{font-weight:500;font-size:18px;margin:0 0 4px}
.lead,.caption,.meta{color:#6b6b6b}
.caption{font-size:13px;max-width:820px}
nav a{color:#0072B2;margin-right:14px;text-decoration:none}
.chart{margin:12px 0;overflow-x:auto}
.recs{display:flex;flex-wrap:wrap;gap:28px}
.rec{flex:1 1 420px}
.weak{color:#D55E00}
table{border-collapse:collapse;font-size:13px;margin:6px 0}
td,th{padding:3px 10px 3px 0;text-align:left;vertical-align:top}
th{font-weight:500;color:#6b6b6b}
.card{border:1px solid #e4e4e4;border-radius:8px;padding:18px 20px;margin:18px 0}
.facts{display:flex;gap:28px;margin:6px 0 4px}
.fact b{display:block;font-size:22px;font-weight:400}
.fact span{color:#6b6b6b;font-size:12px}
.note{background:#f3f5f7;border-radius:6px;padding:8px 12px;white-space:pre-wrap}
.terms{font-size:13px;color:#6b6b6b}
blockquote{margin:8px 0;padding:6px 12px;border-left:3px solid #56B4E9;background:#fafbfc}
blockquote .who{font-weight:600;color:#0072B2;margin-right:6px}
blockquote .src{display:block;color:#6b6b6b;font-size:12px;margin-top:2px}
mark.tt-hit{background:#F0E442;color:inherit;padding:0 1px;border-radius:2px}
details summary{cursor:pointer;color:#0072B2}
footer{margin-top:48px;color:#6b6b6b;font-size:12px}
"""


@dataclass
class Report:
    """A report's content: its HTML body and the charts it draws, by id."""

    title: str
    body: str
    charts: dict[str, Any] = field(default_factory=dict)


def _e(value: Any) -> str:
    return html.escape(str(value), quote=True)


def _pct(value: float, digits: int = 1) -> str:
    return f"{value:.{digits}%}"


def _chart_div(chart_id: str, caption: str = "") -> str:
    out = f'<div class="chart" id="{_e(chart_id)}" role="img"></div>'
    if caption:
        out += f'<p class="caption">{_e(caption)}</p>'
    return out


def _sweep_section(ws: Workspace, sweep_id: int | None, report: Report) -> str:
    try:
        sweep = vd.load_sweep(ws, sweep_id)
    except TalkthemesError as exc:  # a version outlives its sweep's files
        log.info("report without a sweep: %s", exc)
        return ""
    report.charts["sweep"] = charts.sweep_chart(
        vd.scalar_columns(sweep.cells), sweep.recommended or None
    )
    parts = [
        '<section id="choose-k"><h2>Choosing the number of themes</h2>',
        f'<p class="lead">Sweep {sweep.sweep_id}: {len(sweep.cells)} models fitted for '
        + _e(
            ", ".join(
                f"{FAMILY_NAMES.get(f, f)} K = {', '.join(map(str, sweep.ks(f)))}"
                for f in sweep.families
            )
        )
        + ". Lines are averages over random seeds; bands show how much the seeds disagreed."
        "</p>",
        _chart_div("sweep"),
        '<div class="recs">',
    ]
    for family, rec in sweep.recommendations.items():
        parts.append(
            f'<div class="rec"><h3>{_e(FAMILY_NAMES.get(family, family))}: '
            f"K = {int(rec['k'])} recommended</h3>"
        )
        if rec.get("weak"):
            parts.append(
                '<p class="weak">A weak recommendation: no K gave themes that come back '
                "with other random seeds often enough.</p>"
            )
        parts.append(f'<p class="caption">Rule: {_e(rec.get("rule", ""))}</p><ul>')
        parts.extend(f"<li>{_e(r)}</li>" for r in rec.get("reasons", []))
        parts.append("</ul>")
        runners = rec.get("runners_up") or []
        if runners:
            parts.append("<table><tr><th>Runner-up K</th><th>Why not</th></tr>")
            parts.extend(
                f"<tr><td>{int(r['k'])}</td><td>{_e(r.get('why_not', ''))}</td></tr>"
                for r in runners
            )
            parts.append("</table>")
        parts.append("</div>")
    parts.append("</div></section>")
    return "".join(parts)


def _card(
    ws: Workspace,
    version: Any,
    meta: vd.MetaTable,
    row: pd.Series,
    *,
    lam: float,
    n_excerpts: int,
    lemmas: dict[str, str],
    report: Report,
) -> str:
    pos, tid = int(row["position"]), int(row["theme_id"])
    terms = version.term_table(pos, n=15, lam=lam)
    chart_id = f"theme-{tid}-terms"
    report.charts[chart_id] = charts.term_chart(terms, str(row["name"]), width=520)
    coherence = (version.info.get("coherence") or {}).get("c_npmi")
    facts = [
        (_pct(row["coverage"]), "of transcripts it leads"),
        (_pct(row["mean_share"]), "average share per transcript"),
    ]
    if coherence:
        facts.append((f"{coherence[pos]:.3f}", "coherence (C_NPMI)"))
    parts = [
        f'<article class="card" id="theme-{tid}"><h3>{_e(row["name"])}</h3>',
        f'<div class="meta">Theme #{tid}'
        + (" · not labelled yet (named by its top words)" if not row["label"] else "")
        + "</div>",
        '<div class="facts">'
        + "".join(f'<div class="fact"><b>{_e(v)}</b><span>{_e(t)}</span></div>' for v, t in facts)
        + "</div>",
    ]
    if row["note"]:
        parts.append(f'<div class="note">{_e(row["note"])}</div>')
    parts.append(
        '<p class="terms">Top words by relevance: '
        + _e(", ".join(t.replace("_", " ") for t in terms["term"]))
        + "</p>"
    )
    parts.append(_chart_div(chart_id))
    calls = vd.calls_table(version, meta, pos, vd.CallFilter(lead_only=True))
    if n_excerpts and not calls.empty:
        highlighter = vd.TermHighlighter(version.top_terms(pos, 20, lam), lemmas=lemmas)
        parts.append("<h4>From the calls it leads most strongly</h4>")
        for _, call in calls.head(n_excerpts).iterrows():
            turns = vd.load_transcript(ws, str(call["transcript_id"]), highlighter)
            speaker, segments = vd.excerpt(turns)
            source = [f"transcript {call['transcript_id']}", f"{call['share']:.0%} this theme"]
            if meta.date_field and pd.notna(call.get(meta.date_field)):
                source.append(str(call[meta.date_field]))
            parts.append(
                f'<blockquote><span class="who">{_e(speaker)}</span>'
                f"{vd.segments_html(segments)}"
                f'<span class="src">{_e(" · ".join(source))}</span></blockquote>'
            )
    parts.append("</article>")
    return "".join(parts)


def build_report(
    ws: Workspace,
    *,
    lam: float | None = None,
    excerpts: int = 3,
    progress: ProgressFn | None = None,
) -> Report:
    """Gather the report's content for the current version (nothing is written).

    Raises
    ------
    NotReadyError
        When nothing is published yet.
    """
    from talkthemes.versions import load_version

    step = progress or (lambda *_: None)
    ready = vd.readiness(ws)
    blocker = ready.blocker("version")
    if blocker is not None:
        raise NotReadyError(f"{blocker.message} Run: {blocker.command}")
    step("loading the version", 0, 5)
    version = load_version(ws)
    lam = float(ws.settings().view.relevance_lambda if lam is None else lam)
    meta = vd.load_metadata(ws, version.doc_ids)
    layout = vd.theme_layout(version.topic_terms)
    table = vd.theme_table(version, layout, lam=lam)
    info = version.info
    report = Report(title=f"Themes of {ws.root.name} — version {version.n}", body="")

    step("the sweep", 1, 5)
    body = [
        f"<header><h1>{_e(report.title)}</h1>",
        f'<p class="lead">{_e(FAMILY_NAMES.get(str(info.get("family")), info.get("family")))} '
        f"with {version.k} themes over {len(version.doc_ids):,} transcripts",
    ]
    if meta.dates is not None and meta.dates.notna().any():
        body.append(f", {meta.dates.min():%d %b %Y} to {meta.dates.max():%d %b %Y}")
    labelled = int((table["label"] != "").sum())
    body.append(
        f". {labelled} of {version.k} themes labelled"
        + (f", {int(table['hidden'].sum())} hidden as noise" if table["hidden"].any() else "")
        + ".</p>"
    )
    body.append(
        '<nav><a href="#choose-k">Choosing K</a><a href="#map">Theme map</a>'
        '<a href="#themes">Themes</a><a href="#over-time">Over time</a></nav></header>'
    )
    body.append(_sweep_section(ws, info.get("sweep_id"), report))

    step("the theme map", 2, 5)
    report.charts["theme-map"] = charts.theme_map_chart(
        table[["theme_id", "x", "y", "coverage", "name", "hidden"]]
    )
    body.append(
        '<section id="map"><h2>Theme map</h2>'
        + _chart_div(
            "theme-map",
            charts.theme_map_caption(layout.explained)
            + " Closeness is the Jensen–Shannon distance between the themes' word "
            "distributions; the axes have no unit.",
        )
        + "</section>"
    )

    step("the theme cards", 3, 5)
    lemmas = _lemmas(version)
    ordered = table.sort_values(["coverage", "theme_id"], ascending=[False, True])
    cards = {
        hidden: [
            _card(
                ws, version, meta, row, lam=lam, n_excerpts=excerpts, lemmas=lemmas, report=report
            )
            for _, row in ordered[ordered["hidden"] == hidden].iterrows()
        ]
        for hidden in (False, True)
    }
    body.append(
        '<section id="themes"><h2>Themes</h2><p class="caption">'
        + _e(
            f"Largest first. Words are ranked by relevance with λ = {lam:g}: "
            + charts.TERM_CAPTION
            + " Marked words in the excerpts are the theme's top words."
        )
        + "</p>"
        + "".join(cards[False])
    )
    if cards[True]:
        body.append(
            f"<details><summary>Hidden as noise ({len(cards[True])})</summary>"
            + "".join(cards[True])
            + "</details>"
        )
    body.append("</section>")

    step("the trend", 4, 5)
    body.append('<section id="over-time"><h2>Over time</h2>')
    if meta.dates is None:
        body.append('<p class="caption">The transcripts have no date, so there is no trend.</p>')
    else:
        span = (meta.dates.max() - meta.dates.min()).days
        freq = "week" if span <= 370 else "month"
        trend = vd.trend_frame(version, meta, freq)
        trend = trend[~trend["hidden"]]
        if trend.empty:
            body.append('<p class="caption">Every theme is hidden as noise.</p>')
        else:
            report.charts["trend"] = charts.trend_chart(trend, freq=freq)
            body.append(
                _chart_div(
                    "trend",
                    f"For each {freq}, the share of its transcripts whose lead theme it is, "
                    "with a 95% bootstrap interval; bars below count the transcripts. "
                    "Themes hidden as noise are left out. Click the legend to pick themes.",
                )
            )
    body.append("</section>")
    from talkthemes import __version__

    body.append(
        f"<footer>Made by talkthemes {_e(__version__)} on "
        f"{dt.date.today():%d %B %Y} from version {version.n} "
        f"(cell {_e(info.get('cell', ''))}).</footer>"
    )
    step("done", 5, 5)
    report.body = "".join(body)
    return report


def _lemmas(version: Any) -> dict[str, str]:
    lang = str((version.info.get("prepare_settings") or {}).get("lang") or "en")
    try:
        return _lemma_table(lang)
    except TalkthemesError as exc:
        log.info("excerpts without lemmas (%s)", exc)
        return {}


@functools.cache
def _lemma_table(lang: str) -> dict[str, str]:
    from talkthemes.prepare.lemmas import load_lemma_table

    return load_lemma_table(lang)


def _script_json(value: Any) -> str:
    """JSON safe inside a ``<script>`` element: no ``<``, ``>`` or ``&`` left as such."""
    text = json.dumps(value, ensure_ascii=False, separators=(",", ":"), allow_nan=False)
    for char, escape in (
        ("<", "\\u003c"),
        (">", "\\u003e"),
        ("&", "\\u0026"),
        ("\u2028", "\\u2028"),
        ("\u2029", "\\u2029"),
    ):
        text = text.replace(char, escape)
    return text


def _runtime() -> str:
    """The Vega, Vega-Lite and Vega-Embed runtimes in one script (vl-convert's bundle)."""
    import vl_convert as vlc

    bundle = vlc.javascript_bundle()
    return bundle.replace("</script", "<\\/script")


def render_report(report: Report) -> str:
    """The report as one HTML document with the chart runtimes inlined."""
    specs = {cid: chart.to_dict() for cid, chart in report.charts.items()}
    return (
        '<!DOCTYPE html>\n<html lang="en"><head><meta charset="utf-8">'
        f'<meta http-equiv="Content-Security-Policy" content="{_CSP}">'
        '<meta name="viewport" content="width=device-width, initial-scale=1">'
        f"<title>{_e(report.title)}</title><style>{_CSS}</style>"
        f"<script>{_runtime()}</script></head><body><main>"
        "<noscript><p>This report draws its charts with JavaScript; allow scripts for "
        "this file to see them.</p></noscript>"
        f"{report.body}</main>"
        f'<script id="tt-specs" type="application/json">{_script_json(specs)}</script>'
        "<script>(function(){const specs=JSON.parse("
        "document.getElementById('tt-specs').textContent);"
        "for(const id of Object.keys(specs)){const el=document.getElementById(id);"
        "if(el){vegaEmbed(el,specs[id],{actions:false,renderer:'svg'})"
        ".catch(function(err){el.textContent='This chart could not be drawn: '+err;});}}"
        "})();</script></body></html>\n"
    )


def write_report(
    ws: Workspace,
    out: Path,
    *,
    png_dir: Path | None = None,
    lam: float | None = None,
    excerpts: int = 3,
    progress: ProgressFn | None = None,
) -> Path:
    """Write the report of the current version to ``out`` (and each chart as PNG).

    Parameters
    ----------
    ws : Workspace
    out : Path
        The HTML file to write (replaced atomically).
    png_dir : Path, optional
        Also write every chart as ``<chart id>.png`` into this folder.
    lam : float, optional
        Relevance weight for ranking words (default ``[view] relevance_lambda``).
    excerpts : int
        Excerpts per theme card.
    progress : callable, optional
        ``progress(step, done, total)``.

    Returns
    -------
    Path
        ``out``.

    Raises
    ------
    NotReadyError
        When nothing is published yet (naming the command to run).
    """
    report = build_report(ws, lam=lam, excerpts=excerpts, progress=progress)
    atomic_write_text(Path(out), render_report(report))
    if png_dir is not None:
        from talkthemes.render import chart_png

        png_dir = Path(png_dir)
        png_dir.mkdir(parents=True, exist_ok=True)
        for i, (cid, chart) in enumerate(report.charts.items()):
            if progress:
                progress(f"PNG {cid}", i, len(report.charts))
            atomic_write_bytes(png_dir / f"{cid}.png", chart_png(chart))
    return Path(out)
