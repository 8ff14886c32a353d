"""The report's page: one HTML document with the chart runtimes and the specs inlined.

The charts are drawn in the browser by the Vega, Vega-Lite and Vega-Embed runtimes,
bundled once into the file by vl-convert; the page loads nothing from anywhere (a
Content-Security-Policy forbids it), so it works offline and on an air-gapped machine.
Chart specs are embedded as JSON with ``<``, ``>`` and ``&`` written as ``\\u`` escapes so
no text can close the script.
"""

from __future__ import annotations

import json
from dataclasses import dataclass, field
from typing import Any

import vl_convert as vlc

from talkthemes.charts.style import ChartLike
from talkthemes.text import html_text

__all__ = ["Report", "chart_div", "render_report"]

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
.suggest{color:#8a4500;background:#fff6e5;border-radius:6px;padding:6px 12px;font-size:13px}
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
    charts: dict[str, ChartLike] = field(default_factory=dict)


def chart_div(chart_id: str, caption: str = "") -> str:
    """The place a chart is drawn, with its caption (escaped) below it."""
    out = f'<div class="chart" id="{html_text(chart_id)}" role="img"></div>'
    if caption:
        out += f'<p class="caption">{html_text(caption)}</p>'
    return out


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
    bundle = vlc.javascript_bundle()
    return bundle.replace("</script", "<\\/script")


def render_report(report: Report) -> str:
    """The report as one HTML document with the chart runtimes inlined."""
    specs = {cid: chart.to_dict() for cid, chart in report.charts.items()}
    return (
        '<!DOCTYPE html>\n<html lang="en"><head><meta charset="utf-8">'
        f'<meta http-equiv="Content-Security-Policy" content="{_CSP}">'
        '<meta name="viewport" content="width=device-width, initial-scale=1">'
        f"<title>{html_text(report.title)}</title><style>{_CSS}</style>"
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
