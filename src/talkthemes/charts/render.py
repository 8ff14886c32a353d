"""Writing Altair charts to files with vl-convert: PNG, and HTML with Vega inlined.

The HTML needs no network: vl-convert bundles the Vega, Vega-Lite and Vega-Embed runtimes
into the page.
"""

from __future__ import annotations

from pathlib import Path

import altair as alt
import vl_convert as vlc

from talkthemes.workspace import atomic_write_bytes, atomic_write_text

__all__ = ["chart_html", "chart_png", "save_chart"]


def chart_png(chart: alt.TopLevelMixin, *, scale: float = 2.0) -> bytes:
    """Render a chart to PNG bytes (``scale`` pixels per chart pixel)."""
    return vlc.vegalite_to_png(chart.to_dict(), scale=scale)


def chart_html(chart: alt.TopLevelMixin) -> str:
    """A self-contained HTML page showing the chart (runtimes inlined, works offline)."""
    return vlc.vegalite_to_html(chart.to_dict(), bundle=True)


def save_chart(chart: alt.TopLevelMixin, path: Path) -> list[Path]:
    """Write ``<path>.png`` and ``<path>.html`` (a ``.png``/``.html`` suffix on ``path`` is
    replaced). Returns the files written."""
    stem = path.with_suffix("") if path.suffix.lower() in (".png", ".html") else path
    png, html = stem.with_name(stem.name + ".png"), stem.with_name(stem.name + ".html")
    atomic_write_bytes(png, chart_png(chart))
    atomic_write_text(html, chart_html(chart))
    return [png, html]
