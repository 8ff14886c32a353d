"""Charts: pure functions from a small, aggregated DataFrame to an Altair chart.

The Streamlit viewer and the static HTML report draw the same charts from these functions.
Each chart is a value (Altair 6 / Vega-Lite 6): nothing is rendered or written by the chart
functions, and tests read the specification through ``chart.to_dict()``. Themes are always
shown by the name their caller passes in the frame (the label, or the suggested name).

One module per chart family:

* :mod:`.style` — the shared look, the Okabe–Ito palette and the input checks;
* :mod:`.sweep` — Choose K (:func:`sweep_chart`);
* :mod:`.theme_map` — the theme map (:func:`theme_map_chart`, :func:`theme_map_caption`);
* :mod:`.terms` — a theme's words (:func:`term_chart`);
* :mod:`.trends` — over time (:func:`trend_chart`, :func:`segment_chart`,
  :func:`movers_chart`);
* :mod:`.drift` — what a refresh changed (:func:`drift_chart`);
* :mod:`.history` — the versions' timeline (:func:`timeline_chart`);
* :mod:`.render` — writing a chart as PNG or offline HTML.

This package re-exports the chart functions and the palette: ``from talkthemes import
charts; charts.trend_chart(frame)`` is the charts API.
"""

from __future__ import annotations

from talkthemes.charts._naming import theme_name  # compat: re-exports until the merge
from talkthemes.charts.drift import drift_chart
from talkthemes.charts.history import timeline_chart
from talkthemes.charts.render import chart_html, chart_png, save_chart
from talkthemes.charts.style import (
    BLACK,
    BLUE,
    BLUISH_GREEN,
    FAMILY_COLOURS,
    MAX_CHART_ROWS,
    OKABE_ITO,
    ORANGE,
    REDDISH_PURPLE,
    SERIES_COLOURS,
    SKY_BLUE,
    VERMILLION,
    YELLOW,
    ChartLike,
)
from talkthemes.charts.sweep import sweep_chart
from talkthemes.charts.terms import TERM_CAPTION, term_chart
from talkthemes.charts.theme_map import theme_map_caption, theme_map_chart
from talkthemes.charts.trends import movers_chart, segment_chart, trend_chart

__all__ = [
    "BLACK",
    "BLUE",
    "BLUISH_GREEN",
    "FAMILY_COLOURS",
    "MAX_CHART_ROWS",
    "OKABE_ITO",
    "ORANGE",
    "REDDISH_PURPLE",
    "SERIES_COLOURS",
    "SKY_BLUE",
    "TERM_CAPTION",
    "VERMILLION",
    "YELLOW",
    "ChartLike",
    "chart_html",
    "chart_png",
    "drift_chart",
    "movers_chart",
    "save_chart",
    "segment_chart",
    "sweep_chart",
    "term_chart",
    "theme_map_caption",
    "theme_map_chart",
    "theme_name",
    "timeline_chart",
    "trend_chart",
]
